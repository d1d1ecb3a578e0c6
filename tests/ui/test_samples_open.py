"""Every sample case opens, computes and shows each section without an error on screen."""

from __future__ import annotations

import shutil

import pytest
from textual.widgets import Static
from uihelpers import SAMPLES, settle

from tdmtui.ui.app import TdmApp

CASES = sorted(p.name for p in SAMPLES.glob("*.json"))


@pytest.mark.parametrize("name", CASES)
async def test_sample_case_opens_and_computes(name, tmp_path, state):
    path = tmp_path / name
    shutil.copy(SAMPLES / name, path)
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        status = str(app.screen.query_one("#status", Static).content)
        assert status.startswith("Computed"), status  # sample cases are valid input
        for key in ("f3", "f4", "f5", "w", "g", "f6", "f7", "f2"):
            await pilot.press(key)
        await pilot.pause()
        assert not app.doc.dirty  # looking is not editing
        assert app.note  # every computed case has a note
