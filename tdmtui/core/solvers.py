"""Small numerical solvers, so a plain compute needs no scipy.

* :func:`brent_root` - a bracketed root of a scalar function (Brent's method:
  inverse quadratic interpolation or secant steps, falling back to bisection
  whenever a step would leave the bracket or shrink it too slowly; Brent,
  *Algorithms for Minimization without Derivatives*, 1973, ch. 4 - from
  memory). Used for the two-level ke and the two-compartment hold time.
* :func:`golden_min` - the minimum of a unimodal scalar function on a
  bracket (golden-section search; Kiefer 1953 - from memory). Used by the
  least-squares fit, whose volume is exact for each ke.
* :func:`log_ndtr` - ln Phi(z), the log of the standard normal CDF, without
  underflow far in the lower tail (censored levels in the MAP objective).
* :func:`distinct` and :func:`percentile` - the sorted distinct values of an
  array and numpy's default (linear) percentile, as ``np.unique`` and
  ``np.percentile`` give them; in numpy 2 both import ``numpy.ma`` (about
  10 ms of a plain compute's start-up) to ask whether the array is masked.

The tests check each against scipy (``brentq``, ``least_squares``,
``special.log_ndtr``) or numpy (``unique``, ``percentile``) as the reference.
"""

from __future__ import annotations

import math
from typing import Any, Callable

import numpy as np

_EPS = float(np.finfo(float).eps)
_INV_PHI = (math.sqrt(5.0) - 1.0) / 2.0  # 1 / golden ratio
_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)
_TAIL_Z = -30.0  # below this, ln Phi(z) from the asymptotic series (erfc would underflow near -38)


def brent_root(f: Callable[[float], float], a: float, b: float, xtol: float = 1e-12,
               rtol: float = 4 * _EPS, maxiter: int = 200) -> float:
    """A root of ``f`` in [a, b], where f(a) and f(b) differ in sign.

    Stops when the bracket around the best point is within ``xtol + rtol |x|``.

    Raises:
        ValueError: f(a) and f(b) have the same sign, or no convergence in ``maxiter`` steps.
    """
    fa, fb = float(f(a)), float(f(b))
    if fa == 0.0:
        return float(a)
    if fb == 0.0:
        return float(b)
    if (fa > 0.0) == (fb > 0.0):
        raise ValueError("brent_root: f(a) and f(b) must differ in sign")
    c, fc = a, fa  # c: the far end of the bracket [b, c]
    step = prev = b - a
    for _ in range(maxiter):
        if (fb > 0.0) == (fc > 0.0):
            c, fc = a, fa
            step = prev = b - a
        if abs(fc) < abs(fb):  # keep b the best point so far
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 0.5 * (xtol + rtol * abs(b))
        half = 0.5 * (c - b)
        if abs(half) <= tol or fb == 0.0:
            return float(b)
        if abs(prev) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:  # secant
                p, q = 2.0 * half * s, 1.0 - s
            else:  # inverse quadratic interpolation through a, b, c
                qa, r = fa / fc, fb / fc
                p = s * (2.0 * half * qa * (qa - r) - (b - a) * (r - 1.0))
                q = (qa - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0.0:
                q = -q
            p = abs(p)
            if 2.0 * p < min(3.0 * half * q - abs(tol * q), abs(prev * q)):
                prev, step = step, p / q
            else:
                prev = step = half
        else:
            prev = step = half
        a, fa = b, fb
        b = b + (step if abs(step) > tol else math.copysign(tol, half))
        fb = float(f(b))
    raise ValueError(f"brent_root: no convergence in {maxiter} steps")


def golden_min(f: Callable[[float], float], a: float, b: float, xtol: float = 1e-11,
               maxiter: int = 200) -> tuple[float, float]:
    """(x, f(x)) at a minimum of ``f`` on [a, b] (golden-section search, to within ``xtol``)."""
    if not a < b:
        raise ValueError("golden_min needs a < b")
    x1, x2 = b - _INV_PHI * (b - a), a + _INV_PHI * (b - a)
    f1, f2 = float(f(x1)), float(f(x2))
    for _ in range(maxiter):
        if b - a <= xtol:
            break
        if f1 <= f2:
            b, x2, f2 = x2, x1, f1
            x1 = b - _INV_PHI * (b - a)
            f1 = float(f(x1))
        else:
            a, x1, f1 = x1, x2, f2
            x2 = a + _INV_PHI * (b - a)
            f2 = float(f(x2))
    return (x1, f1) if f1 <= f2 else (x2, f2)


_erfc: Any = np.frompyfunc(math.erfc, 1, 1)  # a ufunc over objects (mypy cannot see its return)


def log_ndtr(z: object) -> np.ndarray:
    """ln Phi(z) elementwise for an array of z (finite or +-inf).

    z >= 0: ln(1 - erfc(z/sqrt 2)/2) by log1p; -30 <= z < 0: ln(erfc(-z/sqrt 2)/2);
    z < -30: the asymptotic series ln Phi(z) = -z^2/2 - ln(-z) - ln sqrt(2 pi)
    + ln(1 - 1/z^2 + 3/z^4 - 15/z^6 + 105/z^8) (Abramowitz & Stegun 26.2.12 - from memory),
    whose next term is below 2e-12 there.
    """
    z = np.asarray(z, dtype=float)
    out = np.empty(z.shape)
    flat, res = z.reshape(-1), out.reshape(-1)
    hi, tail = flat >= 0.0, flat < _TAIL_Z
    mid = ~(hi | tail)
    if hi.any():
        res[hi] = np.log1p(-0.5 * _erfc(flat[hi] / math.sqrt(2.0)).astype(float))
    if mid.any():
        res[mid] = np.log(0.5 * _erfc(-flat[mid] / math.sqrt(2.0)).astype(float))
    if tail.any():
        x = flat[tail]
        w = 1.0 / (x * x)
        series = 1.0 - w * (1.0 - w * (3.0 - w * (15.0 - 105.0 * w)))
        with np.errstate(over="ignore", invalid="ignore"):
            res[tail] = np.where(np.isinf(x), -np.inf, -0.5 * x * x - np.log(-x) - _LOG_SQRT_2PI + np.log(series))
    return out


def distinct(values: np.ndarray | list[float]) -> np.ndarray:
    """Sorted distinct values of ``values`` (flattened; finite numbers), as ``np.unique(values)``."""
    a = np.sort(np.asarray(values).reshape(-1))
    if a.size < 2:
        return a
    keep = np.empty(a.size, bool)
    keep[0] = True
    np.not_equal(a[1:], a[:-1], out=keep[1:])
    return a[keep]


def percentile(values: np.ndarray | list[float], q: float) -> float:
    """The ``q``-th percentile (0-100) of finite ``values`` by numpy's default method, as ``np.percentile``.

    Linear between the order statistics at (n - 1) q / 100, with numpy's interpolation (from the
    upper neighbour when the fraction is at least one half), so the result is the same to the bit.
    """
    a = np.sort(np.asarray(values, dtype=float).reshape(-1))
    at = (a.size - 1) * (q / 100.0)
    if at >= a.size - 1:
        return float(a[-1])
    if at < 0:
        return float(a[0])
    i = math.floor(at)
    t = at - i
    lo, hi = a[i], a[i + 1]
    step = hi - lo
    return float(hi - step * (1 - t)) if t >= 0.5 else float(lo + step * t)
