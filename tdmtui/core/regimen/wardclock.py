"""Clock times a ward can keep: the protocol's time grid, ward hours for level draws, doses a hold skips.

Rules (each number is library or protocol data):

* **Grid.** ``regimen.time_grid_min`` (library 30 min, common practice; 0 =
  exact minutes). A new regimen's first dose and a hold's end move *later* to
  the grid (no dose early, no hold cut short); a trough draw moves *earlier*
  (never after the dose it precedes), a peak draw later (never inside the
  distribution phase), other draws to the nearest grid time. The grid is read
  on the case's own wall clock (its offset or time zone).
* **Ward hours.** ``monitoring.ward_hours`` (library 07:00-22:00, common
  practice). When a planned draw falls outside them, the same draws are moved
  a whole number of doses later (up to one day), or a peak after dose n and a
  trough before dose n+1 become a trough before and a peak after dose n+1 (the
  same steady-state interval read from the other side, pk-sources.md 2.3);
  the first arrangement whose draws all fall in ward hours is booked, else the
  library's own plan stands.
* **Skipped doses.** The standing order's doses due from the assessment time
  up to (not including) the first dose of the new regimen: what a hold, or a
  change to a longer interval timed from the last dose, leaves out. The note
  names them by clock time.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.library import Rules

_EPS_H = 1.0 / 3600.0  # one second


def grid_min(rules: Rules) -> float:
    """The protocol's time grid, minutes (0 = none)."""
    return float(rules.value("regimen.time_grid_min"))


def _minute_of_day(t: float, clock: Clock) -> float:
    dt = clock.to_datetime(t)
    return dt.hour * 60.0 + dt.minute + dt.second / 60.0 + dt.microsecond / 6e7


def to_grid(t: float, rules: Rules, clock: Clock, how: str) -> float:
    """``t`` moved to the grid on the case's wall clock: ``how`` is ``up``, ``down`` or ``nearest``."""
    step = grid_min(rules)
    if step <= 0:
        return t
    m = _minute_of_day(t, clock)
    k = m / step
    snap = {"up": math.ceil(k - 1e-6), "down": math.floor(k + 1e-6), "nearest": math.floor(k + 0.5)}[how]
    return t + (snap * step - m) / 60.0


def in_ward_hours(t: float, rules: Rules, clock: Clock) -> bool:
    """True when ``t`` is inside ``monitoring.ward_hours`` (always, without the key)."""
    hours = rules.get("monitoring.ward_hours")
    if not hours:
        return True
    lo, hi = float(hours[0]), float(hours[1])
    h = _minute_of_day(t, clock) / 60.0
    return lo - 1e-6 <= h <= hi + 1e-6 if lo <= hi else (h >= lo - 1e-6 or h <= hi + 1e-6)


def skipped(t_last: float | None, interval: float | None, as_of: float, first: float) -> list[float]:
    """Start times of the standing order's doses from ``as_of`` up to ``first`` (module docstring)."""
    if t_last is None or not interval or interval <= 0:
        return []
    out: list[float] = []
    t = t_last + interval
    while t < first - 1.0 / 60.0 and len(out) < 100:
        if t >= as_of - 1.0 / 60.0:
            out.append(t)
        t += interval
    return out


def arrangements(plan: list[list[Any]], tau: float) -> list[list[list[Any]]]:
    """The library's draw plan, then the same draws moved later by whole doses (module docstring)."""
    out: list[list[list[Any]]] = []
    shifts = max(1, int(math.ceil(24.0 / tau - 1e-9))) if tau > 0 else 1
    for k in range(shifts + 1):
        moved = [[item[0], int(item[1]) + k, *item[2:]] for item in plan]
        out.append(moved)
        kinds = [(str(x[0]), int(x[1])) for x in moved]
        if len(kinds) == 2 and kinds[0][0] == "peak" and kinds[1] == ("trough", kinds[0][1] + 1):
            n = kinds[1][1]
            out.append([["trough", n], ["peak", n]])
    return out


def pick(times: list[list[float]], rules: Rules, clock: Clock) -> int:
    """Index of the first arrangement whose draws all fall in ward hours (0 when none does)."""
    for i, ts in enumerate(times):
        if all(in_ward_hours(t, rules, clock) for t in ts):
            return i
    return 0
