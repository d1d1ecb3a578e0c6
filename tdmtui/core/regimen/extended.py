"""Extended-interval aminoglycosides by the Hartford nomogram (nomogram.py), with the fallback.

New start: ``extended.mg_per_kg`` of dosing weight at the Hartford initial
interval for the CrCl (Nicolau 1995, confirmed). With a level: the entry
checks, then the interval read on the chart. When the chart cannot give an
interval (the level is above the highest line the library or protocol knows)
and an estimate exists, the regimen is the individualised extended-interval
design from that estimate (AUC24 / peak / drug-free targets ``extended.*``,
candidates.py), said so in an alert. A level above the q24h line is never
answered with a q24h dose: such a design keeps only intervals longer than 24 h,
and the hand-over holds until the estimate's curve falls below the library's
threshold (``extended.trough_ceiling``).

:func:`applies` says whether ``auto`` should read the chart: the drug has a
chart, the standing order is extended-interval and the latest level passes
every entry check.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from tdmtui.core.alerts import Alert, has_stop
from tdmtui.core.regimen import handover, nomogram, wardclock
from tdmtui.core.regimen.practice import kept_infusion
from tdmtui.core.regimen.grid import infusion_time

if TYPE_CHECKING:
    from tdmtui.core.regimen.targets import Targets
    from tdmtui.core.regimen.types import Plan, RegimenInput


@dataclass(frozen=True)
class ChartOrder:
    """What the chart says, for the design to finish (candidates, hand-over, loading, forecast).

    Attributes:
        dose_mg: the chart's dose.
        interval_h: the chart's interval, or None when the chart gives none and the
            individualised extended-interval design from the estimate is shown instead.
        infusion_h: infusion time for the dose.
        extra: the ``nomogram`` key of the regimen (the reading or the initial interval).
        longer_than_h: when the chart gives no interval, only intervals longer than this
            are designed (a level above the q24h line is never answered with q24h); None = any.
    """

    dose_mg: float
    interval_h: float | None
    infusion_h: float
    extra: dict[str, Any]
    longer_than_h: float | None = None


def nomogram_plan(inp: RegimenInput, targets: Targets, plan: Plan) -> ChartOrder | None:
    """Read the nomogram into ``plan`` (module docstring).

    Returns the chart's order for the design to finish with the estimate, or
    None when ``plan`` is complete: a failed entry check (stops in
    ``plan.alerts``), or the chart's regimen alone when there is no estimate.
    """
    rules = inp.rules
    chart = nomogram.lines(rules)
    plan.sources["nomogram_lines"] = {f"{n}h": d["source"] for n, d in chart.items()}
    if "q24" not in chart:
        plan.alerts.append(Alert(nomogram.CODE, "stop", "drug",
                                 f"nomogram entry check failed: no nomogram for {rules.drug} in the library or the local protocol"))
        return None
    dose = nomogram.extended_dose(rules, inp.dosing_weight_kg)
    tinf = infusion_time(dose, rules, kept_infusion(inp, "extended"))
    if not inp.doses:
        stops = nomogram.exclusions(rules, inp.crcl_ml_min, inp.renal_replacement, inp.conditions)
        plan.alerts.extend(Alert(nomogram.CODE, "stop", f, f"nomogram entry check failed: {m}") for f, m in stops)
        interval = nomogram.initial_interval(rules, inp.crcl_ml_min)
        if interval is None and not stops:
            plan.alerts.append(Alert(nomogram.CODE, "stop", "patient.scr",
                                     f"nomogram entry check failed: CrCl {inp.crcl_ml_min:.0f} mL/min has no initial interval"))
        if has_stop(plan.alerts):
            return None
        extra: dict[str, Any] = {"nomogram": {"initial_interval_h": interval, "crcl_ml_min": inp.crcl_ml_min,
                                              "source": rules.citation("nomogram.initial_interval")}}
    else:
        reading, found = nomogram.read(rules, inp.doses, inp.levels, inp.dosing_weight_kg, inp.crcl_ml_min,
                                       inp.renal_replacement, inp.conditions)
        plan.alerts.extend(found)
        if reading is None or has_stop(found):
            return None
        extra = {"nomogram": reading.to_dict()}
        interval = reading.interval_h
        if interval is None:
            if inp.params is None:
                return None
            plan.alerts.append(Alert("nomogram-individualised", "info", "method",
                                     "the level is above the q24h line and the chart gives no interval for it: the "
                                     "individualised estimate from this level sets the interval (never q24h) and "
                                     "the hold until the level falls below the library's threshold"))
            return ChartOrder(dose, None, tinf, extra, longer_than_h=24.0 if reading.zone != "q24h" else None)
    assert interval is not None
    if inp.params is None:
        _without_estimate(inp, targets, plan, dose, interval, tinf, extra)
        return None
    return ChartOrder(dose, interval, tinf, extra)


def _without_estimate(inp: RegimenInput, targets: Targets, plan: Plan, dose: float, interval: float,
                      tinf: float, extra: dict[str, Any]) -> Plan:
    """The chart's regimen when no kinetic estimate exists: no predictions, no hold."""
    hist = inp.history
    t_due = float(hist.start[-1]) + interval if len(hist) else inp.as_of
    cur = inp.current
    same = cur is not None and abs(cur.dose_mg - dose) < 1e-6 and abs(cur.interval_h - interval) < 1e-6
    start = t_due if same and t_due > inp.as_of else wardclock.to_grid(max(t_due, inp.as_of), inp.rules, inp.clock, "up")
    first = handover.align(start, handover.admin_times(inp.rules, interval), inp.clock)
    gone = [] if same else wardclock.skipped(float(hist.start[-1]) if len(hist) else None,
                                             cur.interval_h if cur else None, inp.as_of, first)
    plan.regimen = {
        "action": "continue" if same else "change", "mode": "extended", "dose_mg": dose, "interval_h": interval,
        "infusion_h": tinf, "daily_dose_mg": dose * 24.0 / interval, "next_dose_at": inp.clock.format(first),
        "hold_until": None, "loading_dose": None, "predicted": {},
        "skipped_doses": [inp.clock.format(t) for t in gone],
        "next_levels": handover.next_levels(inp.rules, targets, "extended", inp.option or inp.method, first, interval,
                                            tinf, inp.clock, same),
        "alternatives": [], **extra,
    }
    plan.doses = handover.proposed_doses(first, dose, interval, tinf, inp.as_of + handover.FORECAST_H)
    return plan


def applies(inp: RegimenInput) -> bool:
    """True when the chart can be read for this course (module docstring): auto then reads it."""
    rules, cur = inp.rules, inp.current
    if "nomogram.q24_line" not in rules or cur is None or not inp.levels or not inp.doses:
        return False
    low = float(rules.value("extended.min_interval_h"))
    per_kg = cur.dose_mg / inp.dosing_weight_kg if inp.dosing_weight_kg > 0 else 0.0
    if cur.interval_h < low or per_kg < float(rules.value("regimen.extended_min_mg_per_kg")):
        return False
    reading, found = nomogram.read(rules, inp.doses, inp.levels, inp.dosing_weight_kg, inp.crcl_ml_min,
                                   inp.renal_replacement, inp.conditions)
    return reading is not None and not has_stop(found)
