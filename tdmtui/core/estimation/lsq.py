"""Least-squares fit of ke and V to three or more levels, without a population prior.

Model: one compartment, zero-order infusions superposed over the whole dose
history (pk-sources.md 2.2), evaluated by the batch closed form of
:mod:`tdmtui.core.estimation.posterior`. Residuals ``r_j = sqrt(w_j) (y_j - C_j)`` with
``w_j = 1 / y_j^2`` (``weighting="proportional"``: each level counts by its
relative error, for an assay whose error grows with the concentration) or
``w_j = 1`` (``"uniform"``). The concentration is proportional to 1/V, so for
each ke on a grid the best V is exact (weighted linear least squares), so the
fit is a search over ke alone: the best grid point brackets the minimum and a
golden-section search refines ln ke (the tests check the answer against
scipy.optimize.least_squares on (ln ke, ln V)). An answer on the search
bounds raises ConvergenceError.
"""

from __future__ import annotations

import math

import numpy as np

from tdmtui.core.estimation.posterior import Observations
from tdmtui.core.models.batch import Design, batch_concentration
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.models import DoseArrays
from tdmtui.core.solvers import golden_min

METHOD = "least-squares"
MIN_LEVELS = 3
KE_RANGE = (1e-3, 5.0)  # 1/h: search bounds (half-lives 0.14 h to 29 days)
V_RANGE = (0.5, 5000.0)  # L


def usable(doses: DoseArrays, obs: Observations) -> np.ndarray:
    """Mask of levels this method can use: quantified, > 0 mg/L, drawn after the first dose started."""
    first = doses.start[0] if len(doses) else np.inf
    return obs.quantified & (obs.conc > 0) & (obs.time > first)


def least_squares_fit(doses: DoseArrays, observations: Observations,
                      weighting: str = "proportional") -> tuple[float, float]:
    """ke (1/h) and V (L) of the one-compartment model fitted to the levels.

    Args:
        doses: the whole dose history.
        observations: levels; censored ones are left out (no likelihood here).
        weighting: ``proportional`` (1/y^2) or ``uniform``.

    Raises:
        NoEstimateError: fewer than three usable quantified levels.
        ConvergenceError: the solver fails or the answer lies on a search bound.
    """
    if weighting not in ("proportional", "uniform"):
        raise ValueError(f"unknown weighting {weighting!r}")
    keep = usable(doses, observations)
    n = int(keep.sum())
    if n < MIN_LEVELS:
        raise NoEstimateError(METHOD, f"needs at least {MIN_LEVELS} quantified levels drawn after the first dose; "
                                      f"{n} available (add levels, or use the two-level or Bayesian method)")
    t, y = observations.time[keep], observations.conc[keep]
    sw = 1.0 / y if weighting == "proportional" else np.ones_like(y)
    design = Design.build(doses, t)

    def unit(ke: np.ndarray) -> np.ndarray:  # concentrations with V = 1 L, (m, n)
        return batch_concentration(ke, np.ones_like(ke), np.zeros_like(ke), np.zeros_like(ke), design)

    grid = np.geomspace(*KE_RANGE, 400)
    u = unit(grid) * sw
    inv_v = np.maximum(u @ (y * sw) / np.maximum(np.sum(u * u, 1), 1e-300), 1e-12)  # exact best 1/V per ke
    sse = np.sum((y * sw - u * inv_v[:, None]) ** 2, 1)
    best = int(np.argmin(sse))

    def profile(x: float) -> float:  # SSE at ke = e^x with its exact best 1/V
        return _profile(unit(np.array([math.exp(x)]))[0] * sw, y * sw)[0]

    x_ke, _ = golden_min(profile, math.log(grid[max(best - 1, 0)]), math.log(grid[min(best + 1, grid.size - 1)]),
                         xtol=1e-12)
    ke = math.exp(x_ke)
    inv_v = _profile(unit(np.array([ke]))[0] * sw, y * sw)[1]
    v = 1.0 / inv_v if inv_v > 0 else math.inf
    inside = all(math.log(lo) + 1e-6 < math.log(x) < math.log(hi) - 1e-6
                 for x, (lo, hi) in ((ke, KE_RANGE), (v, V_RANGE)))
    if not inside:
        raise ConvergenceError(f"{METHOD}: no estimate (the best fit lies on a search bound (levels inconsistent "
                               "with the doses?)); check level and dose times, amounts and units")
    return ke, v


def _profile(u: np.ndarray, ys: np.ndarray) -> tuple[float, float]:
    """(weighted SSE, best 1/V) for weighted unit-volume predictions ``u`` against weighted levels ``ys``."""
    inv = max(float(u @ ys) / max(float(u @ u), 1e-300), 1e-12)
    return float(np.sum((ys - u * inv) ** 2)), inv
