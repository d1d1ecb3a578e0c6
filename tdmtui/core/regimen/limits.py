"""The final guard on a proposal: the library's never-exceed limits.

Whatever the estimate, the regimen design or a local protocol say, no dose,
loading dose or infusion rate beyond the drug's ``never_exceed.*`` values
(library/drugs/<drug>.toml, each with its source) is ever proposed. The
guard runs after the design, separately from it: a proposal beyond a limit
becomes a stop (the regimen is withdrawn, never clamped to the limit), and an
alternative beyond one is withheld with a caution. A protocol cannot set these
keys (:mod:`tdmtui.core.library.schema` refuses them), and they are read from
the library alone, never through :class:`~tdmtui.core.library.Rules`.

Warning codes: ``never-exceed`` (stop), ``never-exceed-alternative`` (caution).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from tdmtui.core.alerts import Alert
from tdmtui.core.library import never_exceed

if TYPE_CHECKING:
    import numpy as np

    from tdmtui.core.models import DoseArrays

CODES = {
    "never-exceed": "the proposed regimen is beyond an absolute limit of the drug library: no regimen is given",
    "never-exceed-alternative": "alternative regimens beyond an absolute limit of the drug library were withheld",
}

_WORDS = {
    "single_dose_mg": "a single dose of {x:,.0f} mg (limit {lim:,.0f} mg)",
    "loading_dose_mg": "a loading dose of {x:,.0f} mg (limit {lim:,.0f} mg)",
    "single_dose_mg_per_kg": "a single dose of {x:.1f} mg/kg of actual body weight (limit {lim:g} mg/kg)",
    "daily_dose_mg": "{x:,.0f} mg a day (limit {lim:,.0f} mg a day)",
    "daily_dose_mg_per_kg": "{x:.1f} mg/kg a day of actual body weight (limit {lim:g} mg/kg a day)",
    "rate_mg_per_h": "an infusion rate of {x:,.0f} mg/h (limit {lim:,.0f} mg/h)",
}


def _num(x: Any) -> float | None:
    return float(x) if isinstance(x, (int, float)) and not isinstance(x, bool) else None


def _checks(reg: dict[str, Any], tbw_kg: float) -> list[tuple[str, float | None]]:
    """(limit key, figure) for one proposed regimen; None when the figure is missing or not a number."""
    dose, interval, infusion = _num(reg.get("dose_mg")), _num(reg.get("interval_h")), _num(reg.get("infusion_h"))
    out: list[tuple[str, float | None]] = []
    if reg.get("mode") == "continuous":
        rate = _num(reg.get("rate_mg_per_h"))
        daily = _num(reg.get("daily_dose_mg"))
        daily = daily if daily is not None else (rate * 24.0 if rate is not None else None)
        out += [("rate_mg_per_h", rate), ("daily_dose_mg", daily),
                ("daily_dose_mg_per_kg", None if daily is None else daily / tbw_kg)]
    else:
        daily = None if dose is None or not interval else dose * 24.0 / interval
        rate = None if dose is None or not infusion else dose / infusion
        out += [("single_dose_mg", dose), ("single_dose_mg_per_kg", None if dose is None else dose / tbw_kg),
                ("rate_mg_per_h", rate), ("daily_dose_mg", daily),
                ("daily_dose_mg_per_kg", None if daily is None else daily / tbw_kg)]
    load = reg.get("loading_dose")
    if isinstance(load, dict):
        ld, li = _num(load.get("dose_mg")), _num(load.get("infusion_h"))
        out += [("loading_dose_mg", ld), ("single_dose_mg_per_kg", None if ld is None else ld / tbw_kg),
                ("rate_mg_per_h", None if ld is None or not li else ld / li)]
    return out


def breaches(drug: str, reg: dict[str, Any], tbw_kg: float) -> list[str]:
    """What in one proposed regimen is beyond (or cannot be checked against) a never-exceed limit, in words."""
    limits = never_exceed(drug)
    out = []
    for key, x in _checks(reg, tbw_kg):
        if key not in limits:
            continue
        lim = limits[key][0]
        if x is None or not math.isfinite(x) or x < 0:
            out.append(f"{key.replace('_', ' ')} cannot be checked ({x!r})")
        elif x > lim * (1 + 1e-9):
            out.append(_WORDS[key].format(x=x, lim=lim))
    return out


def planned_breaches(drug: str, amounts: np.ndarray, durations: np.ndarray, tbw_kg: float, continuous: bool = False) -> list[str]:
    """Every planned dose (the simulated plan's arrays) against the single-dose, per-kg and rate limits.

    In a continuous-infusion plan the long pieces (12 h or more) of the running
    infusion are checked by their rate only (their daily total is checked on the regimen).
    """
    limits = never_exceed(drug)
    top = max(limits.get("single_dose_mg", (math.inf, ""))[0], limits.get("loading_dose_mg", (0.0, ""))[0])
    out = []
    for amount, duration in zip(amounts, durations):
        a, d = float(amount), float(duration)
        if continuous and d >= 12.0 and math.isfinite(a):
            if "rate_mg_per_h" in limits and a / d > limits["rate_mg_per_h"][0] * (1 + 1e-9):
                out.append(_WORDS["rate_mg_per_h"].format(x=a / d, lim=limits["rate_mg_per_h"][0]))
            continue
        if not math.isfinite(a) or a > top * (1 + 1e-9):
            out.append(f"a planned dose of {a:,.0f} mg (limit {top:,.0f} mg)")
        elif "single_dose_mg_per_kg" in limits and a / tbw_kg > limits["single_dose_mg_per_kg"][0] * (1 + 1e-9):
            out.append(_WORDS["single_dose_mg_per_kg"].format(x=a / tbw_kg, lim=limits["single_dose_mg_per_kg"][0]))
        elif d > 0 and "rate_mg_per_h" in limits and a / d > limits["rate_mg_per_h"][0] * (1 + 1e-9):
            out.append(_WORDS["rate_mg_per_h"].format(x=a / d, lim=limits["rate_mg_per_h"][0]))
    return out


def guard(drug: str, result: dict[str, Any], plan: DoseArrays | None, tbw_kg: float) -> list[Alert]:
    """Check the proposal in ``result["regimen"]`` (and the planned doses) against the never-exceed limits.

    Withholds alternatives beyond a limit (a caution) and, when the proposal
    itself is beyond one, returns a stop (the caller withdraws the regimen).
    """
    reg = result.get("regimen")
    if not isinstance(reg, dict):
        return []
    alerts: list[Alert] = []
    alts = reg.get("alternatives")
    if isinstance(alts, list):
        kept = [a for a in alts if not (isinstance(a, dict) and breaches(drug, a, tbw_kg))]
        if len(kept) < len(alts):
            n = len(alts) - len(kept)
            reg["alternatives"] = kept
            alerts.append(Alert("never-exceed-alternative", "caution", "regimen",
                                f"{n} alternative regimen{'s' if n > 1 else ''} beyond the drug library's absolute "
                                "limits withheld"))
    found = breaches(drug, reg, tbw_kg)
    if not found and plan is not None and len(plan):
        found += planned_breaches(drug, plan.amount, plan.duration, tbw_kg, reg.get("mode") == "continuous")
    if found:
        alerts.append(Alert("never-exceed", "stop", "regimen",
                            f"the regimen worked out would give {'; '.join(dict.fromkeys(found))}, beyond the drug "
                            "library's absolute limits: no regimen is proposed. Check the case, the estimate and "
                            "the local protocol"))
    return alerts
