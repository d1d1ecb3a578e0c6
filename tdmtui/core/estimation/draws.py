"""Posterior draws of a fit's parameters, and the intervals read from them.

:func:`sample_posterior` draws from the Laplace approximation; :func:`importance_samples`
re-weights (or resamples) draws from a widened Laplace proposal by posterior / proposal,
so they follow the exact posterior within sampling error. A set of draws gives
steady-state figures per regimen (:meth:`ParamSamples.steady_state`, the exponents
computed once per set) and central intervals. The probability that a regimen meets its
targets is read from the same draws by :func:`tdmtui.core.regimen.candidates.target_probability`,
the one implementation of it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property
from typing import Callable

import numpy as np

from tdmtui.core.models import PKParams
from tdmtui.core.models.batch import SteadyStates, exponentials
from tdmtui.core.estimation.bayes import Fit


@dataclass(frozen=True, eq=False)
class ParamSamples:
    """Draws of the parameters (arrays of one length), optionally weighted.

    Attributes:
        cl, v1, q, v2: L/h and L (q = v2 = 0 for one compartment).
        eta: the draws of eta, (n, p). seed: the seed used.
        weights: normalised importance weights, or None for equal weights.
    """

    cl: np.ndarray
    v1: np.ndarray
    q: np.ndarray
    v2: np.ndarray
    eta: np.ndarray
    seed: int
    weights: np.ndarray | None = None

    def __len__(self) -> int:
        return int(self.cl.size)

    def __getitem__(self, i: int) -> PKParams:
        return PKParams(float(self.cl[i]), float(self.v1[i]), float(self.q[i]), float(self.v2[i]))

    vss = property(lambda self: self.v1 + self.v2, doc="V1 + V2, L")

    @property
    def ke(self) -> np.ndarray:
        """Equivalent one-compartment ke = CL / Vss, 1/h (case-format.md)."""
        return self.cl / self.vss

    @cached_property
    def steady_states(self) -> SteadyStates:
        """The draws' steady states for any regimen (their exponents and factors computed once)."""
        return SteadyStates(*exponentials(self.cl, self.v1, self.q, self.v2), self.v1, self.cl)

    def steady_state(self, dose: float, tau: float, tinf: float, peak_delay_h: float = 0.0) -> dict[str, np.ndarray]:
        """Steady-state peak, trough and AUC24 per draw (see :func:`tdmtui.core.models.batch.batch_steady_state`)."""
        return self.steady_states.at(dose, tau, tinf, peak_delay_h)


def _samples(fit: Fit, eta: np.ndarray, seed: int, weights: np.ndarray | None = None) -> ParamSamples:
    return ParamSamples(*fit.posterior.params(eta), eta, seed, weights)


def sample_posterior(fit: Fit, n: int = 2000, seed: int | None = None) -> ParamSamples:
    """Draws from the Laplace approximation: eta ~ N(eta_MAP, cov_eta) (prior for a population fit)."""
    seed = fit.seed if seed is None else seed
    z = np.random.default_rng(seed).standard_normal((n, fit.eta.size))
    return _samples(fit, fit.eta + z @ np.linalg.cholesky(fit.cov_eta).T, seed)


def importance_samples(fit: Fit, n: int = 4000, seed: int | None = None, inflate: float = 1.5,
                       resample: bool = False) -> ParamSamples:
    """Draws from a widened Laplace proposal, weighted by posterior / proposal.

    Proposal N(eta_MAP, inflate^2 cov_eta); weight ~ exp(-OFV/2) / q(eta), so
    the weighted draws follow the exact posterior (within sampling error).
    ``resample``: return n equal-weight draws by systematic resampling instead.
    """
    seed = fit.seed if seed is None else seed
    draw = fit.proposal(n, inflate, seed)
    z, eta = draw.z, draw.eta
    logw = -0.5 * draw.ofv + 0.5 * np.sum(z * z, 1)
    w = np.exp(logw - np.max(logw))
    w /= w.sum()
    if resample:
        idx = np.minimum(np.searchsorted(np.cumsum(w), (draw.u + np.arange(n)) / n), n - 1)
        return _samples(fit, eta[idx], seed)
    return _samples(fit, eta, seed, w)


