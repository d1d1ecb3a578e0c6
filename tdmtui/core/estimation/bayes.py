"""Bayesian (MAP) estimation on a population model, with its uncertainty.

The objective is :class:`~tdmtui.core.estimation.posterior.Posterior` (-2 log
posterior of eta; censored levels by Beal's M3). The MAP: damped Newton from
eta = 0 (gradient and Hessian by central differences, one batch per step)
within +-5 SD of the population value, then L-BFGS-B from the best point of a
+-2 SD grid if that fails; no convergence, or an answer on the bound, raises
ConvergenceError. Uncertainty: Laplace (cov(eta) = 2 H^-1 at the MAP), sampled
with a recorded seed (:mod:`draws`); :meth:`Fit.proposal` holds the widened
draws that the importance resampling and the model evidence share.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from tdmtui.core.errors import ConvergenceError
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.estimation.popmodels import Covariates, PopModel, Typical
from tdmtui.core.estimation.posterior import NO_LEVELS, Course, Observations, Posterior

SEED = 20260301
BOUND_SD = 5.0  # search bound, SD of each random effect


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
