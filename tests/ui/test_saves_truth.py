"""Saves tell the truth, checked on the file as well as the screen (80x24 pilot journeys).

The header says [saved] only when the file on disk holds the case on screen; an undo back to
that state is saved again; a save with input errors keeps the text as typed and says it does
not compute; the recovery offer gives the time in local time and what differs from the file.
"""

from __future__ import annotations

import json
import time
from datetime import datetime, timezone
from zoneinfo import ZoneInfo

from textual.widgets import Input, Static

from tdmtui.ui.app import TdmApp
from tdmtui.ui.dialogs import AskDialog
from tdmtui.ui.recovery import read_recovery, recovery_path, write_recovery
from uihelpers import settle


def header(app) -> str:  # noqa: ANN001
    return str(app.screen.query_one("#header", Static).content)


async def test_undo_back_to_the_saved_state_is_saved(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    on_disk = path.read_bytes()
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert "[saved]" in header(app)
        await pilot.press("f3")
        n = len(app.doc.raw["doses"])
        await pilot.press("x")
        await settle(pilot)
        assert "[UNSAVED]" in header(app)
        await pilot.press("u")
        await settle(pilot)
        assert len(app.doc.raw["doses"]) == n
        assert "[saved]" in header(app) and "UNSAVED" not in header(app)
        # the file was never written, and holds exactly what the screen shows
        assert path.read_bytes() == on_disk
        assert json.loads(on_disk) == app.doc.raw


async def test_saved_only_while_the_file_holds_the_case(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert "[saved]" in header(app)
        path.unlink()  # removed behind the app's back
        app.update_header()
        assert "[UNSAVED]" in header(app)
        await pilot.press("ctrl+s")
        await pilot.pause()
        # the file it opened is gone: the app does not write blindly, it offers to save under a name
        assert isinstance(app.screen, AskDialog) and "NOT overwritten" in app.screen.question
        await pilot.press("escape")
        await pilot.pause()
        assert "[UNSAVED]" in header(app)
    assert not path.exists()


async def test_a_save_with_an_input_error_keeps_the_text_and_says_so(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        field = app.screen.query_one("#pt-weight-input", Input)
        field.focus()
        field.value = ""
        await pilot.press(*"92 stone")
        await settle(pilot)
        await pilot.press("ctrl+s")
        await pilot.pause()
        said = [n.message for n in app._notifications]
        assert any("does not compute yet" in m for m in said), said
        assert not any(m == f"Saved {path}" for m in said)
    assert json.loads(path.read_text(encoding="utf-8"))["patient"]["weight"] == "92 stone"  # as typed, not dropped


async def test_the_recovery_offer_gives_local_time_and_what_changed(state, sample_copy, monkeypatch):
    monkeypatch.setenv("TZ", "America/Chicago")
    time.tzset()
    try:
        path = sample_copy("vanc-steady-state.json")
        raw = json.loads(path.read_text(encoding="utf-8"))
        raw["patient"]["weight"] = "81 kg"
        raw["doses"] = raw["doses"][:-1]
        rp = recovery_path(str(path), state)
        # 2026-07-01 15:30 UTC is 10:30 in Chicago (CDT, UTC-5; the zoneinfo database)
        write_recovery(rp, str(path), raw, now=datetime(2026, 7, 1, 15, 30, tzinfo=timezone.utc))
        stamp = read_recovery(rp).saved_at
        expected = datetime.fromisoformat(stamp.replace("Z", "+00:00")).astimezone(ZoneInfo("America/Chicago"))
        assert expected.strftime("%H:%M") == "10:30"
        app = TdmApp(str(path), None, state=state)
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.pause()
            assert isinstance(app.screen, AskDialog)
            text = app.screen.question
            assert "2026-07-01 10:30 local time" in text
            assert "patient (weight)" in text and "doses (" in text and "rows)" in text
            await pilot.press("d")
            await pilot.pause()
        assert read_recovery(rp) is None
    finally:
        monkeypatch.delenv("TZ")
        time.tzset()
