"""Model averaging: one Bayesian estimate from every population model that fits the patient.

Each applicable model is fitted by MAP (:mod:`bayes`) on the same levels. Its
weight is the probability of this patient's levels under the model (the
likelihood of the levels integrated over the model's prior: its marginal
likelihood, or evidence), with equal prior weight on every applicable model:

    w_m = p(y | m) / sum_k p(y | k),   p(y | m) = integral p(y | eta, m) p(eta | m) d eta

This is Bayesian model averaging as published for vancomycin by Uster DW,
Stocker SL, Carland JE, et al. A model averaging/selection approach improves
the predictive performance of model-informed precision dosing: vancomycin as a
case study. Clin Pharmacol Ther 2021;109:175-183 (from memory; the paper
weights each model by its fit's objective, i.e. the likelihood of the levels
with the prior). We integrate over eta instead of reading the objective at the
MAP alone, so a model is not favoured merely for having a wide prior: the
integral is computed by importance sampling from each fit's widened Laplace
proposal (the draws the intervals already use) and checked against brute-force
grid integration in the tests.

Which models get weight: every model not excluded (renal replacement, excluded
conditions) and not built only on a condition the patient lacks (e.g. a model
of haematological malignancy for a patient without one). A model outside its
age, weight or CrCl ranges keeps its weight and its caution. When a level in
the distribution window is used by the two-compartment models, a
one-compartment model cannot explain it and is left out of the average (the
weights must compare the same levels).

The averaged estimate: intervals and target probabilities from the weighted
mixture of the models' posterior draws; the point estimate is the weighted
geometric mean of each parameter when the weighted models share a structure,
else the one-compartment equivalent (weighted geometric means of CL and Vss).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.models import PKParams

if TYPE_CHECKING:
    from tdmtui.core.estimation.bayes import Fit
    from tdmtui.core.estimation.draws import ParamSamples

#: Where the weighting comes from (shown in the note and the audit record).
CITATION = ("Bayesian model averaging after Uster DW et al., Clin Pharmacol Ther 2021;109:175-183 (from memory): "
            "each model weighted by the probability of the levels under it, equal prior weight per model")
LN2PI = math.log(2.0 * math.pi)


@dataclass(frozen=True)
class Member:
    """One model in the average: its fit, equal-weight posterior draws and log evidence."""

    model_id: str
    name: str
    fit: Any
    samples: Any
    log_evidence: float


def log_evidence(fit: Fit, n: int = 2000, inflate: float = 1.5, seed: int | None = None) -> float:
    """ln p(y | model): the levels' likelihood integrated over the prior, by importance sampling.

    -2 ln p(y, eta) = OFV(eta) + n_q ln 2 pi + ln det Omega + p ln 2 pi (OFV as in :mod:`posterior`, which
    leaves these constants out); the proposal is N(eta_MAP, inflate^2 cov_eta), the same draws (and OFV
    values) as :func:`draws.importance_samples` takes with the same n, inflate and seed.
    """
    draw = fit.proposal(n, inflate, fit.seed if seed is None else seed)
    p, z, chol = fit.eta.size, draw.z, draw.chol
    n_q = int(np.sum(fit.observations.quantified))
    log_joint = -0.5 * (draw.ofv + n_q * LN2PI + np.linalg.slogdet(fit.model.omega)[1] + p * LN2PI)
    log_q = -0.5 * (np.sum(z * z, 1) + p * LN2PI) - (p * math.log(inflate) + float(np.sum(np.log(np.diag(chol)))))
    lw = log_joint - log_q
    top = float(np.max(lw))
    return top + math.log(float(np.mean(np.exp(lw - top))))


def weights(log_ev: list[float]) -> list[float]:
    """Normalised weights from log evidences (equal prior weight per model)."""
    top = max(log_ev)
    w = [math.exp(x - top) for x in log_ev]
    s = sum(w)
    return [x / s for x in w]


def mixture(members: list[Member], w: list[float], n: int, seed: int) -> ParamSamples:
    """Equal-weight draws from the weighted mixture: round(w x n) draws from each model's posterior draws."""
    from tdmtui.core.estimation.draws import ParamSamples

    counts = [int(round(x * n)) for x in w]
    counts[int(np.argmax(w))] += n - sum(counts)
    parts = [(m.samples, k) for m, k in zip(members, counts) if k > 0]
    cat = [np.concatenate([getattr(s, f)[:k] for s, k in parts]) for f in ("cl", "v1", "q", "v2")]
    return ParamSamples(cat[0], cat[1], cat[2], cat[3], np.zeros((len(cat[0]), 0)), seed)


def point(members: list[Member], w: list[float]) -> PKParams:
    """Weighted geometric means of the parameters (one-compartment equivalent across structures)."""
    ps = [m.fit.params for m in members]
    if len({p.is_two_compartment for p in ps}) == 1:
        names = ("cl", "v1", "q", "v2") if ps[0].is_two_compartment else ("cl", "v1")
        vals = {k: math.exp(sum(x * math.log(getattr(p, k)) for x, p in zip(w, ps))) for k in names}
        return PKParams(vals["cl"], vals["v1"], vals.get("q", 0.0), vals.get("v2", 0.0))
    cl = math.exp(sum(x * math.log(p.cl) for x, p in zip(w, ps)))
    v = math.exp(sum(x * math.log(p.vss) for x, p in zip(w, ps)))
    return PKParams.one_compartment(cl / v, v)
