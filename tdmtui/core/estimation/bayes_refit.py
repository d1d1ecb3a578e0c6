"""The Bayesian estimate again on a copy of the case with a time moved (the timing sensitivity).

:func:`refit` fits one copy (each model's MAP from the base estimate's eta, the base weights kept
for a model average); :func:`refit_many` fits many copies of one case at once, each model's copies
in one batch (:mod:`shiftmap`), and hands any copy the batch does not settle to :func:`refit`. Both
give the same estimates; the batch only shares the predictions over the dose history.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimation.bayes_average import can_take_part, eligible
from tdmtui.core.estimation.bayes_estimate import observations
from tdmtui.core.estimation.bayes_method import covariates_of, model_course, case_levels_by_structure, levels_by_structure
from tdmtui.core.estimation.estimates import Estimate

if TYPE_CHECKING:
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.input.casetypes import Case


@dataclass
class _RefitShared:
    """What every refit of one estimate shares while the patient, renal summary, dialysis record, rules,
    drug and as-of time are those it was made for: the covariates, the dated SCr steps, the offered
    models and each model's course of typical values (the timing sensitivity moves only level and
    infusion-end times)."""

    anchors: tuple
    cov: Any
    steps: list
    offers: list
    courses: dict[str, tuple[Any, Any, Any]] = field(default_factory=dict)

    def fits(self, ctx: MethodContext) -> bool:
        c = ctx.case
        now = (c.patient, ctx.renal, c.dialysis, ctx.rules, c.drug, c.as_of)
        return all(a is b for a, b in zip(self.anchors[:4], now[:4])) and self.anchors[4:] == now[4:]

    def course(self, ctx: MethodContext, model: Any) -> tuple[Any, Any, Any]:
        if model.id not in self.courses:
            self.courses[model.id] = model_course(ctx, model, self.cov, self.steps)
        return self.courses[model.id]


def _refit_shared(ctx: MethodContext, warm: dict[str, Any]) -> _RefitShared:
    """The shared part of the refits, made on the first refit and kept in ``warm`` for the next ones."""
    from tdmtui.core.estimation import popmodels
    from tdmtui.core.estimation import renalcourse

    shared = warm.get("refit")
    if isinstance(shared, _RefitShared) and shared.fits(ctx):
        return shared
    c = ctx.case
    cov = covariates_of(ctx)
    shared = _RefitShared((c.patient, ctx.renal, c.dialysis, ctx.rules, c.drug, c.as_of), cov,
                          renalcourse.steps_of(c), popmodels.offered_models(c.drug, cov))
    warm["refit"] = shared
    return shared


def refit(ctx: MethodContext, model_id: str, warm: dict[str, Any] | None = None) -> Estimate | None:
    """MAP again on one model, or the model average again (for the timing sensitivity); None when it fails.

    ``warm`` (the base estimate's :attr:`Estimate.warm`): each MAP starts from the base eta, and a model
    average keeps the base weights when the same models fit again (a time moved by minutes changes each
    fit; the weights' importance sampling is not redone 4 times per level). What does not move with the
    times is computed on the first refit and kept there (:class:`_RefitShared`). Without it, as the base run.
    """
    from tdmtui.core.estimation import bayes
    from tdmtui.core.estimation import popmodels

    warm = warm if warm is not None else {}
    shared = _refit_shared(ctx, warm)
    by_structure = {two: (lvs, observations(lvs) if lvs else None) for two, lvs in levels_by_structure(ctx).items()}

    def levels_of(model: Any) -> tuple[list, Any]:
        return by_structure[model.compartments == 2]

    def fit_one(model: Any) -> Any:
        _, typical, course = shared.course(ctx, model)
        return bayes.map_fit(model, shared.cov, ctx.history, levels_of(model)[1], course=course, typical=typical,
                             start=warm.get(model.id))

    if model_id != "model-average":
        model = popmodels.get_model(model_id)
        levels = levels_of(model)[0]
        try:
            return Estimate("bayesian", fit_one(model).params, [lv.index for lv in levels]) if levels else None
        except (NoEstimateError, ConvergenceError):
            return None
    fitted = []
    for o in shared.offers:
        levels = levels_of(o.model)[0]
        if not can_take_part(o) or not levels:
            continue
        try:
            fitted.append((o, fit_one(o.model), levels, None))
        except (NoEstimateError, ConvergenceError):
            continue
    return _average_again(eligible(fitted)[0], warm.get("weights") or {})


def _average_again(members: list, base_w: dict[str, float]) -> Estimate | None:
    """The refitted models' average: with the base weights when the same models fit, else new evidence."""
    from tdmtui.core.estimation import averaging

    if not members:
        return None
    if set(base_w) == {o.model.id for o, *_ in members}:
        ms = [averaging.Member(o.model.id, o.model.name, f, None, 0.0) for o, f, _, _ in members]
        w = [base_w[m.model_id] for m in ms]
    else:
        ms = [averaging.Member(o.model.id, o.model.name, f, None, averaging.log_evidence(f)) for o, f, _, _ in members]
        w = averaging.weights([m.log_evidence for m in ms])
    return Estimate("bayesian", averaging.point(ms, w), [lv.index for lv in members[0][2]])


@dataclass(frozen=True)
class _Refitted:
    """A copy's MAP on one model as the model average reads it: its parameters."""

    params: Any


#: a copy the batch did not settle (fitted on its own by :func:`refit`)
_UNSETTLED = object()


def refit_many(ctx: MethodContext, model_id: str, warm: dict[str, Any] | None,
               cases: list[Case]) -> list[Estimate | None]:
    """:func:`refit` on each of ``cases`` (copies of ``ctx.case`` with a level or infusion-end time moved):
    each model's copies fitted in one batch (:mod:`shiftmap`), any copy it leaves fitted by :func:`refit`."""
    from tdmtui.core.estimation import popmodels
    from tdmtui.core.estimation.context import shifted

    warm = warm if warm is not None else {}
    shared = _refit_shared(ctx, warm)
    if model_id == "model-average":
        models = [o.model for o in shared.offers if can_take_part(o)]
    else:
        models = [popmodels.get_model(model_id)]
    base, levels = levels_by_structure(ctx), [case_levels_by_structure(c, ctx.rules) for c in cases]
    solved = {m: _batch_params(ctx, shared, m, warm.get(m.id), base[m.compartments == 2], cases, levels)
              for m in models}
    out: list[Estimate | None] = []
    for i, case in enumerate(cases):
        got = _settled(model_id, shared, levels[i], {k: v[i] for k, v in solved.items()}, warm)
        if got is _UNSETTLED:
            try:
                got = refit(shifted(ctx, case), model_id, warm)
            except (NoEstimateError, ConvergenceError):
                got = None
        out.append(got)  # type: ignore[arg-type]
    return out


def _batch_params(ctx: MethodContext, shared: _RefitShared, model: Any, start: Any, base: list, cases: list[Case],
                  levels: list[dict[bool, list]]) -> list[Any]:
    """Each copy's MAP parameters on ``model`` (fitting the base case's levels ``base``) from the batch, or None
    where the batch leaves it: the copy's levels are not the base ones with times moved, its doses not the
    base ones with durations changed, or Newton did not settle it (:func:`shiftmap.solve`)."""
    import numpy as np

    from tdmtui.core.estimation import shiftmap
    from tdmtui.core.estimation.bayes import BOUND_SD
    from tdmtui.core.estimation.context import shifted_history
    from tdmtui.core.estimation.posterior import Posterior
    from tdmtui.core.models import PKParams

    two = model.compartments == 2
    out: list[Any] = [None] * len(cases)
    bound = BOUND_SD * np.sqrt(np.diag(model.omega))
    if start is None or not base or not np.all(np.abs(start) < bound):
        return out
    try:  # as the single refit's: a model with no typical values for the patient gives no estimate
        _, typical, course = shared.course(ctx, model)
        post = Posterior(model, typical if typical is not None else model.typical(shared.cov), ctx.history,
                         observations(base), course)
    except (NoEstimateError, ConvergenceError):
        return out
    ids = [lv.index for lv in base]
    copies, where = [], []
    for i, (case, lv) in enumerate(zip(cases, levels)):
        added = shiftmap.added_doses(ctx.history, shifted_history(ctx, case))
        if [x.index for x in lv[two]] == ids and added is not None:
            copies.append(shiftmap.Copy(np.array([x.time for x in lv[two]], dtype=float), added))
            where.append(i)
    for i, eta in zip(where, shiftmap.solve(post, start, bound, copies) if copies else []):
        if eta is not None:
            out[i] = PKParams(*(float(a[0]) for a in post.params(eta[None, :])))
    return out


def _settled(model_id: str, shared: _RefitShared, levels: dict[bool, list], params: dict[Any, Any],
             warm: dict[str, Any]) -> Estimate | None | object:
    """One copy's estimate from the batch's parameters, as :func:`refit` builds it; _UNSETTLED when a model
    it needs was left by the batch, or a model average's members are not the base ones (their weights
    would need each model's evidence again)."""
    if model_id != "model-average":
        (model, got), = params.items()
        lv = levels[model.compartments == 2]
        if not lv:
            return None
        return _UNSETTLED if got is None else Estimate("bayesian", got, [x.index for x in lv])
    fitted = []
    for o in shared.offers:
        lv = levels[o.model.compartments == 2]
        if not can_take_part(o) or not lv:
            continue
        got = params.get(o.model)
        if got is None:
            return _UNSETTLED
        fitted.append((o, _Refitted(got), lv, None))
    members = eligible(fitted)[0]
    base_w = warm.get("weights") or {}
    if members and set(base_w) != {o.model.id for o, *_ in members}:
        return _UNSETTLED
    return _average_again(members, base_w)
