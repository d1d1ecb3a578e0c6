"""Bayesian and model-based population estimates in the orchestrator's shape.

For each population model the library offers for the drug (popmodels), a MAP
fit on the case's levels (bayes) gives one :class:`Estimate` named
``bayesian:<model id>``, with 90 % intervals from the Laplace posterior, the
probability that the current regimen meets its target, observed-vs-predicted
residuals and how far the estimate moved from the population value. The
primary model (the first offered one, in the order of the model files'
``preference.rank``, that is neither excluded nor flagged out of population,
else the first not excluded) is also returned as ``bayesian``, whatever its
verification status (a model checked against a secondary copy only carries a
caution); its a priori prediction as ``population:<model id>``.

Levels: quantified or censored (below/above limits) levels that are in use,
drawn after the first dose and not during an infusion. One-compartment models
leave out levels in the post-distribution window; two-compartment models may
use them (case-format.md).
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.alerts import Alert
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.registry import MethodRun
from tdmtui.core.estimation.working import WorkingStep

if TYPE_CHECKING:
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.library import Rules

#: Posterior draws for intervals and target probability (recorded with the seed).
#: Drawn by importance resampling from a widened Laplace proposal: equal-weight
#: draws from the exact posterior, since plain Laplace intervals ran 8-13 % narrow
#: on two-compartment fits (bench/bench_bayes.py).
N_DRAWS = 2000


def levels_for(ctx: MethodContext, two_compartment: bool) -> list:
    from tdmtui.core.course.history import level_exclusion

    out = []
    for lv in ctx.case.levels:
        if lv.time > ctx.case.as_of:
            continue
        why = level_exclusion(ctx.case, lv, ctx.rules)
        if why is None or why[0] == "level-censored" or (two_compartment and why[0] == "level-in-distribution"):
            out.append(lv)
    return out


def _uncertainty(ctx: MethodContext, samples: Any) -> tuple[dict[str, list[float]], float | None]:
    """90 % intervals of the estimate's figures and the current regimen's probability of target."""
    from tdmtui.core.estimation import bayes

    cur = ctx.current
    iv = bayes.regimen_intervals(samples, cur.dose_mg if cur else None, cur.interval_h if cur else None,
                                 cur.infusion_h if cur else 0.0)
    keys = {"ke": "ke_per_h", "vd": "vd_l", "cl": "cl_l_per_h", "auc24": "auc24_mg_h_per_l",
            "peak": "peak_mg_per_l", "trough": "trough_mg_per_l"}
    interval90 = {keys[k]: [lo, hi] for k, (lo, hi) in iv.items()}
    prob = None
    if cur is not None and ctx.targets is not None:
        from tdmtui.core.regimen.candidates import target_probability

        prob = target_probability(samples, ctx.targets, cur.dose_mg, cur.interval_h, cur.infusion_h)
    return interval90, prob


def _estimate(name: str, fit: Any, levels: list, ctx: MethodContext, offer: Any, a_priori: bool,
              samples: Any = None, renal: Any = None) -> Estimate:
    from tdmtui.core.estimation import bayes

    model = fit.model
    if samples is None:
        samples = bayes.importance_samples(fit, N_DRAWS, resample=True)
    interval90, prob = _uncertainty(ctx, samples)
    typ = fit.typical.params
    steps = [WorkingStep("Model", f"{model.name}: {model.compartments}-compartment population model",
                         model.citation, "", name)]
    for note in fit.typical.notes:
        steps.append(WorkingStep("Covariate", "the model's own covariate rule", note, "", name))
    steps += _renal_step(ctx, renal, name)
    steps.append(WorkingStep("Population value", "typical CL and V from the covariates",
                             f"CL {typ.cl:.4g} L/h, V1 {typ.v1:.4g} L" + (f", Q {typ.q:.4g} L/h, V2 {typ.v2:.4g} L" if typ.is_two_compartment else ""),
                             f"ke {typ.ke:.4g} /h", name))
    if not a_priori:
        steps.append(WorkingStep("MAP estimate", "minimise sum (y - C)^2/Var + ln Var + eta' Omega^-1 eta "
                                 "(censored levels: -2 ln P(below or above the limit))",
                                 f"{len(levels)} level(s); {fit.message}; OFV {fit.objective:.4g}",
                                 f"CL {fit.params.cl:.4g} L/h, Vss {fit.params.vss:.4g} L, ke {fit.params.ke:.4g} /h", name))
        for r, lv in zip(fit.residuals(), levels):
            if r["kind"] == "quantified":
                seen, res = f"observed {r['observed']:.3g}", f"residual {r['residual']:+.3g} mg/L"
            else:
                side = "below" if r["kind"] == "below-loq" else "above"
                seen = f"reported {side} the assay limit {r['observed']:.3g} (a bound, not a value)"
                res = "likelihood of lying " + side + " the limit"
            steps.append(WorkingStep("Observed vs predicted", f"levels[{lv.index}] ({r['kind']})",
                                     f"{seen}, predicted {r['predicted']:.3g} mg/L", res, name))
    extra: dict[str, Any] = {
        "diagnostics": {
            "residuals": [dict(r, field=f"levels[{lv.index}]") for r, lv in zip(fit.residuals(), levels)] if not a_priori else [],
            "movement_sd": fit.movement(), "fold_change": fit.fold_change(), "narrowing": fit.narrowing(),
            "flags": [a.to_dict() for a in offer.alerts],
        },
    }
    model_info = {"id": model.id, "name": model.name, "citation": model.citation, "verification": model.status,
                  "caution": model.caution if model.status != "paper" else "", "seed": fit.seed, "draws": N_DRAWS,
                  "objective": fit.objective, "optimiser": fit.message,
                  "eta": [float(e) for e in fit.eta], "eta_names": list(model.eta_names),
                  "typical": {"cl_l_per_h": typ.cl, "v1_l": typ.v1, "q_l_per_h": typ.q, "v2_l": typ.v2},
                  "covariates": {k: float(v) for k, v in fit.typical.covariates.items()}}
    assumption = ("a priori: population values from covariates, no level used" if a_priori
                  else f"MAP on {model.name} with {len(levels)} level(s)")
    if renal is not None:
        from tdmtui.core.estimation.renalcourse import intervals

        extra["renal_course"] = intervals(renal, ctx.case.clock)
        assumption += "; clearance follows each dated SCr, the forecast uses the latest CrCl"
    return Estimate("population" if a_priori else "bayesian", fit.params, [lv.index for lv in levels], steps,
                    assumption, model=model_info, interval90=interval90, target_probability=prob,
                    samples=samples, extra=extra)


def _covariates(ctx: MethodContext) -> Any:
    from tdmtui.core.estimation import popmodels

    p = ctx.case.patient
    return popmodels.Covariates(p.age, p.sex, p.weight, p.height, ctx.renal.scr_measured_mg_dl,
                                p.renal_replacement, p.conditions)


def _observations(levels: list) -> Any:
    from tdmtui.core.estimation import bayes

    return bayes.Observations.from_lists([lv.time for lv in levels], [lv.conc for lv in levels],
                                         [lv.below_loq for lv in levels], [lv.above_uloq for lv in levels])


def _course(ctx: MethodContext, model: Any, cov: Any, steps: list) -> tuple[Any, Any, Any]:
    """(renal schedule or None, latest typical or None, bayes.Course or None) for one model."""
    from tdmtui.core.input import dialysis
    from tdmtui.core.estimation import renalcourse

    sched = renalcourse.schedule_for(model, cov, steps)
    typical = sched.latest if sched is not None else None
    sessions, session_cl = dialysis.fit_sessions(ctx.case, ctx.rules)
    course = renalcourse.build_course(sched, typical or model.typical(cov), sessions, session_cl)
    return sched, typical, course


def _renal_step(ctx: MethodContext, sched: Any, name: str) -> list[WorkingStep]:
    from tdmtui.core.estimation import renalcourse

    if sched is None:
        return []
    return [WorkingStep("Renal function over the course", "each dated SCr gives a CrCl by the model's own rules; "
                        "held from its draw until the next value (piecewise constant)",
                        renalcourse.describe(sched, ctx.case.clock), "typical CL follows CrCl; one eta throughout",
                        name)]


def unstable(ctx: MethodContext) -> bool:
    """True when the renal summary warned ``scr-unstable``."""
    return any(a.code == "scr-unstable" for a in ctx.renal.alerts)


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
    if steps and follow_renal and unstable(ctx) and "bayesian" in out.estimates:
        fixed = _run(ctx, []).estimates.get("bayesian")
        if fixed is not None:
            fixed.extra["renal_note"] = ("fitted as if the latest CrCl had held through the course, shown beside "
                                         "the estimate that follows each dated SCr")
            out.estimates["bayesian:fixed-renal"] = dataclasses.replace(fixed, method="bayesian:fixed-renal")
    return out


def _run(ctx: MethodContext, steps: list) -> MethodRun:
    from tdmtui.core.estimation import bayes
    from tdmtui.core.estimation import popmodels

    cov = _covariates(ctx)
    offers = sorted(popmodels.offered_models(ctx.case.drug, cov),
                    key=lambda o: int(o.model.data.get("preference", {}).get("rank", 99)))
    est: dict[str, Estimate] = {}
    why: dict[str, str] = {}
    if not offers:
        why["bayesian"] = popmodels.not_available_reason(ctx.case.drug)
        return MethodRun(est, why)
    usable_offers = [o for o in offers if not o.excluded]
    in_population = [o for o in usable_offers if not o.out_of_population]
    primary = next(iter(in_population or usable_offers), None)
    fitted: list[tuple[Any, Any, list, Any]] = []
    for o in offers:
        key = f"bayesian:{o.model.id}"
        if o.excluded:
            why[key] = "; ".join(a.message for a in o.alerts if a.severity == "stop")
            continue
        levels = levels_for(ctx, o.model.compartments == 2)
        try:
            sched, typical, course = _course(ctx, o.model, cov, steps)
            prior = bayes.population_fit(o.model, cov, ctx.history, course=course, typical=typical)
            est[f"population:{o.model.id}"] = _estimate(f"population:{o.model.id}", prior, [], ctx, o, True,
                                                        renal=sched)
            if levels:
                fit = bayes.map_fit(o.model, cov, ctx.history, _observations(levels), course=course, typical=typical)
                samples = bayes.importance_samples(fit, N_DRAWS, resample=True)
                est[key] = _estimate(key, fit, levels, ctx, o, False, samples, renal=sched)
                est[key].warm = {o.model.id: fit.eta}
                fitted.append((o, fit, levels, samples))
            else:
                why[key] = "no usable level for a Bayesian fit (the a priori estimate is shown as population)"
        except (NoEstimateError, ConvergenceError) as exc:
            why[key] = getattr(exc, "why", str(exc))
    members, left_out = _eligible(fitted)
    for o, reason in left_out:
        if f"bayesian:{o.model.id}" in est:
            est[f"bayesian:{o.model.id}"].extra["weight"] = 0.0
            est[f"bayesian:{o.model.id}"].extra["weight_note"] = reason
    if members:
        est["bayesian"], flags = _averaged(ctx, members, est)
        return MethodRun(est, why, tuple(flags))
    if primary is None:
        why["bayesian"] = "every offered model is excluded for this patient"
    elif f"bayesian:{primary.model.id}" in est:
        est["bayesian"] = est.pop(f"bayesian:{primary.model.id}")
    else:
        why["bayesian"] = why.get(f"bayesian:{primary.model.id}", "no estimate")
    flags = list(primary.alerts) if primary is not None else []
    return MethodRun(est, why, tuple(flags))


def _condition_mismatch(o: Any) -> bool:
    return any(a.code == "model-out-of-population" and a.field == "patient.conditions" for a in o.alerts)


def _eligible(fitted: list) -> tuple[list, list]:
    """Fits that take part in the average, and (offer, why not) for the others."""
    out, left = [], []
    for item in fitted:
        if _condition_mismatch(item[0]):
            left.append((item[0], "no weight: the model was built only on patients with a condition this patient "
                                  "does not have"))
        else:
            out.append(item)
    widest = max((len(f[2]) for f in out), default=0)
    keep = [f for f in out if len(f[2]) == widest]
    left += [(f[0], "no weight: a one-compartment model cannot use the level drawn in the distribution window "
                    "that the other models use") for f in out if len(f[2]) != widest]
    return keep, left


def _averaged(ctx: MethodContext, fitted: list, est: dict[str, Estimate]) -> tuple[Estimate, list[Alert]]:
    from tdmtui.core.estimation import averaging
    from tdmtui.core.models import concentration

    members = [averaging.Member(o.model.id, o.model.name, fit, samples, averaging.log_evidence(fit))
               for o, fit, _, samples in fitted]
    w = averaging.weights([m.log_evidence for m in members])
    for m, x in zip(members, w):
        est[f"bayesian:{m.model_id}"].extra["weight"] = x
        est[f"bayesian:{m.model_id}"].extra["log_evidence"] = m.log_evidence
    params = averaging.point(members, w)
    mix = averaging.mixture(members, w, N_DRAWS, members[0].fit.seed)
    interval90, prob = _uncertainty(ctx, mix)
    levels = fitted[0][2]
    name = "bayesian"
    share = ", ".join(f"{m.name.split(' (')[0]} {100 * x:.0f} %" for m, x in zip(members, w))
    steps = [WorkingStep("Model average", "w_m = p(levels | m) / sum_k p(levels | k); p(levels | m) = the levels' "
                         "likelihood integrated over the model's prior (importance sampling, equal prior weights)",
                         "; ".join(f"{m.name.split(' (')[0]}: ln p = {m.log_evidence:.4g}" for m in members),
                         f"weights {share}", name),
             WorkingStep("Averaged estimate", "weighted geometric mean of each parameter"
                         + ("" if len({m.fit.params.is_two_compartment for m in members}) == 1
                            else " (one-compartment equivalent: CL and Vss)"),
                         "; ".join(f"{m.name.split(' (')[0]} CL {m.fit.params.cl:.4g} L/h, Vss {m.fit.params.vss:.4g} L"
                                   for m in members),
                         f"CL {params.cl:.4g} L/h, Vss {params.vss:.4g} L, ke {params.ke:.4g} /h", name)]
    obs = _observations(levels)
    pred = concentration(params, ctx.history, obs.time) if len(obs) else np.zeros(0)
    first = est[f"bayesian:{members[0].model_id}"]
    if "renal_course" in first.extra and len(obs):  # levels predicted piece by piece: the members' weighted mean
        pred = sum(x * m.fit.predict(obs.time) for m, x in zip(members, w))
        steps += [s for s in first.working if s.title == "Renal function over the course"]
    kinds = ["below-loq" if lv.below_loq else "above-uloq" if lv.above_uloq else "quantified" for lv in levels]
    residuals = [{"time_h": lv.time, "observed": lv.conc, "predicted": float(p), "residual": float(lv.conc - p),
                  "kind": k, "field": f"levels[{lv.index}]"} for lv, p, k in zip(levels, pred, kinds)]
    offers = [o for o, *_ in fitted]
    flags = _combined_flags(offers) + structure_alerts(ctx, fitted, w, est)
    secondary = any(o.model.status != "paper" for o in offers)
    title = f"the model average ({share})" if len(members) > 1 else members[0].name  # one model: its own name
    model_info = {"id": "model-average", "name": title, "citation": averaging.CITATION,
                  "verification": "secondary" if secondary else "paper", "seed": members[0].fit.seed,
                  "draws": N_DRAWS, "optimiser": "MAP on each model; weights by importance sampling",
                  "weights": {m.model_id: x for m, x in zip(members, w)},
                  "log_evidence": {m.model_id: m.log_evidence for m in members},
                  "caution": " ".join(o.model.caution for o in offers if o.model.status != "paper")}
    extra: dict[str, Any] = {"diagnostics": {"residuals": residuals, "flags": [a.to_dict() for a in flags]}}
    if "renal_course" in first.extra:
        extra["renal_course"] = first.extra["renal_course"]
    said = f"model average of {len(members)} population model(s) with {len(levels)} level(s)"
    if "renal_course" in first.extra:
        said += "; clearance follows each dated SCr, the forecast uses the latest CrCl"
    e = Estimate("bayesian", params, [lv.index for lv in levels], steps, said,
                 model=model_info, interval90=interval90, target_probability=prob, samples=mix, extra=extra)
    e.warm = {**{m.model_id: m.fit.eta for m in members}, "weights": dict(zip((m.model_id for m in members), w))}
    return e, flags


def structure_alerts(ctx: MethodContext, fitted: list, w: list[float], est: dict[str, Estimate]) -> list[Alert]:
    """Cautions where the model's structure, not the levels, drives the answer.

    A weighted model whose levels moved a very variable parameter (SD >= ``methods.large_iiv_sd`` on the
    log scale) by more than ``methods.large_iiv_movement_sd``; and models that differ on the current
    regimen's AUC24 by more than ``methods.models_disagree_rel``.
    """
    r = ctx.rules
    big, move = float(r.value("methods.large_iiv_sd")), float(r.value("methods.large_iiv_movement_sd"))
    out: list[Alert] = []
    for (o, fit, levels, _), x in zip(fitted, w):
        if x < 0.05:
            continue
        for name, sd, m in zip(fit.model.eta_names, fit.omega_sd, fit.eta / fit.omega_sd):
            if sd >= big and abs(m) > move:
                out.append(Alert("bayes-large-variability-moved", "caution", "levels",
                                 f"{o.model.name.split(' (')[0]}: {len(levels)} level(s) moved {name.upper()}, a "
                                 f"parameter this model lets vary very widely (SD {sd:.2f} on the log scale), "
                                 f"{abs(m):.1f} SD from its population value: the shape of the curve, and so the "
                                 "steady-state prediction, rests on the model more than on the levels; a second "
                                 "level (a peak, or a trough at steady state) would settle it"))
    aucs = {}
    for (o, *_), x in zip(fitted, w):
        cur = est[f"bayesian:{o.model.id}"].current(ctx.current)
        if cur and x >= 0.05:
            aucs[o.model.name.split(" (")[0]] = cur["auc24_mg_h_per_l"]
    limit = float(r.value("methods.models_disagree_rel"))
    if len(aucs) >= 2 and (max(aucs.values()) - min(aucs.values())) / max(aucs.values()) > limit:
        parts = ", ".join(f"{k} {v:.0f}" for k, v in aucs.items())
        out.append(Alert("models-disagree", "caution", "levels",
                         f"the population models fitted to these levels differ on AUC24 by more than {limit:.0%} "
                         f"({parts} mg*h/L): the averaged estimate is uncertain; draw a further level before a "
                         "large change"))
    return out


def _combined_flags(offers: list) -> list[Alert]:
    """The weighted models' flags, the secondary-copy cautions folded into one line."""
    from tdmtui.core.estimation.popmodels import secondary_caution

    out: list[Alert] = []
    sec = [o.model for o in offers if o.model.status != "paper"]
    if len(sec) == 1:
        out.append(Alert("model-secondary-only", "caution", "", secondary_caution(sec[0])))
    elif sec:
        names = " and ".join(m.name.split(" (")[0] for m in sec)
        out.append(Alert("model-secondary-only", "caution", "",
                         f"{names}: these models' numbers were checked against secondary copies of the papers, not "
                         "the papers themselves; treat the Bayesian estimate as a guide, compare it with the other "
                         "methods shown, and confirm with the next level"))
    out += [a for o in offers for a in o.alerts if a.code != "model-secondary-only"]
    return out


