"""Bayesian (MAP) estimation on a population model, with its uncertainty.

Model (pk-sources.md 2.7): P_i = P_typical x exp(eta_i), eta ~ N(0, Omega);
residual Var_j = a^2 + (b C_pred,j)^2 as the model states. The objective is
-2 log posterior up to a constant::

    OFV = sum_quantified [(y - C)^2 / Var + ln Var]
          - 2 sum_below ln Phi((LOQ - C)/sd) - 2 sum_above ln Phi((C - ULOQ)/sd)
          + eta' Omega^-1 eta

Censored levels enter as the probability of lying beyond the limit (Beal's
M3, Beal 2001 - from memory for the citation), never as the limit itself.
The MAP: damped Newton from eta = 0 (gradient and Hessian by central
differences, one batch per step) within +-5 SD of the population value, then
L-BFGS-B from the best point of a +-2 SD grid if that fails; no convergence,
or an answer on the bound, raises ConvergenceError. Uncertainty: Laplace
(cov(eta) = 2 H^-1 at the MAP), sampled with a recorded seed;
:func:`importance_samples` re-weights draws by posterior/proposal to check it.

Speed: predictions for a whole batch of parameter sets at once come from
:mod:`tdmtui.core.models.batch` (``batch_concentration``,
``batch_steady_state``); the per-individual functions of
:mod:`tdmtui.core.models` take one set per call, too slow for a 2 ms fit or
2,000 draws.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from typing import Callable

import numpy as np

from tdmtui.core.errors import ConvergenceError
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.models.batch import Design, batch_concentration, batch_steady_state, exponentials, steady_state_of  # noqa: F401
from tdmtui.core.estimation.popmodels import Covariates, PopModel, Typical

SEED = 20260301
BOUND_SD = 5.0  # search bound, SD of each random effect
_VAR_FLOOR = 1e-8  # mg^2/L^2: numeric guard for proportional-only error at C ~ 0 (sd 1e-4 mg/L)


@dataclass(frozen=True)
class Observations:
    """Measured levels (all arrays of one length).

    Attributes:
        time: h, same clock as the doses. conc: mg/L; for a censored level the limit.
        below_loq: True where the level is below the limit of quantification.
        above_uloq: True where it is above the upper limit.
    """

    time: np.ndarray
    conc: np.ndarray
    below_loq: np.ndarray
    above_uloq: np.ndarray

    @classmethod
    def from_lists(cls, time, conc, below_loq=None, above_uloq=None) -> Observations:  # noqa: ANN001
        """Build and check (finite times, concentrations >= 0, at most one flag per level)."""
        t, c = (np.asarray(x, dtype=float).reshape(-1) for x in (time, conc))
        lo, hi = (np.zeros(t.size, bool) if f is None else np.asarray(f, bool).reshape(-1)
                  for f in (below_loq, above_uloq))
        if not (t.size == c.size == lo.size == hi.size):
            raise ValueError("observation arrays differ in length")
        if not (np.all(np.isfinite(t)) and np.all(np.isfinite(c)) and np.all(c >= 0)) or np.any(lo & hi):
            raise ValueError("observations need finite times, concentrations >= 0 and at most one limit flag")
        return cls(t, c, lo, hi)

    quantified = property(lambda self: ~(self.below_loq | self.above_uloq), doc="True where quantified")

    def __len__(self) -> int:
        return int(self.time.size)


NO_LEVELS = Observations.from_lists([], [])


@lru_cache(maxsize=8)
def _stencil(p: int, h: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Central-difference points (npts, p) and the linear maps from OFV values to gradient and Hessian.

    Gradient to fourth order, (8 (f(h) - f(-h)) - (f(2h) - f(-2h))) / 12h. Hessian to second order:
    H_ii = (f(+i) - 2 f0 + f(-i)) / h^2, H_ij = (f(+i+j) + f(-i-j) - f(+i) - f(-i) - f(+j) - f(-j) + 2 f0) / 2h^2.
    """
    eye = np.eye(p)
    pairs = [(i, j) for i in range(p) for j in range(i + 1, p)]
    pts = [np.zeros((1, p)), eye, -eye, 2 * eye, -2 * eye]
    pts += [np.array([eye[i] + eye[j], -eye[i] - eye[j]]) for i, j in pairs]
    n = 1 + 4 * p + 2 * len(pairs)
    grad, hess = np.zeros((p, n)), np.zeros((p, p, n))
    for i in range(p):
        grad[i, [1 + i, 1 + p + i, 1 + 2 * p + i, 1 + 3 * p + i]] = np.array([8.0, -8.0, -1.0, 1.0]) / (12.0 * h)
        hess[i, i, [0, 1 + i, 1 + p + i]] = np.array([-2.0, 1.0, 1.0]) / h ** 2
    for k, (i, j) in enumerate(pairs):
        cols = [1 + 4 * p + 2 * k, 2 + 4 * p + 2 * k, 0, 1 + i, 1 + p + i, 1 + j, 1 + p + j]
        hess[i, j, cols] = np.array([1.0, 1.0, 2.0, -1.0, -1.0, -1.0, -1.0]) / (2.0 * h * h)
        hess[j, i] = hess[i, j]
    return h * np.vstack(pts), grad, hess.reshape(p * p, n)


