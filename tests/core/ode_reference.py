"""Numerical reference for the closed-form models: scipy.integrate.solve_ivp.

The linear one- or two-compartment ODE (amounts A1, A2 and the running AUC of
A1/V1) is integrated piece by piece between dose events: every infusion start
and end is a breakpoint, the infusion rate is a piecewise-constant input and a
bolus is a jump in A1. Nothing here uses the project's model code.

    dA1/dt = R(t) - (k10 + k12) A1 + k21 A2
    dA2/dt = k12 A1 - k21 A2
    dAUC/dt = A1 / V1
"""

from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

RTOL = 1e-10
ATOL = 1e-12
TINY_SPAN = 1e-9  # h


def ode_reference(
    cl: float,
    v1: float,
    q: float,
    v2: float,
    starts,
    durations,
    amounts,
    times,
    auc_from: float | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Concentrations (left-hand limits) and AUC since ``auc_from`` at ``times``.

    ``q = v2 = 0`` gives the one-compartment model. ``times`` at or after
    ``auc_from`` get the AUC from ``auc_from``; others get AUC from the first event.
    """
    s = np.asarray(starts, dtype=float)
    d = np.asarray(durations, dtype=float)
    a = np.asarray(amounts, dtype=float)
    t = np.asarray(times, dtype=float)
    k10, k12 = cl / v1, q / v1
    k21 = q / v2 if v2 > 0 else 0.0
    jac = np.array([[-(k10 + k12), k21, 0.0], [k12, -k21, 0.0], [1.0 / v1, 0.0, 0.0]])
    extra = [] if auc_from is None else [auc_from]
    events = np.unique(np.concatenate([s, s + d, t, extra]))
    y = np.zeros(3)
    conc = np.zeros(t.shape)
    area = np.zeros(t.shape)
    for i, te in enumerate(events):
        if auc_from is not None and te == auc_from:
            y[2] = 0.0
        hit = t == te
        conc[hit] = y[0] / v1
        area[hit] = y[2]
        y[0] += a[(d == 0.0) & (s == te)].sum()
        if i + 1 == len(events):
            break
        running = (d > 0.0) & (s <= te) & (te < s + d)
        rate = (a[running] / d[running]).sum()
        rhs_const = np.array([rate, 0.0, 0.0])
        span = events[i + 1] - te
        if span < TINY_SPAN:
            # One Euler step: its error (~span^2) is far below the tolerances, and the
            # integrator is not asked to step across a sub-nanosecond interval.
            y = y + span * (jac @ y + rhs_const)
            continue
        sol = solve_ivp(
            lambda _t, yy: jac @ yy + rhs_const,
            (te, events[i + 1]),
            y,
            method="LSODA",
            rtol=RTOL,
            atol=ATOL,
            jac=lambda _t, _y: jac,
        )
        assert sol.success, sol.message
        y = sol.y[:, -1].copy()
    return conc, area


def close(engine, reference, rel: float = 1e-6, floor: float = 1e-6) -> bool:
    """True when |engine - reference| <= rel |reference| + floor everywhere."""
    e = np.asarray(engine, dtype=float)
    r = np.asarray(reference, dtype=float)
    return bool(np.all(np.abs(e - r) <= rel * np.abs(r) + floor))
