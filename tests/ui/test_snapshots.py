"""Snapshots of each section at 80x24 (sample case vanc-steady-state), and one with NO_COLOR.

Review changes in snapshot_report.html; update with --snapshot-update only
when the change is intended.
"""

from __future__ import annotations

import shutil

import pytest
from uihelpers import SAMPLES, settle

from tdmtui.ui.app import TdmApp

SECTIONS = [("patient", []), ("doses", ["f3"]), ("levels", ["f4"]), ("estimate", ["f5"]),
            ("working", ["f5", "w"]), ("plot", ["f5", "g"]), ("plan", ["f6"]), ("note", ["f7"]), ("help", ["f1"])]


@pytest.fixture
def sample_app(tmp_path, state):
    def make() -> TdmApp:
        path = tmp_path / "vanc-steady-state.json"
        shutil.copy(SAMPLES / "vanc-steady-state.json", path)
        return TdmApp(str(path), None, state=state)
    return make


@pytest.mark.parametrize("name, keys", SECTIONS, ids=[s[0] for s in SECTIONS])
def test_section_snapshot(snap_compare, sample_app, name, keys):
    async def run_before(pilot) -> None:
        await settle(pilot)
        await pilot.press(*keys)
        await pilot.pause()

    assert snap_compare(sample_app(), run_before=run_before, terminal_size=(80, 24))


def test_estimate_no_color_snapshot(snap_compare, sample_app, monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")

    async def run_before(pilot) -> None:
        await settle(pilot)
        await pilot.press("f5")
        await pilot.pause()

    assert snap_compare(sample_app(), run_before=run_before, terminal_size=(80, 24))


def test_bad_input_no_color_snapshot(snap_compare, state, monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")

    async def run_before(pilot) -> None:
        await settle(pilot)
        field = pilot.app.screen.query_one("#pt-weight-input")
        field.cursor_blink = False  # a blinking cursor makes the picture depend on the moment it is taken
        field.focus()
        await pilot.press(*"92 stone")
        await settle(pilot)

    assert snap_compare(TdmApp(None, None, state=state), run_before=run_before, terminal_size=(80, 24))
