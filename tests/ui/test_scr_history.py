"""The SCr history is a list: every dated value shown and edited, rows added and deleted, nothing dropped.

Pilot tests at 80x24 that read the saved file back.
"""

from __future__ import annotations

import json

from textual.widgets import DataTable

from tdmtui.ui.app import TdmApp
from uihelpers import settle


async def test_every_scr_value_is_shown_edited_and_saved(state, sample_copy):
    path = sample_copy("tobra-us-units.json")
    before = json.loads(path.read_text(encoding="utf-8"))["patient"]["scr"]
    assert len(before) == 4
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        table = app.screen.query_one("#scr-table", DataTable)
        assert table.row_count == 4
        assert [str(table.get_row_at(i)[2]) for i in range(4)] == [s["value"] for s in before]
        # edit the second value: the other three stay as they were
        table.focus()
        await pilot.press("down", "enter")
        field = app.screen.query_one("#scr-value-input")
        field.value = ""
        await pilot.press(*"1.3")
        await pilot.press("escape")
        # add a fifth, dated by a clock time after the last one, then delete the first
        await pilot.press("a", *"1.4", "tab", *"+24h")
        await pilot.press("escape", "up", "up", "up", "up", "x")
        await settle(pilot)
        await pilot.press("ctrl+s")
        await pilot.pause()
    saved = json.loads(path.read_text(encoding="utf-8"))["patient"]["scr"]
    assert len(saved) == 4
    assert saved[0] == {**before[1], "value": "1.3 mg/dL"}
    assert saved[1:3] == before[2:4]
    assert saved[3]["value"] == "1.4 mg/dL"
    # +24h from the SCr above it (before[3]), in the case's own time style
    assert saved[3]["time"][:10] > before[3]["time"][:10]
    assert app.outcome is not None and len(app.outcome.case.patient.scr) == 4


async def test_a_single_timeless_scr_stays_the_string_form(state, sample_copy):
    path = sample_copy("vanc-trough-only.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.screen.query_one("#scr-table", DataTable).row_count == 1
        field = app.screen.query_one("#scr-value-input")
        field.focus()
        field.value = ""
        await pilot.press(*"1.2")
        await settle(pilot)
        await pilot.press("ctrl+s")
        await pilot.pause()
    assert json.loads(path.read_text(encoding="utf-8"))["patient"]["scr"] == "1.2 mg/dL"
