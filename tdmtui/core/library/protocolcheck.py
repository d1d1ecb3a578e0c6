"""Checking a local protocol against the schema: one value, one section, the nested tables.

:func:`check_section` walks a protocol section (a drug id or ``common``) and
checks every key against :data:`tdmtui.core.library.schema.SCHEMA` with
:func:`check_value`; the ``table`` kind's nested values are checked by the
functions in :data:`TABLES` (ward administration times, level plans,
indication variants, conditions). Every error is an :class:`InputError`
naming ``protocol.<section>.<key>``.
"""

from __future__ import annotations

import math
import re
from typing import Any, Callable

from tdmtui.core.errors import InputError
from tdmtui.core.library.schema import LEAF_KEYS, SCHEMA, VARIANT_BANDS, Spec

_HHMM = re.compile(r"([01]\d|2[0-3]):[0-5]\d")


def _hhmm_list(value: Any, field: str) -> None:
    if not isinstance(value, list) or not all(isinstance(t, str) and _HHMM.fullmatch(t) for t in value):
        raise InputError(field, f"expected a list of \"HH:MM\" times, got {value!r}")


def _admin_times(value: Any, field: str) -> None:
    """A list of "HH:MM", or a table keyed by interval hours ("12") of such lists."""
    if isinstance(value, list):
        _hhmm_list(value, field)
        return
    if not isinstance(value, dict):
        raise InputError(field, f"expected a list of \"HH:MM\" or a table keyed by interval hours, got {value!r}")
    for key, times in value.items():
        try:
            ok = 0 < float(key) <= 168 and math.isfinite(float(key))
        except ValueError:
            ok = False
        if not ok:
            raise InputError(f"{field}.{key}", "expected an interval in hours (1 to 168) as the key")
        _hhmm_list(times, f"{field}.{key}")


def _level_plans(value: Any, field: str) -> None:
    """{"mode/method" or "mode": [["trough", n], ["peak", n], ["at", n, hours]], ...}."""
    if not isinstance(value, dict):
        raise InputError(field, f"expected a table of draw lists, got {value!r}")
    for key, plan in value.items():
        f = f"{field}.{key}"
        if not isinstance(plan, list):
            raise InputError(f, "expected a list of draws such as [\"trough\", 2]")
        for i, item in enumerate(plan):
            ok = (isinstance(item, list) and len(item) >= 2 and item[0] in ("trough", "peak", "at")
                  and isinstance(item[1], int) and not isinstance(item[1], bool) and 1 <= item[1] <= 50
                  and (len(item) == 2 if item[0] != "at" else
                       len(item) == 3 and _is_num(item[2]) and 0 <= item[2] <= 168))
            if not ok:
                raise InputError(f"{f}[{i}]", "expected [\"trough\" or \"peak\", dose number 1-50] "
                                              "or [\"at\", dose number, hours 0-168 after its start]")


def _variants(value: Any, field: str) -> None:
    """{indication id: {peak: [lo, hi], trough: [lo, hi], auc24: [lo, hi]}}."""
    if not isinstance(value, dict):
        raise InputError(field, f"expected a table of indication variants, got {value!r}")
    for vid, body in value.items():
        if not isinstance(body, dict) or not body:
            raise InputError(f"{field}.{vid}", "expected a table of target bands")
        for k, b in body.items():
            if k not in VARIANT_BANDS:
                raise InputError(f"{field}.{vid}.{k}", f"unknown key (one of {', '.join(VARIANT_BANDS)})")
            check_value(b, VARIANT_BANDS[k], f"{field}.{vid}.{k}")


def _conditions(value: Any, field: str) -> None:
    if not isinstance(value, dict) or not all(isinstance(v, str) for v in value.values()):
        raise InputError(field, "expected a table of condition id = caution text")


#: Checkers of the ``table`` kind.
TABLES: dict[str, Callable[[Any, str], None]] = {
    "admin_times": _admin_times, "level_plans": _level_plans, "variants": _variants, "conditions": _conditions,
}


