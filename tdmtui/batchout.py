"""What ``tdmtui batch`` writes: the rows file (CSV or JSON lines) and the summary table.

Every text cell passes :func:`tdmtui.core.input.textsafe.neutralise` (a file name or
an error may carry control characters from a hostile case); a CSV text cell
that a spreadsheet would take for a formula gets a leading ``'`` (common
practice against formula injection). Numbers are written as Python writes
floats (``repr``: the same digits as the JSON result).
"""

from __future__ import annotations

import csv
import io
import json
from collections import Counter
from typing import Any

from tdmtui.batchrow import COLUMNS, Row

_FORMULA = ("=", "+", "-", "@", "\t", "\r")
STATUS_ORDER = ("ok", "stop", "no-estimate", "input-error", "internal-error")


def _cell(value: Any) -> Any:
    from tdmtui.core.input.textsafe import neutralise

    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        return repr(value)
    text = neutralise(value)
    return "'" + text if text.startswith(_FORMULA) else text


def csv_text(rows: list[Row]) -> str:
    """Header and one line per case, in COLUMNS order."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    for r in rows:
        w.writerow([_cell(r.values.get(c)) for c in COLUMNS])
    return buf.getvalue()


def jsonl_text(rows: list[Row]) -> str:
    """One JSON object per line: COLUMNS, then ``result`` (the compute --json object, or null)."""
    from tdmtui.core.input.textsafe import json_safe, neutralise

    out = []
    for r in rows:
        obj = {c: r.values.get(c) for c in COLUMNS}
        obj["case"], obj["error"] = neutralise(obj["case"]), None if obj["error"] is None else neutralise(obj["error"])
        obj["result"] = None if r.text is None else json.loads(r.text)
        out.append(json_safe(json.dumps(obj, ensure_ascii=False, allow_nan=False)))
    return "\n".join(out) + "\n"


def write_rows(path: str, rows: list[Row]) -> None:
    """The rows file, atomically with mode 0600 (an unwritable place: an error naming --out)."""
    from tdmtui.core.input.casefile import write_atomic
    from tdmtui.core.errors import InputError

    text = csv_text(rows) if path.lower().endswith(".csv") else jsonl_text(rows)
    try:
        write_atomic(path, text.encode("utf-8"))
    except OSError as exc:
        raise InputError("--out", f"cannot write {path}: {exc.strerror or exc}") from exc


def summary(rows: list[Row], took_s: float, jobs: int, out: str | None) -> str:
    """Counts by status and by method, the on-target share, the first errors (free text neutralised)."""
    from tdmtui.core.input.textsafe import neutralise

    n = len(rows)
    status = Counter(str(r.values.get("status")) for r in rows)
    method = Counter(str(r.values["method"]) for r in rows if r.values.get("method"))
    lines = [f"tdmtui batch: {n:,} case(s) in {took_s:.1f} s ({jobs} process{'es' if jobs > 1 else ''})", "",
             f"{'status':<24}{'cases':>7}"]
    lines += [f"  {s:<22}{status[s]:>7}" for s in STATUS_ORDER if status[s]]
    lines += ["", f"{'method used':<24}{'cases':>7}"] + [f"  {neutralise(m):<22}{k:>7}" for m, k in
                                                         sorted(method.items(), key=lambda x: (-x[1], x[0]))]
    judged = [r.values["current_on_target"] for r in rows if r.values.get("current_on_target") is not None]
    if judged:
        on = sum(1 for x in judged if x)
        lines += ["", f"current regimen on target: {on} of {len(judged)} case(s) where the result judges it "
                      f"({100 * on / len(judged):.0f} %)"]
    bad = [r for r in rows if r.values.get("status") not in ("ok", "stop")]
    if bad:
        lines += ["", f"not computed ({len(bad)}; first {min(len(bad), 10)}):"]
        lines += [f"  {neutralise(r.values['case'])}: {neutralise(r.values.get('error'))}" for r in bad[:10]]
    if out:
        lines += ["", f"one row per case written to {neutralise(out)}"]
    import textwrap

    from tdmtui.core.text.safety import NOTE_LINE

    lines += ["", "Each row is a computation for a clinician to review, not an order.", textwrap.fill(NOTE_LINE, 79)]
    return "\n".join(lines) + "\n"