def residual_alerts(e: Estimate, rules: Rules) -> list[Alert]:
    """A caution when a level is far from the Bayesian prediction (library ``methods.poor_fit_rel``)."""
    limit = float(rules.value("methods.poor_fit_rel"))
    out = []
    for r in e.extra.get("diagnostics", {}).get("residuals", []):
        if r["kind"] == "quantified" and r["predicted"] > 0 and abs(r["residual"]) / r["predicted"] > limit:
            out.append(Alert("bayes-poor-fit", "caution", r["field"],
                             f"observed {r['observed']:.3g} mg/L vs predicted {r['predicted']:.3g}: the model does not "
                             "fit this level well; check its time and the doses before it"))
    return out


def refit(ctx: MethodContext, model_id: str, warm: dict[str, Any] | None = None) -> Estimate | None:
    """MAP again on one model, or the model average again (for the timing sensitivity); None when it fails.

    ``warm`` (the base estimate's :attr:`Estimate.warm`): each MAP starts from the base eta, and a model
    average keeps the base weights when the same models fit again (a time moved by minutes changes each
    fit; the weights' importance sampling is not redone 4 times per level). Without it, as the base run.
    """
    from tdmtui.core.estimation import averaging
    from tdmtui.core.estimation import bayes
    from tdmtui.core.estimation import popmodels

    from tdmtui.core.estimation import renalcourse

    warm = warm or {}
    cov = _covariates(ctx)
    steps = renalcourse.steps_of(ctx.case)

    def fit_one(model: Any, levels: list) -> Any:
        _, typical, course = _course(ctx, model, cov, steps)
        return bayes.map_fit(model, cov, ctx.history, _observations(levels), course=course, typical=typical,
                             start=warm.get(model.id))

    if model_id == "model-average":
        fitted = []
        for o in popmodels.offered_models(ctx.case.drug, cov):
            levels = levels_for(ctx, o.model.compartments == 2)
            if o.excluded or not levels:
                continue
            try:
                fitted.append((o, fit_one(o.model, levels), levels, None))
            except (NoEstimateError, ConvergenceError):
                continue
        members = _eligible(fitted)[0]
        if not members:
            return None
        base_w = warm.get("weights") or {}
        if set(base_w) == {o.model.id for o, *_ in members}:
            ms = [averaging.Member(o.model.id, o.model.name, f, None, 0.0) for o, f, _, _ in members]
            w = [base_w[m.model_id] for m in ms]
        else:
            ms = [averaging.Member(o.model.id, o.model.name, f, None, averaging.log_evidence(f))
                  for o, f, _, _ in members]
            w = averaging.weights([m.log_evidence for m in ms])
        return Estimate("bayesian", averaging.point(ms, w), [lv.index for lv in members[0][2]])
    model = popmodels.get_model(model_id)
    levels = levels_for(ctx, model.compartments == 2)
    if not levels:
        return None
    try:
        fit = fit_one(model, levels)
    except (NoEstimateError, ConvergenceError):
        return None
    return Estimate("bayesian", fit.params, [lv.index for lv in levels])
