"""Regimen design: mode, targets, candidates, choice, hand-over, loading (the orchestration).

Mode (how a regimen is judged, targets.py):
    vancomycin ``continuous`` when the case targets a Css, the standing order is
    a continuous infusion, or the protocol's ``regimen.default_mode`` says so;
    else ``auc``. Aminoglycosides: ``extended`` when the method is the
    nomogram; ``peak-trough`` when the case targets a peak or trough (and no
    AUC); ``extended`` when the standing order is at >= ``extended.min_interval_h``
    with at least ``regimen.extended_min_mg_per_kg``; otherwise
    ``regimen.default_mode``. Extended-interval dosing falls back to
    ``peak-trough`` (with a caution) when an exclusion applies (CrCl,
    dialysis, excluded condition; nomogram.exclusions).

Action: ``continue`` when the standing order is predicted on target and
under the caps; else ``change`` (candidates.py choice rule: the middle of
the band, intervals the half-life allows), or ``hold-then-change`` when the
level due is above the library's hold limit (handover.py, practice.py).
``skipped_doses`` names the standing order's doses left out before the first
dose; times are on the protocol's grid (wardclock.py). ``next_dose_at`` is the
first maintenance dose of the recommended regimen; a loading dose, when
proposed, is at ``loading_dose.at`` (``as_of`` for a new start, else in place
of the first dose, which then moves one interval on).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from tdmtui.core.alerts import Alert
from tdmtui.core.models import steady_state
from tdmtui.core.regimen import continuous, handover, loading, nomogram, practice, timing, wardclock
from tdmtui.core.regimen.candidates import Candidate, choose, evaluate, judge, search, table_probabilities, with_draws
from tdmtui.core.regimen.extended import nomogram_plan
from tdmtui.core.regimen.targets import Targets, resolve_targets
from tdmtui.core.regimen.types import Plan, RegimenInput


def choose_mode(inp: RegimenInput, alerts: list[Alert]) -> str:
    """The regimen mode for this case (module docstring)."""
    rules, ct, cur = inp.rules, inp.case_target, inp.current
    default = str(rules.value("regimen.default_mode"))
    if rules.get("drug.family") != "aminoglycoside":
        if inp.option == "nomogram":
            alerts.append(Alert("nomogram-entry", "stop", "method",
                                f"nomogram entry check failed: no nomogram for {inp.drug} (extended-interval "
                                "aminoglycosides only)"))
        if (ct and ct.css) or (cur and cur.infusion_h >= cur.interval_h - 1e-9) or default == "continuous":
            return "continuous"
        return "auc"
    if inp.option == "nomogram":
        return "extended"
    if ct and (ct.peak or ct.trough) and not ct.auc24:
        return "peak-trough"
    if ct and ct.auc24:
        mode = "extended"
    elif cur:
        per_kg = cur.dose_mg / inp.dosing_weight_kg if inp.dosing_weight_kg > 0 else 0.0
        ext = cur.interval_h >= float(rules.value("extended.min_interval_h")) and per_kg >= float(
            rules.value("regimen.extended_min_mg_per_kg"))
        mode = "extended" if ext else "peak-trough"
    else:
        mode = default if default in ("extended", "peak-trough") else "peak-trough"
    if mode == "extended":
        why = nomogram.exclusions(rules, inp.crcl_ml_min, inp.renal_replacement, inp.conditions)
        if why:
            for fld, msg in why:
                alerts.append(Alert("extended-excluded", "caution", fld, f"{msg}: traditional (peak and trough) dosing designed instead"))
            return "peak-trough"
    return mode


def _src(rules: Any, key: str) -> str:
    return rules.source(key) if key in rules else "library"


def sources(inp: RegimenInput, targets: Targets) -> dict[str, Any]:
    """Where each target, limit and rule came from (library, protocol, case)."""
    r = inp.rules
    caps = [_src(r, k) for k in ("regimen.max_single_dose_mg", "regimen.max_daily_dose_mg", "loading.max_mg") if k in r]
    out: dict[str, Any] = {
        "target": targets.main_source, "targets": dict(targets.sources),
        "rounding": _src(r, "regimen.rounding_mg"), "intervals": _src(r, "regimen.intervals_h"),
        "max_rate": _src(r, "regimen.max_rate_mg_per_h"), "min_infusion": _src(r, "regimen.min_infusion_h"),
        "caps": "protocol" if "protocol" in caps else "library", "admin_times": _src(r, "regimen.admin_times"),
        "choice": _src(r, "regimen.choice_tie_rel"), "next_levels": _src(r, "monitoring.levels"),
    }
    if "loading.mg_per_kg" in r or "loading.target_peak_mg_l" in r:
        out["loading"] = _src(r, "loading.mg_per_kg" if "loading.mg_per_kg" in r else "loading.target_peak_mg_l")
    return out


def _intervals(inp: RegimenInput, mode: str) -> list[float]:
    every = [float(x) for x in inp.rules.value("regimen.intervals_h")]
    if mode == "extended":
        low = float(inp.rules.value("extended.min_interval_h"))
        return [x for x in every if x >= low]
    return every


def _dose_ref(inp: RegimenInput, mode: str) -> float | None:
    if mode != "extended" or inp.dosing_weight_kg <= 0:
        return None
    return float(inp.rules.value("extended.mg_per_kg")) * inp.dosing_weight_kg


def _current(inp: RegimenInput, targets: Targets, mode: str) -> Candidate | None:
    cur, params = inp.current, inp.params
    if cur is None or params is None or cur.dose_mg <= 0 or cur.interval_h <= 0:
        return None
    is_cont = cur.infusion_h >= cur.interval_h - 1e-9
    if is_cont != (mode == "continuous"):
        return None
    if is_cont:
        daily = cur.dose_mg * 24.0 / cur.interval_h
        ss = steady_state(params, daily, 24.0, 24.0)
        on, d = judge(targets, np.array([ss.trough]), np.array([ss.trough]), np.array([ss.auc24]), np.array([daily]))
        return Candidate(daily, 24.0, 24.0, ss.peak, ss.trough, ss.auc24, ss.trough, 24.0, bool(on[0]), float(d[0]))
    return evaluate(params, targets, cur.dose_mg, cur.interval_h, min(cur.infusion_h, cur.interval_h),
                    _dose_ref(inp, mode))


def _within_caps(c: Candidate, rules: Any) -> bool:
    return (c.dose_mg <= float(rules.value("regimen.max_single_dose_mg")) + 1e-9 or c.infusion_h >= 24.0) and \
        c.daily_mg <= float(rules.value("regimen.max_daily_dose_mg")) + 1e-9


def _shape(inp: RegimenInput, c: Candidate, targets: Targets, mode: str, continuing: bool) -> dict[str, Any]:
    """The contract's regimen shape for one candidate (no loading dose)."""
    limit = practice.hold_limit(inp.rules, targets, c)
    tm = timing.plan_timing(inp, c, continuing, limit)
    action = "continue" if continuing else ("hold-then-change" if tm.held is not None else "change")
    first = tm.first
    out: dict[str, Any] = {
        "action": action, "mode": mode, "dose_mg": c.dose_mg, "interval_h": c.interval_h, "infusion_h": c.infusion_h,
        "daily_dose_mg": c.daily_mg, "next_dose_at": inp.clock.format(first),
        "hold_until": inp.clock.format(tm.held) if tm.held is not None else None, "loading_dose": None,
        "skipped_doses": [inp.clock.format(t) for t in tm.skipped],
        "predicted": c.predicted(),
        "next_levels": handover.next_levels(inp.rules, targets, mode, inp.option or inp.method, first, c.interval_h,
                                            c.infusion_h, inp.clock, continuing),
    }
    if tm.held is not None and limit is not None:
        out["hold_level_mg_l"] = limit
    if inp.check_before_restart and not continuing and limit is not None and (tm.skipped or tm.held is not None):
        out["next_levels"].insert(0, handover.restart_check(inp.rules, inp.clock, first, limit))
    if mode == "continuous":
        out.update(continuous.describe(c))
    out["_first"] = first
    out["_nearer"] = tm.nearer
    return out


