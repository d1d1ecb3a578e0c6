"""The contract's result object for every sample case against its golden file.

The golden files (tests/golden/json) were written by tests/golden/regenerate.py
and reviewed line by line; a change in any figure, warning or key shows here.
Floats are compared to 1e-4 relative, 1e-6 absolute: the Bayesian figures
(MAP fits, posterior draws, intervals) move in their sixth significant digit
between CPUs because numpy's vectorised exp and log differ in the last bits
by instruction set (seen: 8.6e-6 relative on one machine against another with
the same numpy and scipy); every figure the note or screen shows is rounded
far coarser, and the golden notes are compared byte for byte.
"""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "golden"))
import regenerate  # noqa: E402

CASES = regenerate.json_cases()


def _diff(want, got, path="") -> list[str]:
    if isinstance(want, dict) and isinstance(got, dict):
        out = [f"{path}.{k}: missing" for k in want.keys() - got.keys()]
        out += [f"{path}.{k}: unexpected" for k in got.keys() - want.keys()]
        for k in want.keys() & got.keys():
            out += _diff(want[k], got[k], f"{path}.{k}")
        return out
    if isinstance(want, list) and isinstance(got, list):
        if len(want) != len(got):
            return [f"{path}: {len(want)} items, now {len(got)}"]
        return [d for i, (a, b) in enumerate(zip(want, got)) for d in _diff(a, b, f"{path}[{i}]")]
    if isinstance(want, float) and isinstance(got, (int, float)) and not isinstance(got, bool):
        return [] if math.isclose(want, got, rel_tol=1e-4, abs_tol=1e-6) else [f"{path}: {want!r} -> {got!r}"]
    return [] if want == got and type(want) is type(got) else [f"{path}: {want!r} -> {got!r}"]


def test_every_sample_case_has_a_golden_result():
    assert len(CASES) >= 15
    assert {p.name for p in CASES} == {p.name for p in regenerate.JSON_DIR.glob("*.json")}


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_result_object_is_the_golden_one(path):
    want = json.loads((regenerate.JSON_DIR / path.name).read_text(encoding="utf-8"))
    got = regenerate.result_for(path)
    diffs = _diff(want, got)
    assert not diffs, "\n".join(diffs[:20])


def test_the_comparison_catches_a_change_a_reader_would_see():
    # a figure moved in its fourth significant digit (a rounded screen value could change) is caught;
    # the sixth-digit jitter between CPUs is not
    assert _diff({"auc24": 512.3}, {"auc24": 512.9}) == [".auc24: 512.3 -> 512.9"]
    assert _diff({"auc24": 512.3}, {"auc24": 512.3 * (1 + 9e-6)}) == []
    assert _diff({"q": [0.001]}, {"q": [0.003]}) == [".q[0]: 0.001 -> 0.003"]
