"""Linear pharmacokinetic models for intermittent IV infusions.

Shared vocabulary of every model module:

* :class:`DoseArrays` - a dose history as numpy arrays (start h, duration h,
  amount mg). Duration 0 is a bolus.
* :class:`PKParams` - one individual's parameters. ``q == 0`` (and ``v2 == 0``)
  means one-compartment with ``v = v1``; otherwise two-compartment.

Functions (implemented in :mod:`onecomp` and :mod:`twocomp`, dispatched here
on ``params.is_two_compartment``):

* ``concentration(params, doses, t)`` -> ndarray of central concentrations
  (mg/L) at times ``t`` (h, any shape), closed-form superposition.
* ``auc(params, doses, a, b)`` -> float, exact integral of C over [a, b].
* ``steady_state(params, dose_mg, tau_h, tinf_h)`` -> :class:`SteadyState`.
* ``time_to_fall(params, doses, t0, level)`` -> first time >= t0 (h) at which
  the concentration is <= level (mg/L), or None; used for "hold until".
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class DoseArrays:
    """A dose history as arrays, sorted by start.

    Attributes:
        start: start times, h (same clock as the level times).
        duration: infusion durations, h (0 = bolus).
        amount: amounts, mg.
    """

    start: np.ndarray
    duration: np.ndarray
    amount: np.ndarray

    @classmethod
    def from_lists(cls, start, duration, amount) -> DoseArrays:  # noqa: ANN001
        """Build from sequences, sorted by start."""
        s = np.asarray(start, dtype=float).reshape(-1)
        d = np.asarray(duration, dtype=float).reshape(-1)
        a = np.asarray(amount, dtype=float).reshape(-1)
        order = np.argsort(s, kind="stable")
        return cls(s[order], d[order], a[order])

    @classmethod
    def regimen(cls, first_start: float, dose: float, tau: float, tinf: float, n: int) -> DoseArrays:
        """``n`` equal doses every ``tau`` hours from ``first_start``."""
        s = first_start + tau * np.arange(n, dtype=float)
        return cls(s, np.full(n, float(tinf)), np.full(n, float(dose)))

    def __len__(self) -> int:
        return int(self.start.size)

    def concat(self, other: DoseArrays) -> DoseArrays:
        """This history followed by another (re-sorted)."""
        return DoseArrays.from_lists(
            np.concatenate([self.start, other.start]),
            np.concatenate([self.duration, other.duration]),
            np.concatenate([self.amount, other.amount]),
        )


@dataclass(frozen=True)
class PKParams:
    """Individual PK parameters in canonical units.

    Attributes:
        cl: clearance, L/h.
        v1: central (or only) volume, L.
        q: intercompartmental clearance, L/h (0 for one-compartment).
        v2: peripheral volume, L (0 for one-compartment).
    """

    cl: float
    v1: float
    q: float = 0.0
    v2: float = 0.0

    @classmethod
    def one_compartment(cls, ke: float, v: float) -> PKParams:
        """From ke (1/h) and V (L)."""
        return cls(cl=ke * v, v1=v)

    @property
    def is_two_compartment(self) -> bool:
        return self.q > 0.0 and self.v2 > 0.0

    @property
    def vss(self) -> float:
        """Steady-state volume V1 + V2, L (= V for one-compartment)."""
        return self.v1 + (self.v2 if self.is_two_compartment else 0.0)

    @property
    def ke(self) -> float:
        """Equivalent one-compartment ke = CL / Vss, 1/h (case-format.md)."""
        return self.cl / self.vss

    @property
    def half_life(self) -> float:
        """ln 2 / ke, h."""
        return math.log(2.0) / self.ke


@dataclass(frozen=True)
class SteadyState:
    """Steady-state figures for a regimen (case-format.md model conventions).

    Attributes:
        peak: concentration at the end of infusion, mg/L.
        trough: concentration just before the next dose, mg/L.
        auc24: exact AUC over one interval x 24 / tau, mg*h/L.
    """

    peak: float
    trough: float
    auc24: float


# --- dispatch on the model structure (one- or two-compartment) ---------------
# The model modules import this package's dataclasses, so they are imported
# inside the functions to keep the import order free of cycles.


def _structure(params: PKParams) -> tuple:
    """Validate ``params`` and return the positional parameters of its model."""
    if not (math.isfinite(params.q) and math.isfinite(params.v2)) or params.q < 0.0 or params.v2 < 0.0:
        raise ValueError(f"q and v2 must be finite and >= 0, got q={params.q!r}, v2={params.v2!r}")
    if (params.q > 0.0) != (params.v2 > 0.0):
        raise ValueError("q and v2 must both be > 0 (two-compartment) or both 0 (one-compartment)")
    if params.is_two_compartment:
        return (params.cl, params.v1, params.q, params.v2)
    if not (math.isfinite(params.cl) and params.cl > 0.0 and math.isfinite(params.v1) and params.v1 > 0.0):
        raise ValueError(f"cl and v1 must be finite and > 0, got cl={params.cl!r}, v1={params.v1!r}")
    return (params.cl / params.v1, params.v1)


def _module(params: PKParams):  # noqa: ANN202
    if params.is_two_compartment:
        from tdmtui.core.models import twocomp

        return twocomp
    from tdmtui.core.models import onecomp

    return onecomp


def concentration(params: PKParams, doses: DoseArrays, t) -> np.ndarray:  # noqa: ANN001
    """Central concentration, mg/L, at times ``t`` (h, any shape); see onecomp/twocomp."""
    return _module(params).concentration(*_structure(params), doses, t)


def auc(params: PKParams, doses: DoseArrays, a: float, b: float) -> float:
    """Exact AUC, mg*h/L, over [a, b] h; see onecomp/twocomp."""
    return _module(params).auc(*_structure(params), doses, a, b)


def steady_state(params: PKParams, dose: float, tau: float, tinf: float) -> SteadyState:
    """Steady-state peak, trough and AUC24 for ``dose`` mg every ``tau`` h over ``tinf`` h."""
    return _module(params).steady_state(*_structure(params), dose, tau, tinf)


def time_to_fall(params: PKParams, doses: DoseArrays, t0: float, level: float) -> float | None:
    """First time >= t0, h, when the concentration is <= ``level`` mg/L (None if never)."""
    return _module(params).time_to_fall(*_structure(params), doses, t0, level)
