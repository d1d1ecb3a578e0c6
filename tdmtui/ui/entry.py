"""How each kind of entry field turns what was typed into the case dict. Pure.

Every field stores *something* in the raw case on every keystroke: the
tidied contract string when it reads, or the text exactly as typed when it
does not (so the engine names the field, and the recovery file keeps it).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

from tdmtui.core.input.clock import Clock, clock_for
from tdmtui.core.input.dialysis import times_of as dialysis_times
from tdmtui.core.errors import InputError
from tdmtui.core.input.timeentry import resolve_time
from tdmtui.core.input.units import parse_quantity
from tdmtui.ui.fields import check_quantity, complete_quantity

_DURATION = re.compile(r"\s*[0-9]*\.?[0-9]+\s*(min|h|hr|day)?\s*")


@dataclass(frozen=True)
class Entry:
    """What a field's text became.

    Attributes:
        stored: what goes into the raw case (None removes the key).
        note: shown beside the field when it reads (e.g. "= 81.6 kg", "next day: ...").
        error: the reason it does not read ("" when it does).
        key: for infusion fields, which key was set: ``duration`` or ``end``.
    """

    stored: Any
    note: str = ""
    error: str = ""
    key: str = ""


def quantity_entry(text: str, kind: str, unit: str, field: str) -> Entry:
    """A quantity field: bare numbers take ``unit``; another unit may be typed."""
    stored, value, error = check_quantity(text, kind, field, unit)
    if error:
        return Entry(stored, "", error)
    canon = {"weight": "kg", "height": "cm", "dose": "mg", "scr": "mg/dL", "conc": "mg/L", "age": "yr"}.get(kind)
    note = ""
    if canon and not stored.endswith(" " + canon):
        note = f"= {value:.4g} {canon}"
    return Entry(stored, note, "")


def time_entry(text: str, anchor: float | None, clock: Clock, field: str) -> Entry:
    """A time field: full date-time, clock time (date from the row above) or +12h."""
    try:
        e = resolve_time(text, anchor, clock, field)
    except InputError as exc:
        return Entry(text.strip(), "", exc.message)
    return Entry(e.iso, e.note, "")


def infusion_entry(text: str, start: float | None, clock: Clock, field: str) -> Entry:
    """An infusion's length: a duration ("90 min", bare number = minutes) or an end time.

    An end may be a clock time ("21:30"), a full date-time or "+90min" from
    the start; it is stored as ``end``. A duration is stored as ``duration``.
    """
    s = text.strip()
    if _DURATION.fullmatch(s):
        stored = complete_quantity(s, "min")
        try:
            hours = parse_quantity(stored, "time", f"{field}.duration")
        except InputError as exc:
            return Entry(stored, "", exc.message, "duration")
        return Entry(stored, f"= {hours:.4g} h", "", "duration")
    e = time_entry(s, start, clock, f"{field}.end")
    if e.error:
        msg = e.error if s[:1] in "+-" or ":" in s else f"{s!r} is neither a duration (90 min) nor an end time (21:30)"
        return Entry(e.stored, "", msg, "end")
    if start is not None:
        length = clock.parse(e.stored, field) - start
        if length < 0:
            return Entry(e.stored, "", "the infusion ends before it starts", "end")
        return Entry(e.stored, f"ends {e.stored[11:16]}, {length:.3g} h", "", "end")
    return Entry(e.stored, e.note, "", "end")


def case_clock(raw: dict[str, Any]) -> Clock:
    """The case's clock from whatever times read now (naive when they do not agree yet)."""
    times: list[tuple[str, object]] = []
    for name, keys in (("doses", ("start", "end")), ("levels", ("time",))):
        for i, row in enumerate(raw.get(name) or []):
            if isinstance(row, dict):
                times += [(f"{name}[{i}].{k}", row[k]) for k in keys if isinstance(row.get(k), str)]
    times += [(f, t) for f, t in dialysis_times(raw) if isinstance(t, str)]
    if isinstance(raw.get("as_of"), str):
        times.append(("as_of", raw["as_of"]))
    try:
        return clock_for(times, raw.get("timezone"))
    except (InputError, OSError):  # a zone name being typed ("Europe") may name a folder
        return Clock("naive")


def parsed_time(clock: Clock, text: Any) -> float | None:
    """Hours of a stored time, or None when it does not read."""
    try:
        return clock.parse(text, "") if isinstance(text, str) else None
    except InputError:
        return None


