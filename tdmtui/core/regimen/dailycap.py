"""The daily amount the regimen design may propose (``regimen.max_daily_dose_mg`` as the design reads it).

The cap the design works to is the smallest of:

* the library's or local protocol's ``regimen.max_daily_dose_mg``;
* the drug's never-exceed daily limits (``never_exceed.daily_dose_mg`` and
  ``never_exceed.daily_dose_mg_per_kg`` x actual weight), so the design never
  proposes what the final guard (:mod:`tdmtui.core.regimen.limits`) would refuse;
* ``regimen.obese_initial_max_daily_mg`` only where its source says it applies:
  an obese patient (BMI at or above ``loading.obese_bmi``) whose first maintenance
  regimen rests on no measured level (2020 vancomycin guideline: obese patients'
  initial maintenance generally not above 4,500 mg/day, pk-sources.md 3.1, from
  memory). Once levels guide the dose it no longer applies.

:func:`design_rules` gives the design a :class:`Rules` whose cap key holds that
value, with the reason as its citation (the ``regimen-cap`` caution quotes it).
"""

from __future__ import annotations

import math

from tdmtui.core.library import Rules, never_exceed

KEY = "regimen.max_daily_dose_mg"


def daily_cap(rules: Rules, tbw_kg: float, bmi: float, levels_used: int) -> tuple[float, str]:
    """(cap mg/day, why) for this patient and estimate (module docstring)."""
    options: list[tuple[float, str]] = []
    if KEY in rules:
        options.append((float(rules.value(KEY)), rules.citation(KEY)))
    limits = never_exceed(rules.drug)
    if "daily_dose_mg" in limits:
        lim, _src = limits["daily_dose_mg"]
        options.append((lim, f"the library's never-exceed limit of {lim:,.0f} mg a day"))
    if "daily_dose_mg_per_kg" in limits and tbw_kg > 0:
        lim, _src = limits["daily_dose_mg_per_kg"]
        options.append((lim * tbw_kg, f"the library's never-exceed limit of {lim:g} mg/kg a day at {tbw_kg:g} kg "
                                      "actual weight"))
    obese = float(rules.value("loading.obese_bmi")) if "loading.obese_bmi" in rules else math.inf
    if "regimen.obese_initial_max_daily_mg" in rules and bmi >= obese and levels_used == 0:
        cap = float(rules.value("regimen.obese_initial_max_daily_mg"))
        options.append((cap, f"obese patient (BMI {bmi:.1f}) on a first maintenance regimen before any level: "
                             "initial maintenance generally not above this in obesity (2020 vancomycin consensus "
                             "guideline, Rybak 2020)"))
    if not options:
        return math.inf, "no daily cap"
    return min(options, key=lambda o: o[0])


def design_rules(rules: Rules, tbw_kg: float, bmi: float, levels_used: int) -> Rules:
    """``rules`` with the design's daily cap in ``regimen.max_daily_dose_mg`` (its source kept)."""
    cap, why = daily_cap(rules, tbw_kg, bmi, levels_used)
    if not math.isfinite(cap):
        return rules
    return rules.with_value(KEY, cap, why)