def design(inp: RegimenInput) -> Plan:
    """Design the regimen for one case (see the package docstring for the shape)."""
    alerts: list[Alert] = []
    mode = choose_mode(inp, alerts)
    targets = resolve_targets(inp.rules, inp.case_target, mode, tuple(inp.conditions))
    plan = Plan(regimen=None, targets=targets.to_dict(), sources=sources(inp, targets), alerts=alerts)
    if any(a.severity == "stop" for a in alerts):
        return plan
    if mode == "extended" and inp.option == "nomogram":
        return _from_chart(inp, targets, plan)
    if inp.params is None:
        alerts.append(Alert("regimen-no-estimate", "caution", "", "no estimate of the patient's kinetics: no regimen designed"))
        return plan
    return finish(inp, targets, mode, plan, search_candidates(inp, targets, mode))


def _from_chart(inp: RegimenInput, targets: Targets, plan: Plan) -> Plan:
    """The nomogram's order (extended.py), finished with the estimate where there is one."""
    order = nomogram_plan(inp, targets, plan)
    if order is None:
        return plan
    assert inp.params is not None
    if order.interval_h is None:
        cands = search_candidates(inp, targets, "extended")
        if order.longer_than_h is not None:
            cands = [c for c in cands if c.interval_h > order.longer_than_h + 1e-9]
        return finish(inp, targets, "extended", plan, cands, extra=order.extra)
    fixed = evaluate(inp.params, targets, order.dose_mg, order.interval_h, order.infusion_h, _dose_ref(inp, "extended"))
    cands = search_candidates(inp, targets, "extended") if _intervals(inp, "extended") else []
    return finish(inp, targets, "extended", plan, cands, fixed=fixed, extra=order.extra)


