"""Two-compartment model (central elimination), infusions and boluses superposed.

Parameters: CL (L/h), V1 (L), Q (L/h), V2 (L). Micro-constants
k10 = CL/V1, k12 = Q/V1, k21 = Q/V2; macro-constants alpha > beta and the
unit-dose weights A' = (alpha - k21)/(alpha - beta), B' = (k21 - beta)/(alpha - beta)
(pk-sources.md 2.6; standard mammillary model, e.g. Gibaldi & Perrier,
Pharmacokinetics, ch. 2 - from memory for the chapter). The central
concentration is ``A' u_alpha + B' u_beta`` where ``u_lam`` is the
one-exponential superposition of :mod:`.onecomp` with volume V1, so every
infusion/bolus/AUC formula of pk-sources.md 2.2 carries over term by term.

Numerics: alpha - beta = sqrt((k10 + k12 - k21)^2 + 4 k12 k21) (an exact
rewriting of the discriminant that never cancels), beta = k10 k21 / alpha,
and A', B' use cancellation-free forms, so the weights stay in [0, 1] and
finite even when alpha and beta nearly coincide.
"""

from __future__ import annotations

import math

import numpy as np

from tdmtui.core.models import DoseArrays, SteadyState
from tdmtui.core.models.onecomp import (
    check_doses,
    check_positive,
    check_regimen,
    segment_states,
    unit_auc,
    unit_concentration,
    unit_steady_state,
)


def macro_constants(cl: float, v1: float, q: float, v2: float) -> tuple[float, float, float, float]:
    """Macro-constants of the two-compartment model.

    Args:
        cl: clearance, L/h. v1: central volume, L. q: intercompartmental
        clearance, L/h. v2: peripheral volume, L. All finite and > 0.

    Returns:
        (alpha 1/h, beta 1/h, A', B'); alpha >= beta > 0, A' + B' = 1,
        both weights in [0, 1] (pk-sources.md 2.6).

    Raises:
        ValueError: any parameter not finite and > 0.
    """
    check_positive(cl=cl, v1=v1, q=q, v2=v2)
    k10, k12, k21 = cl / v1, q / v1, q / v2
    x = k10 + k12 - k21
    root = math.sqrt(x * x + 4.0 * k12 * k21)  # alpha - beta
    alpha = 0.5 * (k10 + k12 + k21 + root)
    beta = k10 * k21 / alpha
    # alpha - k21 = (x + root)/2 and k21 - beta = (root - x)/2, written without cancellation.
    num_a = 0.5 * (x + root) if x >= 0.0 else 2.0 * k12 * k21 / (root - x)
    num_b = 0.5 * (root - x) if x <= 0.0 else 2.0 * k12 * k21 / (root + x)
    total = num_a + num_b  # = root
    return alpha, beta, num_a / total, num_b / total


def concentration(cl: float, v1: float, q: float, v2: float, doses: DoseArrays, t: object) -> np.ndarray:
    """Central concentration, mg/L, at times ``t`` (h, any shape).

    Infusion rate R over T (pk-sources.md 2.6):
    0 < t <= T: ``(R/V1)[A'(1 - e^(-alpha t))/alpha + B'(1 - e^(-beta t))/beta]``;
    t > T: each term times e^(-lam (t - T)) after its end-of-infusion value;
    bolus D: ``(D/V1)(A' e^(-alpha t) + B' e^(-beta t))``. Summed over doses;
    zero before the first dose.
    """
    alpha, beta, wa, wb = macro_constants(cl, v1, q, v2)
    check_doses(doses)
    return wa * unit_concentration(alpha, v1, doses, t) + wb * unit_concentration(beta, v1, doses, t)


