"""Quantity strings of the case contract, converted to canonical floats.

Grammar (case-format.md, "Quantities"): a decimal number, one space, one unit
from a fixed list. No bare numbers, no arithmetic, no thousands separators, no
implied unit. The list decides what is accepted; a table converts. pint is
used in the tests as an outside check of every factor, and kept off the import
path so start-up stays cheap.

Canonical units inside the core: mg (dose), kg (body weight), cm (height),
h (time), yr (age), mg/L (concentration), mg/dL (serum creatinine),
mg*h/L (exposure).
"""

from __future__ import annotations

import math
import re

from tdmtui.core.errors import InputError

#: Creatinine molar mass, g/mol (case-format.md): 1 mg/dL = 10000/113.12 umol/L.
CREATININE_MOLAR_MASS = 113.12
#: umol/L per mg/dL of creatinine, derived from the molar mass (= 88.40).
UMOL_PER_MG_DL = 10_000.0 / CREATININE_MOLAR_MASS

_MICRO = ("µ", "μ")  # U+00B5 MICRO SIGN and U+03BC GREEK SMALL LETTER MU

_MASS_G = {"mg": 1e-3, "g": 1.0, "kg": 1e3, "lb": 453.59237, "mcg": 1e-6, "ug": 1e-6, "µg": 1e-6}
_LENGTH_CM = {"cm": 1.0, "m": 100.0, "in": 2.54, "ft": 30.48}
_TIME_H = {"min": 1 / 60, "h": 1.0, "hr": 1.0, "day": 24.0}
_AGE_YR = {"yr": 1.0, "year": 1.0, "month": 1 / 12, "day": 1 / 365.25}
_CONC_MG_L = {"mg/L": 1.0, "mcg/mL": 1.0, "ug/mL": 1.0, "µg/mL": 1.0, "mg/dL": 10.0}
_SCR_MG_DL = {"mg/dL": 1.0, "umol/L": 1 / UMOL_PER_MG_DL, "µmol/L": 1 / UMOL_PER_MG_DL}
_EXPOSURE = {"mg*h/L": 1.0}

#: kind -> (canonical unit, {unit: factor to canonical})
KINDS: dict[str, tuple[str, dict[str, float]]] = {
    "dose": ("mg", {u: f * 1e3 for u, f in _MASS_G.items()}),
    "weight": ("kg", {u: f * 1e-3 for u, f in _MASS_G.items()}),
    "height": ("cm", _LENGTH_CM),
    "time": ("h", _TIME_H),
    "age": ("yr", _AGE_YR),
    "conc": ("mg/L", _CONC_MG_L),
    "scr": ("mg/dL", _SCR_MG_DL),
    "exposure": ("mg*h/L", _EXPOSURE),
}

#: Every unit spelling the contract lists, by dimension, for error messages.
ALL_UNITS = sorted({u for _, table in KINDS.values() for u in table})

_NUMBER = re.compile(r"[0-9]+(\.[0-9]+)?|\.[0-9]+")


def _normalise_micro(unit: str) -> str:
    for mu in _MICRO:
        unit = unit.replace(mu, "µ")
    return unit


def split_quantity(text: object, field: str) -> tuple[float, str]:
    """Split ``"1250 mg"`` into ``(1250.0, "mg")`` by the strict grammar.

    Raises:
        InputError: naming ``field`` for anything but number, one space, unit.
    """
    if not isinstance(text, str):
        kind = "a bare number" if isinstance(text, (int, float)) else type(text).__name__
        raise InputError(field, f"expected a quantity string such as \"1250 mg\", got {kind}")
    parts = text.split(" ")
    if len(parts) != 2 or not parts[0] or not parts[1]:
        raise InputError(field, f"{text!r} is not 'number unit' (one space, e.g. \"1250 mg\")")
    number, unit = parts
    if not _NUMBER.fullmatch(number):
        raise InputError(field, f"{number!r} is not a plain decimal number")
    value = float(number)
    if not math.isfinite(value):
        raise InputError(field, f"{number!r} is not a finite number")
    return value, _normalise_micro(unit)


def parse_quantity(text: object, kind: str, field: str) -> float:
    """Parse a contract quantity and return its value in the kind's canonical unit.

    Args:
        text: the string from the case file.
        kind: one of :data:`KINDS` (``dose``, ``weight``, ``height``, ``time``,
            ``age``, ``conc``, ``scr``, ``exposure``).
        field: the case-file path, for errors.

    Raises:
        InputError: bad grammar, an unknown unit or a unit of the wrong dimension.
    """
    canonical, table = KINDS[kind]
    value, unit = split_quantity(text, field)
    factor = table.get(unit)
    if factor is None:
        if unit in ALL_UNITS:
            raise InputError(field, f"unit {unit!r} is the wrong kind here; expected one of {', '.join(table)}")
        raise InputError(field, f"unknown unit {unit!r}; expected one of {', '.join(table)}")
    return value * factor


def canonical_unit(kind: str) -> str:
    """The canonical unit of a kind (``dose`` -> ``mg``)."""
    return KINDS[kind][0]