def effective_sample_size(samples: ParamSamples) -> float:
    """Kish effective sample size of weighted draws (= n when unweighted)."""
    return float(len(samples) if samples.weights is None else 1.0 / np.sum(samples.weights ** 2))


def intervals(samples: ParamSamples, fn: Callable[[ParamSamples], np.ndarray],
              level: float = 0.90) -> tuple[float, float]:
    """Central ``level`` interval of ``fn(samples)``: numpy's linear quantile, or a weighted midpoint CDF."""
    x, w = np.asarray(fn(samples), float), samples.weights
    q = [(1 - level) / 2, (1 + level) / 2]
    if w is None and x.size > 2:
        return _equal_weight_interval(x, q)
    order = np.argsort(x)
    cdf = np.arange(x.size) / (x.size - 1) if w is None else np.cumsum(w[order]) - 0.5 * w[order]
    lo, hi = np.interp(q, cdf, x[order])
    return float(lo), float(hi)


def _equal_weight_interval(x: np.ndarray, q: list[float]) -> tuple[float, float]:
    """:func:`intervals` of equal-weight draws from the two order statistics around each quantile (a partial
    sort: the same sorted values at those places, interpolated between the same two points k / (n - 1))."""
    n1 = x.size - 1
    ks = [_place(p, n1) for p in q]
    part = np.partition(x, [ks[0], ks[0] + 1, ks[1], ks[1] + 1])  # (np.unique here would load numpy.ma)
    lo, hi = (float(np.interp(p, (k / n1, (k + 1) / n1), part[k:k + 2])) for p, k in zip(q, ks))
    return lo, hi


def _place(p: float, n1: int) -> int:
    """The k with k / n1 <= p < (k + 1) / n1 (as np.interp finds it on arange(n1 + 1) / n1), within 0..n1 - 1."""
    k = min(max(int(p * n1), 0), n1 - 1)
    while k < n1 - 1 and (k + 1) / n1 <= p:
        k += 1
    while k > 0 and k / n1 > p:
        k -= 1
    return k


def regimen_intervals(samples: ParamSamples, dose: float | None = None, tau: float | None = None,
                      tinf: float = 0.0, level: float = 0.90) -> dict[str, tuple[float, float]]:
    """Intervals for ke, vd (Vss), cl and, with a regimen, steady-state auc24, peak and trough."""
    out = {"ke": intervals(samples, lambda s: s.ke, level), "vd": intervals(samples, lambda s: s.vss, level),
           "cl": intervals(samples, lambda s: s.cl, level)}
    if dose is not None and tau is not None:
        ss = samples.steady_state(dose, tau, tinf)
        for key in ("auc24", "peak", "trough"):
            out[key] = intervals(samples, _constant(ss[key]), level)
    return out


def two_compartment_intervals(samples: ParamSamples, level: float = 0.90) -> dict[str, tuple[float, float]]:
    """Intervals for V1, V2, Q, alpha and beta half-lives (pk-sources.md 2.6); {} for one compartment."""
    if not np.any(samples.q > 0):
        return {}
    lam = samples.steady_states.lam
    values = {"v1": samples.v1, "v2": samples.v2, "q": samples.q, "alpha_half_life": math.log(2) / lam[:, 0],
              "beta_half_life": math.log(2) / lam[:, 1]}
    return {k: intervals(samples, _constant(v), level) for k, v in values.items()}


def _constant(values: np.ndarray) -> Callable[[ParamSamples], np.ndarray]:
    """``fn`` for :func:`intervals` when the values per draw are already computed."""
    return lambda _samples: values
