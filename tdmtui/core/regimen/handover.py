"""From now to the new regimen: when the next dose goes in, holds, the 72 h forecast, next levels.

Rules (each number is library or protocol data):

* **Next dose.** Continuing: the next dose of the standing order, one
  current interval after the last dose started (its own clock time).
  Changing: one *new* interval after the last dose started (the textbook
  hand-over, pk-sources.md W3 step 7), never before ``as_of``; a new start:
  ``as_of``. The time is moved later to the protocol's time grid
  (``regimen.time_grid_min``, wardclock.py), then to the next of the
  protocol's standard administration times (``regimen.admin_times``: a list
  of ``"HH:MM"``, or a table keyed by interval hours) where the protocol has
  them. When that alignment leaves the AUC of the next 24 h under the AUC
  target while the nearer time would give more, the design warns
  (``alignment-gap``) and offers the nearer time (``nearer_start``).
* **Hold** (the rule the note's hold rests on). The next dose is held only
  when the level predicted from the real history at its due time is above
  the hold limit: ``regimen.hold_above_mg_l`` (vancomycin 20 mg/L,
  aminoglycosides their trough ceiling; library, with source), or the
  target's trough ceiling where that is lower (extended-interval 1 mg/L,
  synergy 1 mg/L). ``hold_until`` is when the curve falls to that limit
  (:func:`tdmtui.core.models.time_to_fall`), moved later to the grid; a hold
  shorter than ``regimen.min_hold_h`` is none. A continuous rate waits for
  the level to fall to its own Css. A level slightly above target (AUC24 616
  for 400-600 with a level of 20 mg/L) is therefore a dose change, not a hold.
* **Skipped doses.** ``skipped_doses`` lists the standing order's doses due
  from ``as_of`` up to the new first dose (held, or dropped by a longer
  interval timed from the last dose), so the note names them by clock time.
* **Forecast.** The proposed doses superposed on the real history (every
  dose counts), shown from 72 h before ``as_of`` (or the first dose, if later)
  to ``as_of`` + 72 h, with the exact AUC of the next 0-24 h and 24-48 h from
  ``as_of`` (pk-sources.md 2.2). The grid covers that window only, so its cost
  does not grow with the length of the course; the concentrations on it come
  from the linear-time superposition (:mod:`tdmtui.core.models.superpose`).
* **Next levels.** ``monitoring.levels`` maps ``mode/continue`` (a regimen
  continued on target), ``mode/method`` or ``mode`` to a list of draws: ``["peak", n]`` at the peak draw time after dose n of
  the new regimen (vancomycin ``monitoring.peak_after_end_h`` after the end of
  infusion; aminoglycosides the target's peak reference time), ``["trough",
  n]`` ``monitoring.trough_before_h`` before dose n, ``["at", n, h]`` h after
  the start of dose n. Doses are numbered from the first maintenance dose of
  the new regimen (1). Draws go on the grid (troughs earlier, peaks later)
  and into ward hours (``monitoring.ward_hours``, wardclock.py).
* **The level a restart waits on.** When an exposure caution calls for a
  hold (``auc-toxic``, or ``trough-high`` with a hold: exposure.py), every
  proposal that leaves doses out or holds books a trough
  ``monitoring.trough_before_h`` before its first dose, first in
  ``next_levels``, with ``give_below_mg_l`` (the hold limit): the first dose
  is given only if that level is below it (:func:`restart_check`; the note
  says it with the next dose). The predicted fall is a model's; the level is
  the patient's.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.models import DoseArrays, PKParams, auc, concentration, time_to_fall
from tdmtui.core.regimen import wardclock
from tdmtui.core.solvers import distinct

if TYPE_CHECKING:
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.library import Rules
    from tdmtui.core.regimen.targets import Targets

FORECAST_H = 72.0
_SLACK_H = 1.0 / 60.0  # one minute: below this a hold is no hold


def admin_times(rules: Rules, interval: float) -> list[str]:
    """The protocol's standard administration times for an interval (``HH:MM`` list)."""
    value = rules.get("regimen.admin_times", []) or []
    if isinstance(value, dict):
        for key, times in value.items():
            if abs(float(key) - interval) < 1e-9:
                return [str(x) for x in times]
        return []
    return [str(x) for x in value]


def align(t: float, times: list[str], clock: Clock) -> float:
    """The first standard administration time at or after ``t`` (``t`` itself without any)."""
    if not times:
        return t
    from datetime import timedelta

    day = clock.to_datetime(t).date()
    suffix = (clock.out_offset or "Z") if clock.style == "offset" else ""
    best = math.inf
    for k in range(3):
        date = day + timedelta(days=k)
        for hhmm in times:
            h = clock.parse(f"{date.isoformat()}T{hhmm}{suffix}", "protocol.regimen.admin_times")
            if h >= t - 1e-9:
                best = min(best, h)
        if best < math.inf:
            return best
    return t


def hold(params: PKParams, history: DoseArrays, t_due: float, threshold: float, min_hold_h: float = 0.0) -> float | None:
    """When the real history's curve falls to ``threshold`` at or after ``t_due`` (None: no hold).

    A hold shorter than ``min_hold_h`` (library ``regimen.min_hold_h``) is no hold: the dose is given when due.
    """
    if len(history) == 0 or threshold <= 0:
        return None
    if float(concentration(params, history, t_due)) <= threshold:
        return None
    t = time_to_fall(params, history, t_due, threshold)
    return None if t is None or t - t_due < max(_SLACK_H, min_hold_h) else t


