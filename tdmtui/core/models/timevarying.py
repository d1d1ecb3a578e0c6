"""Parameters that change during the course: closed forms joined by the amounts in the body.

Renal function that changes (a new serum creatinine gives a new CrCl, hence a
new clearance) and haemodialysis sessions (extra clearance while the session
runs) make the model's parameters piecewise constant in time. Within each
piece the one- or two-compartment model is linear with constant parameters,
so its solution is closed form (pk-sources.md 2.2, 2.6); at each change the
compartment AMOUNTS carry over unchanged (mass is conserved; a change of
volume changes the concentration, not the amount), and become the starting
amounts of the next piece. No ODE solver runs here; the tests check these
forms against scipy's solve_ivp.

Per piece, with K the rate matrix of the amounts (dA/dt = -K A + R(t) e1;
one compartment K = [ke]; two compartments K = [[k10 + k12, -k21], [-k12, k21]])
and its spectral projectors P_k (eigenvalues lam_k: ke, or alpha and beta)::

    A(t) = sum_k P_k [ e^(-lam_k (t - t0)) A(t0) + e1 J_k(t) ]
    J_k(t) = integral over the piece's own input of R(tau) e^(-lam_k (t - tau)) dtau

J_k is the one-exponential superposition of :mod:`.onecomp` with unit volume,
taken over the part of each infusion that falls inside the piece (an infusion
that spans a change is split there). P_alpha = (K - beta I)/(alpha - beta),
P_beta = (alpha I - K)/(alpha - beta); their (1, 1) entries are the weights
A', B' of :mod:`.twocomp`.

Conventions as in :mod:`tdmtui.core.models`: a value set at time c holds on
(c, next change]; a concentration at a change time is the left-hand limit;
a bolus given at a change time is given with the new parameters.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from tdmtui.core.models import DoseArrays, PKParams


@dataclass(frozen=True)
class ParamSchedule:
    """Parameters that hold from given times on.

    Attributes:
        changes: (s - 1,) strictly increasing times, h, at which a new set starts.
        params: (s,) parameter sets; ``params[0]`` holds before the first change,
            ``params[i]`` from ``changes[i - 1]`` on. All one structure (one- or
            two-compartment).
    """

    changes: tuple[float, ...]
    params: tuple[PKParams, ...]

    def __post_init__(self) -> None:
        if len(self.params) != len(self.changes) + 1 or not self.params:
            raise ValueError("a schedule needs one more parameter set than change times")
        c = np.asarray(self.changes, dtype=float)
        if not np.all(np.isfinite(c)) or np.any(np.diff(c) <= 0):
            raise ValueError("change times must be finite and strictly increasing")
        if len({p.is_two_compartment for p in self.params}) != 1:
            raise ValueError("every parameter set of a schedule needs the same structure")
        for p in self.params:
            if not all(math.isfinite(x) and x > 0 for x in (p.cl, p.v1)):
                raise ValueError(f"cl and v1 must be finite and > 0, got {p!r}")

    @classmethod
    def fixed(cls, params: PKParams) -> ParamSchedule:
        return cls((), (params,))

    @property
    def latest(self) -> PKParams:
        """The set that holds from the last change on (what a forecast uses)."""
        return self.params[-1]

    def arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """(cl, v1, q, v2) each of shape (1, s) for :func:`batch_tv_concentration`."""
        cl, v1, q, v2 = (np.array([[getattr(p, f) for p in self.params]]) for f in ("cl", "v1", "q", "v2"))
        return cl, v1, q, v2


def _bounds(changes: np.ndarray) -> np.ndarray:
    return np.concatenate([[-np.inf], changes, [np.inf]])


def clip_doses(doses: DoseArrays, t0: float, t1: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The part of each dose given in [t0, t1): (start h, duration h, amount mg).

    An infusion running across t0 or t1 is cut there at its own rate; a bolus
    at exactly t1 belongs to the next piece.
    """
    s, d, a = doses.start, doses.duration, doses.amount
    inf = d > 0
    lo = np.maximum(s, t0)
    hi = np.minimum(s + d, t1)
    rate = np.where(inf, a / np.where(inf, d, 1.0), 0.0)
    keep_inf = inf & (hi > lo)
    keep_bolus = ~inf & (s >= t0) & (s < t1)
    keep = keep_inf | keep_bolus
    dur = np.where(keep_inf, hi - lo, 0.0)
    amt = np.where(keep_inf, rate * dur, a)
    return lo[keep], dur[keep], amt[keep]


