"""Case data shared by tests (importable as `casedata`; conftest modules are not importable by name)."""

from __future__ import annotations

import copy
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_cases"


def base_case() -> dict:
    """A small valid vancomycin case in the contract format (invented, for tests)."""
    return copy.deepcopy({
        "format": "tdmtui.case/1",
        "label": "test case",
        "drug": "vancomycin",
        "as_of": "2026-03-03T21:00",
        "patient": {"age": "67 yr", "sex": "male", "weight": "92 kg", "height": "178 cm",
                    "scr": [{"time": "2026-03-01T06:00", "value": "1.1 mg/dL"},
                            {"time": "2026-03-03T06:00", "value": "1.2 mg/dL"}]},
        "doses": [
            {"start": "2026-03-02T08:00", "amount": "2000 mg", "duration": "2 h", "kind": "loading"},
            {"start": "2026-03-02T20:00", "amount": "1250 mg", "end": "2026-03-02T21:30"},
            {"start": "2026-03-03T08:00", "amount": "1250 mg", "duration": "90 min"},
        ],
        "levels": [
            {"time": "2026-03-03T07:35", "conc": "14.2 mg/L"},
            {"time": "2026-03-03T11:00", "conc": "31.2 mg/L"},
        ],
    })
