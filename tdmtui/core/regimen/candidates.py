"""Candidate regimens: the dose grid x the interval set, judged against the targets, and the choice.

The candidates are practical orders on the grid of :mod:`tdmtui.core.regimen.grid`
(doses on the rounding grid under the caps, infusion times within the rate
limit); their steady-state figures come from :mod:`tdmtui.core.regimen.steadystate`.

Choice rule (documented for the note):
    1. A candidate is on target when its judged figure is inside the band:
       ``auc`` AUC24 in band and trough under the ceiling where there is one;
       ``peak-trough`` peak (at the reference time) in band and trough inside
       the trough band (low 0 = a ceiling only); ``extended`` AUC24 and peak
       in their bands where set, trough under the ceiling; ``continuous`` Css
       in band.
    2. Intervals follow the half-life: only intervals from
       ``regimen.min_interval_half_lives`` to ``regimen.max_interval_half_lives``
       half-lives (the estimate's half-life, ln 2 x Vss / CL) are offered, as
       the choice or an alternative, where one of them is on target (else every
       interval on target; not for extended-interval dosing); the patient's
       current interval is always weighed. The current interval is kept when a candidate on target at it lands within
       ``regimen.keep_interval_within_rel`` of the band width of the middle
       (change the dose, keep the interval: common practice, pk-sources.md W5
       step 6); otherwise every allowed interval is weighed, so an AUC24 of
       616 on 750 mg q12h becomes 1250 mg q24h (513) rather than 500 mg q12h
       (411, the bottom of the band).
       Extended-interval dosing takes the shortest interval on target: the
       drug-free time sets the interval (pk-sources.md 2.4 and W4, tau from
       the time to fall under the trough target); without an AUC or peak
       band it takes the ``extended.mg_per_kg`` dose and, among ties, the
       shortest interval on which the trough falls under the ceiling.
    3. Among those, the ones nearest the middle of the band (AUC24 for
       ``auc``/``extended`` with an AUC band, peak for ``peak-trough`` and
       ``extended`` without one, Css for ``continuous``) within
       ``regimen.choice_tie_rel`` of the band width count as equally near.
    4. Ties go to fewer doses a day, then to the smaller daily dose.
    5. Alternatives (3 in all): the on-target candidate nearest the middle at
       each neighbouring interval (nearest interval first), then the next
       nearest ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.models import PKParams
from tdmtui.core.regimen.grid import dose_grid, infusion_time
from tdmtui.core.regimen.steadystate import unit_values
from tdmtui.core.solvers import distinct, percentile

if TYPE_CHECKING:
    from tdmtui.core.library import Rules
    from tdmtui.core.regimen.targets import Targets

N_ALTERNATIVES = 3


@dataclass(frozen=True)
class Candidate:
    """One regimen and its predicted steady state.

    Attributes:
        dose_mg: dose, mg.
        interval_h: interval, h.
        infusion_h: infusion time, h.
        peak: steady-state concentration at the end of infusion, mg/L.
        trough: steady-state concentration just before the next dose, mg/L.
        auc24: steady-state AUC24, mg*h/L.
        peak_ref: steady-state concentration at the target's peak draw time, mg/L.
        peak_ref_h: that draw time, h after the start of the dose.
        on_target: judged on target.
        distance: distance of the judged figure from the band middle / band width.
        probability: fraction of posterior draws on target (None without draws).
        interval90: 5th-95th percentile of each figure over the draws, or None.
    """

    dose_mg: float
    interval_h: float
    infusion_h: float
    peak: float
    trough: float
    auc24: float
    peak_ref: float
    peak_ref_h: float
    on_target: bool = False
    distance: float = math.inf
    probability: float | None = None
    interval90: dict[str, list[float]] | None = None

    @property
    def doses_per_day(self) -> float:
        return 24.0 / self.interval_h

    @property
    def daily_mg(self) -> float:
        return self.dose_mg * 24.0 / self.interval_h

    def predicted(self) -> dict[str, Any]:
        """The contract's ``predicted`` object."""
        out: dict[str, Any] = {"auc24_mg_h_per_l": self.auc24, "peak_mg_per_l": self.peak,
                               "trough_mg_per_l": self.trough}
        if abs(self.peak_ref_h - self.infusion_h) > 1e-9:
            out["peak_at_reference_mg_per_l"] = self.peak_ref
            out["peak_reference_h_after_start"] = self.peak_ref_h
        if self.interval90:
            out["interval90"] = self.interval90
        if self.probability is not None:
            out["target_probability"] = self.probability
        return out

    def to_dict(self) -> dict[str, Any]:
        """A row of the candidate table."""
        return {"dose_mg": self.dose_mg, "interval_h": self.interval_h, "infusion_h": self.infusion_h,
                "peak_mg_per_l": self.peak, "trough_mg_per_l": self.trough,
                "auc24_mg_h_per_l": self.auc24, "peak_at_reference_mg_per_l": self.peak_ref,
                "on_target": self.on_target, "distance": self.distance, "probability": self.probability}


