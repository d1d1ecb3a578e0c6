"""Least-squares ke and V against worked example W3 and a solve_ivp simulation."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from tdmtui.core.estimation.posterior import Observations
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimation.lsq import least_squares_fit
from tdmtui.core.models import DoseArrays


def w3() -> tuple[DoseArrays, list[float], list[float]]:
    """pk-sources.md W3: 120 mg q8h over 0.5 h at steady state (40 doses before); levels 0.5 h before
    the dose (= the steady-state trough, 2.2 mg/L), 6.0 mg/L at 1.0 h and 2.2 mg/L at 7.5 h."""
    s = 8.0 * 39
    return DoseArrays.regimen(0.0, 120.0, 8.0, 0.5, 41), [s - 0.5, s + 1.0, s + 7.5], [2.2, 6.0, 2.2]


def test_w3_three_levels():
    # pk-sources.md W3 (Sawchuk-Zaske at steady state): ke 0.1544 /h, V 25.1 L, CL 3.88 L/h.
    doses, t, c = w3()
    ke, v = least_squares_fit(doses, Observations.from_lists(t, c))
    assert ke == pytest.approx(0.1544, abs=0.0005)
    assert v == pytest.approx(25.1, abs=0.1)
    assert ke * v == pytest.approx(3.88, abs=0.02)


def test_noise_free_ode_data_recover_the_truth():
    # Reference: scipy.integrate.solve_ivp on dA/dt = R(t) - ke A, C = A / V (two 1-h infusions).
    ke, v = 0.12, 42.0
    doses = DoseArrays.from_lists([0.0, 12.0], [1.0, 1.0], [1000.0, 750.0])

    def rhs(t: float, a: np.ndarray) -> np.ndarray:
        rate = 1000.0 * (0.0 <= t < 1.0) + 750.0 * (12.0 <= t < 13.0)
        return np.array([rate - ke * a[0]])

    t = np.array([2.0, 6.0, 11.5, 14.0, 20.0, 30.0])
    sol = solve_ivp(rhs, (0.0, 30.0), [0.0], t_eval=t, rtol=1e-11, atol=1e-11, max_step=0.05)
    for weighting in ("proportional", "uniform"):
        got = least_squares_fit(doses, Observations.from_lists(t, sol.y[0] / v), weighting=weighting)
        assert got == pytest.approx((ke, v), rel=1e-4)


def test_needs_three_quantified_levels_after_the_first_dose():
    doses, t, c = w3()
    with pytest.raises(NoEstimateError, match="at least 3") as err:
        least_squares_fit(doses, Observations.from_lists(t[:2], c[:2]))
    assert err.value.method == "least-squares"
    # A below-LOQ level and a level before the first dose are not usable quantified levels.
    obs = Observations.from_lists([-1.0] + t[1:] + [8.0 * 40 - 0.1], [0.5] + c[1:] + [1.0],
                                  below_loq=[False, False, False, True])
    with pytest.raises(NoEstimateError, match="2 available"):
        least_squares_fit(doses, obs)


def test_inconsistent_levels_raise_instead_of_returning_a_bound():
    # Levels rising for a day after the only dose ended: no positive ke fits; the search bound must
    # not be returned as an answer.
    doses = DoseArrays.from_lists([0.0], [1.0], [1000.0])
    with pytest.raises(ConvergenceError):
        least_squares_fit(doses, Observations.from_lists([4.0, 12.0, 24.0], [10.0, 14.0, 20.0]))
