"""The registry's entry points for the classic methods, in the pipeline's shape.

Each ``estimate`` function takes the :class:`~tdmtui.core.estimation.context.MethodContext`
and returns a :class:`~tdmtui.core.registry.MethodRun`; each ``refit`` runs
the same method on a shifted context (timing sensitivity); the ``*_alerts``
functions give the alerts that belong to a method when it is the one used.
The arithmetic lives in :mod:`twolevel`, :mod:`lsq`, :mod:`estimates` and
:mod:`bayes_method`.
"""

from __future__ import annotations

import math

from tdmtui.core import registry
from tdmtui.core.estimation import bayes_estimate
from tdmtui.core.estimation import bayes_method
from tdmtui.core.estimation import bayes_refit
from tdmtui.core.estimation import twolevel
from tdmtui.core.alerts import Alert
from tdmtui.core.input.casetypes import Case, Dose
from tdmtui.core.course.history import level_exclusion
from tdmtui.core.estimation.context import MethodContext
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimation.estimates import Estimate, textbook_population
from tdmtui.core.registry import MethodRun
from tdmtui.core.estimation.runs import MethodRuns
from tdmtui.core.estimation.working import WorkingStep


def _one(est: Estimate) -> MethodRun[Estimate]:
    return MethodRun({est.method: est})


def _from_twolevel(r: twolevel.TwoLevelResult) -> Estimate:
    return Estimate(r.method, r.params, r.levels_used, r.working, r.assumption)


def _doses_before(ctx: MethodContext) -> list[Dose]:
    return [d for d in ctx.case.doses if d.start <= ctx.case.as_of]


def two_level(ctx: MethodContext) -> MethodRun[Estimate]:
    """Two-level: ke and V exactly through the two latest usable levels, all doses superposed."""
    return _one(_from_twolevel(twolevel.two_level(ctx.history, ctx.usable, ctx.case.clock.format,
                                                  min_gap_h=float(ctx.rules.value("levels.min_gap_h")))))


def sawchuk_zaske(ctx: MethodContext) -> MethodRun[Estimate]:
    """Sawchuk-Zaske over one dosing interval."""
    tau = ctx.current.interval_h if ctx.current else None
    within = float(ctx.rules.value("monitoring.steady_state_within_rel"))
    return _one(_from_twolevel(twolevel.sawchuk_zaske(_doses_before(ctx), ctx.usable, tau, within,
                                                      min_gap_h=float(ctx.rules.value("levels.min_gap_h")))))


def least_squares(ctx: MethodContext) -> MethodRun[Estimate]:
    """Proportionally weighted least squares through every usable level, no prior."""
    from tdmtui.core.estimation import lsq
    from tdmtui.core.estimation.posterior import Observations
    from tdmtui.core.models import PKParams

    obs = list(ctx.usable)
    ke, v = lsq.least_squares_fit(ctx.history, Observations.from_lists([lv.time for lv in obs],
                                                                       [lv.conc for lv in obs]))
    m = "least-squares"
    steps = [WorkingStep("Least squares", "minimise sum ((y - C(t; ke, V)) / y)^2 over the whole dose history",
                         f"{len(obs)} levels: " + ", ".join(f"{lv.conc:g}" for lv in obs) + " mg/L",
                         f"ke {ke:.4g} /h, V {v:.4g} L", m),
             WorkingStep("Clearance", "CL = ke x V", f"{ke:.4g} x {v:.4g}", f"{ke * v:.4g} L/h", m)]
    return _one(Estimate(m, PKParams.one_compartment(ke, v), [lv.index for lv in obs], steps,
                         f"proportionally weighted least squares through {len(obs)} levels, no prior"))


def population(ctx: MethodContext) -> MethodRun[Estimate]:
    """The library's hand-calculation population relations from CrCl and weight."""
    return _one(textbook_population(ctx.rules, ctx.renal.crcl_ml_min, ctx.case.patient.weight,
                                    ctx.renal.dosing_weight_kg))


#: The one-level methods (:mod:`onelevel`), by id.
ONE_LEVEL = ("one-level", "one-level-steady-state", "continuous-steady-state")