def judge(targets: Targets, peak_ref: np.ndarray, trough: np.ndarray, auc24: np.ndarray,
          dose: np.ndarray, dose_ref: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """On-target flags and distances from the band middle (module docstring, rule 1-2).

    ``dose_ref`` (mg) is the fallback figure for extended-interval dosing with
    no AUC or peak band: the distance is then from the mg/kg dose.
    """
    on = np.ones(np.shape(dose), dtype=bool)
    t = targets

    def inside(x: np.ndarray, band: tuple[float, float] | None) -> np.ndarray:
        assert band is not None  # every mode's own band is resolved (regimen.targets)
        return (x >= band[0] - 1e-9) & (x <= band[1] + 1e-9)

    def dist(x: np.ndarray, band: tuple[float, float] | None) -> np.ndarray:
        assert band is not None
        width = max(band[1] - band[0], 1e-9)
        return np.abs(x - 0.5 * (band[0] + band[1])) / width

    if t.mode == "continuous":
        css = auc24 / 24.0
        return inside(css, t.css), dist(css, t.css)
    if t.trough:
        on &= inside(trough, t.trough)
    if t.mode == "auc":
        return on & inside(auc24, t.auc24), dist(auc24, t.auc24)
    if t.mode == "peak-trough":
        return on & inside(peak_ref, t.peak), dist(peak_ref, t.peak)
    if t.auc24:
        on &= inside(auc24, t.auc24)
    if t.peak:
        on &= inside(peak_ref, t.peak)
    if t.auc24:
        return on, dist(auc24, t.auc24)
    if t.peak:
        return on, dist(peak_ref, t.peak)
    ref = dose_ref or 1.0
    return on, np.abs(dose - ref) / ref


def evaluate(params: PKParams, targets: Targets, dose: float, tau: float, tinf: float,
             dose_ref: float | None = None) -> Candidate:
    """One regimen's steady state, judged."""
    t_ref = targets.peak_time(tinf)
    pk, tr, au, ref = (dose * x for x in unit_values(params, tau, tinf, t_ref))
    on, d = judge(targets, np.array([ref]), np.array([tr]), np.array([au]), np.array([dose]), dose_ref)
    return Candidate(dose, tau, tinf, pk, tr, au, ref, t_ref, bool(on[0]), float(d[0]))


def search(params: PKParams, targets: Targets, rules: Rules, intervals: list[float],
           dose_ref: float | None = None, keep_infusion_h: float | None = None) -> list[Candidate]:
    """Every practical candidate at the given intervals, judged (module docstring).

    ``keep_infusion_h``: the patient's infusion time, kept wherever the rate limit allows it
    (extended-interval dosing, ``extended.keep_infusion``).
    """
    out: list[Candidate] = []
    for tau in intervals:
        doses = dose_grid(rules, tau)
        if doses.size == 0:
            continue
        tinfs = np.array([infusion_time(d, rules, keep_infusion_h) for d in doses])
        for tinf in distinct(tinfs):
            if tinf > tau:
                continue
            sel = doses[tinfs == tinf]
            t_ref = targets.peak_time(float(tinf))
            pk, tr, au, ref = unit_values(params, float(tau), float(tinf), t_ref)
            on, dist = judge(targets, sel * ref, sel * tr, sel * au, sel, dose_ref)
            for i, d in enumerate(sel.tolist()):
                out.append(Candidate(d, float(tau), float(tinf), d * pk, d * tr, d * au, d * ref,
                                     t_ref, bool(on[i]), float(dist[i])))
    return out


def choose(cands: list[Candidate], current_interval: float | None, tie_rel: float,
           shortest_first: bool = False, interval_band: tuple[float, float] | None = None,
           shortest_tie: bool = False, keep_within: float = math.inf) -> tuple[Candidate | None, list[Candidate]]:
    """The chosen candidate and its alternatives (module docstring, rules 2-5).

    Args:
        interval_band: (shortest, longest) interval in h the half-life allows, or None.
        keep_within: the current interval is kept only when its best candidate's distance is at most this.
    """
    on = [c for c in cands if c.on_target]
    if not on:
        return None, []
    same = [c for c in on if current_interval is not None and abs(c.interval_h - current_interval) < 1e-9]
    if interval_band is not None:
        lo, hi = interval_band
        allowed = [c for c in on if lo - 1e-9 <= c.interval_h <= hi + 1e-9 or c in same]
        on = allowed or on
    pool = same if same and min(c.distance for c in same) <= keep_within + 1e-12 else on
    if shortest_first:
        low = min(c.interval_h for c in pool)
        pool = [c for c in pool if c.interval_h == low]
    best = min(c.distance for c in pool)
    tied = [c for c in pool if c.distance <= best + tie_rel + 1e-12]

    def pref(c: Candidate) -> tuple:
        if shortest_tie:
            return (c.interval_h, c.distance, c.daily_mg)
        return (c.doses_per_day, c.daily_mg, c.distance)

    chosen = min(tied, key=pref)
    others = [c for c in on if c is not chosen]
    near = sorted(others, key=lambda c: (abs(math.log(c.interval_h / chosen.interval_h)), c.distance))
    alts: list[Candidate] = []
    seen = {chosen.interval_h}
    for c in near:
        if c.interval_h not in seen and len(alts) < N_ALTERNATIVES:
            alts.append(c)
            seen.add(c.interval_h)
    for c in sorted(others, key=lambda c: c.distance):
        if len(alts) >= N_ALTERNATIVES:
            break
        if c not in alts:
            alts.append(c)
    return chosen, alts


def _draw_values(samples: Any, c: Candidate) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray | None]:
    """(peak, trough, auc24, peak at reference, weights or None) per draw for one candidate.

    Batched draws (an object with ``steady_state(dose, tau, tinf, peak_delay_h)``
    returning arrays, and ``weights``) are used as they are; a plain list of
    :class:`PKParams` goes through the shared models one by one.
    """
    delay = c.peak_ref_h - c.infusion_h
    if hasattr(samples, "steady_state") and hasattr(samples, "cl"):
        ss = samples.steady_state(c.dose_mg, c.interval_h, c.infusion_h)
        ref = samples.steady_state(c.dose_mg, c.interval_h, c.infusion_h, delay)["peak"] if delay > 1e-12 else ss["peak"]
        return ss["peak"], ss["trough"], ss["auc24"], ref, getattr(samples, "weights", None)
    vals = np.array([unit_values(p, c.interval_h, c.infusion_h, c.peak_ref_h) for p in samples]) * c.dose_mg
    return vals[:, 0], vals[:, 1], vals[:, 2], vals[:, 3], None


