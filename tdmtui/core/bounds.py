"""Resource bounds on a case: what is read, how deep, how long, how many.

A case file may be hostile or broken (a device, a FIFO, a file of 10^5 nested
brackets, a 5,000-digit number, a label of megabytes, a key given twice).
Each is refused with an :class:`InputError` naming the file or the field
before any work grows with it. The limits (documented in
``sample_cases/README.md`` "Limits") are far above any real case:

=====================  =========================================================
``MAX_FILE_BYTES``      a case file of at most 2 MiB (a regular file only)
``MAX_DEPTH``           objects and lists nested at most 16 deep
``MAX_TEXT``            a string of at most 2,000 characters (a key: 200; a bare
                        JSON number: 40, and finite)
``MAX_ROWS``            at most 10,000 doses, 200 levels, 500 SCr values,
                        50 comedications or conditions
``MAX_SPAN_DAYS``       every time (as_of included) within 3,000 days of the others
``YEARS``               times in the years 1900 to 2199
=====================  =========================================================

Design choices (common practice for defensive parsing; no clinical meaning):
the counts allow a course of several months with frequent levels. The dose count and
the span are set by what the engine computes safely: its cost is linear in the doses
(:mod:`tdmtui.core.models.superpose`; 5,000 doses every 12 h with 20 levels, about
2,500 days, in a second or two and bounded memory, ``bench/bench_scale.py``); a span
of 3,000 days still refuses a decade typed wrong.
"""

from __future__ import annotations

import json
import os
import stat
from pathlib import Path
from typing import Any

from tdmtui.core.errors import InputError

MAX_FILE_BYTES = 2 * 1024 * 1024
MAX_DEPTH = 16
MAX_TEXT = 2000
MAX_KEY = 200
MAX_NUMBER = 40
MAX_ROWS = {"doses": 10000, "levels": 200, "patient.scr": 500, "patient.comedications": 50, "patient.conditions": 50}
MAX_SPAN_DAYS = 3000.0
#: Years a case time may carry (clock.py refuses others).
YEARS = (1900, 2199)

__all__ = ["YEARS", "MAX_FILE_BYTES", "MAX_DEPTH", "MAX_TEXT", "MAX_ROWS", "MAX_SPAN_DAYS"]



def read_case_bytes(path: str | Path, field: str = "(file)", limit: int = MAX_FILE_BYTES) -> bytes:
    """The bytes of a case (or protocol) file: a regular file of at most ``limit`` bytes.

    Raises:
        InputError: naming ``field`` for a missing or unreadable file, a device, a FIFO or a folder, or one too large.
    """
    p = Path(path)
    try:
        # O_NONBLOCK: opening a FIFO with no writer must not wait forever
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except OSError as exc:
        raise InputError(field, f"cannot read {p}: {exc.strerror}") from exc
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise InputError(field, f"{p} is not a regular file (a device, pipe or folder cannot be read as one)")
        if info.st_size > limit:
            raise InputError(field, f"{p} is {info.st_size:,} bytes; at most {limit:,} are read")
        with os.fdopen(fd, "rb", closefd=False) as fh:
            data = fh.read(limit + 1)
    except OSError as exc:
        raise InputError(field, f"cannot read {p}: {exc.strerror}") from exc
    finally:
        os.close(fd)
    if len(data) > limit:
        raise InputError(field, f"{p} grew past {limit:,} bytes while being read")
    return data


