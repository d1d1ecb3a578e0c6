"""One population model's fit as an :class:`Estimate`: its working, diagnostics and uncertainty.

A MAP fit (``bayesian:<model id>``) or the a priori fit (``population:<model id>``)
becomes an Estimate with 90 % intervals from its posterior draws, the probability
that the current regimen meets its target (the one implementation,
:func:`tdmtui.core.regimen.candidates.target_probability`), observed-vs-predicted
residuals and how far the estimate moved from the population value.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from tdmtui.core.alerts import Alert
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.estimation.working import WorkingStep

if TYPE_CHECKING:
    from tdmtui.core.estimation.bayes import Fit
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.estimation.draws import ParamSamples
    from tdmtui.core.estimation.popmodels import Offer
    from tdmtui.core.estimation.posterior import Observations
    from tdmtui.core.estimation.renalcourse import RenalSchedule
    from tdmtui.core.library import Rules

#: Posterior draws for intervals and target probability (recorded with the seed).
#: Drawn by importance resampling from a widened Laplace proposal: equal-weight
#: draws from the exact posterior, since plain Laplace intervals ran 8-13 % narrow
#: on two-compartment fits (bench/bench_bayes.py).
N_DRAWS = 2000

#: the estimate's keys of the contract for each interval of draws.regimen_intervals
_INTERVAL_KEYS = {"ke": "ke_per_h", "vd": "vd_l", "cl": "cl_l_per_h", "auc24": "auc24_mg_h_per_l",
                  "peak": "peak_mg_per_l", "trough": "trough_mg_per_l"}


def observations(levels: list) -> Observations:
    """The case's levels as the fit's observations (censored ones flagged)."""
    from tdmtui.core.estimation.posterior import Observations

    return Observations.from_lists([lv.time for lv in levels], [lv.conc for lv in levels],
                                   [lv.below_loq for lv in levels], [lv.above_uloq for lv in levels])


def uncertainty(ctx: MethodContext, samples: ParamSamples) -> tuple[dict[str, list[float]], float | None]:
    """90 % intervals of the estimate's figures and the current regimen's probability of target."""
    from tdmtui.core.estimation.draws import regimen_intervals

    cur = ctx.current
    iv = regimen_intervals(samples, cur.dose_mg if cur else None, cur.interval_h if cur else None,
                           cur.infusion_h if cur else 0.0)
    interval90 = {_INTERVAL_KEYS[k]: [lo, hi] for k, (lo, hi) in iv.items()}
    prob = None
    if cur is not None and ctx.targets is not None:
        from tdmtui.core.regimen.candidates import target_probability

        prob = target_probability(samples, ctx.targets, cur.dose_mg, cur.interval_h, cur.infusion_h)
    return interval90, prob


def estimate(name: str, fit: Fit, levels: list, ctx: MethodContext, offer: Offer, a_priori: bool,
             samples: ParamSamples | None = None, renal: RenalSchedule | None = None) -> Estimate:
    """The Estimate of one model's fit (``a_priori``: the population fit, no level used)."""
    if samples is None:
        from tdmtui.core.estimation.draws import importance_samples

        samples = importance_samples(fit, N_DRAWS, resample=True)
    interval90, prob = uncertainty(ctx, samples)
    residuals = [] if a_priori else fit.residuals()
    steps = _steps(name, fit, levels, ctx, a_priori, residuals, renal)
    extra: dict[str, Any] = {
        "diagnostics": {
            "residuals": [dict(r, field=f"levels[{lv.index}]") for r, lv in zip(residuals, levels)],
            "movement_sd": fit.movement(), "fold_change": fit.fold_change(), "narrowing": fit.narrowing(),
            "flags": [a.to_dict() for a in offer.alerts],
        },
    }
    assumption = ("a priori: population values from covariates, no level used" if a_priori
                  else f"MAP on {fit.model.name} with {len(levels)} level(s)")
    if renal is not None:
        from tdmtui.core.estimation.renalcourse import intervals

        extra["renal_course"] = intervals(renal, ctx.case.clock)
        assumption += "; clearance follows each dated SCr, the forecast uses the latest CrCl"
    return Estimate("population" if a_priori else "bayesian", fit.params, [lv.index for lv in levels], steps,
                    assumption, model=_model_info(fit), interval90=interval90, target_probability=prob,
                    samples=samples, extra=extra)


