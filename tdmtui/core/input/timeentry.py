"""Quick time entry for dose and level rows: pure functions, no UI.

A pharmacist types a time in one of three ways, and each becomes a full
case time (``YYYY-MM-DDTHH:MM`` in the case's clock style):

* a full date-time: ``2026-03-03T08:00`` (a space may stand for the ``T``);
* a clock time ``08:00`` (or ``8:00``): the date of the row above; when that
  would be earlier than the row above, the next day (the roll-over is stated
  in :attr:`TimeEntry.note` so the screen can show it for confirmation);
* a relative time ``+12h``, ``+90 min``, ``-30min``, ``+1 day``: from the row
  above (for an infusion end: from its start).

``repeat_rows`` lays out a regimen in one step: "every N h x k".
Nothing here guesses: a clock or relative time with no row above is an
input error naming the field.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import timedelta
from typing import Any

from tdmtui.core.input.clock import Clock
from tdmtui.core.errors import InputError
from tdmtui.core.input.units import parse_quantity

_CLOCK = re.compile(r"([01]?\d|2[0-3]):([0-5]\d)|([01]\d|2[0-3])([0-5]\d)")  # 08:05, 8:05 or 0805
_PART = r"(?:[0-9]+(?:\.[0-9]+)?|\.[0-9]+)\s*[a-z]+"
_RELATIVE = re.compile(rf"([+-])\s*((?:{_PART}\s*)+)")  # +12h, +90 min, +12h25min, +12h 25min
_PARTS = re.compile(r"([0-9]+(?:\.[0-9]+)?|\.[0-9]+)\s*([a-z]+)")
_SPACED_ISO = re.compile(r"(\d{4}-\d{2}-\d{2}) (\d{1,2}:\d{2}.*)")


@dataclass(frozen=True)
class TimeEntry:
    """A resolved time.

    Attributes:
        iso: the case time string, in the clock's style.
        hours: the same time in hours since the epoch (see :mod:`tdmtui.core.input.clock`).
        note: empty for a full date-time; otherwise how it was resolved,
            e.g. ``"next day: 2026-03-04T08:00"`` or ``"+12 h from 2026-03-03T20:00"``.
    """

    iso: str
    hours: float
    note: str = ""


def _full(text: str, clock: Clock, field: str) -> TimeEntry:
    m = _SPACED_ISO.fullmatch(text)
    if m:
        date, rest = m.groups()
        if len(rest.split(":")[0]) == 1:
            rest = "0" + rest
        text = f"{date}T{rest}"
    hours = clock.parse(text, field)
    return TimeEntry(text, hours, "")


def _span(h: float) -> str:
    """``12 h``, ``12 h 25 min``, ``90 min`` (to the minute)."""
    total = int(round(h * 60))
    hh, mm = divmod(total, 60)
    return f"{mm} min" if hh == 0 else (f"{hh} h" if mm == 0 else f"{hh} h {mm} min")


def resolve_time(text: str, anchor: float | None, clock: Clock, field: str) -> TimeEntry:
    """Turn what was typed into a case time.

    Args:
        text: as typed (surrounding spaces ignored).
        anchor: the time of the row above (hours), for clock and relative
            entries; None when there is none.
        clock: the case's clock (decides the output style).
        field: the case-file path, for errors (``doses[3].start``).

    Raises:
        InputError: naming ``field`` when the text is none of the three forms,
            or a clock/relative time has no anchor.
    """
    s = text.strip()
    if not s:
        raise InputError(field, "a time is needed (e.g. 2026-03-03T08:00, 08:00 or +12h)")
    m = _CLOCK.fullmatch(s)
    if m:
        if anchor is None:
            raise InputError(field, f"{s!r} is a clock time but there is no row above to take the date from; "
                                    "type the full date-time (YYYY-MM-DDTHH:MM)")
        above = clock.to_datetime(anchor)
        hh, mm = (m.group(1), m.group(2)) if m.group(1) is not None else (m.group(3), m.group(4))
        moment = above.replace(hour=int(hh), minute=int(mm), second=0, microsecond=0)
        rolled = moment < above
        if rolled:
            moment = moment + timedelta(days=1)
        iso = moment.strftime("%Y-%m-%dT%H:%M")
        if clock.style == "offset":
            iso += clock.out_offset or "Z"
        hours = clock.parse(iso, field)
        return TimeEntry(iso, hours, f"next day: {iso}" if rolled else f"same day: {iso}")
    m = _RELATIVE.fullmatch(s)
    if m:
        if anchor is None:
            raise InputError(field, f"{s!r} is relative but there is no row above to count from; "
                                    "type the full date-time (YYYY-MM-DDTHH:MM)")
        sign, parts = m.groups()
        step = sum(parse_quantity(f"{number} {unit}", "time", field) for number, unit in _PARTS.findall(parts))
        hours = anchor + (step if sign == "+" else -step)
        iso = clock.format(hours)
        return TimeEntry(iso, clock.parse(iso, field), f"{sign}{_span(step)} from {clock.format(anchor)}: {iso}")
    if s[:1].isdigit() and len(s) >= 10:
        return _full(s, clock, field)
    raise InputError(field, f"{s!r} is not a time: type 2026-03-03T08:00, a clock time 08:00 or 0805 "
                            "(date from the row above) or a relative time +12h, +12h 25min")


def repeat_rows(row: dict[str, Any], interval_h: float, count: int, clock: Clock,
                field: str = "doses") -> list[dict[str, Any]]:
    """The ``count`` rows that follow ``row`` every ``interval_h`` hours.

    The copies keep amount, duration, kind and timing; ``start`` (and ``end``
    when the row gives one) move by k x interval, k = 1..count. A loading
    dose is repeated as maintenance (the copies are the regimen, not loading).

    Args:
        row: a raw dose row (contract strings) with a full ``start``.
        interval_h: hours between starts, more than 0.
        count: how many rows to add, 1 to 60.
        clock: the case's clock.
        field: the row's path, for errors.

    Raises:
        InputError: bad interval or count, or a row whose times do not parse.
    """
    if not interval_h > 0:
        raise InputError(f"{field}.interval", "the interval must be more than 0 h")
    if not 1 <= count <= 60:
        raise InputError(f"{field}.count", "repeat between 1 and 60 times")
    start = clock.parse(row.get("start"), f"{field}.start")
    end = clock.parse(row["end"], f"{field}.end") if "end" in row else None
    out = []
    for k in range(1, count + 1):
        new = dict(row)
        new["start"] = clock.format(start + k * interval_h)
        if end is not None:
            new["end"] = clock.format(end + k * interval_h)
        if new.get("kind") == "loading":
            new["kind"] = "maintenance"
        out.append(new)
    return out
