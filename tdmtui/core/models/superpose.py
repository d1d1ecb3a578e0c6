"""Superposition over a long dose history in time linear in doses + times, memory bounded.

Every model here is a sum over doses of exponential terms (pk-sources.md 2.2,
2.6): a dose whose infusion has ended by ``t`` contributes its end-of-infusion
value ``E_j = R_j (1 - e^(-lam T_j)) / lam`` (a bolus: ``D_j``) times
``e^(-lam (t - end_j))``; a dose still running contributes
``R_j (1 - e^(-lam (t - s_j))) / lam``. Written dose by dose against every
time, that is a times x doses array: quadratic in a long course.

The :class:`Layout` folds the finished doses into a recurrence instead. With
the times sorted ``t_1 <= ... <= t_n`` and ``S_i`` the finished-dose sum at
``t_i``::

    S_i = S_(i-1) e^(-lam (t_i - t_(i-1))) + sum over doses first finished at t_i of E_j e^(-lam (t_i - end_j))

so each dose enters once, at the first time it is finished by (the sum of
decaying exponentials carried from time to time is the amount left from every
earlier dose, exactly as an ODE carries its compartment amounts). Running
infusions are the (time, dose) pairs with ``s_j < t_i < end_j``: few, listed
sparsely. Cost O(m k (d + n + running pairs)) for m parameter sets of k
exponents; the parameter sets go through in blocks of at most
``BLOCK_ELEMENTS`` per temporary array, so memory stays bounded whatever the
history. The sums are exact (no dose is dropped); rounding differs from the
direct sum only in the last digits (tests check both against scipy's ODE solver).

Conventions (as :mod:`onecomp`): a dose contributes nothing at or before its
start; an infusion is finished at ``t >= end``; a bolus at ``t > start`` (or
``t >= start`` with ``right=True``, the right-hand limit).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tdmtui.core.models import DoseArrays

#: elements per temporary (sets x exponents x doses) array; bounds memory (8 MB of floats)
BLOCK_ELEMENTS = 1 << 20


@dataclass(frozen=True)
class Layout:
    """Where each dose enters the recurrence for a fixed set of times (built once, evaluated often)."""

    n: int  # number of times
    order: np.ndarray  # (n,) argsort of the times
    gaps: np.ndarray  # (n - 1,) h between consecutive sorted times
    done: np.ndarray  # (f,) doses finished by the last time, ordered by the time they enter
    delta: np.ndarray  # (f,) h from each such dose's end to the time it enters
    entry: np.ndarray  # (b,) sorted-time index of each entry group
    group: np.ndarray  # (b,) first position in ``done`` of each group
    run_time: np.ndarray  # (r,) sorted-time index of each running pair (pairs ordered by it)
    run_dose: np.ndarray  # (r,) dose of each running pair
    run_into: np.ndarray  # (r,) h since that dose started
    run_at: np.ndarray  # sorted-time indices that have running pairs
    run_first: np.ndarray  # first pair of each of them
    rate: np.ndarray  # (d,) mg/h, 0 for a bolus
    duration: np.ndarray  # (d,) h
    bolus: np.ndarray  # (d,) mg for a bolus, 0 for an infusion

    @classmethod
    def build(cls, doses: DoseArrays, t: object, right: bool = False) -> Layout:
        ts_in = np.asarray(t, dtype=float).reshape(-1)
        order = np.argsort(ts_in, kind="stable")
        ts = ts_in[order]
        s, dur, amt = doses.start, doses.duration, doses.amount
        infusion = dur > 0
        end = s + dur
        # first sorted time at which each dose is finished (n: never within these times)
        first = np.where(infusion, np.searchsorted(ts, end, side="left"),
                         np.searchsorted(ts, s, side="left" if right else "right"))
        finished = first < ts.size
        idx = np.flatnonzero(finished)
        idx = idx[np.argsort(first[idx], kind="stable")]
        at = first[idx]
        delta = ts[at] - end[idx] if ts.size else np.zeros(0)
        entry, group = np.unique(at, return_index=True)
        lo = np.searchsorted(ts, s, side="right")
        hi = np.where(infusion, np.searchsorted(ts, end, side="left"), lo)
        count = np.maximum(hi - lo, 0)
        run_dose = np.repeat(np.arange(s.size), count)
        offsets = np.arange(run_dose.size) - np.repeat(np.cumsum(count) - count, count)
        run_time = np.repeat(lo, count) + offsets
        by_time = np.argsort(run_time, kind="stable")
        run_time, run_dose = run_time[by_time], run_dose[by_time]
        rate = np.where(infusion, amt / np.where(infusion, dur, 1.0), 0.0)
        run_at, run_first = np.unique(run_time, return_index=True)
        return cls(ts.size, order, np.diff(ts), idx, delta, entry, group, run_time, run_dose,
                   ts[run_time] - s[run_dose] if run_dose.size else np.zeros(0), run_at, run_first,
                   rate, dur, np.where(infusion, 0.0, amt))

    def sums(self, lam: np.ndarray) -> np.ndarray:
        """Unit-weight superposed terms (m, k, n) mg (divide by a volume for mg/L), times in input order.

        Args:
            lam: exponents (m, k), 1/h, > 0.
        """
        lam = np.asarray(lam, dtype=float)
        m, k = lam.shape
        out = np.empty((m, k, self.n))
        per_set = k * max(self.done.size, self.run_dose.size, self.n, 1)
        block = max(1, BLOCK_ELEMENTS // per_set)
        for lo in range(0, m, block):
            out[lo:lo + block] = self._sums(lam[lo:lo + block])
        return out

    def _sums(self, lam: np.ndarray) -> np.ndarray:
        lam3 = lam[:, :, None]
        s = np.zeros(lam.shape + (self.n,))
        if self.done.size:
            j = self.done
            ends = -np.expm1(-lam3 * self.duration[j]) * (self.rate[j] / lam3) + self.bolus[j]
            terms = ends * np.exp(-lam3 * self.delta)
            s[:, :, self.entry] = np.add.reduceat(terms, self.group, axis=2)
            if self.n > 1:
                _carry(s, lam, self.gaps)
        if self.run_dose.size:
            j = self.run_dose
            rise = -np.expm1(-lam3 * self.run_into) * (self.rate[j] / lam3)
            s[:, :, self.run_at] += np.add.reduceat(rise, self.run_first, axis=2)
        out = np.empty_like(s)
        out[:, :, self.order] = s
        return out


#: a block of the scan spans at most this many time constants of the fastest exponent (e^30 ~ 1e13:
#: no overflow, and every sum is of positive terms, so the rounding stays relative to the result)
_SPAN = 30.0


def _carry(s: np.ndarray, lam: np.ndarray, gaps: np.ndarray) -> None:
    """In place: s_i <- s_i + s_(i-1) e^(-lam gap_(i-1)), the recurrence, as a blocked scan.

    Within a block starting at t_a: S_i = e^(-lam (t_i - t_a)) [carry + cumsum_l s_l e^(lam (t_l - t_a))];
    one numpy pass per block, a block ending where the fastest exponent has decayed by e^-30. Nothing
    is carried across an infinite gap (a time at +-inf: every dose has decayed, or none has started).
    """
    finite = np.isfinite(gaps)
    rel = np.concatenate([[0.0], np.cumsum(np.where(finite, gaps, 0.0))])
    x = rel * float(np.max(lam))
    cut = (np.diff(np.floor(x / _SPAN)) > 0) | ~finite
    starts = np.concatenate([[0], np.flatnonzero(cut) + 1, [rel.size]])
    lam3 = lam[:, :, None]
    for a, b in zip(starts[:-1], starts[1:]):
        off = rel[a:b] - rel[a]
        acc = np.cumsum(s[:, :, a:b] * np.exp(lam3 * off), axis=2)
        if a > 0 and finite[a - 1]:
            acc += (s[:, :, a - 1] * np.exp(-lam * gaps[a - 1]))[:, :, None]
        s[:, :, a:b] = acc * np.exp(-lam3 * off)