def search_candidates(inp: RegimenInput, targets: Targets, mode: str) -> list[Candidate]:
    """The candidate grid for this mode."""
    assert inp.params is not None
    if mode == "continuous":
        return continuous.candidates(inp.params, targets, inp.rules)
    return search(inp.params, targets, inp.rules, _intervals(inp, mode), _dose_ref(inp, mode),
                  practice.kept_infusion(inp, mode))


def finish(inp: RegimenInput, targets: Targets, mode: str, plan: Plan, cands: list[Candidate],
           fixed: Candidate | None = None, extra: dict[str, Any] | None = None) -> Plan:
    """Choose, hand over, load and forecast; fill ``plan``."""
    assert inp.params is not None
    _candidate_table(inp, targets, mode, plan, cands)
    current = _current(inp, targets, mode)
    picked = _pick(inp, targets, mode, cands, fixed, current, plan.alerts)
    if picked is None:
        return plan
    chosen, alts, continuing = picked
    _standing_order_alerts(inp, current, continuing, plan.alerts)
    _cap_alert(inp, targets, chosen, plan.alerts)
    if inp.samples:
        dref = _dose_ref(inp, mode)
        chosen = with_draws(chosen, inp.samples, targets, dref)
        alts = [with_draws(a, inp.samples, targets, dref) for a in alts]
    reg, first, nearer = _regimen(inp, targets, mode, chosen, alts, current, continuing, extra)
    load = loading.proposed(inp, targets, mode, chosen, continuing, reg["hold_until"] is not None, first, plan.alerts)
    if load is not None:
        first = _with_loading(inp, targets, mode, chosen, reg, load)
    until = inp.as_of + handover.FORECAST_H
    ld_tuple = (load[0], load[1].dose_mg, load[2]) if load is not None else None
    plan.doses = handover.proposed_doses(first, chosen.dose_mg, chosen.interval_h, chosen.infusion_h, until, ld_tuple)
    times, conc, aucs = handover.forecast(inp.params, inp.history, plan.doses, inp.as_of)
    plan.forecast = (times, conc)
    reg["forecast_auc"] = {"from": inp.clock.format(inp.as_of), **aucs}
    if load is None:
        timing.alignment_gap(inp, targets, chosen, reg, first, nearer, aucs["day1_mg_h_per_l"], plan.alerts)
    reg["choice_rule"] = ("continue: the standing order is predicted on target" if continuing else
                          "practical candidate on target nearest the middle of the band, at intervals the half-life "
                          "allows, at the current interval only where a dose there lands near the middle "
                          "(extended-interval: the shortest interval on target); ties to fewer doses a day "
                          "(regimen/candidates.py)")
    plan.regimen = reg
    return plan


def _candidate_table(inp: RegimenInput, targets: Targets, mode: str, plan: Plan, cands: list[Candidate]) -> None:
    """The candidate table for the app, each row's probability of target where there are posterior draws."""
    plan.candidates = [c.to_dict() for c in cands]
    if inp.samples is not None and len(inp.samples):
        for row, prob in zip(plan.candidates, table_probabilities(cands, inp.samples, targets, _dose_ref(inp, mode))):
            row["probability"] = prob