def _steps(name: str, fit: Fit, levels: list, ctx: MethodContext, a_priori: bool, residuals: list,
           renal: RenalSchedule | None) -> list[WorkingStep]:
    """Show working: the model, its covariate rules, the renal course, the population value and the MAP."""
    model, typ = fit.model, fit.typical.params
    steps = [WorkingStep("Model", f"{model.name}: {model.compartments}-compartment population model",
                         model.citation, "", name)]
    for note in fit.typical.notes:
        steps.append(WorkingStep("Covariate", "the model's own covariate rule", note, "", name))
    steps += renal_step(ctx, renal, name)
    steps.append(WorkingStep("Population value", "typical CL and V from the covariates",
                             f"CL {typ.cl:.4g} L/h, V1 {typ.v1:.4g} L" + (f", Q {typ.q:.4g} L/h, V2 {typ.v2:.4g} L" if typ.is_two_compartment else ""),
                             f"ke {typ.ke:.4g} /h", name))
    if a_priori:
        return steps
    steps.append(WorkingStep("MAP estimate", "minimise sum (y - C)^2/Var + ln Var + eta' Omega^-1 eta "
                             "(censored levels: -2 ln P(below or above the limit))",
                             f"{len(levels)} level(s); {fit.message}; OFV {fit.objective:.4g}",
                             f"CL {fit.params.cl:.4g} L/h, Vss {fit.params.vss:.4g} L, ke {fit.params.ke:.4g} /h", name))
    for r, lv in zip(residuals, levels):
        if r["kind"] == "quantified":
            seen, res = f"observed {r['observed']:.3g}", f"residual {r['residual']:+.3g} mg/L"
        else:
            side = "below" if r["kind"] == "below-loq" else "above"
            seen = f"reported {side} the assay limit {r['observed']:.3g} (a bound, not a value)"
            res = "likelihood of lying " + side + " the limit"
        steps.append(WorkingStep("Observed vs predicted", f"levels[{lv.index}] ({r['kind']})",
                                 f"{seen}, predicted {r['predicted']:.3g} mg/L", res, name))
    return steps


def _model_info(fit: Fit) -> dict[str, Any]:
    """The estimate's ``model`` object: which model, how it was verified, the seed, the optimiser, eta."""
    model, typ = fit.model, fit.typical.params
    return {"id": model.id, "name": model.name, "citation": model.citation, "verification": model.status,
            "caution": model.caution if model.status != "paper" else "", "seed": fit.seed, "draws": N_DRAWS,
            "objective": fit.objective, "optimiser": fit.message,
            "eta": [float(e) for e in fit.eta], "eta_names": list(model.eta_names),
            "typical": {"cl_l_per_h": typ.cl, "v1_l": typ.v1, "q_l_per_h": typ.q, "v2_l": typ.v2},
            "covariates": {k: float(v) for k, v in fit.typical.covariates.items()}}


def renal_step(ctx: MethodContext, sched: RenalSchedule | None, name: str) -> list[WorkingStep]:
    """The working step of a fit that follows each dated SCr ([] without a renal schedule)."""
    from tdmtui.core.estimation import renalcourse

    if sched is None:
        return []
    return [WorkingStep("Renal function over the course", "each dated SCr gives a CrCl by the model's own rules; "
                        "held from its draw until the next value (piecewise constant)",
                        renalcourse.describe(sched, ctx.case.clock), "typical CL follows CrCl; one eta throughout",
                        name)]


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
