"""When the new regimen starts: the due time, the hold, the grid, the administration times, skipped doses.

The rules are in handover.py ("Next dose", "Hold", "Skipped doses") and
wardclock.py; :func:`alignment_gap` warns when aligning to the protocol's
administration times leaves the next 24 h under the AUC target and offers the
nearer time.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from tdmtui.core.alerts import Alert
from tdmtui.core.regimen import handover, wardclock

#: Warning codes raised here (stable; never renamed).
CODES = {
    "alignment-gap": "aligning the first dose to the administration times leaves the next 24 h under the AUC "
                     "target; the nearer time is offered",
}

if TYPE_CHECKING:
    from tdmtui.core.regimen.candidates import Candidate
    from tdmtui.core.regimen.targets import Targets
    from tdmtui.core.regimen.types import RegimenInput


@dataclass(frozen=True)
class Timing:
    """When the regimen starts (handover.py, wardclock.py).

    Attributes:
        first: first maintenance dose, h (on the grid, aligned to the administration times).
        held: end of the hold, h (on the grid), or None.
        due: when the next dose was due, h.
        nearer: the first dose before alignment to the administration times (== first without them).
        skipped: the standing order's doses left out before ``first``, h.
    """

    first: float
    held: float | None
    due: float
    nearer: float
    skipped: tuple[float, ...]


def plan_timing(inp: RegimenInput, c: Candidate, continuing: bool, limit: float | None) -> Timing:
    """The hand-over for one candidate (handover.py, wardclock.py)."""
    hist, rules = inp.history, inp.rules
    t_last = float(hist.start[-1]) if len(hist) else None
    cur_tau = inp.current.interval_h if inp.current else None
    if t_last is None:
        t_due = inp.as_of
    elif continuing and inp.current:
        t_due = t_last + inp.current.interval_h
    elif c.infusion_h >= c.interval_h and inp.current:
        # a continuous infusion starts when the standing order's next dose is due
        t_due = t_last + inp.current.interval_h
    else:
        t_due = t_last + c.interval_h
    t_due = max(t_due, inp.as_of)
    if continuing and t_last is not None and t_due > inp.as_of:
        return Timing(t_due, None, t_due, t_due, ())  # the standing order keeps its own clock
    held = None
    if not continuing and inp.params is not None and limit is not None:
        held = handover.hold(inp.params, hist, t_due, limit, float(rules.value("regimen.min_hold_h")))
        held = wardclock.to_grid(held, rules, inp.clock, "up") if held is not None else None
    start = held if held is not None else wardclock.to_grid(t_due, rules, inp.clock, "up")
    first = start if c.infusion_h >= c.interval_h else \
        handover.align(start, handover.admin_times(rules, c.interval_h), inp.clock)
    gone = () if continuing else tuple(wardclock.skipped(t_last, cur_tau, inp.as_of, first))
    return Timing(first, held, t_due, start, gone)


def alignment_gap(inp: RegimenInput, targets: Targets, chosen: Candidate, reg: dict[str, Any], first: float,
                   nearer: float, day1: float, alerts: list[Alert]) -> None:
    """Warn when aligning the first dose to the administration times drops the next 24 h below the AUC target.

    The nearer time (the due time or the end of the hold, on the grid) is offered with its own exposure
    (``regimen.nearer_start``).
    """
    band = targets.auc24
    if band is None or nearer >= first - 1.0 / 60.0 or day1 >= band[0] or inp.params is None:
        return
    until = inp.as_of + handover.FORECAST_H
    doses = handover.proposed_doses(nearer, chosen.dose_mg, chosen.interval_h, chosen.infusion_h, until)
    _, _, aucs = handover.forecast(inp.params, inp.history, doses, inp.as_of)
    if aucs["day1_mg_h_per_l"] <= day1 + 1e-6:
        return
    at = inp.clock.format(nearer)
    reg["nearer_start"] = {"next_dose_at": at, "day1_mg_h_per_l": aucs["day1_mg_h_per_l"]}
    alerts.append(Alert("alignment-gap", "caution", "schedule",
                        f"the first dose moved to the standard administration time {inp.clock.format(first)} leaves "
                        f"AUC over the next 24 h at {day1:.0f} mg*h/L, below the target {band[0]:g}-{band[1]:g}; "
                        f"starting at {at} instead gives {aucs['day1_mg_h_per_l']:.0f} mg*h/L"))
