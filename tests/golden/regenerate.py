"""Rewrite the chart-note golden files from the engine.

Usage (from the repository root)::

    /work/venv/bin/python tests/golden/regenerate.py

For each case in :data:`CASES` it computes ``sample_cases/<name>.json`` with
the installed library defaults (no local protocol) and writes the note to
``tests/golden/<name>.txt``. tests/core/test_note.py compares the note with
these files. Run this only after checking that a change in the note is
intended (a new engine number, a wording change), then read the diff
(``git diff tests/golden``) before committing it.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
GOLDEN = Path(__file__).resolve().parent
CASES = ("vanc-steady-state", "gent-peak-trough", "vanc-loading-early")


def note_for(name: str) -> str:
    """The note of ``sample_cases/<name>.json`` as the engine writes it now."""
    from tdmtui.core.case import load_case
    from tdmtui.core.compute import compute
    from tdmtui.core.note import render_note

    return render_note(compute(load_case(ROOT / "sample_cases" / f"{name}.json")))


def main() -> int:
    sys.path.insert(0, str(ROOT))
    for name in CASES:
        path = GOLDEN / f"{name}.txt"
        path.write_text(note_for(name), encoding="utf-8")
        print(f"wrote {path.relative_to(ROOT)}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