def _pairs(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise _Duplicate(key)
        out[key] = value
    return out


class _Duplicate(ValueError):
    def __init__(self, key: str) -> None:
        super().__init__(key)
        self.key = key


def decode_json(data: bytes, where: str) -> Any:
    """JSON from bytes: UTF-8, no key twice in one object, bounded nesting and numbers.

    Raises:
        InputError: ``(file)`` for text that is not UTF-8 or not JSON; the
            duplicated key's path for a key given twice.
    """
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError("(file)", f"{where} is not UTF-8 text") from exc
    try:
        raw = json.loads(text, object_pairs_hook=_pairs, parse_int=_int, parse_float=_float)
    except _Duplicate as exc:
        # find the path of the duplicate by a second, tolerant read
        path = _duplicate_path(json.loads(text, object_pairs_hook=_keep_pairs), exc.key)
        raise InputError(path, "this key is given twice in the same object (which one is meant?)") from None
    except json.JSONDecodeError as exc:
        raise InputError("(file)", f"{where} is not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})") from exc
    except RecursionError:
        raise InputError("(file)", f"{where} is nested too deeply (at most {MAX_DEPTH} levels)") from None
    except _BadNumber as exc:
        raise InputError("(file)", f"{where} holds the number {exc.text[:20]}{'...' if len(exc.text) > 20 else ''} "
                                   f"({len(exc.text):,} characters): {exc.why}") from None
    return raw


class _BadNumber(ValueError):
    def __init__(self, text: str, why: str) -> None:
        super().__init__(text)
        self.text, self.why = text, why


def _int(text: str) -> int:
    if len(text) > MAX_NUMBER:
        raise _BadNumber(text, f"a number is at most {MAX_NUMBER} characters")
    return int(text)


def _float(text: str) -> float:
    if len(text) > MAX_NUMBER:
        raise _BadNumber(text, f"a number is at most {MAX_NUMBER} characters")
    value = float(text)
    if value in (float("inf"), float("-inf")):
        raise _BadNumber(text, "too large to be a real value")
    return value


class _PairList(list):
    """An object's (key, value) pairs in file order, duplicates kept."""


def _keep_pairs(pairs: list[tuple[str, Any]]) -> _PairList:
    return _PairList(pairs)


def _duplicate_path(node: Any, key: str, prefix: str = "") -> str:
    """The path of the first object holding ``key`` twice."""
    stack = [(node, prefix)]
    while stack:
        item, path = stack.pop(0)
        if isinstance(item, _PairList):
            keys = [k for k, _ in item]
            if keys.count(key) > 1:
                return f"{path}.{key}" if path else key
            stack.extend((v, f"{path}.{k}" if path else k) for k, v in item)
        elif isinstance(item, list):
            stack.extend((v, f"{path}[{i}]") for i, v in enumerate(item))
    return key


def _text_problem(text: str, limit: int) -> str:
    if len(text) > limit:
        return f"text of {len(text):,} characters; at most {limit:,}"
    for ch in text:
        if "\ud800" <= ch <= "\udfff":
            return f"holds a lone surrogate (U+{ord(ch):04X}), which is not a character"
    return ""


def check_tree(raw: object) -> None:
    """Depth, string length, lone surrogates and row counts over a decoded case.

    Raises:
        InputError: naming the field.
    """
    stack: list[tuple[Any, str, int]] = [(raw, "", 0)]
    while stack:
        node, path, depth = stack.pop()
        if depth > MAX_DEPTH:
            raise InputError(path or "(case)", f"nested too deeply (at most {MAX_DEPTH} levels)")
        if isinstance(node, str):
            why = _text_problem(node, MAX_TEXT)
            if why:
                raise InputError(path or "(case)", why)
        elif isinstance(node, dict):
            for k, v in node.items():
                sub = f"{path}.{k}" if path else str(k)
                why = _text_problem(str(k), MAX_KEY)
                if why:
                    raise InputError(path or "(case)", f"a key {why}")
                stack.append((v, sub, depth + 1))
        elif isinstance(node, list):
            limit = MAX_ROWS.get(path)
            if limit is not None and len(node) > limit:
                raise InputError(path, f"{len(node):,} entries; at most {limit:,}")
            stack.extend((v, f"{path}[{i}]", depth + 1) for i, v in enumerate(node))


def check_span(times: list[tuple[str, float]]) -> None:
    """Every time within :data:`MAX_SPAN_DAYS` of the earliest; names the first one beyond.

    Args:
        times: ``(field, hours)`` pairs.
    """
    if not times:
        return
    first = min(t for _, t in times)
    for field, t in times:
        if t - first > MAX_SPAN_DAYS * 24.0:
            raise InputError(field, f"{(t - first) / 24.0:,.0f} days after the earliest time in the case; "
                                    f"a case spans at most {MAX_SPAN_DAYS:g} days (check the year)")
