"""Rewrite the chart-note golden files from the engine.

Usage (from the repository root)::

    /work/venv/bin/python tests/golden/regenerate.py

For each case in :data:`CASES` it computes ``sample_cases/<name>.json`` with
the installed library defaults (no local protocol) and writes the note to
``tests/golden/<name>.txt``. tests/core/test_note.py compares the note with
these files. It also writes the contract's result object of every sample case
(``tdmtui compute CASE --json``) to ``tests/golden/json/<name>.json``, without the
keys that name the program's and library's versions (:data:`VOLATILE`);
tests/core/test_golden_json.py compares the result with these files. Run this only after checking that a change in the note is
intended (a new engine number, a wording change), then read the diff
(``git diff tests/golden``) before committing it.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
GOLDEN = Path(__file__).resolve().parent
CASES = ("vanc-steady-state", "gent-peak-trough", "vanc-loading-early")
JSON_DIR = GOLDEN / "json"
#: result keys that change with every release of the program or the library, not with the case
VOLATILE = ("version", "library_version", "library_sha256")


def json_cases() -> list[Path]:
    """Every sample case (sample_cases/*.json, not the FHIR exports)."""
    return sorted((ROOT / "sample_cases").glob("*.json"))


def result_for(path: Path) -> dict:
    """The result object of a sample case as the engine gives it now, less :data:`VOLATILE`."""
    import json

    from tdmtui.core.input.case import load_case
    from tdmtui.core.compute import compute

    result = json.loads(json.dumps(compute(load_case(path)).result))
    for key in VOLATILE:
        result.pop(key, None)
    return result


def note_for(name: str) -> str:
    """The note of ``sample_cases/<name>.json`` as the engine writes it now."""
    from tdmtui.core.input.case import load_case
    from tdmtui.core.compute import compute
    from tdmtui.core.text.note import render_note

    return render_note(compute(load_case(ROOT / "sample_cases" / f"{name}.json")))


def main() -> int:
    sys.path.insert(0, str(ROOT))
    for name in CASES:
        path = GOLDEN / f"{name}.txt"
        path.write_text(note_for(name), encoding="utf-8")
        print(f"wrote {path.relative_to(ROOT)}")
    import json

    JSON_DIR.mkdir(exist_ok=True)
    for case in json_cases():
        path = JSON_DIR / case.name
        path.write_text(json.dumps(result_for(case), indent=1, sort_keys=True) + "\n", encoding="utf-8")
        print(f"wrote {path.relative_to(ROOT)}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
