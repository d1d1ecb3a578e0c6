"""Batch closed forms: many parameter sets at once, for estimation and uncertainty.

The same superposition equations as :mod:`onecomp` and :mod:`twocomp`
(pk-sources.md 2.2, 2.3, 2.6), evaluated for m parameter sets at n times in one
numpy expression: what MAP fitting, least squares, the two-level root search
and posterior draws need. The per-set functions in :mod:`onecomp` and
:mod:`twocomp` stay the reference for a single individual (hold-until, exact
AUC windows); the tests check both against scipy's ODE solver.
"""

from __future__ import annotations

import numpy as np

from tdmtui.core.models import DoseArrays
from tdmtui.core.models.superpose import Layout


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
    mixed = bool(np.any(one))
    k10, k12 = cl / v1, q / v1
    k21 = np.divide(q, v2, out=np.zeros_like(q, dtype=float), where=~one) if mixed else q / v2
    x = k10 + k12 - k21
    half_four = 2.0 * k12 * k21  # (root + x)(root - x) = 4 k12 k21, and root > |x|
    root = np.sqrt(x * x + 2.0 * half_four)
    out = np.empty((cl.size, 2, 2))  # [:, 0] exponents alpha, beta; [:, 1] weights A', B'
    out[:, 0, 0] = 0.5 * (k10 + k12 + k21 + root)
    out[:, 0, 1] = k10 * k21 / out[:, 0, 0]
    with np.errstate(invalid="ignore", divide="ignore"):  # np.where's unused branch is 0/0 on one-compartment rows
        out[:, 1, 0] = np.where(x >= 0, 0.5 * (x + root), half_four / (root - x)) / root  # (alpha - k21)/root
        out[:, 1, 1] = np.where(x <= 0, 0.5 * (root - x), half_four / (root + x)) / root  # (k21 - beta)/root
    if mixed:
        out[one, 0, 1], out[one, 1, 0], out[one, 1, 1] = out[one, 0, 0], 1.0, 0.0
    return out[:, 0], out[:, 1]


class Design:
    """The dose history laid out for repeated batch predictions at n fixed times.

    A thin name over :class:`tdmtui.core.models.superpose.Layout`: the finished doses enter a
    recurrence carried from time to time and running infusions are listed sparsely, so one
    prediction costs time linear in doses + times and bounded memory (see that module).
    """

    def __init__(self, layout: Layout) -> None:
        self.layout = layout

    @classmethod
    def build(cls, doses: DoseArrays, t) -> Design:  # noqa: ANN001
        return cls(Layout.build(doses, t))

    @property
    def n(self) -> int:
        """Number of times."""
        return self.layout.n


def batch_concentration(cl, v1, q, v2, design: Design) -> np.ndarray:  # noqa: ANN001
    """Concentrations (m, n) mg/L for m parameter sets at the design's n times.

    Per dose (pk-sources.md 2.2): end value R (1 - e^(-lam T))/lam (D for a bolus) times e^(-lam (t - end))
    once done; R (1 - e^(-lam u))/lam while running; superposed, each term weighted by w/V1.
    """
    lam, w = exponentials(cl, v1, q, v2)
    scale = w / np.atleast_1d(np.asarray(v1, dtype=float))[:, None]
    sums = design.layout.sums(lam)
    if lam.shape[1] == 1:
        return sums[:, 0] * scale[:, :1]
    return sums[:, 0] * scale[:, :1] + sums[:, 1] * scale[:, 1:]  # np.sum over the two exponents, term by term


def batch_steady_state(cl, v1, q, v2, dose: float, tau: float, tinf: float,  # noqa: ANN001
                       peak_delay_h: float = 0.0) -> dict[str, np.ndarray]:
    """Steady-state peak, trough and AUC24 for each parameter set.

    Peak_k = D/V1 g(lam T)/(1 - e^(-lam tau)), g(x) = (1 - e^(-x))/x, at the end
    of the infusion (times e^(-lam delay) when the peak is drawn ``peak_delay_h``
    later); trough_k = peak_k e^(-lam (tau - T)) (pk-sources.md 2.3, term by
    term for 2.6); AUC24 = 24 D / (tau CL) (pk-sources.md 2.6).
    """
    lam, w = exponentials(cl, v1, q, v2)
    return SteadyStates(lam, w, np.atleast_1d(np.asarray(v1, dtype=float)),
                        np.atleast_1d(np.asarray(cl, dtype=float))).at(dose, tau, tinf, peak_delay_h)


class SteadyStates:
    """:func:`batch_steady_state` of many parameter sets for any number of regimens.

    Built from the exponents and weights (m, k) of :func:`exponentials`, V1 and CL (m,). The
    exponential factors of each infusion time, interval and decay time are computed once per set of
    parameters (a plan judges some 40 regimens on the same 2,000 draws); the arithmetic is
    :func:`batch_steady_state`'s, term for term.
    """

    #: factors kept at most (each an (m, k) array); beyond, the memo starts again
    MEMO = 256

    def __init__(self, lam: np.ndarray, w: np.ndarray, v1: np.ndarray, cl: np.ndarray) -> None:
        self.lam, self.w, self.v1, self.cl = lam, w, v1, cl
        self._memo: dict[tuple[str, float], np.ndarray] = {}

    def _factor(self, kind: str, t: float) -> np.ndarray:
        key = (kind, float(t))
        got = self._memo.get(key)
        if got is None:
            if len(self._memo) >= self.MEMO:
                self._memo.clear()
            if kind == "g":  # (1 - e^(-lam T)) / (lam T), 1 at T = 0
                x = self.lam * t
                if t > 0 and np.all(x > 0):
                    got = -np.expm1(-x) / x
                else:
                    got = np.where(x > 0, -np.expm1(-x) / np.where(x > 0, x, 1.0), 1.0)
            elif kind == "accumulation":  # 1 - e^(-lam tau)
                got = -np.expm1(-self.lam * t)
            else:  # decay over t: e^(-lam t)
                got = np.exp(-self.lam * t)
            self._memo[key] = got
        return got

    def at(self, dose: float, tau: float, tinf: float, peak_delay_h: float = 0.0) -> dict[str, np.ndarray]:
        """Steady-state peak, trough and AUC24 per parameter set for ``dose`` mg over ``tinf`` h every ``tau`` h."""
        wpeak = self.w * (dose / self.v1[:, None] * self._factor("g", tinf) / self._factor("accumulation", tau))
        peak = wpeak if peak_delay_h == 0 else wpeak * self._factor("decay", peak_delay_h)
        trough = wpeak * self._factor("decay", tau - tinf)
        return {"peak": _row_sums(peak), "trough": _row_sums(trough), "auc24": 24.0 * dose / (tau * self.cl)}


def _row_sums(a: np.ndarray) -> np.ndarray:
    """Sum over the (one or two) exponents of each row, as np.sum(a, 1) adds them."""
    return a[:, 0] + a[:, 1] if a.shape[1] == 2 else np.sum(a, 1)