def _pick(inp: RegimenInput, targets: Targets, mode: str, cands: list[Candidate], fixed: Candidate | None,
          current: Candidate | None, alerts: list[Alert]) -> tuple[Candidate, list[Candidate], bool] | None:
    """(chosen, alternatives, continuing the standing order), or None when no candidate exists (said why)."""
    rules, params = inp.rules, inp.params
    assert params is not None
    tie = float(rules.value("regimen.choice_tie_rel"))
    banded = bool(targets.auc24 or targets.peak)
    keep = inp.current.interval_h if inp.current and mode != "extended" else None
    best, alts = choose(cands, keep, tie,
                        shortest_first=mode == "extended" and banded, interval_band=practice.interval_band(rules, params, mode),
                        shortest_tie=mode == "extended" and not banded,
                        keep_within=float(rules.value("regimen.keep_interval_within_rel")))
    if fixed is not None:
        continuing = current is not None and abs(current.dose_mg - fixed.dose_mg) < 1e-6 and \
            abs(current.interval_h - fixed.interval_h) < 1e-6
        # continuing: the standing order as given (its own infusion time)
        return (current if continuing and current is not None else fixed), alts, continuing
    if current is not None and current.on_target and _within_caps(current, rules):
        alts = [c for c in ([best] if best else []) + alts
                if not (c.dose_mg == current.dose_mg and c.interval_h == current.interval_h)][:3]
        return current, alts, True
    if best is not None:
        return best, alts, False
    if cands:
        chosen = min(cands, key=lambda c: c.distance)
        alerts.append(Alert("regimen-off-target", "caution", "target",
                            "no practical regimen is predicted on target under the caps and rounding; "
                            "the nearest is shown: review the targets, caps or interval set"))
        return chosen, sorted((c for c in cands if c is not chosen), key=lambda c: c.distance)[:3], False
    alerts.append(Alert("regimen-no-candidate", "caution", "target", "no candidate regimen under the caps"))
    return None


def _standing_order_alerts(inp: RegimenInput, current: Candidate | None, continuing: bool,
                           alerts: list[Alert]) -> None:
    """``dose-overdue`` when the order continues but its next dose is past; ``current-over-cap``."""
    if continuing and len(inp.history) and inp.current is not None:
        due = float(inp.history.start[-1]) + inp.current.interval_h
        if due < inp.as_of - 1.0 / 60.0:
            alerts.append(Alert("dose-overdue", "caution", "doses",
                                f"the next dose of the standing order was due at {inp.clock.format(due)}, before the "
                                f"assessment time; no later dose is recorded"))
    if current is not None and not _within_caps(current, inp.rules):
        alerts.append(Alert("current-over-cap", "caution", "schedule", "the standing order is above the single or daily dose cap"))


def _regimen(inp: RegimenInput, targets: Targets, mode: str, chosen: Candidate, alts: list[Candidate],
             current: Candidate | None, continuing: bool,
             extra: dict[str, Any] | None) -> tuple[dict[str, Any], float, Any]:
    """(the contract's regimen object, first maintenance dose h, the nearer grid time) before loading."""
    reg = _shape(inp, chosen, targets, mode, continuing)
    first, nearer = reg.pop("_first"), reg.pop("_nearer")
    if current is not None:
        reg["current_predicted"] = current.predicted()
        reg["current_on_target"] = current.on_target
    reg["alternatives"] = []
    for a in alts:
        shaped = _shape(inp, a, targets, mode, False)
        shaped.pop("_first")
        shaped.pop("_nearer")
        reg["alternatives"].append(shaped)
    if extra:
        reg.update(extra)
    return reg, first, nearer


def _with_loading(inp: RegimenInput, targets: Targets, mode: str, chosen: Candidate, reg: dict[str, Any],
                  load: tuple[float, loading.Loading, float]) -> float:
    """The loading dose put into the regimen object; the first maintenance dose after it (h)."""
    t_load, ld, ld_tinf = load
    reg["loading_dose"] = {"dose_mg": ld.dose_mg, "infusion_h": ld_tinf, "at": inp.clock.format(t_load),
                           "exact_mg": ld.exact_mg, "capped": ld.capped, "basis": ld.basis}
    if mode == "continuous":
        first = t_load + ld_tinf
    else:
        first = handover.align(t_load + chosen.interval_h, handover.admin_times(inp.rules, chosen.interval_h),
                               inp.clock)
    reg["next_dose_at"] = inp.clock.format(first)
    reg["next_levels"] = handover.next_levels(inp.rules, targets, mode, inp.option or inp.method, first, chosen.interval_h,
                                              chosen.infusion_h, inp.clock)
    reg["skipped_doses"] = [inp.clock.format(t) for t in wardclock.skipped(
        float(inp.history.start[-1]) if len(inp.history) else None,
        inp.current.interval_h if inp.current else None, inp.as_of, t_load)]
    return first


def _cap_alert(inp: RegimenInput, targets: Targets, chosen: Candidate, alerts: list[Alert]) -> None:
    band = targets.auc24
    if band is None or inp.params is None:
        return
    need = 0.5 * (band[0] + band[1]) * inp.params.cl
    cap = float(inp.rules.value("regimen.max_daily_dose_mg"))
    if need > cap:
        alerts.append(Alert("regimen-cap", "caution", "target",
                            f"the middle of the AUC24 target needs about {need:.0f} mg/day; the daily cap is "
                            f"{cap:g} mg ({inp.rules.citation('regimen.max_daily_dose_mg')})"))
