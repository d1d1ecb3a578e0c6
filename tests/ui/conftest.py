"""Shared helpers for the app tests: a private state folder and a settled app."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from uihelpers import SAMPLES


@pytest.fixture
def state(tmp_path, monkeypatch):
    """A private state folder so no real recovery file is read or written."""
    folder = tmp_path / "state"
    monkeypatch.setenv("XDG_STATE_HOME", str(folder))
    return folder / "tdmtui"


@pytest.fixture
def sample_copy(tmp_path):
    """Copy a sample case into tmp_path and return its path."""
    def copy(name: str) -> Path:
        target = tmp_path / name
        shutil.copy(SAMPLES / name, target)
        return target
    return copy
