"""Shared test helpers."""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path

import pytest

from casedata import ROOT, SAMPLES, base_case  # noqa: F401  (re-exported for fixtures)


@pytest.fixture
def case_dict() -> dict:
    return base_case()


@pytest.fixture
def write_case(tmp_path):
    def _write(raw: dict, name: str = "case.json") -> Path:
        p = tmp_path / name
        p.write_text(json.dumps(raw), encoding="utf-8")
        return p
    return _write


FUZZ_TOTALS: Counter = Counter()


def pytest_runtest_logreport(report) -> None:  # noqa: ANN001
    for key, value in report.user_properties:
        if key == "fuzz_counts":
            FUZZ_TOTALS.update(value)


def pytest_terminal_summary(terminalreporter) -> None:  # noqa: ANN001
    if not FUZZ_TOTALS:
        return
    terminalreporter.section("reliability: fuzz counts")
    for key in sorted(FUZZ_TOTALS):
        terminalreporter.write_line(f"{key:<48} {FUZZ_TOTALS[key]:>8}")