def auc(cl: float, v1: float, q: float, v2: float, doses: DoseArrays, a: float, b: float) -> float:
    """Exact AUC, mg*h/L, over [a, b] h: the closed-form exponentials integrated term by term.

    ``b = inf`` gives AUC to infinity (D/CL for one dose, since A'/alpha + B'/beta = 1/k10).
    """
    alpha, beta, wa, wb = macro_constants(cl, v1, q, v2)
    check_doses(doses)
    return wa * unit_auc(alpha, v1, doses, a, b) + wb * unit_auc(beta, v1, doses, a, b)


def steady_state(cl: float, v1: float, q: float, v2: float, dose: float, tau: float, tinf: float) -> SteadyState:
    """Steady-state peak (end of infusion), trough (before next dose) and AUC24.

    Each exponential term accumulates by its own geometric sum
    1/(1 - e^(-lam tau)) (superposition of pk-sources.md 2.6 over infinitely
    many past doses); auc24 = exact AUC over one interval x 24/tau, which
    equals daily dose / CL (pk-sources.md 2.6).

    Raises:
        ValueError: non-positive parameters or dose/tau, tinf outside [0, tau].
    """
    alpha, beta, wa, wb = macro_constants(cl, v1, q, v2)
    check_regimen(dose, tau, tinf)
    pa, ta, aa = unit_steady_state(alpha, v1, dose, tau, tinf)
    pb, tb, ab = unit_steady_state(beta, v1, dose, tau, tinf)
    return SteadyState(
        peak=wa * pa + wb * pb,
        trough=wa * ta + wb * tb,
        auc24=(wa * aa + wb * ab) * 24.0 / tau,
    )


def time_to_fall(
    cl: float, v1: float, q: float, v2: float, doses: DoseArrays, t0: float, level: float
) -> float | None:
    """First time >= t0, h, at which the central concentration is <= ``level`` mg/L.

    Between dose events C(t0 + s) = K + a e^(-alpha s) + b e^(-beta s), which
    has at most one turning point (where alpha a e^(-alpha s) = -beta b
    e^(-beta s)); each monotone piece is searched with a bracketed root
    finder (Brent's method, :func:`tdmtui.core.solvers.brent_root`). Doses that start later
    are honoured.

    Returns:
        The time, or None when the level is never reached (level <= 0).

    Raises:
        ValueError: non-positive parameters, negative or NaN level, NaN t0.
    """
    from tdmtui.core.solvers import brent_root

    alpha, beta, wa, wb = macro_constants(cl, v1, q, v2)
    check_doses(doses)
    if math.isnan(level) or level < 0.0 or not math.isfinite(t0):
        raise ValueError("level must be >= 0 and t0 finite")
    if float(concentration(cl, v1, q, v2, doses, t0)) <= level:
        return float(t0)
    if level == 0.0:
        return None
    starts, lengths, x, k = segment_states((alpha, beta), v1, doses, t0)
    for start, length, (xa, xb), (ka, kb) in zip(starts, lengths, x, k):
        const = wa * ka + wb * kb
        ca, cb = wa * (xa - ka), wb * (xb - kb)

        def excess(s: float, const: float = const, ca: float = ca, cb: float = cb) -> float:
            return const + ca * math.exp(-alpha * s) + cb * math.exp(-beta * s) - level

        if excess(0.0) <= 0.0:
            return float(start)
        cuts = [0.0]
        if ca * cb < 0.0 and alpha > beta:
            turn = math.log(-alpha * ca / (beta * cb)) / (alpha - beta)
            if 0.0 < turn < length:
                cuts.append(turn)
        if math.isinf(length):
            # C <= (|ca| + |cb|) e^(-beta s) here (no infusion runs, const = 0), so this bounds the crossing.
            bound = math.log(max((abs(ca) + abs(cb)) / level, 1.0)) / beta
            cuts.append(max(cuts[-1], bound) + 1.0)
        else:
            cuts.append(length)
        for lo, hi in zip(cuts[:-1], cuts[1:]):
            if excess(hi) <= 0.0:
                return float(start + brent_root(excess, lo, hi, xtol=1e-12, rtol=4.0 * np.finfo(float).eps))
    return None
