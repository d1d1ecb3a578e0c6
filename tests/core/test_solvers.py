"""The project's small solvers against scipy as the reference (brentq, least_squares, special.log_ndtr), and
its distinct values and percentiles against numpy's unique and percentile."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import optimize, special

from tdmtui.core.estimation.posterior import Observations
from tdmtui.core.estimation.lsq import least_squares_fit
from tdmtui.core.models import DoseArrays, onecomp
from tdmtui.core.solvers import brent_root, distinct, golden_min, log_ndtr, percentile

FUNCTIONS = [
    (lambda x: x ** 3 - 2 * x - 5, 2.0, 3.0),  # Wallis' cubic (root 2.0945514815423265, from memory)
    (lambda x: math.exp(-x) - x, 0.0, 1.0),
    (lambda x: math.cos(x) - x ** 3, 0.0, 1.0),
    (lambda x: (x - 1e-3) ** 3, -1.0, 1.0),  # triple root: bisection has to carry it
    (lambda x: math.log(x) + 25.0, 1e-14, 1.0),  # root 1.4e-11: a wide bracket, tiny root
    (lambda x: math.atan(50 * (x - 0.3)), -10.0, 10.0),
]


@pytest.mark.parametrize("fab", FUNCTIONS)
def test_brent_root_matches_scipy_brentq(fab):
    f, a, b = fab
    ours = brent_root(f, a, b, xtol=1e-14, rtol=1e-13)
    ref = optimize.brentq(f, a, b, xtol=1e-14, rtol=1e-13, maxiter=500)
    assert ours == pytest.approx(ref, rel=1e-12, abs=1e-14)


def test_brent_root_two_level_function_matches_brentq():
    # The two-level ratio equation on a 20-dose history (as twolevel.two_level solves it).
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 20)
    ta, tb, target = 229.5, 239.0, math.log(31.0 / 12.0)

    def g(k: float) -> float:
        return math.log(onecomp.concentration(k, 1.0, doses, ta)) - math.log(onecomp.concentration(k, 1.0, doses, tb)) - target

    assert brent_root(g, 0.01, 1.0, xtol=1e-14, rtol=1e-13) == pytest.approx(
        optimize.brentq(g, 0.01, 1.0, xtol=1e-14, rtol=1e-13), rel=1e-12)


def test_brent_root_refuses_an_unbracketed_interval():
    with pytest.raises(ValueError, match="differ in sign"):
        brent_root(lambda x: x * x + 1.0, -1.0, 1.0)


def test_golden_min_matches_scipy_bounded_minimum():
    f = lambda x: (x - 0.7) ** 2 + 0.1 * math.sin(5 * x)  # noqa: E731
    x, fx = golden_min(f, 0.0, 2.0, xtol=1e-12)
    ref = optimize.minimize_scalar(f, bounds=(0.0, 2.0), method="bounded", options={"xatol": 1e-12})
    assert x == pytest.approx(ref.x, abs=1e-6)
    assert fx == pytest.approx(ref.fun, abs=1e-12)


@pytest.mark.parametrize("values", [[], [3.0], [2.0, 2.0], [5.0, -1.0, 5.0, 0.0, -0.0, 1e-300, 7.5, -1.0],
                                    np.arange(12.0).reshape(3, 4) % 5, np.random.default_rng(3).integers(0, 9, 500) * 0.5])
def test_distinct_matches_numpy_unique(values):
    got, ref = distinct(values), np.unique(values)
    assert got.shape == ref.shape and np.array_equal(got, ref)


@pytest.mark.parametrize("n", [1, 2, 3, 7, 2000, 2001])
def test_percentile_matches_numpy_percentile_to_the_bit(n):
    x = np.random.default_rng(n).lognormal(3.0, 0.4, n)
    for q in (0.0, 2.5, 5.0, 25.0, 50.0, 95.0, 97.5, 100.0, 100.0 / 3):
        assert percentile(x, q) == float(np.percentile(x, q))


def test_log_ndtr_matches_scipy_special_across_the_range():
    z = np.concatenate([np.linspace(-80.0, 12.0, 9201), [-1e4, -30.0, -29.99, 0.0, 40.0]])
    assert log_ndtr(z) == pytest.approx(special.log_ndtr(z), rel=1e-12, abs=1e-300)
    assert log_ndtr(np.array([-np.inf, np.inf])).tolist() == [-np.inf, 0.0]
    assert log_ndtr(np.zeros((2, 3))).shape == (2, 3)


def _scipy_least_squares(doses: DoseArrays, t: np.ndarray, y: np.ndarray, sw: np.ndarray) -> tuple[float, float]:
    """The reference: scipy.optimize.least_squares on (ln ke, ln V), residuals sw (y - C)."""
    def res(x: np.ndarray) -> np.ndarray:
        return sw * (y - onecomp.concentration(math.exp(x[0]), math.exp(x[1]), doses, t))

    r = optimize.least_squares(res, np.log([0.1, 30.0]), method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15,
                               max_nfev=20000)
    return float(np.exp(r.x[0])), float(np.exp(r.x[1]))


@pytest.mark.parametrize("weighting", ["proportional", "uniform"])
def test_least_squares_fit_matches_scipy_least_squares_on_noisy_levels(weighting):
    doses = DoseArrays.from_lists([0.0, 12.0, 24.0, 36.0], [1.0, 1.0, 1.5, 1.0], [1000.0, 1000.0, 1250.0, 1000.0])
    t = np.array([11.5, 14.0, 23.5, 26.0, 35.5, 40.0])
    truth = onecomp.concentration(0.085, 48.0, doses, t)
    y = truth * np.array([1.07, 0.94, 1.03, 0.9, 1.08, 0.97])  # invented assay noise
    ke, v = least_squares_fit(doses, Observations.from_lists(t, y), weighting=weighting)
    sw = 1.0 / y if weighting == "proportional" else np.ones_like(y)
    ref_ke, ref_v = _scipy_least_squares(doses, t, y, sw)
    assert ke == pytest.approx(ref_ke, rel=1e-7)
    assert v == pytest.approx(ref_v, rel=1e-7)