def proposed_doses(first: float, dose: float, tau: float, tinf: float, until: float,
                   loading: tuple[float, float, float] | None = None) -> DoseArrays:
    """Maintenance doses from ``first`` every ``tau`` up to ``until`` (plus a loading dose).

    Args:
        loading: ``(start h, amount mg, duration h)`` or None.
    """
    n = max(1, int(math.floor((until - first) / tau)) + 1)
    plan = DoseArrays.regimen(first, dose, tau, tinf, n)
    if loading:
        plan = plan.concat(DoseArrays.from_lists([loading[0]], [loading[2]], [loading[1]]))
    return plan


def forecast(params: PKParams, history: DoseArrays, plan: DoseArrays, as_of: float,
             hours: float = FORECAST_H, step: float = 0.1) -> tuple[np.ndarray, np.ndarray, dict[str, float]]:
    """Concentrations of history + plan from ``as_of - hours`` (or the first dose) to ``as_of + hours``,
    and the next two daily AUCs.

    Returns:
        (times h, conc mg/L, {"day1_mg_h_per_l", "day2_mg_h_per_l"}).
    """
    every = history.concat(plan) if len(history) else plan
    t0 = max(min(float(every.start[0]), as_of), as_of - hours) if len(every) else as_of
    t1 = as_of + hours
    events = np.concatenate([every.start, every.start + every.duration, [as_of]])
    grid = distinct(np.concatenate([np.arange(t0, t1 + 1e-9, step), events[(events >= t0) & (events <= t1)]]))
    conc = concentration(params, every, grid)
    aucs = {"day1_mg_h_per_l": auc(params, every, as_of, as_of + 24.0),
            "day2_mg_h_per_l": auc(params, every, as_of + 24.0, as_of + 48.0)}
    return grid, conc, aucs


def level_plan(rules: Rules, targets: Targets, mode: str, method: str, continuing: bool = False) -> list[list[Any]]:
    """The draw list for this mode and method from ``monitoring.levels`` (``mode/continue`` when continuing)."""
    table = rules.get("monitoring.levels", {}) or {}
    keys = ([f"{mode}/continue"] if continuing else []) + [f"{mode}/{method}", mode, "default"]
    for key in keys:
        if key in table:
            return [list(x) for x in table[key]]
    return []


def _draw(rules: Rules, targets: Targets, mode: str, item: list[Any], first: float, tau: float,
          tinf: float, clock: Clock) -> tuple[float, dict[str, Any]]:
    """One planned draw: (time h, its row), on the protocol's grid (wardclock.py)."""
    before = float(rules.value("monitoring.trough_before_h"))
    kind, n = str(item[0]), int(item[1])
    start = first + (n - 1) * tau
    if kind == "trough":
        at = wardclock.to_grid(start - before, rules, clock, "down")
        where = f"{(start - at) * 60:.0f} min before dose {n} of the new regimen"
    elif kind == "peak":
        if "monitoring.peak_after_end_h" in rules:
            after = float(rules.value("monitoring.peak_after_end_h"))
            at = wardclock.to_grid(start + tinf + after, rules, clock, "up")
            where = f"{_h(at - start - tinf)} h after the end of dose {n} of the new regimen"
        else:
            at = wardclock.to_grid(start + targets.peak_time(tinf), rules, clock, "up")
            where = f"{_h(at - start)} h after the start of dose {n} of the new regimen"
    else:
        at = wardclock.to_grid(start + float(item[2]), rules, clock, "nearest")
        kind = "random" if mode != "continuous" else "steady-state"
        where = f"{_h(at - start)} h after the start of dose {n} of the new regimen"
    return at, {"at": clock.format(at), "kind": kind, "dose": f"dose {n} ({clock.format(start)}): {where}"}


def restart_check(rules: Rules, clock: Clock, first: float, limit: float) -> dict[str, Any]:
    """The level drawn before the first dose of a regimen that follows a hold for high exposure: the
    dose is given only if the level is below ``limit`` (the exposure caution's advice). Drawn
    ``monitoring.trough_before_h`` before the dose, on the protocol's grid, whatever the ward hours:
    the dose waits on it."""
    at = wardclock.to_grid(first - float(rules.value("monitoring.trough_before_h")), rules, clock, "down")
    return {"at": clock.format(at), "kind": "trough", "give_below_mg_l": limit,
            "dose": f"dose 1 ({clock.format(first)}): {(first - at) * 60:.0f} min before the first dose; give it only "
                    f"below {limit:g} mg/L"}


def _h(x: float) -> str:
    return f"{round(x * 60.0) / 60.0:.2f}".rstrip("0").rstrip(".")


def next_levels(rules: Rules, targets: Targets, mode: str, method: str, first: float, tau: float,
                tinf: float, clock: Clock, continuing: bool = False) -> list[dict[str, Any]]:
    """Next levels in clock time, each tied to a named dose of the new regimen, in ward hours (wardclock.py)."""
    plan = level_plan(rules, targets, mode, method, continuing)
    if not plan:
        return []
    options = wardclock.arrangements(plan, tau)
    drawn = [[_draw(rules, targets, mode, item, first, tau, tinf, clock) for item in opt] for opt in options]
    best = drawn[wardclock.pick([[t for t, _ in d] for d in drawn], rules, clock)]
    return [row for _, row in sorted(best, key=lambda x: x[0])]
