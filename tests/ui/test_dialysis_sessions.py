"""Dialysis sessions edited in the app as doses and levels are, checked on the saved file (80x24 pilot).

The engine's rules for sessions are docs/dialysis.md's (a session 1-12 h long, the library's
``dialysis.session_h``; recorded sessions at or before ``as_of``); errors name the field as the
engine does (``dialysis.sessions[1].end``).
"""

from __future__ import annotations

import json

from textual.widgets import DataTable, Input, Static

from tdmtui.ui.app import TdmApp
from tdmtui.ui.sections.sessions import PlannedRows, SessionRows
from uihelpers import opened, screen_lines, settle


def status(app) -> str:  # noqa: ANN001
    return str(app.screen.query_one("#status", Static).content)


def note(app, row: str) -> str:  # noqa: ANN001
    return str(app.screen.query_one(f"#{row} .field-note", Static).render())


async def to_table(pilot, app, which: str) -> None:  # noqa: ANN001
    app.screen.set_focus(app.screen.query_one(f"#{which}-table", DataTable))
    await pilot.pause()


async def retype(pilot, app, field: str, text: str) -> None:  # noqa: ANN001
    widget = app.screen.query_one(f"#{field}-input", Input)
    widget.focus()
    widget.value = ""
    await pilot.press(*text)
    await settle(pilot)


async def test_a_planned_session_added_in_the_app_is_saved(state, sample_copy):
    path = sample_copy("vanc-haemodialysis.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.screen.query_one("#sessions-table", DataTable).row_count == 4
        assert app.screen.query_one("#planned-table", DataTable).row_count == 3
        await to_table(pilot, app, "planned")
        await pilot.press("a")  # a new row after the last, its times to type
        await pilot.press(*"2026-09-18T08:00", "tab", *"12:00")
        await settle(pilot)
        # the reading beside the end, also after a recompute that had named the end while it was empty
        assert "a 4 h session" in note(app, "planned-end")
        assert status(app).startswith("Computed"), status(app)
        assert len(app.outcome.result["dialysis"]["plan_sessions"]) >= 3
        await pilot.press("ctrl+s")
        await settle(pilot)
    saved = json.loads(path.read_text(encoding="utf-8"))
    assert saved["dialysis"]["planned"][3] == {"start": "2026-09-18T08:00", "end": "2026-09-18T12:00"}
    assert len(saved["dialysis"]["sessions"]) == 4 and saved == app.doc.raw


async def test_a_session_error_names_the_field_as_the_engine_does_and_keeps_the_text(state, sample_copy):
    path = sample_copy("vanc-haemodialysis.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        app.query_one(SessionRows).current = 1
        app.query_one(SessionRows).load_form()
        await retype(pilot, app, "sessions-end", "+13h")  # 13 h: longer than the library's 1-12 h
        said = status(app)
        assert said.startswith("INPUT dialysis.sessions[1].end (session done 2): a session of 13 h is outside 1-12 h")
        assert "outside 1-12 h" in note(app, "sessions-end")  # on the field the engine names
        assert "INPUT dialysis.sessions[1].end" in "".join(screen_lines(app))
        await pilot.press("ctrl+s")
        await settle(pilot)
    saved = json.loads(path.read_text(encoding="utf-8"))
    assert saved["dialysis"]["sessions"][1]["end"] == "2026-09-04T21:00"  # as typed: 08:00 + 13 h, not dropped


async def test_delete_and_undo_a_session(state, sample_copy):
    path = sample_copy("vanc-haemodialysis.json")
    before = json.loads(path.read_text(encoding="utf-8"))
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await to_table(pilot, app, "sessions")
        await pilot.press("down", "x")
        await settle(pilot)
        assert [s["start"] for s in app.doc.raw["dialysis"]["sessions"]] == [
            "2026-09-02T08:00", "2026-09-07T08:00", "2026-09-09T08:00"]
        assert "[UNSAVED]" in str(app.screen.query_one("#header", Static).content)
        await pilot.press("u")
        await settle(pilot)
        assert app.doc.raw == before and "[saved]" in str(app.screen.query_one("#header", Static).content)
    assert json.loads(path.read_text(encoding="utf-8")) == before


async def test_sessions_start_on_haemodialysis_and_typing_into_the_empty_form_keeps_it(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert not app.screen.query_one("#pt-dialysis").display  # no renal replacement, no sessions
        rrt = app.screen.query_one("#pt-rrt-input")
        rrt.focus()
        await pilot.press("i")  # first letter of "ihd"
        await settle(pilot)
        assert app.doc.raw["patient"]["renal_replacement"] == "ihd"
        assert app.screen.query_one("#pt-dialysis").display
        assert "dialysis" not in app.doc.raw  # nothing written before a session is typed
        await retype(pilot, app, "sessions-start", "2026-03-02T08:00")
        assert app.doc.raw["dialysis"] == {"sessions": [{"start": "2026-03-02T08:00", "end": ""}]}
        assert status(app).startswith("INPUT dialysis.sessions[0].end (session done 1)")
        await retype(pilot, app, "sessions-end", "+4h")
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert app.query_one(PlannedRows).rows() == []
    saved = json.loads(path.read_text(encoding="utf-8"))
    assert saved["dialysis"] == {"sessions": [{"start": "2026-03-02T08:00", "end": "2026-03-02T12:00"}]}
    assert "planned" not in saved["dialysis"]


async def test_a_field_gets_its_reading_back_when_the_engine_no_longer_names_it(state, sample_copy):
    app = TdmApp(str(sample_copy("vanc-haemodialysis.json")), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await retype(pilot, app, "sessions-end", "+13h")
        assert "outside 1-12 h" in note(app, "sessions-end")  # the engine's reason on the field
        await retype(pilot, app, "sessions-end", "+4h")
        assert status(app).startswith("Computed")
        assert note(app, "sessions-end") == "ends 09-02 12:00, a 4 h session"


async def test_the_levels_table_says_where_each_level_lies_against_the_sessions(state, sample_copy):
    # vanc-haemodialysis: sessions done 08:00-12:00 on 09-02, 09-04, 09-07, 09-09; levels 07:40 before the last three
    async with opened(state, sample_copy, "vanc-haemodialysis.json", "3") as pilot:
        app = pilot.app
        table = app.screen.query_one("#levels-table", DataTable)
        assert [table.get_cell(str(i), "Dialysis") for i in range(3)] == [
            "20 min before 2", "20 min before 3", "20 min before 4"]
        assert any("20 min before 2" in line for line in screen_lines(app))  # on screen at 80 columns
        await retype(pilot, app, "levels-time", "2026-09-04T13:00")  # an hour after session 2 ended
        assert table.get_cell("0", "Dialysis") == "1.0 h after 2, aside"  # inside the 6 h of redistribution
        await retype(pilot, app, "levels-time", "2026-09-04T09:30")
        assert table.get_cell("0", "Dialysis") == "during 2, aside"
        await retype(pilot, app, "levels-time", "2026-09-04T20:00")  # past the library's 6 h: used again
        assert table.get_cell("0", "Dialysis") == "8.0 h after 2"
