"""Case times: ISO 8601 strings to float hours and back.

case-format.md: either every time carries a UTC offset (honoured) or none
does (a mix is an input error). Without offsets an IANA ``timezone`` places
them; with neither, plain clock arithmetic is used and the caller warns when
the course could span a clock change. Output times use the input's style.

Inside the core a time is a float: hours since 1970-01-01T00:00 (UTC when the
case has offsets or a timezone; on the wall clock otherwise).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone
from functools import lru_cache

from tdmtui.core.bounds import YEARS
from tdmtui.core.errors import InputError


_EPOCH = datetime(1970, 1, 1, tzinfo=timezone.utc)
_PATTERN = re.compile(
    r"(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2}))?(Z|[+-]\d{2}:\d{2})?"
)
#: Zones whose clock changes are checked when a case has neither offsets nor a timezone.
_COMMON_ZONES = ("Europe/London", "Europe/Berlin", "America/New_York", "America/Los_Angeles",
                 "Australia/Sydney", "America/Santiago")


@lru_cache(maxsize=32)
def _zone(name: str):  # noqa: ANN202 - returns ZoneInfo
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    if len(name) > 64:
        raise InputError("timezone", f"{name[:20]!r}... is not a known IANA time zone name (too long)")
    try:
        return ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError, OSError) as exc:
        raise InputError("timezone", f"{name!r} is not a known IANA time zone name") from exc


def has_offset(text: str) -> bool:
    """True when an ISO time string carries a UTC offset or ``Z``."""
    m = _PATTERN.fullmatch(text.strip()) if isinstance(text, str) else None
    return bool(m and m.group(7))


def _parse_parts(text: object, field: str) -> tuple[datetime, str | None]:
    if not isinstance(text, str):
        raise InputError(field, "expected a date-time string YYYY-MM-DDTHH:MM")
    m = _PATTERN.fullmatch(text)
    if not m:
        raise InputError(field, f"{text!r} is not a date-time YYYY-MM-DDTHH:MM[:SS][offset]")
    y, mo, d, hh, mm, ss, off = m.groups()
    if not YEARS[0] <= int(y) <= YEARS[1]:
        raise InputError(field, f"{text!r}: the year must be from {YEARS[0]} to {YEARS[1]}")
    try:
        naive = datetime(int(y), int(mo), int(d), int(hh), int(mm), int(ss or 0))
    except ValueError as exc:
        raise InputError(field, f"{text!r} is not a real date and time ({exc})") from exc
    return naive, off


def _offset(off: str) -> timezone:
    if off == "Z":
        return timezone.utc
    sign = 1 if off[0] == "+" else -1
    hh, mm = int(off[1:3]), int(off[4:6])
    if hh > 18 or mm > 59:
        raise ValueError(off)
    return timezone(sign * timedelta(hours=hh, minutes=mm))


@dataclass(frozen=True)
class Clock:
    """How one case's times become hours, and hours become times again.

    Attributes:
        style: ``offset`` (every time has an offset), ``zone`` (IANA timezone),
            or ``naive`` (wall-clock arithmetic).
        zone_name: the IANA name for ``zone`` style.
        out_offset: for ``offset`` style, the offset written on output times
            (that of the latest input time), e.g. ``+01:00``.
    """

    style: str = "naive"
    zone_name: str | None = None
    out_offset: str | None = None

    def parse(self, text: object, field: str) -> float:
        """Hours since the epoch for a case time string."""
        naive, off = _parse_parts(text, field)
        if self.style == "offset":
            if off is None:
                raise InputError(field, "this case gives UTC offsets on its times; this one has none (do not mix)")
            try:
                aware = naive.replace(tzinfo=_offset(off))
            except ValueError as exc:
                raise InputError(field, f"{off!r} is not a valid UTC offset") from exc
        else:
            if off is not None:
                raise InputError(field, "this case's times have no UTC offset; this one has one (do not mix)")
            if self.style == "zone":
                zone = _zone(self.zone_name or "")
                aware = naive.replace(tzinfo=zone)
                if aware.astimezone(timezone.utc).astimezone(zone).replace(tzinfo=None) != naive:
                    raise InputError(field, f"{text!r} does not exist in {self.zone_name}: the clocks went forward "
                                            "over it (give the time the clock showed, or a UTC offset on every time)")
            else:
                aware = naive.replace(tzinfo=timezone.utc)
        return (aware - _EPOCH).total_seconds() / 3600.0

    def to_datetime(self, hours: float) -> datetime:
        """The wall-clock datetime (naive for naive/zone styles) of an hours value."""
        moment = _EPOCH + timedelta(hours=float(hours))
        if self.style == "zone":
            return moment.astimezone(_zone(self.zone_name or "")).replace(tzinfo=None)
        if self.style == "offset":
            return moment.astimezone(_offset(self.out_offset or "Z"))
        return moment.replace(tzinfo=None)

    def format(self, hours: float) -> str:
        """A time in the input's style, to the minute (``YYYY-MM-DDTHH:MM``)."""
        moment = _EPOCH + timedelta(hours=float(hours))
        moment = (moment + timedelta(seconds=30)).replace(second=0, microsecond=0)
        if self.style == "zone":
            return moment.astimezone(_zone(self.zone_name or "")).strftime("%Y-%m-%dT%H:%M")
        if self.style == "offset":
            local = moment.astimezone(_offset(self.out_offset or "Z"))
            return local.strftime("%Y-%m-%dT%H:%M") + (self.out_offset or "Z")
        return moment.strftime("%Y-%m-%dT%H:%M")

    def may_span_clock_change(self, first: float, last: float) -> bool:
        """For naive style: could the span [first, last] cross a daylight-saving change?"""
        if self.style != "naive" or last <= first:
            return False
        a = _EPOCH + timedelta(hours=first)
        b = _EPOCH + timedelta(hours=last)
        for name in _COMMON_ZONES:
            z = _zone(name)
            if a.replace(tzinfo=None).replace(tzinfo=z).utcoffset() != b.replace(tzinfo=None).replace(tzinfo=z).utcoffset():
                return True
        return False