def _quantiles(x: np.ndarray, w: np.ndarray | None) -> list[float]:
    """5th and 95th percentiles, weighted (mid-point CDF) when weights are given."""
    if w is None:
        return [percentile(x, 5.0), percentile(x, 95.0)]
    order = np.argsort(x)
    cdf = np.cumsum(w[order]) - 0.5 * w[order]
    return [float(np.interp(0.05, cdf, x[order])), float(np.interp(0.95, cdf, x[order]))]


def with_draws(cand: Candidate, samples: Any, targets: Targets, dose_ref: float | None = None) -> Candidate:
    """Add the 90 % interval and probability of target over posterior draws."""
    if samples is None or len(samples) == 0:
        return cand
    pk, tr, au, ref, w = _draw_values(samples, cand)
    iv = {"auc24_mg_h_per_l": _quantiles(au, w), "peak_mg_per_l": _quantiles(pk, w),
          "trough_mg_per_l": _quantiles(tr, w)}
    if abs(cand.peak_ref_h - cand.infusion_h) > 1e-9:
        iv["peak_at_reference_mg_per_l"] = _quantiles(ref, w)
    prob = _share_on_target(targets, ref, tr, au, cand.dose_mg, w)
    return replace(cand, probability=prob, interval90=iv)


def _share_on_target(targets: Targets, ref: np.ndarray, tr: np.ndarray, au: np.ndarray, dose: float,
                     w: np.ndarray | None) -> float:
    """Share (weighted when weights are given) of draws judged on target by rule 1."""
    on, _ = judge(targets, ref, tr, au, np.full(np.shape(ref), dose))
    return float(np.mean(on)) if w is None else float(np.sum(w[on]))


