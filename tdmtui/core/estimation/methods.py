"""Every estimation method run side by side, compared, and the regimen attached.

The pipeline (:mod:`compute`) calls :func:`run_all` (every method of the
registry, :mod:`registry`), then :func:`compare` for disagreement warnings,
:func:`used_alerts` for the method used, then :func:`attach_regimen`.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core import registry
from tdmtui.core.estimation import bayes_method
from tdmtui.core.alerts import Alert
from tdmtui.core.input.casetypes import Level
from tdmtui.core.estimation.context import MethodContext
from tdmtui.core.course.history import CurrentRegimen, level_exclusion
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.estimation.estimators import ONE_LEVEL
from tdmtui.core.models import DoseArrays
from tdmtui.core.estimation import runs as entries
from tdmtui.core.estimation.runs import MethodRuns
from tdmtui.core.estimation.renalcourse import classic_note, straddle_reason

if TYPE_CHECKING:
    from tdmtui.core.regimen.types import Plan, RegimenInput

__all__ = ["MethodContext", "MethodRuns", "attach_regimen", "compare", "concentration_band", "level_table",
           "levels_for_estimates", "run_all", "used_alerts"]


def run_all(ctx: MethodContext) -> MethodRuns:
    """Run every method of the registry that applies; estimates, and per failed method why.

    A method whose record has ``explain`` adds its notes (levels set aside, bounds
    from censored levels) to the reason it gave no estimate.
    """
    est: dict[str, Estimate] = {}
    why: dict[str, str] = {}
    flags: dict[str, tuple[Alert, ...]] = {}
    for m in registry.METHODS:
        if not entries.concerns(m, ctx):
            continue
        refusal = entries.refusal(m, ctx)
        if refusal is not None:
            why[m.id] = refusal
            continue
        try:
            run = entries.run(m, ctx)
        except (NoEstimateError, ConvergenceError) as exc:
            why[m.id] = getattr(exc, "why", str(exc)) + "".join(f"; {n}" for n in entries.notes(m, ctx))
            continue
        est.update(run.estimates)
        for key, e in run.estimates.items():
            classic_note(ctx, key, e)
            if (reason := straddle_reason(ctx, key, e)) is not None:
                del est[key]
                why[key] = reason
        why.update(run.failures)
        flags[m.id] = run.flags
    return MethodRuns(est, why, flags)


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

    Pairs judged: two-level vs Sawchuk-Zaske; two-level vs the primary Bayesian
    estimate (on AUC24, naming the one to follow); and, against a two-compartment
    Bayesian model, whether the one-compartment shape biases the two-level answer
    for these draw times (:mod:`tdmtui.core.estimation.shapecheck`).
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
            advice = ("the one-level answer rests on the population volume and a single level; trust it less when "
                      "the patient's volume is unusual (obesity, oedema, critical illness); trust the Bayesian one "
                      "less when the patient is outside its models' populations")
            facts = {"method": name, "figure": what, "gap": f"{gap:.0%}", "limit": f"{limit:.0%}", "advice_text": advice}
            out.append(Alert("methods-disagree-one-level", "caution", "levels",
                             f"{name} and Bayesian differ on {what} by {facts['gap']} (over {facts['limit']}): {advice}",
                             facts))
    if a and bay:
        from tdmtui.core.estimation.shapecheck import disagreement_advice, terminal_rate_alert

        shape = terminal_rate_alert(ctx, a, bay, used)
        gap, what = _gap(a, bay, ctx.current)
        if gap > limit:
            model = (bay.model or {}).get("name", "the population model")
            facts = {"model": model, "figure": what, "gap": f"{gap:.0%}", "limit": f"{limit:.0%}",
                     "cause": "curve-shape" if shape is not None else "unexplained"}
            out.append(Alert("methods-disagree-bayesian", "caution", "levels",
                             f"two-level and Bayesian ({model}) differ on {what} by {facts['gap']} (over "
                             f"{facts['limit']}): {disagreement_advice(ctx, a, used, shape is not None)}", facts))
        if shape is not None:
            out.append(shape)
    return out


def used_alerts(ctx: MethodContext, est: Estimate, runs: MethodRuns) -> list[Alert]:
    """Alerts that belong to the method actually used (model cautions, poor fit, levels left unused)."""
    rec = registry.get(est.method)
    return entries.used_alerts(rec, ctx, est, runs) if rec else []


def levels_for_estimates(ctx: MethodContext) -> list[Level]:
    """Levels some method can use: in use, after the first dose, not during an intermittent infusion
    (censored levels and levels in the distribution window included)."""
    return bayes_method.levels_for(ctx, True)


def level_table(ctx: MethodContext) -> list[dict[str, Any]]:
    """Each level with whether it is usable and why not (in words, and the warning code), for the note and the app."""
    rows = []
    for lv in ctx.case.levels:
        why = level_exclusion(ctx.case, lv, ctx.rules)
        rows.append({"field": f"levels[{lv.index}]", "time": ctx.case.clock.format(lv.time), "conc_mg_per_l": lv.conc,
                     "below_loq": lv.below_loq, "above_uloq": lv.above_uloq,
                     "usable": why is None and lv.time <= ctx.case.as_of,
                     "excluded_because": None if why is None else why[1],
                     "excluded_code": None if why is None else why[0], "timing": lv.timing})
    return rows


def attach_regimen(ctx: MethodContext, est: Estimate, base: RegimenInput) -> Plan:
    """Design the regimen from ``base`` (the pipeline's regimen input) with the chosen estimate."""
    from tdmtui.core.regimen import design

    return design(dataclasses.replace(base, params=est.params, samples=est.samples, method=est.method))


def concentration_band(ctx: MethodContext, est: Estimate, plan: DoseArrays | None,  # noqa: ANN201
                       window: tuple[float, float] | None = None, points: int = 240):
    """90 % concentration band from posterior draws over ``window`` (h; default: the first dose to 24 h
    after the last dose or ``as_of``), or None. Only a view that shows it asks for it
    (:meth:`tdmtui.core.compute.Outcome.band_over`); every dose counts, each draw's curve in linear time."""
    if not est.samples:
        return None
    doses = ctx.history if plan is None else ctx.history.concat(plan)
    if len(doses) == 0:
        return None
    if window is None:
        window = (float(doses.start[0]), max(ctx.case.as_of, float(doses.start[-1] + doses.duration[-1])) + 24.0)
    from tdmtui.core.models.batch import Design, batch_concentration

    t = np.linspace(window[0], window[1], points)
    s, n = est.samples, 400
    curves = batch_concentration(s.cl[:n], s.v1[:n], s.q[:n], s.v2[:n], Design.build(doses, t))
    lo, hi = np.percentile(curves, [5, 95], axis=0)
    return t, lo, hi
