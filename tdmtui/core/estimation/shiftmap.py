"""MAP again on many copies of one fit that differ by a moved time, all copies in one batch.

The timing sensitivity refits each model once per moved level time and per moved infusion end
(four copies per level). A moved time changes a MAP objective only through the predictions, and
the models are linear in the doses (superposition, pk-sources.md 2.2):

* a moved level: the same dose history predicted at another time, so every copy's predictions
  come from one batch at the base times and all the moved ones;
* a moved infusion end: the base predictions plus the difference between that dose given over
  its new and its old duration (a two-dose history, the old one with its amount negated).

So one prediction over the whole history serves every copy at each Newton step, where one fit
per copy would make its own. Newton runs on all copies together step for step as
the single fit (``bayes._newton``) runs on each: the same start (the base MAP), the same
full steps, the same stop (g' H^-1 g < 1e-10 with H > 0, inside the search bound). A copy whose
Hessian is not positive, or whose full step does not lower the objective enough (where the single
fit would damp or backtrack), or that has not stopped within the iterations, comes back as None
and is fitted on its own by the caller; so every answer is one the single fit stops at.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tdmtui.core.models import DoseArrays
from tdmtui.core.estimation.posterior import Posterior


@dataclass(frozen=True)
class Copy:
    """One copy of the fit: its level times (the base levels, in the base order) and the doses to add to the
    base history when an infusion end moved (new minus old; none when only a level moved)."""

    times: np.ndarray
    added: DoseArrays


def added_doses(base: DoseArrays, moved: DoseArrays) -> DoseArrays | None:
    """``moved`` as the base history plus a few doses (new durations, and the old ones negated), or None
    when it is not the base with only durations changed (then the copy is fitted on its own)."""
    if moved is base:
        return DoseArrays(np.zeros(0), np.zeros(0), np.zeros(0))
    if len(moved) != len(base) or not (np.array_equal(moved.start, base.start)
                                       and np.array_equal(moved.amount, base.amount)):
        return None
    at = np.flatnonzero(moved.duration != base.duration)
    return DoseArrays(np.concatenate([base.start[at], base.start[at]]),
                      np.concatenate([moved.duration[at], base.duration[at]]),
                      np.concatenate([base.amount[at], -base.amount[at]]))


def solve(post: Posterior, start: np.ndarray, bound: np.ndarray, copies: list[Copy],
          max_iter: int = 60) -> list[np.ndarray | None]:
    """The MAP eta of each copy (None: fit it on its own), by batched Newton from ``start``."""
    batch = _Batch(post, copies)
    pts, gmap, hmap = post.stencil
    npts, p = pts.shape
    x = np.repeat(np.asarray(start, dtype=float)[None, :], len(copies), 0)
    out: list[np.ndarray | None] = [None] * len(copies)
    before = np.full(len(copies), np.inf)  # objective before each copy's last step, and that step's slope
    slope_before = np.zeros(len(copies))
    active = np.arange(len(copies))
    for _ in range(max_iter + 1):
        if not active.size:
            break
        f = batch.objective(list(active), (x[active][:, None, :] + pts[None, :, :]).reshape(-1, p)).reshape(-1, npts)
        # left to the single fit: a failed full step (it would backtrack) or a Hessian it would damp
        ok = np.all(np.isfinite(f), 1) & (f[:, 0] <= before[active] + 1e-4 * slope_before[active])
        g, hess = f @ gmap.T, (f @ hmap.T).reshape(-1, p, p)
        hess[~ok] = np.eye(p)
        ok &= np.linalg.eigvalsh(hess)[:, 0] > 1e-6
        active, f, g, hess = active[ok], f[ok], g[ok], hess[ok]
        step = -np.linalg.solve(hess, g[:, :, None])[:, :, 0]
        slope = np.einsum("ij,ij->i", g, step)
        done = -slope < 1e-10
        for i in active[done]:
            if np.all(np.abs(x[i]) < bound * (1 - 1e-6)):
                out[i] = x[i].copy()
        active, step = active[~done], step[~done]
        before[active], slope_before[active] = f[~done, 0], slope[~done]
        x[active] = np.clip(x[active] + step, -bound, bound)
    return out


class _Batch:
    """The objective of any set of copies at their own eta points (m per copy), one batch per call."""

    def __init__(self, post: Posterior, copies: list[Copy]) -> None:
        base = post.obs.time
        n = base.size
        extra: list[float] = []
        self.columns = []
        for c in copies:
            col = np.arange(n)
            for j in np.flatnonzero(c.times != base):
                col[j] = n + len(extra)
                extra.append(float(c.times[j]))
            self.columns.append(col)
        self.post, self.copies = post, copies
        self.at_all = post.predictor(np.concatenate([base, np.asarray(extra, dtype=float)]))
        self.added = [post.predictor(c.times, c.added) if len(c.added) else None for c in copies]

    def objective(self, which: list[int], eta: np.ndarray) -> np.ndarray:
        """OFV (len(which) x m,) for eta (len(which) x m, p), the rows of copy ``which[r]`` in block r."""
        m = eta.shape[0] // len(which)
        full = self.at_all(eta)
        pred = np.empty((eta.shape[0], self.post.obs.time.size))
        for r, i in enumerate(which):
            rows = slice(r * m, (r + 1) * m)
            pred[rows] = full[rows][:, self.columns[i]]
            added = self.added[i]
            if added is not None:
                pred[rows] += added(eta[rows])
        return self.post.objective(eta, pred)