def _input_terms(lam: np.ndarray, start: np.ndarray, dur: np.ndarray, amt: np.ndarray,
                 t: np.ndarray) -> np.ndarray:
    """J_k at times t: (m, k, n). Per dose R/lam (1 - e^(-lam min(u, T))) e^(-lam max(u - T, 0)),
    bolus D e^(-lam u), for u = t - start > 0 (pk-sources.md 2.2 with unit volume)."""
    if start.size == 0 or t.size == 0:
        return np.zeros(lam.shape + (t.size,))
    u = t[:, None] - start[None, :]  # (n, d)
    uc = np.clip(u, 0.0, dur)
    after = np.maximum(u - dur, 0.0)
    inf = dur > 0
    rate = np.where(inf, amt / np.where(inf, dur, 1.0), 0.0)
    l4 = lam[:, :, None, None]
    rise = np.where(inf, -np.expm1(-l4 * uc) * rate / l4, (u > 0) * amt)
    return np.sum(rise * np.exp(-l4 * after), axis=-1)


def spectral(cl, v1, q, v2) -> tuple[np.ndarray, np.ndarray]:  # noqa: ANN001
    """Eigenvalues (m, k) 1/h and spectral projectors (m, k, c, c) of the amounts' rate matrix.

    One compartment: lam = CL/V, P = [[1]]. Two (pk-sources.md 2.6): alpha, beta as in
    :func:`tdmtui.core.models.batch.exponentials`, P_alpha = (K - beta I)/(alpha - beta),
    P_beta = (alpha I - K)/(alpha - beta).
    """
    from tdmtui.core.models.batch import exponentials

    lam, _ = exponentials(cl, v1, q, v2)
    m = lam.shape[0]
    if lam.shape[1] == 1:
        return lam, np.ones((m, 1, 1, 1))
    cl, v1, q, v2 = (np.atleast_1d(np.asarray(x, dtype=float)) for x in (cl, v1, q, v2))
    k10, k12, k21 = cl / v1, q / v1, q / v2
    big_k = np.empty((m, 2, 2))
    big_k[:, 0, 0], big_k[:, 0, 1], big_k[:, 1, 0], big_k[:, 1, 1] = k10 + k12, -k21, -k12, k21
    alpha, beta = lam[:, 0], lam[:, 1]
    gap = (alpha - beta)[:, None, None]
    eye = np.eye(2)[None]
    p_alpha = (big_k - beta[:, None, None] * eye) / gap
    p_beta = (alpha[:, None, None] * eye - big_k) / gap
    return lam, np.stack([p_alpha, p_beta], axis=1)


