"""Bayesian and model-based population estimates in the orchestrator's shape.

For each population model the library offers for the drug (popmodels), a MAP
fit on the case's levels (bayes) gives one :class:`Estimate` named
``bayesian:<model id>`` (:mod:`bayes_estimate`), with 90 % intervals from the
posterior draws, the probability that the current regimen meets its target,
observed-vs-predicted residuals and how far the estimate moved from the
population value. ``bayesian`` is the model average (:mod:`bayes_average`);
when no model fits, the primary model (the first offered one, in the order of
the model files' ``preference.rank``, that is neither excluded nor flagged out
of population, else the first not excluded), whatever its verification status
(a model checked against a secondary copy only carries a caution); each
model's a priori prediction is ``population:<model id>``.

Levels: quantified or censored (below/above limits) levels that are in use,
drawn after the first dose and not during an infusion. One-compartment models
leave out levels in the post-distribution window; two-compartment models may
use them (case-format.md).
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING, Any

from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimation.bayes_average import averaged, eligible
from tdmtui.core.estimation.bayes_estimate import N_DRAWS, estimate, observations
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.registry import MethodRun

if TYPE_CHECKING:
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.estimation.popmodels import Covariates, PopModel
    from tdmtui.core.input.casetypes import Case, Level
    from tdmtui.core.library import Rules


def levels_for(ctx: MethodContext, two_compartment: bool) -> list:
    """The case's levels a model of this structure fits (module docstring)."""
    return levels_by_structure(ctx)[two_compartment]


def levels_by_structure(ctx: MethodContext) -> dict[bool, list]:
    """:func:`levels_for` one- (False) and two-compartment (True) models, each level judged once."""
    return case_levels_by_structure(ctx.case, ctx.rules)


def case_levels_by_structure(case: Case, rules: Rules) -> dict[bool, list[Level]]:
    """:func:`levels_by_structure` of a case under these rules."""
    from tdmtui.core.course.history import level_exclusion

    out: dict[bool, list[Level]] = {False: [], True: []}
    for lv in case.levels:
        if lv.time > case.as_of:
            continue
        why = level_exclusion(case, lv, rules)
        if why is None or why[0] == "level-censored":
            out[False].append(lv)
            out[True].append(lv)
        elif why[0] == "level-in-distribution":
            out[True].append(lv)
    return out


def covariates_of(ctx: MethodContext) -> Covariates:
    """The patient's covariates as the population models read them."""
    from tdmtui.core.estimation import popmodels

    p = ctx.case.patient
    return popmodels.Covariates(p.age, p.sex, p.weight, p.height, ctx.renal.scr_measured_mg_dl,
                                p.renal_replacement, p.conditions)


def model_course(ctx: MethodContext, model: PopModel, cov: Covariates, steps: list) -> tuple[Any, Any, Any]:
    """(renal schedule or None, latest typical or None, posterior.Course or None) for one model."""
    from tdmtui.core.input import dialysis
    from tdmtui.core.estimation import renalcourse

    sched = renalcourse.schedule_for(model, cov, steps)
    typical = sched.latest if sched is not None else None
    sessions, session_cl = dialysis.fit_sessions(ctx.case, ctx.rules)
    course = renalcourse.build_course(sched, typical or model.typical(cov), sessions, session_cl)
    return sched, typical, course