def latest_in_continuous(ctx: MethodContext) -> bool:
    """Whether the latest level a one-compartment method can use was drawn during a continuous infusion."""
    from tdmtui.core.course.history import running_continuous

    cands = bayes_method.levels_for(ctx, False)
    return bool(cands) and running_continuous(ctx.case, cands[-1], ctx.rules) is not None


def _one_level(ctx: MethodContext, name: str) -> Estimate:
    """A one-level method on the latest level a one-compartment method can use (censored ones give a bound)."""
    from tdmtui.core.estimation import onelevel
    from tdmtui.core.course.history import running_continuous

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


def one_level(ctx: MethodContext) -> MethodRun[Estimate]:
    """One level, population volume, every dose superposed."""
    return _one(_one_level(ctx, "one-level"))


def one_level_steady_state(ctx: MethodContext) -> MethodRun[Estimate]:
    """The classic single-level steady-state method."""
    return _one(_one_level(ctx, "one-level-steady-state"))


def continuous_steady_state(ctx: MethodContext) -> MethodRun[Estimate]:
    """CL = rate / level at steady state during a continuous infusion."""
    return _one(_one_level(ctx, "continuous-steady-state"))


def why_set_aside(ctx: MethodContext) -> list[str]:
    """The levels one-compartment methods set aside, as one note."""
    aside = set_aside(ctx)
    return ["set aside: " + "; ".join(aside)] if aside else []


def why_set_aside_or_bounded(ctx: MethodContext) -> list[str]:
    """The levels set aside, and the ke bound each below-limit level implies."""
    return why_set_aside(ctx) + censored_bounds(ctx)


def refit_two_level(ctx: MethodContext, est: Estimate) -> Estimate | None:
    """Two-level again on a shifted case."""
    try:
        r = twolevel.two_level(ctx.history, ctx.usable, min_gap_h=float(ctx.rules.value("levels.min_gap_h")))
    except (NoEstimateError, ConvergenceError):
        return None
    return Estimate(r.method, r.params)


def refit_sawchuk_zaske(ctx: MethodContext, est: Estimate) -> Estimate | None:
    """Sawchuk-Zaske again on a shifted case."""
    try:
        r = twolevel.sawchuk_zaske(_doses_before(ctx), ctx.usable, ctx.current.interval_h if ctx.current else None,
                                   float(ctx.rules.value("monitoring.steady_state_within_rel")),
                                   min_gap_h=float(ctx.rules.value("levels.min_gap_h")))
    except (NoEstimateError, ConvergenceError):
        return None
    return Estimate(r.method, r.params)


def refit_bayesian(ctx: MethodContext, est: Estimate) -> Estimate | None:
    """MAP again on the same model."""
    return bayes_refit.refit(ctx, est.model["id"], est.warm) if est.model else None


def refit_bayesian_many(ctx: MethodContext, est: Estimate, cases: list[Case]) -> list[Estimate | None]:
    """MAP again on the same model for many shifted copies of the case, each model's copies in one batch."""
    return bayes_refit.refit_many(ctx, est.model["id"], est.warm, cases) if est.model else [None] * len(cases)


def bayesian_alerts(ctx: MethodContext, est: Estimate, runs: MethodRuns) -> list[Alert]:
    """The primary model's flags and poorly fitted levels."""
    return list(runs.flags.get("bayesian", ())) + bayes_estimate.residual_alerts(est, ctx.rules)


def population_alerts(ctx: MethodContext, est: Estimate, runs: MethodRuns) -> list[Alert]:
    """A caution when usable levels exist but the population estimate used ignores them."""
    measured = bayes_method.levels_for(ctx, True)
    if not measured:
        return []
    users = [m.id for m in registry.auto_order() if m.id != est.method and m.id in runs.estimates]
    if not users:
        return [Alert("levels-unused", "caution", "method",
                      f"{len(measured)} usable level(s) on record but the estimate used is the population one, which "
                      "ignores them: no method could use them here (see the methods not available)")]
    other = runs.estimates[users[0]]
    cur = other.current(ctx.current)
    auc = f"; it gives AUC24 {cur['auc24_mg_h_per_l']:.0f} mg*h/L for the current regimen" if cur else ""
    return [Alert("levels-unused", "caution", "method",
                  f"{len(measured)} usable level(s) on record but the estimate used is the population one, which "
                  f"ignores them. The {users[0]} estimate uses them{auc}: the automatic method would choose it")]
