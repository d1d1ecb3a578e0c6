"""FHIR datatypes to case strings: dateTime, Quantity, CodeableConcept, Reference.

Every function returns the case value or raises :class:`Skip` with the reason
the resource cannot be used; nothing is rounded, defaulted or guessed.
"""

from __future__ import annotations

import re
from datetime import date, datetime, timedelta, timezone
from decimal import Decimal
from typing import Any

from tdmtui.core.errors import one_line
from tdmtui.core.fhir.codes import UCUM, our_unit

#: FHIR dateTime with a time of day; seconds and fraction optional here, offset optional (FHIR requires one).
_DATETIME = re.compile(r"(\d{4}-\d{2}-\d{2})T(\d{2}):(\d{2})(?::(\d{2})(?:\.(\d+))?)?(Z|[+-]\d{2}:\d{2})?")
_DATE = re.compile(r"(\d{4})-(\d{2})-(\d{2})")


class Skip(Exception):
    """This resource cannot go into the case; the message is the report's reason."""

    def __init__(self, reason: str) -> None:
        super().__init__(one_line(reason))
        self.reason = one_line(reason)


def case_time(text: object, what: str) -> str:
    """A FHIR dateTime as a case time ``YYYY-MM-DDTHH:MM[:SS][offset]``.

    Raises:
        Skip: no time of day, fractional seconds, or not a dateTime.
    """
    if not isinstance(text, str):
        raise Skip(f"no {what}")
    m = _DATETIME.fullmatch(text)
    if not m:
        if _DATE.fullmatch(text):
            raise Skip(f"{what} {text} has no time of day")
        raise Skip(f"{what} {text!r} is not a FHIR dateTime")
    day, hh, mm, ss, frac, off = m.groups()
    if frac and frac.strip("0"):
        raise Skip(f"{what} {text} has fractions of a second (the case keeps whole seconds)")
    try:
        moment(text)
    except ValueError:
        raise Skip(f"{what} {text} is not a real date and time") from None
    out = f"{day}T{hh}:{mm}" + (f":{ss}" if ss and ss != "00" else "")
    return out + (off or "")


def moment(text: str) -> datetime:
    """A case time as a datetime (aware when it carries an offset) for ordering."""
    m = _DATETIME.fullmatch(text)
    if not m:
        raise ValueError(text)
    day, hh, mm, ss, _, off = m.groups()
    naive = datetime.fromisoformat(f"{day}T{hh}:{mm}:{ss or '00'}")
    if off is None:
        return naive
    if off == "Z":
        return naive.replace(tzinfo=timezone.utc)
    sign = 1 if off[0] == "+" else -1
    return naive.replace(tzinfo=timezone(sign * timedelta(hours=int(off[1:3]), minutes=int(off[4:6]))))


def birth_date(text: object) -> date:
    """A full FHIR date (a year or year-month alone is too coarse for an age)."""
    if not isinstance(text, str) or not _DATE.fullmatch(text):
        raise Skip(f"birthDate {text!r} is not a full date (YYYY-MM-DD)" if text else "no birthDate")
    try:
        return date.fromisoformat(text)
    except ValueError as exc:
        raise Skip(f"birthDate {text} is not a real date") from exc


def number(value: object, what: str) -> Decimal:
    """A JSON number as read (Decimal or int), finite and not negative."""
    if isinstance(value, bool) or not isinstance(value, (int, Decimal)):
        raise Skip(f"{what} has no numeric value")
    d = Decimal(value)
    if not d.is_finite() or d < 0:
        raise Skip(f"{what} {value} is not a usable number")
    return d


def number_text(d: Decimal) -> str:
    """A Decimal written as the case grammar wants (plain digits, no exponent)."""
    text = format(d, "f")
    return text if "." not in text or text.split(".")[1] else text.rstrip(".")


def quantity(q: object, kind: str, what: str, fallback_unit: str | None = None) -> tuple[Decimal, str]:
    """A Quantity as ``(value, our unit)``.

    The unit comes from its UCUM ``code`` (``system`` UCUM or absent); only
    when there is no code at all does a local code's stated unit apply.

    Raises:
        Skip: no value, a comparator where none is allowed, a unit we do not map.
    """
    if not isinstance(q, dict):
        raise Skip(f"no {what} quantity")
    value = number(q.get("value"), what)
    code, system = q.get("code"), q.get("system")
    if code is None:
        if fallback_unit:
            return value, fallback_unit
        raise Skip(f"{what} has no UCUM unit code (unit text {q.get('unit')!r} is not read)")
    if system not in (None, UCUM):
        raise Skip(f"{what} unit {system}|{code} is not a UCUM unit")
    ours = our_unit(str(code), kind)
    if ours is None:
        raise Skip(f"{what} unit {code!r} is not one the case takes for {kind}")
    return value, ours


def codings(concept: object) -> list[tuple[str, str]]:
    """The ``(system, code)`` pairs of a CodeableConcept."""
    if not isinstance(concept, dict) or not isinstance(concept.get("coding"), list):
        return []
    return [(str(c.get("system", "")), str(c.get("code", ""))) for c in concept["coding"]
            if isinstance(c, dict) and c.get("code")]


def concept_words(concept: object) -> str:
    """The text and display names of a CodeableConcept, lower case."""
    if not isinstance(concept, dict):
        return ""
    coding = concept.get("coding")
    parts = [concept.get("text")] + [c.get("display") for c in (coding if isinstance(coding, list) else [])
                                     if isinstance(c, dict)]
    return " ".join(p for p in parts if isinstance(p, str)).lower()


def field(resource: dict[str, Any], *path: Any) -> Any:
    """``resource[path...]`` or None when any step is missing (lists by index)."""
    node: Any = resource
    for key in path:
        try:
            node = node[key]
        except (KeyError, IndexError, TypeError):
            return None
    return node