def run(ctx: MethodContext, follow_renal: bool = True) -> MethodRun:
    """Every offered model's MAP and a priori estimates, their average; failures by name; the flags.

    ``bayesian`` is the model average (:mod:`averaging`) over the models that
    fit the patient; when none does, the first by rank that is not excluded.
    With dated SCr values that change, each fit follows them (:mod:`renalcourse`);
    when renal function is unstable (``scr-unstable``) the fit with one fixed
    (latest) CrCl is shown beside it as ``bayesian:fixed-renal``.
    """
    from tdmtui.core.estimation import renalcourse

    steps = renalcourse.steps_of(ctx.case) if follow_renal else []
    out = _run(ctx, steps)
    if steps and follow_renal and ctx.renal.unstable and "bayesian" in out.estimates:
        fixed = _run(ctx, []).estimates.get("bayesian")
        if fixed is not None:
            fixed.extra["renal_note"] = ("fitted as if the latest CrCl had held through the course, shown beside "
                                         "the estimate that follows each dated SCr")
            out.estimates["bayesian:fixed-renal"] = dataclasses.replace(fixed, method="bayesian:fixed-renal")
    return out


def _run(ctx: MethodContext, steps: list) -> MethodRun:
    from tdmtui.core.estimation import popmodels

    cov = covariates_of(ctx)
    offers = sorted(popmodels.offered_models(ctx.case.drug, cov),
                    key=lambda o: int(o.model.data.get("preference", {}).get("rank", 99)))
    if not offers:
        return MethodRun({}, {"bayesian": popmodels.not_available_reason(ctx.case.drug)})
    usable_offers = [o for o in offers if not o.excluded]
    in_population = [o for o in usable_offers if not o.out_of_population]
    primary = next(iter(in_population or usable_offers), None)
    est, why, fitted = _fit_each(ctx, offers, cov, steps)
    members, left_out = eligible(fitted)
    for o, reason in left_out:
        if f"bayesian:{o.model.id}" in est:
            est[f"bayesian:{o.model.id}"].extra["weight"] = 0.0
            est[f"bayesian:{o.model.id}"].extra["weight_note"] = reason
    if members:
        est["bayesian"], flags = averaged(ctx, members, est)
        return MethodRun(est, why, tuple(flags))
    if primary is None:
        why["bayesian"] = "every offered model is excluded for this patient"
    elif f"bayesian:{primary.model.id}" in est:
        est["bayesian"] = est.pop(f"bayesian:{primary.model.id}")
    else:
        why["bayesian"] = why.get(f"bayesian:{primary.model.id}", "no estimate")
    flags = list(primary.alerts) if primary is not None else []
    return MethodRun(est, why, tuple(flags))


def _fit_each(ctx: MethodContext, offers: list, cov: Any,
              steps: list) -> tuple[dict[str, Estimate], dict[str, str], list[tuple[Any, Any, list, Any]]]:
    """Each offered model's a priori and MAP estimates, why a model gave none, and the fits made."""
    from tdmtui.core.estimation import bayes
    from tdmtui.core.estimation.draws import importance_samples

    est: dict[str, Estimate] = {}
    why: dict[str, str] = {}
    fitted: list[tuple[Any, Any, list, Any]] = []
    by_structure = levels_by_structure(ctx)
    for o in offers:
        key = f"bayesian:{o.model.id}"
        if o.excluded:
            why[key] = "; ".join(a.message for a in o.alerts if a.severity == "stop")
            continue
        levels = by_structure[o.model.compartments == 2]
        try:
            sched, typical, course = model_course(ctx, o.model, cov, steps)
            prior = bayes.population_fit(o.model, cov, ctx.history, course=course, typical=typical)
            est[f"population:{o.model.id}"] = estimate(f"population:{o.model.id}", prior, [], ctx, o, True,
                                                       renal=sched)
            if levels:
                fit = bayes.map_fit(o.model, cov, ctx.history, observations(levels), course=course, typical=typical)
                samples = importance_samples(fit, N_DRAWS, resample=True)
                est[key] = estimate(key, fit, levels, ctx, o, False, samples, renal=sched)
                est[key].warm = {o.model.id: fit.eta}
                fitted.append((o, fit, levels, samples))
            else:
                why[key] = "no usable level for a Bayesian fit (the a priori estimate is shown as population)"
        except (NoEstimateError, ConvergenceError) as exc:
            why[key] = getattr(exc, "why", str(exc))
    return est, why, fitted
