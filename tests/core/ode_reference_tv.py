"""Numerical reference for parameters that change during the course: scipy.integrate.solve_ivp.

The amounts A1, A2 (and the running AUC of A1/V1) are integrated piece by piece between
events: every infusion start and end and every change of parameters is a breakpoint; the
parameters in force on (c_i, c_{i+1}] are those given for that piece; a bolus is a jump in A1.
Nothing here uses the project's model code.

    dA1/dt = R(t) - (k10 + k12) A1 + k21 A2
    dA2/dt = k12 A1 - k21 A2
    dAUC/dt = A1 / V1
"""

from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

RTOL = 1e-10
ATOL = 1e-12


def ode_reference_tv(changes, pieces, starts, durations, amounts, times, auc_from=None):  # noqa: ANN001, ANN201
    """Concentrations (left-hand limits) and AUC since ``auc_from`` at ``times``.

    ``pieces``: list of (cl, v1, q, v2), one more than ``changes``; piece i holds after
    changes[i - 1] (piece 0 before changes[0]).
    """
    c = np.asarray(changes, dtype=float)
    s, d, a = (np.asarray(x, dtype=float) for x in (starts, durations, amounts))
    t = np.asarray(times, dtype=float)
    extra = [] if auc_from is None else [auc_from]
    events = np.unique(np.concatenate([s, s + d, t, c, extra]))
    y = np.zeros(3)
    conc, area = np.zeros(t.shape), np.zeros(t.shape)
    for i, te in enumerate(events):
        if auc_from is not None and te == auc_from:
            y[2] = 0.0
        hit = t == te
        piece_before = int(np.searchsorted(c, te, side="left"))  # piece in force on (.., te]
        v1_before = pieces[piece_before][1]
        conc[hit] = y[0] / v1_before
        area[hit] = y[2]
        y[0] += a[(d == 0.0) & (s == te)].sum()
        if i + 1 == len(events):
            break
        cl, v1, q, v2 = pieces[int(np.searchsorted(c, te, side="right"))]
        k10, k12 = cl / v1, q / v1
        k21 = q / v2 if v2 > 0 else 0.0
        jac = np.array([[-(k10 + k12), k21, 0.0], [k12, -k21, 0.0], [1.0 / v1, 0.0, 0.0]])
        running = (d > 0.0) & (s <= te) & (te < s + d)
        rhs = np.array([(a[running] / d[running]).sum(), 0.0, 0.0])
        sol = solve_ivp(lambda _t, yy, j=jac, r=rhs: j @ yy + r, (te, events[i + 1]), y, method="LSODA",
                        rtol=RTOL, atol=ATOL, jac=lambda _t, _y, j=jac: j)
        assert sol.success, sol.message
        y = sol.y[:, -1].copy()
    return conc, area