def target_probability(samples: Any, targets: Targets, dose: float, tau: float, tinf: float) -> float | None:
    """Probability that a regimen meets its targets: the share of draws judged on target (rule 1).

    The one implementation behind every "probability of target" the tool shows
    (the estimate's current regimen, the plan's rows): the peak is compared at
    the targets' reference time, the trough just before the next dose.
    None without draws.
    """
    if samples is None or len(samples) == 0 or tau <= 0:
        return None
    if tinf >= tau - 1e-9:  # a continuous infusion: judged on its daily amount, as the current order is
        dose, tau, tinf = dose * 24.0 / tau, 24.0, 24.0
    t_ref = targets.peak_time(tinf)
    cand = Candidate(dose, tau, tinf, 0.0, 0.0, 0.0, 0.0, t_ref, False, 0.0)
    _, tr, au, ref, w = _draw_values(samples, cand)
    return _share_on_target(targets, ref, tr, au, dose, w)


def table_probabilities(cands: list[Candidate], samples: Any, targets: Targets,
                        dose_ref: float | None = None) -> list[float | None]:
    """Probability of target for every candidate, from batched draws (None for other draws).

    Figures are linear in the dose, so each (interval, infusion) pair is
    evaluated once per draw for 1 mg and scaled.
    """
    if samples is None or not (hasattr(samples, "steady_state") and hasattr(samples, "cl")):
        return [None] * len(cands)
    w = getattr(samples, "weights", None)
    groups: dict[tuple[float, float, float], list[int]] = {}
    for i, c in enumerate(cands):
        groups.setdefault((c.interval_h, c.infusion_h, c.peak_ref_h), []).append(i)
    out: list[float | None] = [None] * len(cands)
    for (tau, tinf, t_ref), at in groups.items():
        ss = samples.steady_state(1.0, tau, tinf, t_ref - tinf)
        ref, tr, au = ss["peak"], ss["trough"], ss["auc24"]
        if w is not None:
            for i in at:
                d = cands[i].dose_mg
                out[i] = _share_on_target(targets, d * ref, d * tr, d * au, d, w)
            continue
        # equal-weight draws: every dose of the group at once (the same products and comparisons, counted)
        doses = np.array([cands[i].dose_mg for i in at], dtype=float)[:, None]
        on, _ = judge(targets, doses * ref, doses * tr, doses * au, np.broadcast_to(doses, (doses.shape[0], ref.size)))
        for i, count in zip(at, np.count_nonzero(on, axis=1)):
            out[i] = float(count / ref.size)
    return out