def anchor_for(raw: dict[str, Any], name: str, index: int, clock: Clock) -> float | None:
    """The time of the row above (``doses``/``levels``), for clock and relative entries.

    For the first level, the latest dose start before it is unknown, so the
    last dose row is used; for the first dose there is no anchor.
    """
    rows = raw.get(name) or []
    key = "start" if name == "doses" else "time"
    for j in range(index - 1, -1, -1):
        t = parsed_time(clock, rows[j].get(key)) if isinstance(rows[j], dict) else None
        if t is not None:
            return t
    if name == "levels":
        for row in reversed(raw.get("doses") or []):
            t = parsed_time(clock, row.get("start")) if isinstance(row, dict) else None
            if t is not None:
                return t
    return None


_TARGET = re.compile(r"\s*(auc24|auc|peak|trough|css)\s+([0-9]*\.?[0-9]+)\s*-\s*([0-9]*\.?[0-9]+)\s*([^\s;]*)\s*")
_TARGET_UNITS = {"auc24": ("exposure", "mg*h/L"), "peak": ("conc", "mg/L"), "trough": ("conc", "mg/L"),
                 "css": ("conc", "mg/L")}


def target_entry(text: str) -> Entry:
    """Targets typed as "auc24 400-600" or "peak 8-10; trough 0.5-1" (units optional).

    Stored as the contract's ``target`` bands ``{"auc24": ["400 mg*h/L", "600 mg*h/L"]}``;
    an empty field stores None (the library's or protocol's targets apply).
    """
    if not text.strip():
        return Entry(None, "library/protocol targets apply")
    bands: dict[str, list[str]] = {}
    for part in text.split(";"):
        if not part.strip():
            continue
        m = _TARGET.fullmatch(part.lower().replace("mg*h/l", "mg*h/L").replace("mg/l", "mg/L"))
        if not m:
            return Entry(text.strip(), "", f"{part.strip()!r}: type e.g. auc24 400-600 or trough 0.5-1")
        name, lo, hi, unit = m.groups()
        name = "auc24" if name == "auc" else name
        kind, default = _TARGET_UNITS[name]
        pair = [f"{lo} {unit or default}", f"{hi} {unit or default}"]
        for q in pair:
            try:
                parse_quantity(q, kind, f"target.{name}")
            except InputError as exc:
                return Entry(text.strip(), "", exc.message)
        if not float(lo) < float(hi):
            return Entry(text.strip(), "", f"{name}: the low end must be below the high end")
        bands[name] = pair
    return Entry(bands, "; ".join(f"{k} {v[0]}-{v[1]}" for k, v in bands.items()))


def target_text(target: Any) -> str:
    """The case's target bands as typed form ("auc24 400-600")."""
    if not isinstance(target, dict):
        return ""
    parts = []
    for name in ("auc24", "peak", "trough", "css"):
        band = target.get(name)
        if isinstance(band, list) and len(band) == 2 and all(isinstance(b, str) for b in band):
            parts.append(f"{name} {band[0].split(' ')[0]}-{band[1]}")
    return "; ".join(parts)


_SCHEDULE = re.compile(r"\s*(?:(?P<dose>[0-9]*\.?[0-9]+\s*[a-zµμ]+)\s+)?(?:every|q)\s*(?P<interval>[0-9]*\.?[0-9]+\s*[a-z]*)"
                       r"(?:\s+over\s+(?P<duration>[0-9]*\.?[0-9]+\s*[a-z]*))?\s*")


def schedule_entry(text: str) -> Entry:
    """The standing order typed as "1250 mg every 12 h over 90 min" (dose and "over" optional).

    Bare numbers take mg, h and min. Stored as the contract's ``schedule``;
    empty stores None (the engine then uses the last two maintenance doses).
    """
    if not text.strip():
        return Entry(None, "none: taken from the last two maintenance doses")
    m = _SCHEDULE.fullmatch(text.lower())
    if not m:
        return Entry(text.strip(), "", "type e.g. 1250 mg every 12 h over 90 min")
    out: dict[str, str] = {}
    for key, kind, unit in (("dose", "dose", "mg"), ("interval", "time", "h"), ("duration", "time", "min")):
        if m.group(key):
            q = complete_quantity(m.group(key), unit)
            try:
                parse_quantity(q, kind, f"schedule.{key}")
            except InputError as exc:
                return Entry(text.strip(), "", exc.message)
            out[key] = q
    return Entry(out, "standing order")


def schedule_text(schedule: Any) -> str:
    """The case's schedule in the typed form."""
    if not isinstance(schedule, dict) or "interval" not in schedule:
        return ""
    text = f"every {schedule['interval']}"
    if schedule.get("dose"):
        text = f"{schedule['dose']} {text}"
    if schedule.get("duration"):
        text += f" over {schedule['duration']}"
    return text
