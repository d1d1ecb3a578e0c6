"""The Bayesian objective: -2 log posterior of the random effects for a population model and levels.

Model (pk-sources.md 2.7): P_i = P_typical x exp(eta_i), eta ~ N(0, Omega);
residual Var_j = a^2 + (b C_pred,j)^2 as the model states. The objective is
-2 log posterior up to a constant::

    OFV = sum_quantified [(y - C)^2 / Var + ln Var]
          - 2 sum_below ln Phi((LOQ - C)/sd) - 2 sum_above ln Phi((C - ULOQ)/sd)
          + eta' Omega^-1 eta

Censored levels enter as the probability of lying beyond the limit (Beal's
M3, Beal 2001 - from memory for the citation), never as the limit itself.
The MAP (:mod:`bayes`) minimises it; the draws (:mod:`draws`) weight by it.

Speed: predictions for a whole batch of parameter sets at once come from
:mod:`tdmtui.core.models.batch` (``batch_concentration``); the per-individual
functions of :mod:`tdmtui.core.models` take one set per call, too slow for a
2 ms fit or 2,000 draws.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Callable

import numpy as np

from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.models.batch import Design, batch_concentration
from tdmtui.core.estimation.popmodels import PopModel, Typical

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

    def predictor(self, t: np.ndarray, doses: DoseArrays | None = None) -> Callable[[np.ndarray], np.ndarray]:
        """``eta (m, p) -> concentrations (m, n)`` at times ``t`` from ``doses`` (default: the fit's), laid out once."""
        doses = self.doses if doses is None else doses
        if self.course is None:
            design = Design.build(doses, t)
            return lambda eta: batch_concentration(*self.params(eta), design)
        from tdmtui.core.models.timevarying import batch_tv_concentration

        changes = self.course.changes

        def predict(eta: np.ndarray) -> np.ndarray:
            cl, v1, q, v2 = self.piece_params(eta)
            return batch_tv_concentration(changes, cl, v1, q, v2, doses, t)

        return predict

    def __call__(self, eta: np.ndarray) -> np.ndarray:
        """OFV for eta of shape (m, p); shape (m,)."""
        eta = np.atleast_2d(eta)
        return self.objective(eta, self.predict(eta) if len(self.obs) else None)

    def objective(self, eta: np.ndarray, pred: np.ndarray | None) -> np.ndarray:
        """OFV (m,) for eta (m, p) whose predictions at the levels are ``pred`` (m, n) (None without levels)."""
        ofv = np.sum((eta @ self.omega_inv) * eta, 1)
        if pred is None:
            return ofv
        o = self.obs
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