@dataclass(frozen=True)
class Course:
    """Typical parameters that change during the course (renal function, dialysis sessions).

    Attributes:
        changes: (s - 1,) strictly increasing times h at which a new piece starts.
        params: (s,) typical PKParams per piece (the last: now).
        added_cl: (s,) L/h added to the individual's clearance in each piece (a dialysis
            session's removal where the library or protocol gives one; else 0).
    """

    changes: tuple[float, ...]
    params: tuple[PKParams, ...]
    added_cl: tuple[float, ...]


class Posterior:
    """-2 log posterior of eta (up to a constant), for batches of eta.

    With a :class:`Course`, predictions follow the typical values piece by piece
    (the same eta in every piece; :mod:`tdmtui.core.models.timevarying`); ``params``
    gives the latest piece (the forecast's).
    """

    def __init__(self, model: PopModel, typical: Typical, doses: DoseArrays, obs: Observations,
                 course: Course | None = None) -> None:
        self.model, self.obs, self.doses, self.course = model, obs, doses, course
        if course is not None:
            self.log_pieces = np.log([[getattr(p, f) for f in model.param_names] for p in course.params])
        self.log_tv = np.log([getattr(typical.params, f) for f in model.param_names])
        self.eta_map = np.eye(len(model.param_names))[:, [model.param_names.index(n) for n in model.eta_names]]
        self.omega_inv = np.linalg.inv(model.omega)
        self.design = Design.build(doses, obs.time)
        self.stencil = _stencil(len(model.eta_names), 1e-3)
        self.all_quantified = bool(np.all(obs.quantified))

    def params(self, eta: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Parameter arrays (cl, v1, q, v2) for eta of shape (m, p)."""
        p = np.exp(self.log_tv[:, None] + self.eta_map @ eta.T)  # (parameters, m), rows contiguous
        return (p[0], p[1], p[2], p[3]) if len(p) == 4 else (p[0], p[1], np.zeros(p.shape[1]), np.zeros(p.shape[1]))

    def piece_params(self, eta: np.ndarray) -> list[np.ndarray]:
        """Per-piece parameter arrays (cl, v1, q, v2), each (m, s), for a course."""
        assert self.course is not None
        p = np.exp(self.log_pieces[None, :, :] + (self.eta_map @ eta.T).T[:, None, :])  # (m, s, P)
        cl = p[:, :, 0] + np.asarray(self.course.added_cl)[None, :]
        if p.shape[2] == 4:
            return [cl, p[:, :, 1], p[:, :, 2], p[:, :, 3]]
        return [cl, p[:, :, 1], np.zeros_like(cl), np.zeros_like(cl)]

    def predict(self, eta: np.ndarray, t: np.ndarray | None = None, doses: DoseArrays | None = None) -> np.ndarray:
        """Concentrations (m, n) at the levels' times (or ``t``) for eta (m, p)."""
        eta = np.atleast_2d(eta)
        if self.course is None:
            design = self.design if t is None and doses is None else Design.build(
                self.doses if doses is None else doses, self.obs.time if t is None else t)
            return batch_concentration(*self.params(eta), design)
        from tdmtui.core.models.timevarying import batch_tv_concentration

        cl, v1, q, v2 = self.piece_params(eta)
        return batch_tv_concentration(self.course.changes, cl, v1, q, v2,
                                      self.doses if doses is None else doses, self.obs.time if t is None else t)

    def __call__(self, eta: np.ndarray) -> np.ndarray:
        """OFV for eta of shape (m, p); shape (m,)."""
        eta = np.atleast_2d(eta)
        ofv = np.sum((eta @ self.omega_inv) * eta, 1)
        if len(self.obs) == 0:
            return ofv
        o = self.obs
        pred = self.predict(eta)
        var = np.maximum(self.model.additive_sd ** 2 + (self.model.proportional_sd * pred) ** 2, _VAR_FLOOR)
        if self.all_quantified:
            return ofv + np.sum((o.conc - pred) ** 2 / var + np.log(var), 1)
        q = o.quantified
        ofv = ofv + np.sum((o.conc[q] - pred[:, q]) ** 2 / var[:, q] + np.log(var[:, q]), 1)
        from tdmtui.core.solvers import log_ndtr

        z = (o.conc - pred) / np.sqrt(var)  # Beal M3: P(below LOQ) = Phi(z), P(above ULOQ) = Phi(-z)
        return ofv - 2.0 * np.sum(log_ndtr(z[:, o.below_loq]), 1) - 2.0 * np.sum(log_ndtr(-z[:, o.above_uloq]), 1)

    def derivatives(self, eta: np.ndarray) -> tuple[float, np.ndarray, np.ndarray]:
        """OFV, gradient and Hessian by central differences (step 1e-3 in eta), one batch."""
        pts, grad, hess = self.stencil
        f = self(eta + pts)
        return float(f[0]), grad @ f, (hess @ f).reshape(eta.size, eta.size)


def _newton(post: Posterior, x: np.ndarray, bound: np.ndarray, max_iter: int = 60):  # noqa: ANN202
    """Damped Newton on the box [-bound, bound], backtracking in one batch when a full step fails.

    Returns (eta, ofv, Hessian, iterations) at an interior point where g' H^-1 g < 1e-10, H > 0; else None.
    """
    f, g, hess = post.derivatives(x)
    for it in range(max_iter):
        if not (np.isfinite(f) and np.all(np.isfinite(g)) and np.all(np.isfinite(hess))):
            return None
        low = np.linalg.eigvalsh(hess)[0]
        shift = 0.0 if low > 1e-6 else 1e-3 - low
        step = -np.linalg.solve(hess + shift * np.eye(x.size), g)
        slope = float(g @ step)
        if shift == 0.0 and -slope < 1e-10:
            return (x, f, hess, it) if np.all(np.abs(x) < bound * (1 - 1e-6)) else None
        trial = np.clip(x + step, -bound, bound)
        f_t, g_t, h_t = post.derivatives(trial)
        if not f_t <= f + 1e-4 * slope:
            steps = 0.5 ** np.arange(1, 20)
            cand = np.clip(x + steps[:, None] * step, -bound, bound)
            ok = np.flatnonzero(post(cand) <= f + 1e-4 * steps * slope)
            if ok.size == 0:  # no decrease left: converged if within rounding of the minimum
                done = shift == 0.0 and -slope < 1e-7 and np.all(np.abs(x) < bound * (1 - 1e-6))
                return (x, f, hess, it) if done else None
            trial = cand[ok[0]]
            f_t, g_t, h_t = post.derivatives(trial)
        x, f, g, hess = trial, f_t, g_t, h_t
    return None


@dataclass(frozen=True, eq=False)
class Proposal:
    """Draws of eta from a widened Laplace proposal: standard normal ``z`` (n, p), ``eta`` = eta_MAP +
    inflate z L' (L = ``chol``, the Cholesky factor of cov_eta), ``ofv`` at each, and the uniform ``u``
    drawn next from the same generator (the offset of systematic resampling)."""

    z: np.ndarray
    eta: np.ndarray
    ofv: np.ndarray
    chol: np.ndarray
    u: float


@dataclass(frozen=True, eq=False)
class Fit:
    """A population (a priori) or MAP estimate.

    Attributes:
        params: the estimate. eta: random effects (log scale), in ``model.eta_names`` order.
        cov_eta: covariance of eta (Omega for a population fit; Laplace 2 H^-1 for MAP).
        objective: OFV at the estimate (-2 log posterior up to a constant).
        success, message: optimiser outcome (a failed fit raises instead of returning).
        seed: seed for posterior draws, recorded with the result.
    """

    model: PopModel
    typical: Typical
    params: PKParams
    eta: np.ndarray
    cov_eta: np.ndarray
    objective: float
    success: bool
    message: str
    doses: DoseArrays
    observations: Observations
    seed: int = SEED
    posterior: Posterior = field(repr=False, default=None)  # type: ignore[assignment]
    _proposals: dict = field(repr=False, default_factory=dict)

    omega_sd = property(lambda self: np.sqrt(np.diag(self.model.omega)), doc="SD of each random effect")

    def movement(self) -> dict[str, float]:
        """How far each parameter moved from the population value, in SD of its IIV (eta / omega)."""
        return {n: float(e / s) for n, e, s in zip(self.model.eta_names, self.eta, self.omega_sd)}

    def fold_change(self) -> dict[str, float]:
        """Estimate / population value for each parameter with a random effect (exp(eta))."""
        return {n: float(math.exp(e)) for n, e in zip(self.model.eta_names, self.eta)}

    def narrowing(self) -> dict[str, float]:
        """1 - posterior SD / population SD per random effect: how much the levels told us."""
        post = np.sqrt(np.diag(self.cov_eta)) / self.omega_sd
        return {n: float(1.0 - p) for n, p in zip(self.model.eta_names, post)}

    def predict(self, t, doses: DoseArrays | None = None) -> np.ndarray:  # noqa: ANN001
        """Concentrations, mg/L, at ``t`` h for this estimate (shared closed-form predictor)."""
        from tdmtui.core.models import concentration

        if self.posterior is not None and self.posterior.course is not None:
            arr = np.asarray(t, dtype=float)
            out = self.posterior.predict(self.eta[None, :], arr.reshape(-1), doses)[0]
            return out.reshape(arr.shape)
        return concentration(self.params, self.doses if doses is None else doses, t)

    def proposal(self, n: int, inflate: float, seed: int) -> Proposal:
        """``n`` draws of eta from N(eta_MAP, inflate^2 cov_eta) with their OFV; drawn once per (n, inflate,
        seed) and shared by the importance-resampled draws and the evidence, which use the same draws."""
        key = (n, inflate, seed)
        if key not in self._proposals:
            rng = np.random.default_rng(seed)
            z = rng.standard_normal((n, self.eta.size))
            chol = np.linalg.cholesky(self.cov_eta)
            eta = self.eta + inflate * z @ chol.T
            self._proposals[key] = Proposal(z, eta, self.posterior(eta), chol, rng.random())
        return self._proposals[key]

    def residuals(self) -> list[dict[str, float | str]]:
        """Observed vs predicted for each level: time h, observed, predicted, residual (obs - pred), mg/L."""
        o = self.observations
        pred = self.predict(o.time) if len(o) else np.zeros(0)
        kind = np.where(o.below_loq, "below-loq", np.where(o.above_uloq, "above-uloq", "quantified"))
        return [{"time_h": float(t), "observed": float(y), "predicted": float(p), "residual": float(y - p),
                 "kind": str(k)} for t, y, p, k in zip(o.time, o.conc, pred, kind)]


def _make_fit(post: Posterior, typical: Typical, doses: DoseArrays, eta: np.ndarray, cov: np.ndarray,
              ofv: float, message: str, seed: int) -> Fit:
    cl, v1, q, v2 = (float(a[0]) for a in post.params(eta[None, :]))
    return Fit(post.model, typical, PKParams(cl, v1, q, v2), eta, cov, ofv, True, message,
               doses, post.obs, seed, post)


def population_fit(model: PopModel, covariates: Covariates, doses: DoseArrays | None = None,
                   seed: int = SEED, course: Course | None = None, typical: Typical | None = None) -> Fit:
    """A priori estimate: the typical values, with Omega as the uncertainty of eta.

    ``course``/``typical``: typical values that change during the course and the
    latest of them (the forecast's); without them, the covariates' typical values.

    Raises:
        NoEstimateError: when the model gives invalid typical values for the patient.
    """
    typical = typical if typical is not None else model.typical(covariates)
    doses = doses if doses is not None else DoseArrays.from_lists([], [], [])
    post = Posterior(model, typical, doses, NO_LEVELS, course)
    p = len(model.eta_names)
    return _make_fit(post, typical, doses, np.zeros(p), model.omega.copy(), 0.0,
                     "population (a priori) estimate: no levels", seed)


def map_fit(model: PopModel, covariates: Covariates, doses: DoseArrays, observations: Observations,
            seed: int = SEED, course: Course | None = None, typical: Typical | None = None,
            start: np.ndarray | None = None) -> Fit:
    """MAP estimate of the individual's parameters from any number of levels.

    ``course``/``typical``: as in :func:`population_fit` (the levels are then
    predicted piece by piece; the estimate's parameters are the latest piece's).
    ``start`` (eta of a nearby fit, e.g. the base estimate when a refit moves one time) is tried
    first; Newton from it stops at the same minimum in a few steps. Then eta = 0, then the grid.

    Raises:
        NoEstimateError: invalid typical values for the patient.
        ConvergenceError: the optimiser failed from both starts, the estimate
            lies on the +-5 SD bound, or the objective is not at a minimum.
    """
    typical = typical if typical is not None else model.typical(covariates)
    post = Posterior(model, typical, doses, observations, course)
    sd = np.sqrt(np.diag(model.omega))
    bound = BOUND_SD * sd
    found = None
    if start is not None and np.all(np.abs(start) < bound):
        found, message = _newton(post, np.asarray(start, dtype=float).copy(), bound), "Newton from a nearby estimate"
    if found is None:
        found, message = _newton(post, np.zeros(sd.size), bound), "Newton from eta = 0"
    if found is None:  # second start: L-BFGS-B from the best point of a +-2 SD grid
        from scipy.optimize import minimize  # only here: a bounded quasi-Newton we should not write

        axes = np.meshgrid(*[np.array([-2.0, 0.0, 2.0]) * s for s in sd], indexing="ij")
        grid = np.stack([a.reshape(-1) for a in axes], 1)
        res = minimize(lambda e: post.derivatives(e)[:2], grid[int(np.argmin(post(grid)))], jac=True,
                       method="L-BFGS-B", bounds=list(zip(-bound, bound)),
                       options={"maxiter": 500, "ftol": 1e-14, "gtol": 1e-7})
        on_bound = bool(np.any(np.abs(res.x) >= bound * (1.0 - 1e-6)))
        if not res.success or on_bound or not np.all(np.isfinite(res.x)):
            why = "the estimate lies on the +-5 SD search bound" if on_bound else str(res.message)
            raise ConvergenceError(
                f"{model.name}: no MAP estimate from eta = 0 or from a grid start ({why}). The levels are far "
                "from what the model expects for this patient: check dose and level times, amounts and units, "
                "or use a method without a population prior")
        f, _, hess = post.derivatives(res.x)
        found = (res.x, f, hess, res.nit)
        message = "L-BFGS-B from a grid start (Newton from eta = 0 failed)"
    eta, ofv, hess, nit = found
    if not np.all(np.isfinite(hess)) or np.linalg.eigvalsh(hess)[0] <= 0:
        raise ConvergenceError(f"{model.name}: the MAP objective is not at a minimum (curvature not positive)")
    return _make_fit(post, typical, doses, eta.copy(), 2.0 * np.linalg.inv(hess), ofv,
                     f"{message}, {nit} iterations", seed)


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
    def exponents(self) -> tuple[np.ndarray, np.ndarray]:
        """Exponents and weights (n, k) of every draw (:func:`exponentials`), computed once."""
        return exponentials(self.cl, self.v1, self.q, self.v2)

    def steady_state(self, dose: float, tau: float, tinf: float, peak_delay_h: float = 0.0) -> dict[str, np.ndarray]:
        """Steady-state peak, trough and AUC24 per draw (see :func:`batch_steady_state`)."""
        return steady_state_of(*self.exponents, self.v1, self.cl, dose, tau, tinf, peak_delay_h)


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
    order = np.argsort(x)
    cdf = np.arange(x.size) / (x.size - 1) if w is None else np.cumsum(w[order]) - 0.5 * w[order]
    lo, hi = np.interp([(1 - level) / 2, (1 + level) / 2], cdf, x[order])
    return float(lo), float(hi)


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
    lam, _ = exponentials(samples.cl, samples.v1, samples.q, samples.v2)
    values = {"v1": samples.v1, "v2": samples.v2, "q": samples.q, "alpha_half_life": math.log(2) / lam[:, 0],
              "beta_half_life": math.log(2) / lam[:, 1]}
    return {k: intervals(samples, _constant(v), level) for k, v in values.items()}


def _constant(values: np.ndarray) -> Callable[[ParamSamples], np.ndarray]:
    """``fn`` for :func:`intervals` when the values per draw are already computed."""
    return lambda _samples: values


def probability_of_target(samples: ParamSamples, dose: float, tau: float, tinf: float,
                          target: dict[str, tuple[float, float]], peak_delay_h: float = 0.0) -> float:
    """Share of draws whose steady-state figures all fall in their bands.

    Args:
        target: any of ``auc24``, ``peak``, ``trough`` -> (low, high), inclusive.
    """
    unknown = set(target) - {"auc24", "peak", "trough"}
    if unknown or not target:
        raise ValueError(f"target needs auc24, peak or trough bands, got {sorted(target)}")
    ss = samples.steady_state(dose, tau, tinf, peak_delay_h)
    ok = np.ones(len(samples), bool)
    for key, (lo, hi) in target.items():
        ok &= (ss[key] >= lo) & (ss[key] <= hi)
    w = samples.weights
    return float(np.mean(ok) if w is None else np.sum(w[ok]))
