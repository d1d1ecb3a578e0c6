"""One-compartment model: zero-order infusions, first-order elimination.

Every dose is superposed in closed form (linear kinetics). The helpers named
``unit_*`` compute one exponential disposition term ``e^(-lam t)`` with unit
weight; the one-compartment model is that term with ``lam = ke`` and the
two-compartment model (:mod:`.twocomp`) is a weighted sum of two of them.

Conventions (case-format.md, "Model conventions"):

* Times in h, amounts in mg, volumes in L, concentrations in mg/L.
* A dose contributes nothing at or before its start (pk-sources.md 2.2,
  ``t <= s_i: c_i(t) = 0``), so a bolus given at ``s`` is counted from just
  after ``s``: the level at a dose time is the level just before that dose.

Equations: pk-sources.md 2.2 (single infusion, superposition, exact AUC
pieces) and 2.3 (steady state); standard textbook infusion equations (e.g.
Bauer, Applied Clinical Pharmacokinetics, ch. 2).
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np

from tdmtui.core.models import DoseArrays, SteadyState
from tdmtui.core.solvers import distinct



def check_positive(**values: float) -> None:
    """Raise ValueError unless every named value is a finite number > 0."""
    for name, value in values.items():
        if not (math.isfinite(value) and value > 0.0):
            raise ValueError(f"{name} must be a finite number > 0, got {value!r}")


def check_doses(doses: DoseArrays) -> None:
    """Raise ValueError for a malformed dose history.

    Starts must be finite; durations finite and >= 0; amounts finite and >= 0.
    """
    s, d, a = doses.start, doses.duration, doses.amount
    if not (s.shape == d.shape == a.shape and s.ndim == 1):
        raise ValueError("dose arrays must be 1-D and of equal length")
    if not np.all(np.isfinite(s)):
        raise ValueError("dose start times must be finite")
    if not np.all(np.isfinite(d) & (d >= 0.0)):
        raise ValueError("dose durations must be finite and >= 0")
    if not np.all(np.isfinite(a) & (a >= 0.0)):
        raise ValueError("dose amounts must be finite and >= 0")


def _times(t: object) -> np.ndarray:
    arr = np.asarray(t, dtype=float)
    if np.any(np.isnan(arr)):
        raise ValueError("times must not be NaN")
    return arr


def _g(x: np.ndarray) -> np.ndarray:
    """(1 - e^(-x)) / x, equal to 1 at x = 0 (x >= 0)."""
    safe = np.where(x > 0.0, x, 1.0)
    return np.where(x > 0.0, -np.expm1(-safe) / safe, 1.0)


def _h(x: np.ndarray) -> np.ndarray:
    """x - (1 - e^(-x)) >= 0 without cancellation for small x (x >= 0)."""
    x = np.asarray(x, dtype=float)
    return np.where(x < 1e-2, _h_series(x), x + np.expm1(-np.where(x < 1e-2, 1.0, x)))


def _h_series(x):  # noqa: ANN001, ANN202
    """Taylor series of x - 1 + e^(-x) to x^7 (truncation < 1e-16 relative for x < 1e-2)."""
    return x * x * (0.5 - x * (1 / 6 - x * (1 / 24 - x * (1 / 120 - x * (1 / 720 - x / 5040)))))


def unit_concentration(
    lam: float, v: float, doses: DoseArrays, t: object, right: bool = False
) -> np.ndarray:
    """Superposed exponential term ``e^(-lam t)`` with unit weight, mg/L.

    For each dose (start s, duration T, amount D, u = t - s):
    infusion ``D/(v T lam) (1 - e^(-lam min(u, T))) e^(-lam max(u - T, 0))``
    for u > 0; bolus ``D/v e^(-lam u)`` for u > 0 (pk-sources.md 2.2).

    Args:
        lam: exponent, 1/h (> 0).
        v: volume, L (> 0).
        doses: dose history.
        t: times, h, any shape.
        right: count a bolus given exactly at ``t`` (right-hand limit).

    Returns:
        Array of the shape of ``t``.
    """
    tt = _times(t)
    if len(doses) == 0 or tt.size == 0:
        return np.zeros(tt.shape, dtype=float)
    from tdmtui.core.models.superpose import Layout  # linear in doses + times (see that module)

    return Layout.build(doses, tt, right).sums(np.array([[float(lam)]]))[0, 0].reshape(tt.shape) / v


def unit_auc(lam: float, v: float, doses: DoseArrays, a: float, b: float) -> float:
    """Exact integral over [a, b] of :func:`unit_concentration`, mg*h/L.

    Pieces per dose (pk-sources.md 2.2): during infusion, from u1 to u2 h
    after its start, ``D/(v T lam^2) [h(lam du) + (1 - e^(-lam u1))(1 - e^(-lam du))]``
    with du = u2 - u1 and h(x) = x - 1 + e^(-x) (algebraically equal to the
    sheet's ``R/(ke V)[(u2 - u1) - (e^(-ke u1) - e^(-ke u2))/ke]``); after
    the end, from w1 to w2 h, ``C_end e^(-lam w1)(1 - e^(-lam (w2 - w1)))/lam``.
    ``b`` may be ``inf`` and ``a`` may be ``-inf``.
    """
    if math.isnan(a) or math.isnan(b) or not a <= b:
        raise ValueError(f"AUC window needs a <= b, got [{a!r}, {b!r}]")
    if a == b or len(doses) == 0:
        return 0.0
    s, dur, amt = doses.start, doses.duration, doses.amount
    x_inf = lam * dur
    infusion = x_inf > 0.0
    u1 = np.clip(a - s, 0.0, dur)
    u2 = np.clip(b - s, 0.0, dur)
    du = u2 - u1
    during = np.where(
        infusion,
        amt / (v * np.where(infusion, x_inf, 1.0) * lam)
        * (_h(lam * du) + np.expm1(-lam * u1) * np.expm1(-lam * du)),
        0.0,
    )
    end = s + dur
    w1 = np.maximum(a - end, 0.0)
    w2 = np.maximum(b - end, 0.0)
    c_end = amt / v * _g(x_inf)
    after = c_end * np.exp(-lam * w1) * -np.expm1(-lam * (w2 - w1)) / lam
    return float(np.sum(during) + np.sum(after))


def unit_steady_state(lam: float, v: float, dose: float, tau: float, tinf: float) -> tuple[float, float, float]:
    """Steady-state peak, trough and interval AUC of one exponential term.

    Peak (end of infusion) = ``D/v g(lam T) / (1 - e^(-lam tau))`` with
    g(x) = (1 - e^(-x))/x: the single-dose end-of-infusion value times the
    accumulation factor 1/(1 - e^(-lam tau)); trough = peak e^(-lam (tau - T))
    (pk-sources.md 2.3). Interval AUC integrates the steady-state profile:
    rise from the trough during the infusion, then decay from the peak.

    Returns:
        (peak mg/L, trough mg/L, AUC over one interval mg*h/L).
    """
    x = lam * tinf
    g = -math.expm1(-x) / x if x > 0.0 else 1.0
    peak = dose / v * g / -math.expm1(-lam * tau)
    trough = peak * math.exp(-lam * (tau - tinf))
    h = _h_series(x) if x < 1e-2 else x + math.expm1(-x)
    rise = 0.0 if x == 0.0 else dose / (v * x * lam) * h
    auc_tau = trough * -math.expm1(-x) / lam + rise + peak * -math.expm1(-lam * (tau - tinf)) / lam
    return peak, trough, auc_tau


def check_regimen(dose: float, tau: float, tinf: float) -> None:
    """Raise ValueError unless dose > 0, tau > 0 and 0 <= tinf <= tau."""
    check_positive(dose=dose, tau=tau)
    if not (math.isfinite(tinf) and 0.0 <= tinf <= tau):
        raise ValueError(f"tinf must be within [0, tau], got {tinf!r}")


def segment_states(
    lams: tuple[float, ...], v: float, doses: DoseArrays, t0: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Split [t0, inf) at every dose start and infusion end after t0.

    Within a segment the set of running infusions is fixed, so each unit term
    follows ``K + (X - K) e^(-lam s)`` with X its value just after the
    segment start and ``K = R_running / (v lam)``.

    Returns:
        (starts h, lengths h (last = inf), X (n_seg, n_lam), K (n_seg, n_lam)).
    """
    s, dur = doses.start, doses.duration
    ends = s + dur
    events = np.concatenate([[t0], s[s > t0], ends[ends > t0]])
    starts = distinct(events)
    lengths = np.append(np.diff(starts), np.inf)
    running = (s[None, :] <= starts[:, None]) & (starts[:, None] < ends[None, :]) & (dur[None, :] > 0.0)
    rate = np.sum(np.where(running, doses.amount / np.where(dur > 0.0, dur, 1.0), 0.0), axis=1)
    x = np.stack([unit_concentration(lam, v, doses, starts, right=True) for lam in lams], axis=1)
    k = np.stack([rate / (v * lam) for lam in lams], axis=1)
    return starts, lengths, x, k


def concentration(ke: float, v: float, doses: DoseArrays, t: object) -> np.ndarray:
    """Concentration, mg/L, at times ``t`` (h, any shape).

    Superposition of zero-order infusions (bolus when duration is 0),
    pk-sources.md 2.2. Zero before the first dose.

    Raises:
        ValueError: ke or v not finite and > 0, malformed doses, NaN times.
    """
    check_positive(ke=ke, v=v)
    check_doses(doses)
    return unit_concentration(ke, v, doses, t)


def concentration_in_ke(v: float, doses: DoseArrays, t: float) -> Callable[[float], float]:
    """C(t; ke), mg/L, at one time as a function of ke: :func:`concentration`'s value, with the volume,
    doses and time checked and the history laid out once (a root search in ke calls it often).

    Raises:
        ValueError: as :func:`concentration`.
    """
    check_positive(v=v)
    check_doses(doses)
    tt = _times(t)
    if len(doses) == 0 or tt.size != 1:
        return lambda ke: float(concentration(ke, v, doses, t))
    from tdmtui.core.models.superpose import Layout

    layout = Layout.build(doses, tt)

    def at(ke: float) -> float:
        check_positive(ke=ke)
        return float(layout.sums(np.array([[float(ke)]]))[0, 0, 0] / v)

    return at


def auc(ke: float, v: float, doses: DoseArrays, a: float, b: float) -> float:
    """Exact AUC, mg*h/L, of the concentration over [a, b] h (pk-sources.md 2.2).

    Correct for windows that start or end inside an infusion; ``b = inf``
    gives the AUC to infinity (D/CL for one dose).
    """
    check_positive(ke=ke, v=v)
    check_doses(doses)
    return unit_auc(ke, v, doses, a, b)


def steady_state(ke: float, v: float, dose: float, tau: float, tinf: float) -> SteadyState:
    """Steady-state peak, trough and AUC24 for ``dose`` mg every ``tau`` h over ``tinf`` h.

    pk-sources.md 2.3: Cmax,ss = k0 (1 - e^(-ke t'))/[ke V (1 - e^(-ke tau))],
    Cmin,ss = Cmax,ss e^(-ke (tau - t')); auc24 = exact AUC over one interval
    x 24/tau (equals daily dose / CL).

    Raises:
        ValueError: non-positive parameters or dose/tau, tinf outside [0, tau].
    """
    check_positive(ke=ke, v=v)
    check_regimen(dose, tau, tinf)
    peak, trough, auc_tau = unit_steady_state(ke, v, dose, tau, tinf)
    return SteadyState(peak=peak, trough=trough, auc24=auc_tau * 24.0 / tau)


def time_to_fall(ke: float, v: float, doses: DoseArrays, t0: float, level: float) -> float | None:
    """First time >= t0, h, at which the concentration is <= ``level`` mg/L.

    Returns ``t0`` when C(t0) <= level. Otherwise, on each segment between
    dose events after t0, C = K + (C0 - K) e^(-ke s) (K = running rate / CL),
    so the crossing is ``s = ln((C0 - K)/(level - K)) / ke`` when K < level
    (closed form of pk-sources.md 2.2). Doses that start later are honoured.

    Returns:
        The time, or None when the level is never reached (level <= 0).

    Raises:
        ValueError: non-positive ke or v, negative or NaN level, NaN t0.
    """
    check_positive(ke=ke, v=v)
    check_doses(doses)
    if math.isnan(level) or level < 0.0 or not math.isfinite(t0):
        raise ValueError("level must be >= 0 and t0 finite")
    if float(unit_concentration(ke, v, doses, t0)) <= level:
        return float(t0)
    if level == 0.0:
        return None
    starts, lengths, x, k = segment_states((ke,), v, doses, t0)
    c0, kk = x[:, 0], k[:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        s_cross = np.where(
            c0 <= level, 0.0, np.where(kk < level, np.log((c0 - kk) / (level - kk)) / ke, np.inf)
        )
    ok = np.flatnonzero(s_cross <= lengths)
    return None if ok.size == 0 else float(starts[ok[0]] + s_cross[ok[0]])
