"""Least-squares fit of ke and V to three or more levels, without a population prior.

Model: one compartment, zero-order infusions superposed over the whole dose
history (pk-sources.md 2.2), evaluated by the batch closed form of
:mod:`tdmtui.core.bayes`. Residuals ``r_j = sqrt(w_j) (y_j - C_j)`` with
``w_j = 1 / y_j^2`` (``weighting="proportional"``: each level counts by its
relative error, for an assay whose error grows with the concentration) or
``w_j = 1`` (``"uniform"``). The concentration is proportional to 1/V, so for
each ke on a grid the best V is exact (weighted linear least squares); the
best grid point starts scipy.optimize.least_squares on (ln ke, ln V). An
answer on the search bounds, or a failed solve, raises ConvergenceError.
"""

from __future__ import annotations

import numpy as np

from tdmtui.core.bayes import Observations
from tdmtui.core.models.batch import Design, batch_concentration
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.models import DoseArrays

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
    from scipy.optimize import least_squares

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
    x0 = np.log([grid[best], np.clip(1.0 / inv_v[best], *V_RANGE)])

    def residuals(x: np.ndarray) -> np.ndarray:
        return sw * (y - unit(np.array([np.exp(x[0])]))[0] / np.exp(x[1]))

    lo, hi = np.log([KE_RANGE[0], V_RANGE[0]]), np.log([KE_RANGE[1], V_RANGE[1]])
    res = least_squares(residuals, x0, bounds=(lo, hi), jac="3-point", x_scale=1.0,
                        ftol=1e-14, xtol=1e-14, gtol=1e-14, max_nfev=2000)
    on_bound = bool(np.any(np.isclose(res.x, lo, rtol=0, atol=1e-6) | np.isclose(res.x, hi, rtol=0, atol=1e-6)))
    if res.status <= 0 or on_bound or not np.all(np.isfinite(res.x)):
        why = "the best fit lies on a search bound (levels inconsistent with the doses?)" if on_bound else res.message
        raise ConvergenceError(f"{METHOD}: no estimate ({why}); check level and dose times, amounts and units")
    ke, v = (float(np.exp(x)) for x in res.x)
    return ke, v
