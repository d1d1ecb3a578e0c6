"""The note's record of imported values: each one with the resource it came from.

A case built by ``tdmtui import`` carries the optional ``imported`` key
(documented in sample_cases/README.md): the export's file name and sha256,
and for every value the case field, the value as imported and the resource
id. A value still as imported is listed with its resource; one the
pharmacist has since changed or removed is listed as changed, so the note
never calls a typed value imported. The key is informational: no
computation reads it. Malformed entries (a hand-edited file) are skipped.
"""

from __future__ import annotations

from typing import Any

from tdmtui.core.text import notefmt as f
from tdmtui.core.errors import one_line


def _describe(fieldname: str, value: Any) -> str:
    if isinstance(value, str):
        return f"{fieldname.split('.')[-1]} {value}"
    if not isinstance(value, dict):
        return fieldname
    if fieldname == "schedule":
        return "standing order " + ", ".join(f"{k} {v}" for k, v in value.items())
    when = f.when(value.get("time") or value.get("start"))
    what = {"patient.scr": "SCr", "doses": "dose", "levels": "level"}.get(fieldname, fieldname)
    amount = value.get("value") or value.get("amount") or value.get("conc") or ""
    flags = "".join(f" ({text})" for k, text in (("below_loq", "below LOQ"), ("above_uloq", "above ULOQ"))
                    if value.get(k) is True)
    return f"{what} {when} {amount}{flags}"


def _current(raw: dict[str, Any], fieldname: str) -> list[Any]:
    """The values now in the case at a provenance field (a list, for rows)."""
    patient: dict[str, Any] = raw["patient"] if isinstance(raw.get("patient"), dict) else {}
    if fieldname == "patient.scr":
        rows = patient.get("scr")
        return list(rows) if isinstance(rows, list) else []
    if fieldname.startswith("patient."):
        return [patient.get(fieldname.split(".", 1)[1])]
    if fieldname in ("doses", "levels"):
        rows = raw.get(fieldname)
        return list(rows) if isinstance(rows, list) else []
    return [raw.get(fieldname)]


def imported_values(raw: dict[str, Any]) -> tuple[list[tuple[str, str]], list[tuple[str, str]]]:
    """``(kept, changed)``: ``(description, resource)`` of values still as imported, and of the rest."""
    block = raw.get("imported")
    entries = block.get("values") if isinstance(block, dict) else None
    kept: list[tuple[str, str]] = []
    changed: list[tuple[str, str]] = []
    pools: dict[str, list[Any]] = {}
    for item in entries if isinstance(entries, list) else []:
        if not isinstance(item, dict) or not isinstance(item.get("field"), str):
            continue
        name, value, resource = item["field"], item.get("value"), one_line(str(item.get("resource", "?")))
        pool = pools.setdefault(name, _current(raw, name))
        if value in pool:
            pool.remove(value)
            kept.append((one_line(_describe(name, value)), resource))
        else:
            changed.append((one_line(_describe(name, value)), resource))
    return kept, changed


def note_lines(raw: dict[str, Any]) -> list[str]:
    """The note's "Imported" section (no lines for a case that was not imported)."""
    block = raw.get("imported")
    if not isinstance(block, dict):
        return []
    kept, changed = imported_values(raw)
    digest = str(block.get("sha256", ""))[:16]
    lines = f.heading("Imported values")
    lines += f.wrap(one_line(f"From the FHIR export {block.get('from', '?')} (sha256 {digest}...); "
                             "each value below is as imported, with the resource it came from:"))
    lines += [ln for desc, res in kept for ln in f.wrap(f"- {desc}: {res}", "", "    ")]
    if changed:
        lines += f.wrap("Changed or removed since the import (the case's own value stands):")
        lines += [ln for desc, res in changed for ln in f.wrap(f"- {desc}: {res}", "", "    ")]
    return lines
