"""Hartford extended-interval nomogram (Nicolau et al., AAC 1995;39:650-655).

Fixed ``extended.mg_per_kg`` (7 mg/kg) of dosing weight; initial interval by
CrCl (``nomogram.initial_interval``: >= 60 mL/min q24h, 40-59 q36h, 20-39
q48h, confirmed); the next interval from ONE level drawn
``nomogram.window_h`` (6-14 h) after the START of the dose, read against the
chart's lines (pk-sources.md 4.3).

Lines are lists of ``[h after start, mg/L]`` points (``nomogram.q24_line``,
``nomogram.q36_line``, ``nomogram.q48_line``). Only the q24h line is in the
library (7.6 mg/L at 6 h, 2.0 mg/L at 14 h, confirmed-secondary); the others
come only from the local protocol, and the reading says which line came from
where. Between its points a line is read straight on a linear axis; where
its shape is unconfirmed (``nomogram.<line>_shape_confirmed`` false or absent
in the library) a level between the straight and the log-linear readings
(widened by ``nomogram.borderline_rel``) is called "borderline: read your
local chart".

Entry checks, each a stop naming the failed check: the drug has a nomogram
in the library/protocol; the dose is ``extended.mg_per_kg`` of dosing weight
within ``nomogram.dose_tolerance_rel``; the level is inside the window after
that dose started; CrCl >= ``extended.min_crcl_ml_min``; no renal
replacement; no condition from ``extended.excluded_conditions``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.alerts import Alert

if TYPE_CHECKING:
    from tdmtui.core.input.casetypes import Dose, Level
    from tdmtui.core.library import Rules

LINES = (("q24", 24.0), ("q36", 36.0), ("q48", 48.0))
CODE = "nomogram-entry"


@dataclass
class Reading:
    """A nomogram reading.

    Attributes:
        interval_h: the interval read (None when the chart cannot give one).
        zone: ``q24h``, ``q36h``, ``q48h``, ``above-q48h`` or ``above-known-lines``.
        hours_after_start: level time after the dose started, h.
        conc: the level, mg/L.
        dose_index: index of the dose in the case.
        level_index: index of the level in the case.
        lines: line name -> {points, source, citation, shape_confirmed}.
        borderline: the level is near a line whose shape is uncertain.
    """

    interval_h: float | None
    zone: str
    hours_after_start: float
    conc: float
    dose_index: int
    level_index: int
    lines: dict[str, dict[str, Any]] = field(default_factory=dict)
    borderline: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {"interval_h": self.interval_h, "zone": self.zone, "hours_after_start": self.hours_after_start,
                "conc_mg_per_l": self.conc, "dose": f"doses[{self.dose_index}]",
                "level": f"levels[{self.level_index}]", "lines": self.lines, "borderline": self.borderline}


def lines(rules: Rules) -> dict[str, dict[str, Any]]:
    """The chart lines present in the library or protocol, with their source."""
    out: dict[str, dict[str, Any]] = {}
    for name, _ in LINES:
        key = f"nomogram.{name}_line"
        if key in rules:
            pts = sorted((float(t), float(c)) for t, c in rules.value(key))
            skey = f"nomogram.{name}_shape_confirmed"
            same = skey in rules and rules.source(skey) == rules.source(key)
            shape = bool(rules.value(skey)) if same else rules.source(key) == "protocol"
            out[name] = {"points": [list(p) for p in pts], "source": rules.source(key),
                         "citation": rules.citation(key), "shape_confirmed": shape}
    return out


def _line_at(points: list[list[float]], t: float, log: bool = False) -> float:
    ts = np.array([p[0] for p in points])
    cs = np.array([p[1] for p in points])
    if log:
        return float(np.exp(np.interp(t, ts, np.log(cs))))
    return float(np.interp(t, ts, cs))


def initial_interval(rules: Rules, crcl: float) -> float | None:
    """Hartford initial interval from CrCl, h (None below the lowest band)."""
    for low, tau in sorted(rules.get("nomogram.initial_interval", []) or [], reverse=True):
        if crcl >= float(low):
            return float(tau)
    return None


def exclusions(rules: Rules, crcl: float, renal_replacement: str, conditions: tuple[str, ...]) -> list[tuple[str, str]]:
    """Failed patient checks for extended-interval dosing: (field, message)."""
    out: list[tuple[str, str]] = []
    low = float(rules.value("extended.min_crcl_ml_min"))
    if crcl < low:
        out.append(("patient.scr", f"CrCl {crcl:.0f} mL/min is below {low:g} mL/min "
                    f"({rules.citation('extended.min_crcl_ml_min')})"))
    if renal_replacement != "none":
        out.append(("patient.renal_replacement", f"renal replacement ({renal_replacement}) excludes extended-interval dosing"))
    for cond in conditions:
        if cond in (rules.get("extended.excluded_conditions", []) or []):
            out.append(("patient.conditions", f"condition {cond!r} excludes extended-interval dosing "
                        f"({rules.citation('extended.excluded_conditions')})"))
    return out


def _stop(fld: str, msg: str) -> Alert:
    return Alert(CODE, "stop", fld, f"nomogram entry check failed: {msg}")


def read(rules: Rules, doses: tuple[Dose, ...], levels: tuple[Level, ...], dosing_weight: float,
         crcl: float, renal_replacement: str, conditions: tuple[str, ...]) -> tuple[Reading | None, list[Alert]]:
    """Entry checks, then the reading of the latest usable level.

    Returns:
        (reading or None, alerts). A failed check gives a stop alert and no reading.
    """
    chart = lines(rules)
    if "q24" not in chart:
        return None, [_stop("drug", f"no nomogram for {rules.drug} in the library or the local protocol")]
    alerts = [_stop(f, m) for f, m in exclusions(rules, crcl, renal_replacement, conditions)]
    usable = [lv for lv in levels if lv.use and not lv.above_uloq]
    if not usable:
        return None, alerts + [_stop("levels", "no usable level to read on the chart")]
    level = usable[-1]
    before = [d for d in doses if d.start <= level.time]
    if not before:
        return None, alerts + [_stop(f"levels[{level.index}].time", "the level was drawn before any dose")]
    dose = before[-1]
    want = float(rules.value("extended.mg_per_kg")) * dosing_weight
    tol = float(rules.value("nomogram.dose_tolerance_rel"))
    if abs(dose.amount - want) > tol * want:
        alerts.append(_stop(f"doses[{dose.index}].amount",
                            f"{dose.amount:g} mg is not {rules.value('extended.mg_per_kg'):g} mg/kg of dosing weight "
                            f"{dosing_weight:.1f} kg ({want:.0f} mg, within {tol:.0%}); the chart is valid only for that dose"))
    lo, hi = (float(x) for x in rules.value("nomogram.window_h"))
    after = level.time - dose.start
    if not (lo - 1e-9 <= after <= hi + 1e-9):
        alerts.append(_stop(f"levels[{level.index}].time",
                            f"level drawn {after:.1f} h after the start of doses[{dose.index}]; the chart reads {lo:g}-{hi:g} h"))
    if alerts:
        return None, alerts
    return _zone(rules, chart, after, level, dose)


def _zone(rules: Rules, chart: dict[str, dict[str, Any]], after: float, level: Level,
          dose: Dose) -> tuple[Reading, list[Alert]]:
    alerts: list[Alert] = []
    margin = float(rules.value("nomogram.borderline_rel"))
    zone, interval, borderline = "above-known-lines", None, False
    for name, tau in LINES:
        if name not in chart:
            break
        pts = chart[name]["points"]
        lin = _line_at(pts, after)
        if not chart[name]["shape_confirmed"]:
            lg = _line_at(pts, after, log=True)
            if min(lin, lg) * (1 - margin) <= level.conc <= max(lin, lg) * (1 + margin):
                borderline = True
        if level.conc <= lin:
            zone, interval = f"{name}h", tau
            break
    else:
        zone = "above-q48h"
    src = "; ".join(f"{n}h line from the {d['source']} ({d['citation']})" for n, d in chart.items())
    fld = f"levels[{level.index}]"
    if borderline:
        alerts.append(Alert("nomogram-borderline", "caution", fld,
                            f"borderline: read your local chart ({level.conc:g} mg/L at {after:.1f} h is near a line "
                            f"whose shape is not confirmed). {src}"))
    if zone == "above-known-lines":
        missing = [f"{n}h" for n, _ in LINES if n not in chart]
        alerts.append(Alert("nomogram-no-line", "caution", fld,
                            f"level above the highest line known ({list(chart)[-1]}h); the {', '.join(missing)} "
                            f"line(s) are not in the library (only the q24h line is confirmed): read your local chart "
                            f"or put its lines in the local protocol. {src}"))
    elif zone == "above-q48h":
        alerts.append(Alert("nomogram-above-q48", "stop", fld,
                            f"level above the q48h line: {rules.get('nomogram.above_top_line', 'monitor serially')}. {src}"))
    else:
        alerts.append(Alert("nomogram-read", "info", fld,
                            f"{level.conc:g} mg/L at {after:.1f} h after the start of doses[{dose.index}] reads {zone}. {src}"))
    return Reading(interval, zone, after, level.conc, dose.index, level.index, chart, borderline), alerts


def extended_dose(rules: Rules, dosing_weight: float) -> float:
    """``extended.mg_per_kg`` x dosing weight on the rounding grid, mg."""
    step = float(rules.value("regimen.rounding_mg"))
    return math.floor(float(rules.value("extended.mg_per_kg")) * dosing_weight / step + 0.5) * step
