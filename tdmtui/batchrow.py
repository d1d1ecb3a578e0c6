"""One case of ``tdmtui batch``: compute it as ``tdmtui compute CASE --json`` would, never raise.

Runs in a worker process. Every outcome is a :class:`Row`: ``ok`` and ``stop``
(computed; exit 0 of ``compute``), ``input-error`` (exit 2, the field named),
``no-estimate`` (exit 3, why), ``internal-error`` (exit 1). The result's JSON
text is made by :func:`result_text`, the very function ``compute --json``
prints with, so the two are byte for byte the same.

A case from a JSON-lines stream is read as a file holding that line would be:
the same size limit and JSON checks (:mod:`tdmtui.core.bounds`), its
``input_sha256`` that of the line's bytes (without the line break).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

#: the columns of the CSV and of each JSON line, in order
COLUMNS = ("case", "status", "drug", "method", "ke_per_h", "vd_l", "cl_l_per_h", "auc24_mg_h_per_l",
           "peak_mg_per_l", "trough_mg_per_l", "current_on_target", "proposal", "warnings", "error")


@dataclass(frozen=True)
class Item:
    """What a worker is given: a display name and a file path or the bytes of one JSON line."""

    name: str
    path: str | None = None
    line: bytes | None = None


@dataclass
class Row:
    """One case's row (COLUMNS) and, when computed, the result's JSON text."""

    values: dict[str, Any] = field(default_factory=dict)
    text: str | None = None


def result_text(result: dict[str, Any]) -> str:
    """The result object as ``tdmtui compute --json`` prints it (2-space indent, one final line break)."""
    from tdmtui.core.input.textsafe import json_safe

    return json_safe(json.dumps(result, indent=2, ensure_ascii=False, allow_nan=False)) + "\n"


_PROTOCOLS: dict[str | None, Any] = {}


def _protocol(path: str | None) -> Any:
    """The protocol, read once per worker (an error in it is every case's input error)."""
    if path not in _PROTOCOLS:
        from tdmtui.core.library import protocol_or_default

        _PROTOCOLS[path] = protocol_or_default(path)
    return _PROTOCOLS[path]


def _load(item: Item) -> Any:
    from tdmtui.core.bounds import MAX_FILE_BYTES, decode_json
    from tdmtui.core.input.case import load_case, parse_case
    from tdmtui.core.errors import InputError

    if item.path is not None:
        return load_case(item.path)
    data = item.line or b""
    if len(data) > MAX_FILE_BYTES:
        raise InputError("(file)", f"{item.name} is {len(data):,} bytes; a case is at most {MAX_FILE_BYTES:,}")
    return parse_case(decode_json(data, item.name), data)


def run(item: Item, protocol: str | None = None, method: str | None = None, text: bool = True) -> Row:
    """Compute one case; every failure becomes the row's status and error (never an exception).

    ``text``: keep the result's JSON text in the row (what ``--out`` .jsonl writes); without it the row has
    only its columns (a CSV, the summary), and the text is not made.
    """
    from tdmtui.core.errors import InputError, NoEstimateError

    row = Row({"case": item.name})
    try:
        from tdmtui.core.compute import compute

        outcome = compute(_load(item), _protocol(protocol), method)
        row.text = result_text(outcome.result) if text else None
        row.values.update(summarise(outcome.result))
    except InputError as exc:
        row.values.update(status="input-error", error=f"{exc.field}: {exc.message}" if exc.field else exc.message)
    except NoEstimateError as exc:
        row.values.update(status="no-estimate", error=f"no estimate by {exc.method}: {exc.why}")
    except Exception as exc:  # noqa: BLE001 - one bad case is one row, never the end of the batch
        row.values.update(status="internal-error", error=f"{type(exc).__name__}: {exc}")
    return row


def summarise(result: dict[str, Any]) -> dict[str, Any]:
    """The row's figures from a result object: the estimate and its current-regimen predictions,
    the proposal in one line, the warning codes (stops first)."""
    est = result.get("estimate") or {}
    cur = est.get("current") or {}
    reg = result.get("regimen")
    warnings = result.get("warnings") or []
    codes = [w["code"] for w in warnings if w.get("severity") == "stop"]
    codes += [w["code"] for w in warnings if w.get("severity") != "stop"]
    return {"status": result.get("status"), "drug": result.get("drug"), "method": result.get("method"),
            "ke_per_h": est.get("ke_per_h"), "vd_l": est.get("vd_l"), "cl_l_per_h": est.get("cl_l_per_h"),
            "auc24_mg_h_per_l": cur.get("auc24_mg_h_per_l"), "peak_mg_per_l": cur.get("peak_mg_per_l"),
            "trough_mg_per_l": cur.get("trough_mg_per_l"),
            "current_on_target": reg.get("current_on_target") if reg else None,
            "proposal": proposal(reg) if reg else None, "warnings": ";".join(dict.fromkeys(codes)) or None}


def proposal(reg: dict[str, Any]) -> str:
    """The proposed regimen in one line (``1000 mg every 12 h over 1 h (change), loading 2000 mg``)."""
    if reg.get("dose_mg") is None:
        return str(reg.get("action", "-"))
    if reg.get("mode") == "continuous" and reg.get("rate_mg_per_h") is not None:
        text = f"{reg['dose_mg']:g} mg per 24 h continuous ({reg['rate_mg_per_h']:g} mg/h)"
    else:
        text = f"{reg['dose_mg']:g} mg every {reg.get('interval_h', 0):g} h over {reg.get('infusion_h', 0):g} h"
    if reg.get("action"):
        text += f" ({reg['action']})"
    load = reg.get("loading_dose")
    if isinstance(load, dict) and load.get("dose_mg") is not None:
        text += f", loading {load['dose_mg']:g} mg"
    return text
