"""Extended-interval aminoglycosides by the Hartford nomogram (nomogram.py), with the fallback.

New start: ``extended.mg_per_kg`` of dosing weight at the Hartford initial
interval for the CrCl (Nicolau 1995, confirmed). With a level: the entry
checks, then the interval read on the chart. When the chart cannot give an
interval (the level is above the highest line the library or protocol knows)
and an estimate exists, the regimen is the individualised extended-interval
design from that estimate (AUC24 / peak / drug-free targets ``extended.*``,
candidates.py), said so in an alert.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from tdmtui.core.alerts import Alert, has_stop
from tdmtui.core.regimen import handover, nomogram
from tdmtui.core.regimen.candidates import evaluate, infusion_time

if TYPE_CHECKING:
    from tdmtui.core.regimen.targets import Targets
    from tdmtui.core.regimen.types import Plan, RegimenInput


def nomogram_plan(inp: RegimenInput, targets: Targets, plan: Plan) -> Plan:
    """Fill ``plan`` from the nomogram (module docstring)."""
    from tdmtui.core.regimen.design import _dose_ref, _intervals, finish, search_candidates

    rules = inp.rules
    chart = nomogram.lines(rules)
    plan.sources["nomogram_lines"] = {f"{n}h": d["source"] for n, d in chart.items()}
    if "q24" not in chart:
        plan.alerts.append(Alert(nomogram.CODE, "stop", "drug",
                                 f"nomogram entry check failed: no nomogram for {rules.drug} in the library or the local protocol"))
        return plan
    dose = nomogram.extended_dose(rules, inp.dosing_weight_kg)
    tinf = infusion_time(dose, rules)
    if not inp.doses:
        stops = nomogram.exclusions(rules, inp.crcl_ml_min, inp.renal_replacement, inp.conditions)
        plan.alerts.extend(Alert(nomogram.CODE, "stop", f, f"nomogram entry check failed: {m}") for f, m in stops)
        interval = nomogram.initial_interval(rules, inp.crcl_ml_min)
        if interval is None and not stops:
            plan.alerts.append(Alert(nomogram.CODE, "stop", "patient.scr",
                                     f"nomogram entry check failed: CrCl {inp.crcl_ml_min:.0f} mL/min has no initial interval"))
        if has_stop(plan.alerts):
            return plan
        extra = {"nomogram": {"initial_interval_h": interval, "crcl_ml_min": inp.crcl_ml_min,
                              "source": rules.citation("nomogram.initial_interval")}}
    else:
        reading, found = nomogram.read(rules, inp.doses, inp.levels, inp.dosing_weight_kg, inp.crcl_ml_min,
                                       inp.renal_replacement, inp.conditions)
        plan.alerts.extend(found)
        if reading is None or has_stop(found):
            return plan
        extra = {"nomogram": reading.to_dict()}
        interval = reading.interval_h
        if interval is None:
            if inp.params is None:
                return plan
            plan.alerts.append(Alert("nomogram-individualised", "info", "method",
                                     "the chart gives no interval for this level: individualised extended-interval "
                                     "dosing from the estimate is shown instead"))
            return finish(inp, targets, "extended", plan, search_candidates(inp, targets, "extended"), extra=extra)
    assert interval is not None
    if inp.params is None:
        return _without_estimate(inp, targets, plan, dose, interval, tinf, extra)
    fixed = evaluate(inp.params, targets, dose, interval, tinf, _dose_ref(inp, "extended"))
    cands = search_candidates(inp, targets, "extended") if _intervals(inp, "extended") else []
    return finish(inp, targets, "extended", plan, cands, fixed=fixed, extra=extra)


def _without_estimate(inp: RegimenInput, targets: Targets, plan: Plan, dose: float, interval: float,
                      tinf: float, extra: dict) -> Plan:
    """The chart's regimen when no kinetic estimate exists: no predictions, no hold."""
    hist = inp.history
    t_due = float(hist.start[-1]) + interval if len(hist) else inp.as_of
    first = handover.align(max(t_due, inp.as_of), handover.admin_times(inp.rules, interval), inp.clock)
    cur = inp.current
    same = cur is not None and abs(cur.dose_mg - dose) < 1e-6 and abs(cur.interval_h - interval) < 1e-6
    plan.regimen = {
        "action": "continue" if same else "change", "mode": "extended", "dose_mg": dose, "interval_h": interval,
        "infusion_h": tinf, "daily_dose_mg": dose * 24.0 / interval, "next_dose_at": inp.clock.format(first),
        "hold_until": None, "loading_dose": None, "predicted": {},
        "next_levels": handover.next_levels(inp.rules, targets, "extended", inp.method, first, interval, tinf, inp.clock),
        "alternatives": [], **extra,
    }
    plan.doses = handover.proposed_doses(first, dose, interval, tinf, inp.as_of + handover.FORECAST_H)
    return plan