def batch_tv_concentration(changes, cl, v1, q, v2, doses: DoseArrays, t) -> np.ndarray:  # noqa: ANN001
    """Central concentrations (m, n) mg/L for m parameter schedules at times t (n,).

    ``cl``, ``v1``, ``q``, ``v2``: arrays (m, s), one column per piece
    (s = len(changes) + 1; q = v2 = 0 for one compartment). Amounts carry over
    each change (module docstring).
    """
    bounds = _bounds(np.asarray(changes, dtype=float))
    tt = np.asarray(t, dtype=float).reshape(-1)
    cl, v1, q, v2 = (np.asarray(x, dtype=float) for x in (cl, v1, q, v2))
    if cl.ndim == 1:
        cl, v1, q, v2 = (x[None, :] for x in (cl, v1, q, v2))
    m = cl.shape[0]
    out = np.zeros((m, tt.size))
    state: np.ndarray | None = None  # amounts (m, c) at the start of the piece
    for j in range(bounds.size - 1):
        t0, t1 = bounds[j], bounds[j + 1]
        lam, proj = spectral(cl[:, j], v1[:, j], q[:, j], v2[:, j])
        start, dur, amt = clip_doses(doses, t0, t1)
        sel = (tt > t0) & (tt <= t1)
        want = tt[sel]
        if math.isfinite(t1):
            want = np.append(want, t1)
        if want.size == 0:
            continue
        amounts = np.einsum("mkc,mkn->mcn", proj[:, :, :, 0], _input_terms(lam, start, dur, amt, want))
        if state is not None:
            decay = np.exp(-lam[:, :, None] * (want - t0)[None, None, :])  # (m, k, n)
            amounts += np.einsum("mkcd,md,mkn->mcn", proj, state, decay)
        n_sel = int(sel.sum())
        out[:, sel] = amounts[:, 0, :n_sel] / v1[:, j][:, None]
        if math.isfinite(t1):
            state = amounts[:, :, -1]
    return out


def tv_concentration(schedule: ParamSchedule, doses: DoseArrays, t) -> np.ndarray:  # noqa: ANN001
    """Central concentration, mg/L, at times ``t`` (h, any shape) under a parameter schedule."""
    from tdmtui.core.models.onecomp import check_doses

    check_doses(doses)
    arr = np.asarray(t, dtype=float)
    if np.any(np.isnan(arr)):
        raise ValueError("times must not be NaN")
    return batch_tv_concentration(schedule.changes, *schedule.arrays(), doses, arr.reshape(-1))[0].reshape(arr.shape)


def tv_auc(schedule: ParamSchedule, doses: DoseArrays, a: float, b: float) -> float:
    """Exact AUC, mg*h/L, over [a, b] under a parameter schedule.

    Per piece: the carried-over amounts integrate to P_k A(t0) e^(-lam (lo - t0))(1 - e^(-lam (hi - lo)))/lam,
    the piece's own input to the exact one-exponential AUC of :func:`onecomp.unit_auc` (unit volume).
    """
    from tdmtui.core.models.onecomp import check_doses, unit_auc

    check_doses(doses)
    if math.isnan(a) or math.isnan(b) or not a <= b:
        raise ValueError(f"AUC window needs a <= b, got [{a!r}, {b!r}]")
    bounds = _bounds(np.asarray(schedule.changes, dtype=float))
    total = 0.0
    state: np.ndarray | None = None
    for j, p in enumerate(schedule.params):
        t0, t1 = bounds[j], bounds[j + 1]
        lam, proj = spectral(p.cl, p.v1, p.q, p.v2)
        lam, proj = lam[0], proj[0]
        start, dur, amt = clip_doses(doses, t0, t1)
        piece = DoseArrays(start, dur, amt)
        lo, hi = max(a, t0), min(b, t1)
        if hi > lo:
            for k in range(lam.size):
                total += proj[k, 0, 0] * unit_auc(float(lam[k]), 1.0, piece, lo, hi) / p.v1
                if state is not None:
                    carried = float(proj[k, 0] @ state)
                    total += (carried * math.exp(-lam[k] * (lo - t0)) * -math.expm1(-lam[k] * (hi - lo))
                              / lam[k] / p.v1)
        if math.isfinite(t1):
            terms = _input_terms(lam[None], start, dur, amt, np.array([t1]))[0, :, 0]  # (k,)
            new = proj[:, :, 0].T @ terms
            if state is not None:
                new = new + np.einsum("kcd,d,k->c", proj, state, np.exp(-lam * (t1 - t0)))
            state = new
    return float(total)
