"""Batch closed forms: many parameter sets at once, for estimation and uncertainty.

The same superposition equations as :mod:`onecomp` and :mod:`twocomp`
(pk-sources.md 2.2, 2.3, 2.6), evaluated for m parameter sets at n times in one
numpy expression: what MAP fitting, least squares, the two-level root search
and posterior draws need. The per-set functions in :mod:`onecomp` and
:mod:`twocomp` stay the reference for a single individual (hold-until, exact
AUC windows); the tests check both against scipy's ODE solver.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tdmtui.core.models import DoseArrays


def exponentials(cl, v1, q, v2) -> tuple[np.ndarray, np.ndarray]:  # noqa: ANN001
    """Exponents (m, k) 1/h and weights (m, k) per parameter set: C = sum_k w_k u_k / V1.

    One compartment: lam = CL/V, w = 1. Two (pk-sources.md 2.6): alpha, beta, A', B' without
    cancellation: alpha - beta = sqrt((k10 + k12 - k21)^2 + 4 k12 k21), beta = k10 k21 / alpha.
    """
    cl, v1, q, v2 = (x if isinstance(x, np.ndarray) and x.ndim == 1 else np.atleast_1d(np.asarray(x, float))
                     for x in (cl, v1, q, v2))
    if not np.any(q > 0):
        return (cl / v1)[:, None], np.ones((cl.size, 1))
    # A batch may mix structures (a model average's draws): a one-compartment row (q = 0) takes
    # k12 = k21 = 0, so alpha = k10 with weight 1 and the second exponent carries weight 0.
    one = q <= 0
    k10, k12 = cl / v1, q / v1
    k21 = np.divide(q, v2, out=np.zeros_like(q, dtype=float), where=~one)
    x = k10 + k12 - k21
    half_four = 2.0 * k12 * k21  # (root + x)(root - x) = 4 k12 k21, and root > |x|
    root = np.sqrt(x * x + 2.0 * half_four)
    out = np.empty((cl.size, 2, 2))  # [:, 0] exponents alpha, beta; [:, 1] weights A', B'
    out[:, 0, 0] = 0.5 * (k10 + k12 + k21 + root)
    out[:, 0, 1] = k10 * k21 / out[:, 0, 0]
    with np.errstate(invalid="ignore", divide="ignore"):  # np.where's unused branch is 0/0 on one-compartment rows
        out[:, 1, 0] = np.where(x >= 0, 0.5 * (x + root), half_four / (root - x)) / root  # (alpha - k21)/root
        out[:, 1, 1] = np.where(x <= 0, 0.5 * (root - x), half_four / (root + x)) / root  # (k21 - beta)/root
    if np.any(one):
        out[one, 0, 1], out[one, 1, 0], out[one, 1, 1] = out[one, 0, 0], 1.0, 0.0
    return out[:, 0], out[:, 1]


@dataclass(frozen=True)
class Design:
    """Dose-by-time arrays for repeated batch predictions at n times; a dose is *done* at t once its
    infusion has ended (a bolus: just after it is given), and only done (time, dose) pairs are kept."""

    after: np.ndarray  # (P,) h since the dose of each done pair ended
    dose: np.ndarray  # (P,) index of that pair's dose
    starts: np.ndarray  # first pair of each time that has any (pairs are ordered by time)
    has: np.ndarray  # (n,) True where the time has a done pair
    into: np.ndarray  # (n, d) h of a running infusion elapsed at t; 0 otherwise
    running: bool  # any level drawn during an infusion
    rate: np.ndarray  # (d,) mg/h (0 for a bolus)
    duration: np.ndarray  # (d,) h
    bolus: np.ndarray  # (d,) mg for a bolus, 0 for an infusion

    @classmethod
    def build(cls, doses: DoseArrays, t) -> Design:  # noqa: ANN001
        u = np.asarray(t, dtype=float).reshape(-1)[:, None] - doses.start[None, :]
        dur = doses.duration
        level, dose = np.nonzero((u >= dur) & (u > 0))
        running = (u > 0) & (u < dur)
        rate = np.where(dur > 0, doses.amount / np.where(dur > 0, dur, 1.0), 0.0)
        counts = np.bincount(level, minlength=u.shape[0])
        starts = (np.cumsum(counts) - counts)[counts > 0]
        return cls(u[level, dose] - dur[dose], dose, starts, counts > 0, np.where(running, u, 0.0),
                   bool(running.any()), rate, dur, np.where(dur > 0, 0.0, doses.amount))


def batch_concentration(cl, v1, q, v2, design: Design) -> np.ndarray:  # noqa: ANN001
    """Concentrations (m, n) mg/L for m parameter sets at the design's n times.

    Per dose (pk-sources.md 2.2): end value R (1 - e^(-lam T))/lam (D for a bolus) times e^(-lam (t - end))
    once done; R (1 - e^(-lam u))/lam while running; superposed, each term weighted by w/V1.
    """
    lam, w = exponentials(cl, v1, q, v2)
    lam3, scale = lam[:, :, None], w / np.atleast_1d(v1)[:, None]
    end = (-np.expm1(-lam3 * design.duration) * (design.rate / lam3) + design.bolus) * scale[:, :, None]
    out = np.zeros((lam.shape[0], design.has.size))
    if design.starts.size:
        done = np.sum(np.exp(-lam3 * design.after) * end[:, :, design.dose], axis=1)  # (m, P)
        out[:, design.has] = np.add.reduceat(done, design.starts, axis=1)
    if design.running:
        lam4 = lam3[..., None]
        out += np.einsum("mknd,mk->mn", -np.expm1(-lam4 * design.into) * (design.rate / lam4), scale)
    return out


def batch_steady_state(cl, v1, q, v2, dose: float, tau: float, tinf: float,  # noqa: ANN001
                       peak_delay_h: float = 0.0) -> dict[str, np.ndarray]:
    """Steady-state peak, trough and AUC24 for each parameter set.

    Peak_k = D/V1 g(lam T)/(1 - e^(-lam tau)), g(x) = (1 - e^(-x))/x, at the end
    of the infusion (times e^(-lam delay) when the peak is drawn ``peak_delay_h``
    later); trough_k = peak_k e^(-lam (tau - T)) (pk-sources.md 2.3, term by
    term for 2.6); AUC24 = 24 D / (tau CL) (pk-sources.md 2.6).
    """
    lam, w = exponentials(cl, v1, q, v2)
    x = lam * tinf
    g = np.where(x > 0, -np.expm1(-x) / np.where(x > 0, x, 1.0), 1.0)
    peak_k = dose / np.atleast_1d(v1)[:, None] * g / -np.expm1(-lam * tau)
    return {"peak": np.sum(w * peak_k * np.exp(-lam * peak_delay_h), 1),
            "trough": np.sum(w * peak_k * np.exp(-lam * (tau - tinf)), 1),
            "auc24": 24.0 * dose / (tau * np.atleast_1d(np.asarray(cl, dtype=float)))}
