"""Shared test helpers."""

from __future__ import annotations

import json
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
