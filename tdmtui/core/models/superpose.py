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

from dataclasses import dataclass, fields
from functools import lru_cache

import numpy as np

from tdmtui.core.models import DoseArrays

#: elements per temporary (sets x exponents x doses) array; bounds memory (8 MB of floats)
BLOCK_ELEMENTS = 1 << 20
#: layouts of at most this many doses + times are kept for reuse (a fit, a root search and a curve
#: ask for the same history at the same times many times over); larger ones are built each time
REUSE_ELEMENTS = 4096


@dataclass(frozen=True)
class Layout:
    """Where each dose enters the recurrence for a fixed set of times (built once, evaluated often).

    Finished doses are grouped by (entry time, kind of dose): doses of one duration and rate share
    their end-of-infusion value, so per dose and parameter set only ``e^(-lam delta)`` is computed.
    """

    n: int  # number of times
    order: np.ndarray  # (n,) argsort of the times
    in_order: bool  # the times were given sorted
    gaps: np.ndarray  # (n - 1,) h between consecutive sorted times
    delta: np.ndarray  # (f,) h from each finished dose's end to the time it enters, ordered by group
    group: np.ndarray  # (g,) first position in ``delta`` of each (entry, kind) group
    group_kind: np.ndarray  # (g,) kind of dose of each group
    entry: np.ndarray  # (b,) sorted-time index where groups enter
    entry_group: np.ndarray  # (b,) first group of each entry
    kind_duration: np.ndarray  # (c,) h, per kind of dose
    kind_rate: np.ndarray  # (c,) mg/h (0 for a bolus)
    kind_bolus: np.ndarray  # (c,) mg for a bolus, 0 for an infusion
    run_time: np.ndarray  # (r,) sorted-time index of each running pair (pairs ordered by it)
    run_dose: np.ndarray  # (r,) dose of each running pair
    run_into: np.ndarray  # (r,) h since that dose started
    run_at: np.ndarray  # sorted-time indices that have running pairs
    run_first: np.ndarray  # first pair of each of them
    rate: np.ndarray  # (d,) mg/h, 0 for a bolus
    rel: np.ndarray | None  # (n,) h from the first sorted time to each (None when a gap is infinite)
    delta_max: float  # the largest of ``delta`` (0 without finished doses)

    @classmethod
    def build(cls, doses: DoseArrays, t: object, right: bool = False) -> Layout:
        """The layout of ``doses`` at times ``t``; a small one is built once and then reused (read-only)."""
        ts_in = np.asarray(t, dtype=float).reshape(-1)
        s, dur, amt = (np.asarray(a, dtype=float) for a in (doses.start, doses.duration, doses.amount))
        if s.size + ts_in.size > REUSE_ELEMENTS:
            return cls._build(s, dur, amt, ts_in, right)
        return _reused(s.tobytes(), dur.tobytes(), amt.tobytes(), ts_in.tobytes(), bool(right))

    @classmethod
    def _build(cls, s: np.ndarray, dur: np.ndarray, amt: np.ndarray, ts_in: np.ndarray, right: bool) -> Layout:
        order = np.argsort(ts_in, kind="stable")
        ts = ts_in[order]
        infusion = dur > 0
        end = s + dur
        rate = np.where(infusion, amt / np.where(infusion, dur, 1.0), 0.0)
        bolus = np.where(infusion, 0.0, amt)
        # first sorted time at which each dose is finished (n: never within these times)
        first = np.where(infusion, np.searchsorted(ts, end, side="left"),
                         np.searchsorted(ts, s, side="left" if right else "right"))
        idx = np.flatnonzero(first < ts.size)
        kinds, kind = _kinds(dur[idx], rate[idx], bolus[idx])
        by = np.lexsort((ts[first[idx]] - end[idx], kind, first[idx]))  # in a group: nearest first
        idx, kind = idx[by], kind[by]
        at = first[idx]
        new = np.ones(idx.size, bool)
        new[1:] = (at[1:] != at[:-1]) | (kind[1:] != kind[:-1])
        group = np.flatnonzero(new)
        entry, entry_group = _first_of_runs(at[group])
        lo = np.searchsorted(ts, s, side="right")
        hi = np.where(infusion, np.searchsorted(ts, end, side="left"), lo)
        count = np.maximum(hi - lo, 0)
        run_dose = np.repeat(np.arange(s.size), count)
        run_time = np.repeat(lo, count) + np.arange(run_dose.size) - np.repeat(np.cumsum(count) - count, count)
        by_time = np.argsort(run_time, kind="stable")
        run_time, run_dose = run_time[by_time], run_dose[by_time]
        run_at, run_first = _first_of_runs(run_time)
        gaps, delta = np.diff(ts), ts[at] - end[idx]
        rel = np.concatenate([[0.0], np.cumsum(gaps)]) if np.all(np.isfinite(gaps)) else None
        return cls(ts.size, order, bool(np.all(order == np.arange(order.size))), gaps,
                   delta, group, kind[group], entry, entry_group, kinds[:, 0], kinds[:, 1], kinds[:, 2],
                   run_time, run_dose, ts[run_time] - s[run_dose], run_at, run_first, rate, rel,
                   float(np.max(delta)) if delta.size else 0.0)

    def sums(self, lam: np.ndarray) -> np.ndarray:
        """Unit-weight superposed terms (m, k, n) mg (divide by a volume for mg/L), times in input order.

        Args:
            lam: exponents (m, k), 1/h, > 0.
        """
        lam = np.asarray(lam, dtype=float)
        m, k = lam.shape
        out = np.empty((m, k, self.n))
        per_set = k * max(self.delta.size, self.run_dose.size, self.n, 1)
        block = max(1, BLOCK_ELEMENTS // per_set)
        for lo in range(0, m, block):
            out[lo:lo + block] = self._sums(lam[lo:lo + block])
        return out

    def _sums(self, lam: np.ndarray) -> np.ndarray:
        lam3 = lam[:, :, None]
        s = np.zeros(lam.shape + (self.n,))
        if self.delta.size:
            ends = -np.expm1(-lam3 * self.kind_duration) * (self.kind_rate / lam3) + self.kind_bolus  # (m, k, c)
            per_group = self._decays(lam3) * ends[:, :, self.group_kind]
            if self.entry.size == self.group.size:
                s[:, :, self.entry] = per_group
            else:
                s[:, :, self.entry] = np.add.reduceat(per_group, self.entry_group, axis=2)
            if self.entry.size > 1 or self.entry[0] < self.n - 1:
                _carry(s, lam, self.gaps, self.rel)
        if self.run_dose.size:
            rise = -np.expm1(-lam3 * self.run_into) * (self.rate[self.run_dose] / lam3)
            s[:, :, self.run_at] += np.add.reduceat(rise, self.run_first, axis=2)
        if self.in_order:
            return s
        out = np.empty_like(s)
        out[:, :, self.order] = s
        return out


    def _decays(self, lam3: np.ndarray) -> np.ndarray:
        """Per group, sum of e^(-lam delta) over its doses (m, k, g), leaving out the terms below
        e^-CUTOFF (< 1e-16 of the dose's own end value, for every set and exponent of the call)."""
        limit = CUTOFF / float(np.min(lam3))
        if self.delta_max < limit:
            return np.add.reduceat(np.exp(-lam3 * self.delta), self.group, axis=2)
        keep = self.delta < limit
        kept = np.concatenate([[0], np.cumsum(keep)])
        first, last = kept[self.group], kept[np.append(self.group[1:], self.delta.size)]
        out = np.zeros(lam3.shape[:2] + (self.group.size,))
        some = last > first
        if some.any():
            terms = np.exp(-lam3 * self.delta[keep])
            out[:, :, some] = np.add.reduceat(terms, first[some], axis=2)
        return out


def _kinds(dur: np.ndarray, rate: np.ndarray, bolus: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct (duration, rate, bolus) rows (c, 3) and each dose's row: by one integer code per dose
    (a sort of integers, not of rows); one row at once when every dose is of one kind (the common course)."""
    if dur.size and np.all(dur == dur[0]) and np.all(rate == rate[0]) and np.all(bolus == bolus[0]):
        return np.array([[dur[0], rate[0], bolus[0]]]), np.zeros(dur.size, dtype=np.intp)
    code = np.zeros(dur.size, dtype=np.int64)
    for col in (dur, rate, bolus):
        values, inv = np.unique(col, return_inverse=True)
        code = code * values.size + inv.reshape(-1)
    codes, first, kind = np.unique(code, return_index=True, return_inverse=True)
    return np.stack([dur[first], rate[first], bolus[first]], 1).reshape(-1, 3), kind.reshape(-1)


def _first_of_runs(a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For sorted ``a``: its distinct values and where each first occurs (np.unique's, without its sort)."""
    new = np.ones(a.size, bool)
    new[1:] = a[1:] != a[:-1]
    first = np.flatnonzero(new)
    return a[first], first


@lru_cache(maxsize=64)
def _reused(start: bytes, duration: bytes, amount: bytes, t: bytes, right: bool) -> Layout:
    """A small layout by the bytes of its inputs, built once; its arrays are made read-only."""
    s, dur, amt, ts = (np.frombuffer(b, dtype=float) for b in (start, duration, amount, t))
    out = Layout._build(s, dur, amt, ts, right)
    for f in fields(out):
        value = getattr(out, f.name)
        if isinstance(value, np.ndarray):
            value.flags.writeable = False
    return out


#: a term e^(-lam delta) with lam delta above this (e^-36.8 < 1e-16) is left out: the dose has decayed
#: below rounding of its own end value, so the sum is unchanged to double precision for any course
CUTOFF = 36.8

#: a block of the scan spans at most this many time constants of the fastest exponent (e^30 ~ 1e13:
#: no overflow, and every sum is of positive terms, so the rounding stays relative to the result)
_SPAN = 30.0


def _carry(s: np.ndarray, lam: np.ndarray, gaps: np.ndarray, rel: np.ndarray | None) -> None:
    """In place: s_i <- s_i + s_(i-1) e^(-lam gap_(i-1)), the recurrence, as a blocked scan.

    Within a block starting at t_a: S_i = e^(-lam (t_i - t_a)) [carry + cumsum_l s_l e^(lam (t_l - t_a))];
    one numpy pass per block, a block ending where the fastest exponent has decayed by e^-30. Nothing
    is carried across an infinite gap (a time at +-inf: every dose has decayed, or none has started).
    ``rel``: the times from the first (the layout's; None when a gap is infinite).
    """
    lam3 = lam[:, :, None]
    if rel is not None and rel[-1] * float(np.max(lam)) < _SPAN:  # one block: the common short case
        s[:] = np.cumsum(s * np.exp(lam3 * rel), axis=2) * np.exp(-lam3 * rel)
        return
    finite = np.isfinite(gaps)
    rel = np.concatenate([[0.0], np.cumsum(np.where(finite, gaps, 0.0))])
    x = rel * float(np.max(lam))
    cut = (np.diff(np.floor(x / _SPAN)) > 0) | ~finite
    starts = np.concatenate([[0], np.flatnonzero(cut) + 1, [rel.size]])
    for a, b in zip(starts[:-1], starts[1:]):
        off = rel[a:b] - rel[a]
        acc = np.cumsum(s[:, :, a:b] * np.exp(lam3 * off), axis=2)
        if a > 0 and finite[a - 1]:
            acc += (s[:, :, a - 1] * np.exp(-lam * gaps[a - 1]))[:, :, None]
        s[:, :, a:b] = acc * np.exp(-lam3 * off)
