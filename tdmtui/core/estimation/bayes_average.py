"""The model-averaged Bayesian estimate (``bayesian``) from the models' fits, and its flags.

Which fits take part (:func:`eligible`), the averaged Estimate with its working,
residuals and mixture draws (:func:`averaged`, weights and point by :mod:`averaging`),
and the cautions where the models' structure rather than the levels drives the answer.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.alerts import Alert
from tdmtui.core.estimation.bayes_estimate import N_DRAWS, observations, uncertainty
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.estimation.working import WorkingStep

if TYPE_CHECKING:
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.estimation.popmodels import Offer


def _condition_mismatch(o: Any) -> bool:
    return any(a.code == "model-out-of-population" and a.field == "patient.conditions" for a in o.alerts)


def can_take_part(o: Offer) -> bool:
    """Whether an offered model's fit can take part in the average (:func:`eligible` leaves out the others
    whatever they fit: excluded, or built only on patients with a condition this patient does not have)."""
    return not o.excluded and not _condition_mismatch(o)


def eligible(fitted: list) -> tuple[list, list]:
    """Fits (offer, fit, levels, draws) that take part in the average, and (offer, why not) for the others."""
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


def _short(name: str) -> str:
    return name.split(" (")[0]


def averaged(ctx: MethodContext, fitted: list, est: dict[str, Estimate]) -> tuple[Estimate, list[Alert]]:
    """The averaged estimate over ``fitted`` (each model's weight and evidence set on its own estimate)."""
    from tdmtui.core.estimation import averaging

    members = [averaging.Member(o.model.id, o.model.name, fit, samples, averaging.log_evidence(fit))
               for o, fit, _, samples in fitted]
    w = averaging.weights([m.log_evidence for m in members])
    for m, x in zip(members, w):
        est[f"bayesian:{m.model_id}"].extra["weight"] = x
        est[f"bayesian:{m.model_id}"].extra["log_evidence"] = m.log_evidence
    params = averaging.point(members, w)
    mix = averaging.mixture(members, w, N_DRAWS, members[0].fit.seed)
    interval90, prob = uncertainty(ctx, mix)
    levels = fitted[0][2]
    first = est[f"bayesian:{members[0].model_id}"]
    follows_renal = "renal_course" in first.extra
    steps = _steps(members, w, params)
    if follows_renal and levels:
        steps += [s for s in first.working if s.title == "Renal function over the course"]
    offers = [o for o, *_ in fitted]
    flags = _combined_flags(offers) + structure_alerts(ctx, fitted, w, est)
    residuals = _residuals(ctx, members, w, params, levels, follows_renal)
    extra: dict[str, Any] = {"diagnostics": {"residuals": residuals, "flags": [a.to_dict() for a in flags]}}
    said = f"model average of {len(members)} population model(s) with {len(levels)} level(s)"
    if follows_renal:
        extra["renal_course"] = first.extra["renal_course"]
        said += "; clearance follows each dated SCr, the forecast uses the latest CrCl"
    e = Estimate("bayesian", params, [lv.index for lv in levels], steps, said, model=_model_info(members, w, offers),
                 interval90=interval90, target_probability=prob, samples=mix, extra=extra)
    e.warm = {**{m.model_id: m.fit.eta for m in members}, "weights": dict(zip((m.model_id for m in members), w))}
    return e, flags


def _steps(members: list, w: list[float], params: Any) -> list[WorkingStep]:
    """Show working of the average: each model's evidence and weight, then the averaged parameters."""
    share = ", ".join(f"{_short(m.name)} {100 * x:.0f} %" for m, x in zip(members, w))
    same = len({m.fit.params.is_two_compartment for m in members}) == 1
    return [WorkingStep("Model average", "w_m = p(levels | m) / sum_k p(levels | k); p(levels | m) = the levels' "
                        "likelihood integrated over the model's prior (importance sampling, equal prior weights)",
                        "; ".join(f"{_short(m.name)}: ln p = {m.log_evidence:.4g}" for m in members),
                        f"weights {share}", "bayesian"),
            WorkingStep("Averaged estimate", "weighted geometric mean of each parameter"
                        + ("" if same else " (one-compartment equivalent: CL and Vss)"),
                        "; ".join(f"{_short(m.name)} CL {m.fit.params.cl:.4g} L/h, Vss {m.fit.params.vss:.4g} L"
                                  for m in members),
                        f"CL {params.cl:.4g} L/h, Vss {params.vss:.4g} L, ke {params.ke:.4g} /h", "bayesian")]


def _residuals(ctx: MethodContext, members: list, w: list[float], params: Any, levels: list,
               follows_renal: bool) -> list[dict[str, Any]]:
    """Observed vs the averaged prediction per level (followed piece by piece: the members' weighted mean)."""
    from tdmtui.core.models import concentration

    obs = observations(levels)
    pred = concentration(params, ctx.history, obs.time) if len(obs) else np.zeros(0)
    if follows_renal and len(obs):
        pred = sum(x * m.fit.predict(obs.time) for m, x in zip(members, w))
    kinds = ["below-loq" if lv.below_loq else "above-uloq" if lv.above_uloq else "quantified" for lv in levels]
    return [{"time_h": lv.time, "observed": lv.conc, "predicted": float(p), "residual": float(lv.conc - p),
             "kind": k, "field": f"levels[{lv.index}]"} for lv, p, k in zip(levels, pred, kinds)]


def _model_info(members: list, w: list[float], offers: list) -> dict[str, Any]:
    """The averaged estimate's ``model`` object (one model: its own name)."""
    from tdmtui.core.estimation import averaging

    share = ", ".join(f"{_short(m.name)} {100 * x:.0f} %" for m, x in zip(members, w))
    secondary = any(o.model.status != "paper" for o in offers)
    return {"id": "model-average", "name": f"the model average ({share})" if len(members) > 1 else members[0].name,
            "citation": averaging.CITATION, "verification": "secondary" if secondary else "paper",
            "seed": members[0].fit.seed, "draws": N_DRAWS, "optimiser": "MAP on each model; weights by importance sampling",
            "weights": {m.model_id: x for m, x in zip(members, w)},
            "log_evidence": {m.model_id: m.log_evidence for m in members},
            "caution": " ".join(o.model.caution for o in offers if o.model.status != "paper")}


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
                                 f"{_short(o.model.name)}: {len(levels)} level(s) moved {name.upper()}, a "
                                 f"parameter this model lets vary very widely (SD {sd:.2f} on the log scale), "
                                 f"{abs(m):.1f} SD from its population value: the shape of the curve, and so the "
                                 "steady-state prediction, rests on the model more than on the levels; a second "
                                 "level (a peak, or a trough at steady state) would settle it"))
    aucs = {}
    for (o, *_), x in zip(fitted, w):
        cur = est[f"bayesian:{o.model.id}"].current(ctx.current)
        if cur and x >= 0.05:
            aucs[_short(o.model.name)] = cur["auc24_mg_h_per_l"]
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
        names = " and ".join(_short(m.name) for m in sec)
        out.append(Alert("model-secondary-only", "caution", "",
                         f"{names}: these models' numbers were checked against secondary copies of the papers, not "
                         "the papers themselves; treat the Bayesian estimate as a guide, compare it with the other "
                         "methods shown, and confirm with the next level"))
    out += [a for o in offers for a in o.alerts if a.code != "model-secondary-only"]
    return out
