"""What the entry fields accept: a bare number takes the field's unit; another
unit may be typed explicitly. Pure functions; no Textual imports.
"""

from __future__ import annotations

import re

from tdmtui.core.errors import InputError
from tdmtui.core.input.units import parse_quantity

_NUM_UNIT = re.compile(r"\s*([0-9]*\.?[0-9]+)\s*([^\s0-9].*?)?\s*")
_NEGATIVE = re.compile(r"\s*-\s*[0-9]*\.?[0-9]+.*")
#: Quantities that are more than 0 for any patient or dose.
_POSITIVE = ("weight", "height", "age", "dose", "scr")


def complete_quantity(text: str, default_unit: str) -> str:
    """Tidy a typed quantity into the contract's "number unit" form.

    "92" -> "92 kg" (the field's unit), "1.25g" -> "1.25 g", " 97  umol/L " ->
    "97 umol/L". Anything else is returned stripped but otherwise as typed, so
    the engine can name what is wrong and nothing typed is lost.
    """
    m = _NUM_UNIT.fullmatch(text)
    if not m:
        return text.strip()
    number, unit = m.group(1), (m.group(2) or "").strip()
    return f"{number} {unit or default_unit}"


def check_quantity(text: str, kind: str, field: str, default_unit: str) -> tuple[str, float | None, str]:
    """Complete and check a quantity as typed.

    Returns:
        (contract string to store, canonical value or None, error message or "").
    """
    stored = complete_quantity(text, default_unit)
    if not stored:
        return "", None, "needed"
    if _NEGATIVE.fullmatch(text):
        return stored, None, "must be positive"
    try:
        value = parse_quantity(stored, kind, field)
    except InputError as exc:
        return stored, None, exc.message
    if value <= 0 and kind in _POSITIVE:
        return stored, None, "must be positive"
    return stored, value, ""
