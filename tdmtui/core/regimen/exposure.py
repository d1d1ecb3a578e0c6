"""High exposure named, with what to do: ``auc-high``, ``auc-toxic``, ``trough-high``, ``peak-high``.

Each check looks at two things (both when both exist): the measured levels
(a usable level in the trough position, within ``exposure.trough_window_h``
before a dose starts or falls due; a usable level in the peak position,
within ``exposure.peak_window_h`` after an infusion ends) and the steady state
the estimate used predicts for the current regimen.

Lines (library data with their source, a local protocol may set them):

* AUC24 above the upper end of the target band (the targets the regimen is
  judged by: case, protocol or library) -> ``auc-high``; above
  ``exposure.auc24_toxic`` (vancomycin) -> ``auc-toxic`` (hold).
* trough above the target's trough ceiling (aminoglycosides: traditional,
  extended-interval, synergy) or, where the targets give none,
  ``exposure.trough_high_mg_l`` (vancomycin) -> ``trough-high`` (hold).
* peak above ``exposure.peak_high_rel`` x the upper end of the peak band ->
  ``peak-high``.

Every message says what to do (hold, redraw a level before the next dose,
reassess renal function); the proposal itself comes from the regimen design.

Two kinds, so that a warning appears only where it changes what the
pharmacist does:

* a hold (``auc-toxic``; ``trough-high`` at or above ``exposure.trough_hold_rel``
  x the limit, or with ``scr-unstable`` or ``auc-toxic``): always raised, and
  the message says hold, redraw a level before the next dose, reassess renal
  function;
* a correction (``auc-high``, a smaller ``trough-high``, ``peak-high``): raised
  after the design (:func:`unresolved`) only when the proposal does not bring the
  figure back inside its target (it continues the regimen, is withheld, or is
  still predicted above); otherwise the plan, which states the current
  regimen's predicted figures beside the proposal's, already answers it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from tdmtui.core.alerts import Alert

if TYPE_CHECKING:
    from tdmtui.core.input.casetypes import Level
    from tdmtui.core.library import Rules
    from tdmtui.core.regimen.targets import Targets
    from tdmtui.core.regimen.types import Assessed, EstimateUsed

#: Stable warning codes raised here, with their meaning.
CODES = {
    "auc-high": "AUC24 above the upper end of the target band (measured course or current regimen)",
    "auc-toxic": "AUC24 above the library's toxic line: hold, redraw, reassess renal function",
    "trough-high": "a trough (measured or predicted) above the drug's trough limit",
    "peak-high": "a peak (measured or predicted) far above the peak target",
}


@dataclass(frozen=True)
class Predicted:
    """Steady state of the current regimen by the estimate used, mg/L and mg*h/L."""

    auc24: float
    peak: float
    trough: float
    method: str


def _predicted(ctx: Assessed, est: EstimateUsed, targets: Targets) -> Predicted | None:
    cur = ctx.current
    if cur is None or cur.dose_mg <= 0 or cur.interval_h <= 0:
        return None
    from tdmtui.core.regimen.candidates import evaluate

    c = evaluate(est.params, targets, cur.dose_mg, cur.interval_h, min(cur.infusion_h, cur.interval_h))
    return Predicted(c.auc24, c.peak_ref, c.trough, est.method)


def _due_after(ctx: Assessed, t: float) -> float | None:
    """Start of the first dose after ``t`` (recorded, else the standing order's next one)."""
    later = [d.start for d in ctx.case.doses if d.start > t]
    if later:
        return min(later)
    earlier = [d.start for d in ctx.case.doses if d.start <= t]
    if earlier and ctx.current is not None and ctx.current.interval_h < ctx.current.infusion_h + 1e-9:
        return None  # a continuous infusion has no trough position
    return max(earlier) + ctx.current.interval_h if earlier and ctx.current is not None else None


def _troughs(ctx: Assessed) -> list[tuple[Level, float]]:
    """Usable quantified levels in the trough position, with hours before the dose."""
    window = float(ctx.rules.value("exposure.trough_window_h"))
    out = []
    for lv in ctx.usable:
        due = _due_after(ctx, lv.time)
        if lv.quantified and due is not None and 0.0 <= due - lv.time <= window:
            out.append((lv, due - lv.time))
    return out


def _peaks(ctx: Assessed) -> list[tuple[Level, float]]:
    """Usable quantified levels in the peak position, with hours after the end of the infusion."""
    from tdmtui.core.course.history import is_continuous

    window = float(ctx.rules.value("exposure.peak_window_h"))
    out = []
    for lv in ctx.usable:
        ends = [d.end for d in ctx.case.doses if d.end <= lv.time and not is_continuous(d, ctx.rules)]
        if lv.quantified and ends and lv.time - max(ends) <= window:
            out.append((lv, lv.time - max(ends)))
    return out


def _what(measured: str, predicted: str) -> str:
    return " and ".join(x for x in (measured, predicted) if x)


def _auc_alerts(ctx: Assessed, targets: Targets, pred: Predicted | None) -> list[Alert]:
    if targets.auc24 is None or pred is None:
        return []
    hi = targets.auc24[1]
    toxic = float(ctx.rules.value("exposure.auc24_toxic")) if "exposure.auc24_toxic" in ctx.rules else 0.0
    what = f"AUC24 {pred.auc24:.0f} mg*h/L predicted at steady state of the current regimen"
    if toxic > 0 and pred.auc24 > toxic:
        todo = "hold the next dose, redraw a level before any further dose, reassess renal function; redose by level"
        return [Alert("auc-toxic", "caution", "", f"{what} is above {toxic:g} (kidney injury likely): {todo}",
                      {"auc24": f"{pred.auc24:.0f}", "limit": f"{toxic:g}", "why": "kidney injury likely",
                       "advice": "hold", "advice_text": todo})]
    if pred.auc24 > hi:
        return [Alert("auc-high", "caution", "", f"{what} is above the {hi:g} target limit: lower the dose from the "
                      "next due dose (see the proposal), redraw a level on the new regimen, check SCr")]
    return []


def _trough_limit(rules: Rules, targets: Targets) -> float | None:
    if targets.mode == "continuous":
        return None
    if targets.trough_ceiling is not None:
        return targets.trough_ceiling
    limit = float(rules.value("exposure.trough_high_mg_l")) if "exposure.trough_high_mg_l" in rules else 0.0
    return limit if limit > 0 else None


def _trough_alerts(ctx: Assessed, targets: Targets, pred: Predicted | None, hold: bool,
                   unstable: bool) -> list[Alert]:
    limit = _trough_limit(ctx.rules, targets)
    if limit is None:
        return []
    high = [(lv, dt) for lv, dt in _troughs(ctx) if lv.conc > limit]
    top = max(high, key=lambda x: x[0].conc) if high else None
    measured = (f"measured trough {top[0].conc:g} mg/L (levels[{top[0].index}], {60 * top[1]:.0f} min pre-dose)"
                if top else "")
    predicted = (f"predicted steady-state trough {pred.trough:.3g} mg/L"
                 if pred is not None and pred.trough > limit else "")
    if not (measured or predicted):
        return []
    fld = f"levels[{top[0].index}].conc" if top else ""
    worst = max(top[0].conc if top else 0.0, pred.trough if pred is not None else 0.0)
    holds = hold or unstable or worst >= float(ctx.rules.value("exposure.trough_hold_rel")) * limit
    if holds:
        todo = (f"hold the next dose, redraw a level before it is due and redose only below {limit:g} mg/L; "
                "reassess renal function")
    else:
        todo = "lengthen the interval or lower the dose (see the proposal) and check SCr"
    facts = {"limit": f"{limit:g}", "advice": "hold" if holds else "correct", "advice_text": todo}
    if top:
        facts.update(measured=f"{top[0].conc:g}", level=f"levels[{top[0].index}]")
    if predicted and pred is not None:
        facts["predicted"] = f"{pred.trough:.3g}"
    return [Alert("trough-high", "caution", fld, f"{_what(measured, predicted)} above the {limit:g} mg/L limit: {todo}",
                  facts)]


def _peak_alerts(ctx: Assessed, targets: Targets, pred: Predicted | None) -> list[Alert]:
    if targets.peak is None:
        return []
    rel = float(ctx.rules.value("exposure.peak_high_rel"))
    line = rel * targets.peak[1]
    high = [(lv, dt) for lv, dt in _peaks(ctx) if lv.conc > line]
    top = max(high, key=lambda x: x[0].conc) if high else None
    measured = (f"measured peak {top[0].conc:g} mg/L (levels[{top[0].index}], {60 * top[1]:.0f} min after the "
                "infusion)" if top else "")
    predicted = (f"predicted steady-state peak {pred.peak:.3g} mg/L"
                 if pred is not None and pred.peak > line else "")
    if not (measured or predicted):
        return []
    fld = f"levels[{top[0].index}].conc" if top else ""
    return [Alert("peak-high", "caution", fld,
                  f"{_what(measured, predicted)} above {rel:g} x the {targets.peak[1]:g} mg/L peak target limit: lower "
                  "the dose; if the draw may have been early or from the line, redraw before the next dose")]


def _is_hold(a: Alert) -> bool:
    return a.code in ("auc-toxic", "trough-high") and a.facts.get("advice") == "hold"


def calls_for_hold(alerts: list[Alert]) -> bool:
    """True when an exposure caution says to hold and redraw before redosing (the regimen then books
    that level before its first dose: handover.restart_check)."""
    return any(_is_hold(a) for a in alerts)


def exposure_alerts(ctx: Assessed, est: EstimateUsed, option: str | None = None) -> tuple[list[Alert], list[Alert]]:
    """The four checks for the estimate used: ``(holds, corrections)`` (module docstring).

    With renal function changing (``ctx.renal.unstable``, the patient stage's flag) a trough above
    its limit calls for a hold.

    Under the ``nomogram`` regimen option the interval is read from the chart, which
    judges the measured level itself: the estimate's steady-state prediction is not
    set against it (measured levels are still checked).
    """
    targets = ctx.targets
    if targets is None or est.params is None:
        return [], []
    pred = None if option == "nomogram" else _predicted(ctx, est, targets)
    auc = _auc_alerts(ctx, targets, pred)
    hold = any(a.code == "auc-toxic" for a in auc)
    every = auc + _trough_alerts(ctx, targets, pred, hold, ctx.renal.unstable) + _peak_alerts(ctx, targets, pred)
    return [a for a in every if _is_hold(a)], [a for a in every if not _is_hold(a)]


def _limit(code: str, rules: Rules, targets: Targets) -> tuple[str, float | None]:
    """(key of the regimen's predicted figure, the line it must come under) for a correction."""
    if code == "auc-high":
        return "auc24_mg_h_per_l", targets.auc24[1] if targets.auc24 else None
    if code == "trough-high":
        return "trough_mg_per_l", _trough_limit(rules, targets)
    return "peak_at_reference_mg_per_l", targets.peak[1] if targets.peak else None


def unresolved(corrections: list[Alert], regimen: dict | None, targets: Targets | None,
               rules: Rules) -> list[Alert]:
    """The corrections the proposal does not settle (module docstring)."""
    if not corrections or regimen is None or targets is None or regimen.get("action") == "continue":
        return list(corrections)
    pred = regimen.get("predicted") or {}
    out = []
    for a in corrections:
        key, limit = _limit(a.code, rules, targets)
        value = pred.get(key, pred.get("peak_mg_per_l") if a.code == "peak-high" else None)
        if limit is None or value is None or value > limit + 1e-9:
            out.append(a)
    return out
