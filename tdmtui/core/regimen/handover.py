"""From now to the new regimen: when the next dose goes in, holds, the 72 h forecast, next levels.

Rules (each number is library or protocol data):

* **Next dose.** Continuing: the next dose of the standing order, one
  current interval after the last dose started. Changing: one *new*
  interval after the last dose started (the textbook hand-over, pk-sources.md
  W3 step 7), never before ``as_of``; a new start: ``as_of``. The time is
  then moved to the next of the protocol's standard administration times
  (``regimen.admin_times``: a list of ``"HH:MM"``, or a table keyed by
  interval hours) where the protocol has them.
* **Hold.** When the concentration predicted from the real history at that
  time is above the new regimen's steady-state trough (or above the trough
  ceiling, whichever is higher), ``hold_until`` is the time the curve falls to
  it (:func:`tdmtui.core.models.time_to_fall`) and the next dose is the first
  administration time at or after it.
* **Forecast.** The proposed doses superposed on the real history (every
  dose counts), shown from 72 h before ``as_of`` (or the first dose, if later)
  to ``as_of`` + 72 h, with the exact AUC of the next 0-24 h and 24-48 h from
  ``as_of`` (pk-sources.md 2.2). The grid covers that window only, so its cost
  does not grow with the length of the course; the concentrations on it come
  from the linear-time superposition (:mod:`tdmtui.core.models.superpose`).
* **Next levels.** ``monitoring.levels`` maps ``mode/method`` (or ``mode``)
  to a list of draws: ``["peak", n]`` at the peak draw time after dose n of
  the new regimen (vancomycin ``monitoring.peak_after_end_h`` after the end of
  infusion; aminoglycosides the target's peak reference time), ``["trough",
  n]`` ``monitoring.trough_before_h`` before dose n, ``["at", n, h]`` h after
  the start of dose n. Doses are numbered from the first maintenance dose of
  the new regimen (1).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.models import DoseArrays, PKParams, auc, concentration, time_to_fall

if TYPE_CHECKING:
    from tdmtui.core.clock import Clock
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
    grid = np.union1d(np.arange(t0, t1 + 1e-9, step), events[(events >= t0) & (events <= t1)])
    conc = concentration(params, every, grid)
    aucs = {"day1_mg_h_per_l": auc(params, every, as_of, as_of + 24.0),
            "day2_mg_h_per_l": auc(params, every, as_of + 24.0, as_of + 48.0)}
    return grid, conc, aucs


def level_plan(rules: Rules, targets: Targets, mode: str, method: str) -> list[list[Any]]:
    """The draw list for this mode and method from ``monitoring.levels``."""
    table = rules.get("monitoring.levels", {}) or {}
    for key in (f"{mode}/{method}", mode, "default"):
        if key in table:
            return [list(x) for x in table[key]]
    return []


def next_levels(rules: Rules, targets: Targets, mode: str, method: str, first: float, tau: float,
                tinf: float, clock: Clock) -> list[dict[str, Any]]:
    """Next levels in clock time, each tied to a named dose of the new regimen."""
    out: list[dict[str, Any]] = []
    before = float(rules.get("monitoring.trough_before_h", 0.5))
    for item in level_plan(rules, targets, mode, method):
        kind, n = str(item[0]), int(item[1])
        start = first + (n - 1) * tau
        if kind == "trough":
            at = start - before
            where = f"{before * 60:.0f} min before dose {n} of the new regimen"
        elif kind == "peak":
            if "monitoring.peak_after_end_h" in rules:
                after = float(rules.value("monitoring.peak_after_end_h"))
                at = start + tinf + after
                where = f"{after:g} h after the end of dose {n} of the new regimen"
            else:
                at = start + targets.peak_time(tinf)
                where = f"{targets.peak_time(tinf):g} h after the start of dose {n} of the new regimen"
        else:
            h = float(item[2])
            at = start + h
            kind = "random" if mode != "continuous" else "steady-state"
            where = f"{h:g} h after the start of dose {n} of the new regimen"
        out.append({"at": clock.format(at), "kind": kind,
                    "dose": f"dose {n} ({clock.format(start)}): {where}"})
    return out