def _is_num(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _number(x: Any, spec: Spec, field: str) -> float:
    if not _is_num(x):
        raise InputError(field, f"expected a number in {spec.unit}, got {x!r}")
    if not spec.lo <= x <= spec.hi:
        raise InputError(field, f"{x:g} {spec.unit} is outside the plausible {spec.lo:g} to {spec.hi:g} {spec.unit}")
    return float(x)


def _numbers(x: Any, spec: Spec, field: str, size: int | None = None) -> list[float]:
    if not isinstance(x, list) or not x or (size is not None and len(x) != size):
        what = f"a list of {size} numbers" if size else "a non-empty list of numbers"
        raise InputError(field, f"expected {what} in {spec.unit}, got {x!r}")
    return [_number(v, spec, f"{field}[{i}]") for i, v in enumerate(x)]


def check_value(value: object, spec: Spec, field: str) -> None:
    """Check one value against its spec. Raises InputError naming ``field``."""
    kind = spec.kind
    if kind == "num":
        _number(value, spec, field)
    elif kind == "band":
        lo, hi = _numbers(value, spec, field, 2)
        if not (lo < hi or lo == hi == 0):  # [0, 0]: none
            raise InputError(field, f"expected [low, high] with low below high (or [0, 0] for none), got {value!r}")
    elif kind == "nums":
        _numbers(value, spec, field)
    elif kind == "pair":
        _numbers(value, spec, field, 2)
    elif kind == "points":
        if not isinstance(value, list) or not value:
            raise InputError(field, f"expected a list of [x, y] points ({spec.unit}), got {value!r}")
        for i, pt in enumerate(value):
            _numbers(pt, spec, f"{field}[{i}]", 2)
    elif kind == "choice":
        if value not in spec.options:
            raise InputError(field, f"{value!r} is not one of {', '.join(spec.options)}")
    elif kind == "pattern":
        if not isinstance(value, str) or not re.fullmatch(spec.options[0], value.strip()):
            raise InputError(field, f"{value!r} is not of the form {spec.unit}")
    elif kind == "text":
        if not isinstance(value, str):
            raise InputError(field, f"expected text, got {value!r}")
    elif kind == "names":
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise InputError(field, f"expected a list of text, got {value!r}")
    elif kind == "flag":
        if not isinstance(value, bool):
            raise InputError(field, f"expected true or false, got {value!r}")
    elif kind == "table":
        TABLES[spec.options[0]](value, field)


def _leaves(body: dict[str, Any], prefix: str = "") -> list[tuple[str, Any, dict[str, Any] | None]]:
    """(dotted key, value, leaf table or None) for every value in a protocol section."""
    out: list[tuple[str, Any, dict[str, Any] | None]] = []
    for key, item in body.items():
        path = f"{prefix}{key}"
        if path in SCHEMA and SCHEMA[path].kind == "table" and not (isinstance(item, dict) and "value" in item):
            out.append((path, item, None))
        elif isinstance(item, dict) and "value" in item:
            out.append((path, item["value"], item))
        elif isinstance(item, dict):
            out.extend(_leaves(item, path + "."))
        else:
            out.append((path, item, None))
    return out


def check_section(section: str, body: dict[str, Any], library_keys: set[str]) -> None:
    """Check every key and value of one protocol section (a drug id or ``common``).

    Args:
        section: the section name.
        body: the section's table as read from TOML.
        library_keys: the dotted keys the library holds for this section (a key
            the library does not use here is an error unless its spec is optional).

    Raises:
        InputError: naming ``protocol.<section>.<key>``.
    """
    for key, value, leaf in _leaves(body):
        field = f"protocol.{section}.{key}"
        spec = SCHEMA.get(key)
        if key.startswith("never_exceed") or key.startswith("drug."):
            raise InputError(field, "this library value cannot be set by a local protocol")
        if spec is None:
            raise InputError(field, "unknown key (DEVELOPERS.md lists the keys a protocol may set)")
        if key not in library_keys and not spec.optional:
            raise InputError(field, f"not used for {section}" if section != "common" else
                             "not a common key: put it under a drug id")
        if leaf is not None:
            for extra in leaf:
                if extra not in LEAF_KEYS:
                    raise InputError(f"{field}.{extra}", f"unknown key (a value's table holds {', '.join(LEAF_KEYS)})")
            if "source" in leaf and not isinstance(leaf["source"], str):
                raise InputError(f"{field}.source", "expected text")
            if "unit" in leaf and leaf["unit"] != spec.unit:
                raise InputError(f"{field}.unit", f"{leaf['unit']!r}: this value is in {spec.unit or 'no unit'}")
        check_value(value, spec, field)