def ambiguous(clock: Clock, times: list[tuple[str, object]]) -> list[str]:
    """Fields whose wall-clock time happens twice in the case's zone (the hour the clocks go back).

    Such a time is read as the first of the two (before the change); the caller warns naming the field.
    """
    if clock.style != "zone":
        return []
    zone = _zone(clock.zone_name or "")
    out = []
    for field, text in times:
        try:
            naive, _ = _parse_parts(text, field)
        except InputError:
            continue
        if naive.replace(tzinfo=zone, fold=0).utcoffset() != naive.replace(tzinfo=zone, fold=1).utcoffset():
            out.append(field)
    return out


def clock_for(times: list[tuple[str, object]], timezone_name: object) -> Clock:
    """Choose the clock style from every time in a case.

    Args:
        times: ``(field, text)`` for every time string in the case, in file order.
        timezone_name: the case's ``timezone`` value (or None).

    Raises:
        InputError: a mix of times with and without offsets (naming the first
            one that breaks the pattern), or an unknown timezone.
    """
    with_off = [(f, t) for f, t in times if isinstance(t, str) and has_offset(t)]
    if with_off and len(with_off) != len([1 for _, t in times if isinstance(t, str)]):
        first_style = has_offset(times[0][1]) if isinstance(times[0][1], str) else False
        for f, t in times:
            if isinstance(t, str) and has_offset(t) != first_style:
                raise InputError(f, "times must all carry a UTC offset or none may; this one differs")
    if with_off:
        latest = max(with_off, key=lambda ft: Clock("offset", None, "Z").parse(ft[1], ft[0]) if _safe(ft[1]) else 0)
        off = _PATTERN.fullmatch(latest[1]).group(7)  # type: ignore[union-attr]
        return Clock("offset", None, off)
    if timezone_name is not None:
        if not isinstance(timezone_name, str):
            raise InputError("timezone", "expected an IANA time zone name such as \"Europe/London\"")
        _zone(timezone_name)
        return Clock("zone", timezone_name)
    return Clock("naive")


def _safe(text: object) -> bool:
    try:
        Clock("offset", None, "Z").parse(text, "")
        return True
    except InputError:
        return False
