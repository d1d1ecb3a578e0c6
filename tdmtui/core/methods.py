"""Every estimation method run side by side, compared, and the regimen attached.

The orchestrator (:mod:`compute`) calls :func:`run_all`, then :func:`compare`
for disagreement warnings, then :func:`attach_regimen`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core import bayes_method, twolevel
from tdmtui.core.alerts import Alert
from tdmtui.core.case import Case, Level
from tdmtui.core.course import CurrentRegimen, level_exclusion
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimates import Estimate, textbook_population
from tdmtui.core.library import Rules
from tdmtui.core.models import DoseArrays
from tdmtui.core.patient import RenalSummary

if TYPE_CHECKING:
    from tdmtui.core.compute import Outcome


@dataclass
class MethodContext:
    """What every method needs."""

    case: Case
    rules: Rules
    renal: RenalSummary
    history: DoseArrays
    usable: list[Level]
    current: CurrentRegimen | None
    model_flags: list[Alert] | None = None


def _from_twolevel(r: twolevel.TwoLevelResult) -> Estimate:
    return Estimate(r.method, r.params, r.levels_used, r.working, r.assumption)


def run_all(ctx: MethodContext) -> tuple[dict[str, Estimate], dict[str, str]]:
    """Run every method that applies; return estimates and, per failed method, why."""
    est: dict[str, Estimate] = {}
    why: dict[str, str] = {}
    rrt = ctx.case.patient.renal_replacement != "none"
    doses_before = [d for d in ctx.case.doses if d.start <= ctx.case.as_of]
    attempts: list[tuple[str, Any]] = [
        ("two-level", lambda: _from_twolevel(twolevel.two_level(ctx.history, ctx.usable, ctx.case.clock.format))),
        ("sawchuk-zaske", lambda: _from_twolevel(twolevel.sawchuk_zaske(
            doses_before, ctx.usable, ctx.current.interval_h if ctx.current else None,
            float(ctx.rules.value("monitoring.steady_state_within_rel"))))),
        ("population", lambda: textbook_population(ctx.rules, ctx.renal.crcl_ml_min, ctx.case.patient.weight,
                                                   ctx.renal.dosing_weight_kg)),
    ]
    for name in ONE_LEVEL:
        if name != "continuous-steady-state" or _latest_in_continuous(ctx):
            attempts.append((name, lambda name=name: one_level(ctx, name)))
    if len(ctx.usable) >= 3:
        attempts.insert(2, ("least-squares", lambda: _least_squares(ctx)))
    else:
        why["least-squares"] = f"needs three or more usable levels; {len(ctx.usable)} available"
    aside = set_aside(ctx)
    for name, fn in attempts:
        if rrt:
            why[name] = "not valid with renal replacement therapy (Cockcroft-Gault and two-level methods do not apply)"
            continue
        try:
            est[name] = fn()
        except (NoEstimateError, ConvergenceError) as exc:
            why[name] = getattr(exc, "why", str(exc))
            if aside and name in ("two-level", "sawchuk-zaske", "least-squares"):
                why[name] += "; set aside: " + "; ".join(aside)
            if name in ("two-level", "sawchuk-zaske"):
                why[name] += "".join(f"; {b}" for b in censored_bounds(ctx))
    b_est, b_why, flags = bayes_method.run(ctx)
    est.update(b_est)
    why.update(b_why)
    ctx.model_flags = flags
    return est, why


#: The one-level methods (:mod:`onelevel`), by id.
ONE_LEVEL = ("one-level", "one-level-steady-state", "continuous-steady-state")


def _latest_in_continuous(ctx: MethodContext) -> bool:
    from tdmtui.core.course import running_continuous

    cands = bayes_method.levels_for(ctx, False)
    return bool(cands) and running_continuous(ctx.case, cands[-1], ctx.rules) is not None


def one_level(ctx: MethodContext, name: str) -> Estimate:
    """A one-level method on the latest level a one-compartment method can use (censored ones give a bound)."""
    from tdmtui.core import onelevel
    from tdmtui.core.course import running_continuous

    cands = [lv for lv in bayes_method.levels_for(ctx, False)]
    if not cands:
        raise NoEstimateError(name, "needs one usable level; none available")
    lv = cands[-1]
    running = running_continuous(ctx.case, lv, ctx.rules)
    if name == "continuous-steady-state":
        if running is None:
            raise NoEstimateError(name, f"levels[{lv.index}] was not drawn during a continuous infusion")
    elif running is not None and name == "one-level-steady-state":
        raise NoEstimateError(name, f"levels[{lv.index}] was drawn during a continuous infusion: see "
                                    "continuous-steady-state")
    pop = textbook_population(ctx.rules, ctx.renal.crcl_ml_min, ctx.case.patient.weight, ctx.renal.dosing_weight_kg)
    before = [d for d in ctx.case.doses if d.start < lv.time]
    inp = onelevel.OneLevelInput(ctx.history, lv, pop.params.v1, pop.working[1],
                                 ctx.current.interval_h if ctx.current else None, before[-1] if before else running,
                                 float(ctx.rules.value("monitoring.steady_state_within_rel")))
    fn = {"one-level": onelevel.superposition, "one-level-steady-state": onelevel.steady_state_trough,
          "continuous-steady-state": onelevel.continuous_steady_state}[name]
    return fn(inp)


def censored_bounds(ctx: MethodContext) -> list[str]:
    """The ke bound each below-limit level implies with the quantified level before it after the same dose.

    C falls at least as fast as e^(-ke dt) after an infusion ends (one compartment), so a later level below
    the limit LOQ means ke >= ln(C_earlier / LOQ) / dt.
    """
    out = []
    usable = {lv.index for lv in ctx.usable}
    levels = [lv for lv in ctx.case.levels if lv.time <= ctx.case.as_of]
    for b in levels:
        if not (b.below_loq and b.use):
            continue
        earlier = [a for a in levels if a.index in usable and a.time < b.time]
        if not earlier:
            continue
        a = earlier[-1]
        if any(a.time < d.start < b.time for d in ctx.case.doses) or a.conc <= b.conc:
            continue
        ke = math.log(a.conc / b.conc) / (b.time - a.time)
        out.append(f"levels[{b.index}] is below the assay limit (< {b.conc:g} mg/L) {b.time - a.time:.3g} h after "
                   f"levels[{a.index}] {a.conc:g} mg/L: ke is at least {ke:.4g} /h (half-life at most "
                   f"{math.log(2) / ke:.3g} h); the Bayesian estimate uses it as that bound")
    return out


def set_aside(ctx: MethodContext) -> list[str]:
    """Each level on record that one-compartment methods set aside, named, with why."""
    out = []
    for lv in ctx.case.levels:
        if lv.time > ctx.case.as_of:
            out.append(f"levels[{lv.index}] ({lv.conc:g} mg/L) is after the as_of time")
            continue
        why = level_exclusion(ctx.case, lv, ctx.rules)
        if why is not None:
            out.append(f"levels[{lv.index}] ({'<' if lv.below_loq else '>' if lv.above_uloq else ''}{lv.conc:g} mg/L, "
                       f"{ctx.case.clock.format(lv.time)}) {why[1]}")
    return out


def _least_squares(ctx: MethodContext) -> Estimate:
    from tdmtui.core import lsq
    from tdmtui.core.bayes import Observations
    from tdmtui.core.models import PKParams
    from tdmtui.core.working import WorkingStep

    obs = list(ctx.usable)
    ke, v = lsq.least_squares_fit(ctx.history, Observations.from_lists([lv.time for lv in obs],
                                                                       [lv.conc for lv in obs]))
    m = "least-squares"
    steps = [WorkingStep("Least squares", "minimise sum ((y - C(t; ke, V)) / y)^2 over the whole dose history",
                         f"{len(obs)} levels: " + ", ".join(f"{lv.conc:g}" for lv in obs) + " mg/L",
                         f"ke {ke:.4g} /h, V {v:.4g} L", m),
             WorkingStep("Clearance", "CL = ke x V", f"{ke:.4g} x {v:.4g}", f"{ke * v:.4g} L/h", m)]
    return Estimate(m, PKParams.one_compartment(ke, v), [lv.index for lv in obs], steps,
                    f"proportionally weighted least squares through {len(obs)} levels, no prior")


def _gap(a: Estimate, b: Estimate, cur: CurrentRegimen | None) -> tuple[float, str]:
    """Relative difference on AUC24 (current regimen) where there is one, else on ke."""
    ca, cb = a.current(cur), b.current(cur)
    if ca and cb:
        x, y, what = ca["auc24_mg_h_per_l"], cb["auc24_mg_h_per_l"], "AUC24"
    else:
        x, y, what = a.params.ke, b.params.ke, "ke"
    return abs(x - y) / max(abs(x), abs(y)), what


def compare(ctx: MethodContext, est: dict[str, Estimate], used: str) -> list[Alert]:
    """Warn where methods disagree by more than the library's threshold, saying which to trust less.

    Pairs judged (issue rules): two-level vs Sawchuk-Zaske; two-level vs the
    primary Bayesian estimate (on AUC24); and, against a two-compartment
    Bayesian model, the two-level ke vs that model's terminal rate (beta).
    """
    out: list[Alert] = []
    limit = float(ctx.rules.value("methods.disagreement_rel"))
    a, b, bay = est.get("two-level"), est.get("sawchuk-zaske"), est.get("bayesian")
    if a and b:
        gap, what = _gap(a, b, ctx.current)
        if gap > limit:
            out.append(Alert("methods-disagree", "caution", "levels",
                             f"two-level and Sawchuk-Zaske differ on {what} by {gap:.0%} (over {limit:.0%}): "
                             f"trust Sawchuk-Zaske less when the regimen was not at steady state ({b.assumption}); "
                             "the two-level fit uses the whole dose history"))
    for name in ONE_LEVEL:
        one = est.get(name)
        if one is None or bay is None or a is not None:
            continue
        gap, what = _gap(one, bay, ctx.current)
        if gap > limit:
            out.append(Alert("methods-disagree-one-level", "caution", "levels",
                             f"{name} and Bayesian differ on {what} by {gap:.0%} (over {limit:.0%}): the one-level "
                             "answer rests on the population volume and a single level; trust it less when the "
                             "patient's volume is unusual (obesity, oedema, critical illness); trust the Bayesian one "
                             "less when the patient is outside its models' populations"))
    if a and bay:
        gap, what = _gap(a, bay, ctx.current)
        if gap > limit:
            model = (bay.model or {}).get("name", "the population model")
            out.append(Alert("methods-disagree-bayesian", "caution", "levels",
                             f"two-level and Bayesian ({model}) differ on {what} by {gap:.0%} (over {limit:.0%}): "
                             "trust the two-level estimate less when a level time is uncertain or the levels are "
                             "close together; trust the Bayesian one less when the patient is outside its population "
                             "or its model was checked against a secondary copy only"))
        if bay.params.is_two_compartment:
            from tdmtui.core.estimates import two_compartment_figures

            beta = two_compartment_figures(bay.params)["beta_per_h"]
            rel = abs(a.params.ke - beta) / max(a.params.ke, beta)
            if rel > limit:
                out.append(Alert("ke-vs-terminal-rate", "info", "levels",
                                 f"two-level ke {a.params.ke:.4f} /h differs from the two-compartment model's terminal "
                                 f"rate {beta:.4f} /h by {rel:.0%}: the one-compartment ke mixes distribution and "
                                 "elimination when levels are drawn early; trust it less for long-interval predictions"))
    return out


def used_alerts(ctx: MethodContext, est: Estimate, estimates: dict[str, Estimate] | None = None) -> list[Alert]:
    """Alerts that belong to the method actually used (model cautions, poor fit, levels left unused)."""
    if est.method == "population":
        return _levels_unused(ctx, estimates or {})
    if est.method != "bayesian":
        return []
    return list(ctx.model_flags or []) + bayes_method.residual_alerts(est, ctx.rules)


def levels_for_estimates(ctx: MethodContext) -> list[Level]:
    """Levels some method can use: in use, after the first dose, not during an intermittent infusion
    (censored levels and levels in the distribution window included)."""
    return bayes_method.levels_for(ctx, True)


def _levels_unused(ctx: MethodContext, estimates: dict[str, Estimate]) -> list[Alert]:
    """A caution when usable levels exist but the population estimate used ignores them."""
    measured = levels_for_estimates(ctx)
    if not measured:
        return []
    users = [name for name in ("two-level", "bayesian", "one-level") if name in estimates]
    if not users:
        return [Alert("levels-unused", "caution", "method",
                      f"{len(measured)} usable level(s) on record but the estimate used is the population one, which "
                      "ignores them: no method could use them here (see the methods not available)")]
    other = estimates[users[0]]
    cur = other.current(ctx.current)
    auc = f"; it gives AUC24 {cur['auc24_mg_h_per_l']:.0f} mg*h/L for the current regimen" if cur else ""
    return [Alert("levels-unused", "caution", "method",
                  f"{len(measured)} usable level(s) on record but the estimate used is the population one, which "
                  f"ignores them. The {users[0]} estimate uses them{auc}: the automatic method would choose it")]


def level_table(ctx: MethodContext) -> list[dict[str, Any]]:
    """Each level with whether it is usable and why not, for the note and the app."""
    rows = []
    for lv in ctx.case.levels:
        why = level_exclusion(ctx.case, lv, ctx.rules)
        rows.append({"field": f"levels[{lv.index}]", "time": ctx.case.clock.format(lv.time), "conc_mg_per_l": lv.conc,
                     "below_loq": lv.below_loq, "above_uloq": lv.above_uloq,
                     "usable": why is None and lv.time <= ctx.case.as_of,
                     "excluded_because": None if why is None else why[1], "timing": lv.timing})
    return rows


def attach_regimen(ctx: MethodContext, outcome: Outcome, est: Estimate, auto: bool = False) -> list[Alert]:
    """Design the regimen with the chosen estimate; put it in the result. Returns its alerts.

    ``auto``: the method was chosen automatically; on an extended-interval course where the chart applies
    (regimen/extended.applies) the nomogram is read, with the individualised estimate beside it.
    """
    import dataclasses

    from tdmtui.core.regimen import RegimenInput, design
    from tdmtui.core.regimen.extended import applies

    p = ctx.case.patient
    inp = (RegimenInput(
        drug=ctx.case.drug, rules=ctx.rules, case_target=ctx.case.target, params=est.params, history=ctx.history,
        as_of=ctx.case.as_of, clock=ctx.case.clock, current=ctx.current,
        dosing_weight_kg=ctx.renal.dosing_weight_kg, tbw_kg=p.weight, bmi=ctx.renal.bmi,
        crcl_ml_min=ctx.renal.crcl_ml_min, renal_replacement=p.renal_replacement, conditions=p.conditions,
        samples=est.samples, method=outcome.result.get("method") or est.method, levels=ctx.case.levels,
        doses=ctx.case.doses))
    extra: list[Alert] = []
    if auto and inp.method != "nomogram" and applies(inp):
        inp = dataclasses.replace(inp, method="nomogram")
        extra.append(Alert("nomogram-auto", "info", "method",
                           f"extended-interval course with a level in the chart's window: the interval is read on the "
                           f"nomogram; the individualised estimate ({est.method}) gives the predictions beside it"))
    plan = design(inp)
    outcome.result["regimen"] = plan.regimen
    outcome.result["target"] = plan.targets
    outcome.result["sources"].update(plan.sources)
    outcome.plan = plan.doses
    outcome.regimen_plan = plan
    return extra + list(plan.alerts)


def concentration_band(ctx: MethodContext, est: Estimate, plan: DoseArrays | None):  # noqa: ANN201
    """90 % concentration band over the history and plan from posterior draws, or None."""
    if not est.samples:
        return None
    doses = ctx.history if plan is None else ctx.history.concat(plan)
    if len(doses) == 0:
        return None
    t0 = float(doses.start[0])
    t1 = max(ctx.case.as_of, float(doses.start[-1] + doses.duration[-1])) + 24.0
    from tdmtui.core.models.batch import Design, batch_concentration

    t = np.linspace(t0, t1, 240)
    s, n = est.samples, 400
    curves = batch_concentration(s.cl[:n], s.v1[:n], s.q[:n], s.v2[:n], Design.build(doses, t))
    lo, hi = np.percentile(curves, [5, 95], axis=0)
    return t, lo, hi
