"""The proposal when renal function changes: dialysis sessions, and unstable renal function.

Called by the orchestrator after the regimen design (one hook):

* **Intermittent haemodialysis** with recorded sessions: the proposal is a dose
  after each session aimed at the pre-dialysis target
  (:mod:`tdmtui.core.regimen.dialysis`).
* **Unstable renal function** (``scr-unstable``): unless the estimate rests on
  at least one level drawn after the latest SCr that triggered the warning,
  the proposal is "hold and redraw a level at <time>, then redose by level";
  the regimen the estimate gives is kept beside it for reference only. The
  redraw time is when the standing order's next dose is due (a level before
  it), or the assessment time when that has passed (common practice: with
  renal function changing, a dose is given on a fresh level, not a forecast).
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING, Any

from tdmtui.core.alerts import Alert

if TYPE_CHECKING:
    from tdmtui.core.regimen.dialysis import SessionPlan
    from tdmtui.core.regimen.types import Assessed, EstimateUsed, Plan, RegimenInput

CODES = {
    "renal-redose-by-level": "renal function is changing and no level was drawn since: hold and redraw, then redose",
    "renal-levels-after-change": "renal function changed; the estimate rests on levels drawn after the change",
    "dialysis-projected": "no planned sessions given: the last week's sessions are taken to repeat",
    "dialysis-off-target": "no practical dose puts every predicted pre-dialysis level in the band",
    "dialysis-no-schedule": "fewer than two sessions to come are known",
}


def session_plan(ctx: Assessed) -> SessionPlan | None:
    """The dialysis design's input, or None when the dose-after-session plan does not apply."""
    from tdmtui.core.input import dialysis
    from tdmtui.core.regimen.dialysis import SessionPlan

    case = ctx.case
    if case.patient.renal_replacement != "ihd" or not dialysis.recorded(case) or \
            "dialysis.pre_dialysis_target_mg_l" not in ctx.rules:
        return None
    upcoming, projected = dialysis.schedule(case, ctx.rules)
    spans, cl = dialysis.fit_sessions(case, ctx.rules)
    return SessionPlan(tuple(spans), tuple(upcoming), projected, cl)


def adjust(ctx: Assessed, est: EstimateUsed, base: RegimenInput, plan: Plan) -> Plan:
    """The plan after the renal rules (module docstring)."""
    sp = session_plan(ctx)
    if sp is not None:
        from tdmtui.core.regimen import dialysis as design
        from tdmtui.core.regimen.handover import forecast

        inp = dataclasses.replace(base, params=est.params, samples=est.samples, method=est.method)
        out = design.design(inp, sp, plan.targets, plan.sources)
        if out.doses is not None and est.params is not None:
            times, conc, _ = forecast(est.params, ctx.history, out.doses, ctx.case.as_of, hours=
                                      max(72.0, max((b for _, b in sp.upcoming), default=0.0) - ctx.case.as_of))
            out.forecast = (times, conc)
        return out
    return _unstable(ctx, est, plan)


def _unstable(ctx: Assessed, est: EstimateUsed, plan: Plan) -> Plan:
    changed = ctx.renal.unstable_since  # the patient stage's flag (patient/renal.py), as exposure reads it
    reg = plan.regimen
    if changed is None or reg is None:
        return plan
    clock = ctx.case.clock
    after = [lv for lv in ctx.case.levels if lv.index in est.levels_used and lv.time > changed]
    if after:
        plan.alerts.append(Alert("renal-levels-after-change", "info", "patient.scr",
                                 f"renal function changed (SCr at {clock.format(changed)}); the estimate rests on "
                                 f"{len(after)} level(s) drawn after it, so the regimen is proposed from it"))
        return plan
    due = ctx.case.as_of
    if len(ctx.history) and ctx.current is not None:
        due = max(due, float(ctx.history.start[-1]) + ctx.current.interval_h)
    at = clock.format(due)
    reference = {k: reg.get(k) for k in ("dose_mg", "interval_h", "infusion_h", "daily_dose_mg", "predicted", "mode")}
    trough = (plan.targets or {}).get("trough_mg_per_l")
    ceiling = float(trough[1]) if trough and trough[1] > 0 else None
    new = {**{k: reg.get(k) for k in ("dose_mg", "interval_h", "infusion_h", "daily_dose_mg")},
           "action": "hold-and-redraw", "mode": "redose-by-level", "redraw_level_at": at, "hold_until": at,
           "next_dose_at": None, "loading_dose": None, "alternatives": [], "predicted": reg.get("predicted"),
           "for_reference": reference, "redose_below_mg_per_l": ceiling,
           "next_levels": [{"kind": "random", "at": at, "dose": "before any further dose"}],
           "choice_rule": "renal function is changing and no level has been drawn since the change: hold, redraw a "
                          "level, then redose by it (renalplan.py)"}
    plan.regimen = new
    plan.doses = None
    plan.alerts.append(Alert("renal-redose-by-level", "caution", "patient.scr",
                             f"renal function is changing (SCr at {clock.format(changed)}) and no level has been "
                             f"drawn since: hold, draw a level at {at}, then redose by that level; the regimen from "
                             "the current estimate is shown for reference only"))
    return plan


def words(reg: dict[str, Any]) -> list[str]:
    """Plain sentences for the note and the summary of a hold-and-redraw proposal."""
    ref = reg.get("for_reference") or {}
    text = (f"Proposed: hold; draw a level at {str(reg['redraw_level_at']).replace('T', ' ')}, then redose by that "
            "level (renal function is changing and no level has been drawn since the change).")
    if reg.get("redose_below_mg_per_l"):
        text += f" Redose once the level is below {reg['redose_below_mg_per_l']:g} mg/L."
    out = [text]
    if ref.get("dose_mg") and ref.get("interval_h"):
        out.append(f"For reference only, on the current estimate: {ref['dose_mg']:.0f} mg every "
                   f"{ref['interval_h']:g} h over {ref['infusion_h']:g} h.")
    return out


def plan_words(reg: dict[str, Any]) -> list[str]:
    """The note's and the summary's sentences for a dialysis or a hold-and-redraw proposal."""
    if reg.get("mode") == "dialysis":
        from tdmtui.core.regimen.dialysis import words as dialysis_words

        return dialysis_words(reg)
    return words(reg)
