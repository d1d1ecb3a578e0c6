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
        # the file it opened is gone: the app says so and does not write blindly
        assert isinstance(app.screen, AskDialog)
        assert "no longer exists" in app.screen.question and "someone else" not in app.screen.question
        await pilot.press("escape")
        await pilot.pause()
        assert "[UNSAVED]" in header(app)
    assert not path.exists()


async def type_weight(pilot, app, text: str) -> None:  # noqa: ANN001
    field = app.screen.query_one("#pt-weight-input", Input)
    field.focus()
    field.value = ""
    await pilot.press(*text)
    await settle(pilot)


async def test_a_deleted_file_is_written_again_with_what_was_typed(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await type_weight(pilot, app, "95 kg")
        path.unlink()
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert isinstance(app.screen, AskDialog) and "[w] write it again" in " ".join(
            str(w.render()) for w in app.screen.query(Static))
        await pilot.press("w")
        await settle(pilot)
        assert not isinstance(app.screen, AskDialog)
        assert "[saved]" in header(app)
        assert any(n.message == f"Saved {path}" for n in app._notifications)
    saved = json.loads(path.read_text(encoding="utf-8"))
    assert saved["patient"]["weight"] == "95 kg"
    assert saved == app.doc.raw
    assert path.stat().st_mode & 0o777 == 0o600
    assert read_recovery(recovery_path(str(path), state)) is None  # saved: the recovery file is gone


async def test_a_deleted_file_keeps_the_typing_whatever_the_answer(state, sample_copy, tmp_path):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await type_weight(pilot, app, "96 kg")
        path.unlink()
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press("escape")  # not now: nothing written, nothing dropped
        await pilot.pause()
        assert not path.exists() and "[UNSAVED]" in header(app)
        assert app.doc.raw["patient"]["weight"] == "96 kg"
        assert read_recovery(recovery_path(str(path), state)).raw["patient"]["weight"] == "96 kg"
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press("a")  # under another name
        await pilot.pause()
        other = tmp_path / "kept.json"
        dialog_input = app.screen.query_one("#dlg-input", Input)
        dialog_input.value = str(other)
        await pilot.press("enter")
        await settle(pilot)
        assert "[saved]" in header(app) and app.doc.path == str(other)
    assert json.loads(other.read_text(encoding="utf-8"))["patient"]["weight"] == "96 kg"
    assert not path.exists()


async def test_a_file_back_before_the_answer_is_not_overwritten(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await type_weight(pilot, app, "97 kg")
        theirs = path.read_bytes().replace(b'"weight": "', b'"weight": "1')
        path.unlink()
        await pilot.press("ctrl+s")
        await pilot.pause()
        path.write_bytes(theirs)  # another session writes the file while the question is open
        await pilot.press("w")
        await pilot.pause()
        assert isinstance(app.screen, AskDialog) and "changed by someone else" in app.screen.question
        await pilot.press("escape")
        await pilot.pause()
        assert app.doc.raw["patient"]["weight"] == "97 kg" and "[UNSAVED]" in header(app)
    assert path.read_bytes() == theirs


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
