"""Timing sensitivity: how much ke and AUC24 move when a draw or infusion-end time is off.

Each level the method used, and the end of the infusion before it, is moved by
``timing.sensitivity_shift_min`` (15 min) either way — ``timing.uncertain_shift_min``
(45 min) for times marked ``timing: uncertain`` — and the same method is run
again. A change above ``timing.sensitivity_warn_rel`` (10 %) in AUC24 or ke is
warned, naming the time that matters. All three numbers are library data.

Cost: a moved level keeps the base dose arrays, a moved infusion end changes one
duration in them (no rebuild from the case; :func:`context.shifted_history`), and each
refit starts from the base estimate (:attr:`Estimate.warm`: the MAP from the base eta;
a model average keeps its base weights), so the refits stay linear in the dose history.
All moves go to the method at once (:func:`runs.refit_many`): the Bayesian method fits
each model's copies in one batch (:mod:`shiftmap`).
"""

from __future__ import annotations

import dataclasses
from typing import Any

from tdmtui.core import registry
from tdmtui.core.estimation import runs as entries
from tdmtui.core.alerts import Alert
from tdmtui.core.input.casetypes import Case, Level
from tdmtui.core.estimation.context import MethodContext
from tdmtui.core.estimation.estimates import Estimate


def _auc(ctx: MethodContext, e: Estimate) -> float | None:
    cur = e.current(ctx.current)
    return cur["auc24_mg_h_per_l"] if cur else None


def timing_sensitivity(ctx: MethodContext, est: Estimate) -> tuple[list[dict[str, Any]], list[Alert]]:
    """Rows of (what moved, by how much, new ke and AUC24, relative change) and warnings."""
    rec = registry.get(est.method)
    if rec is None or rec.refit is None or not est.levels_used:
        return [], []
    rules = ctx.rules
    base_shift = float(rules.value("timing.sensitivity_shift_min")) / 60
    wide_shift = float(rules.value("timing.uncertain_shift_min")) / 60
    limit = float(rules.value("timing.sensitivity_warn_rel"))
    case = ctx.case
    base_ke, base_auc = est.params.ke, _auc(ctx, est)
    rows: list[dict[str, Any]] = []
    worst: dict[str, tuple[float, str]] = {}
    levels = {lv.index: lv for lv in case.levels}
    moves = [m for idx in est.levels_used for m in _moves(case, levels[idx], base_shift, wide_shift)]
    refits = entries.refit_many(rec, ctx, est, [new_case for _, _, new_case in moves])
    for (field, dh, _), e in zip(moves, refits):
        if e is None:
            rows.append({"moved": field, "shift_min": round(dh * 60), "ke_per_h": None, "auc24_mg_h_per_l": None,
                         "change": None, "note": "no estimate with this shift"})
            continue
        auc = _auc(ctx, e)
        change = abs(auc / base_auc - 1) if (auc and base_auc) else abs(e.params.ke / base_ke - 1)
        rows.append({"moved": field, "shift_min": round(dh * 60), "ke_per_h": e.params.ke,
                     "auc24_mg_h_per_l": auc, "change": change})
        if change > worst.get(field, (0.0, ""))[0]:
            worst[field] = (change, f"{dh * 60:+.0f} min")
    alerts = [Alert("timing-sensitive", "caution", field,
                    f"moving this time by {how} changes {'AUC24' if base_auc else 'ke'} by {change:.0%} "
                    f"(over {limit:.0%}): confirm the exact time before acting")
              for field, (change, how) in worst.items() if change > limit]
    return rows, alerts


def _moves(case: Case, lv: Level, base_shift: float, wide_shift: float) -> list[tuple[str, float, Case]]:
    """(field, shift h, shifted case) for a level: its time either way, then the end of the infusion before it."""
    h = wide_shift if lv.timing == "uncertain" else base_shift
    moves = [(f"levels[{lv.index}].time", sign * h, _shift_level(case, lv.index, sign * h)) for sign in (-1, 1)]
    before = [d for d in case.doses if d.start < lv.time]
    if before:
        d = before[-1]
        hd = wide_shift if d.timing == "uncertain" else base_shift
        moves += [(f"doses[{d.index}].end", sign * hd, _shift_end(case, d.index, sign * hd)) for sign in (-1, 1)]
    return moves


def _shift_level(case: Case, index: int, dh: float) -> Case:
    levels = tuple(dataclasses.replace(lv, time=lv.time + dh) if lv.index == index else lv for lv in case.levels)
    return dataclasses.replace(case, levels=tuple(sorted(levels, key=lambda x: (x.time, x.index))))


def _shift_end(case: Case, index: int, dh: float) -> Case:
    doses = tuple(dataclasses.replace(d, duration=max(d.duration + dh, 0.0)) if d.index == index else d
                  for d in case.doses)
    return dataclasses.replace(case, doses=doses)
