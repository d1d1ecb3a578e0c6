"""The short safety text is shown once, on the first run, says how to close it, and the marker is private."""

from __future__ import annotations

import stat

from textual.widgets import Input, Static

from tdmtui.core.text.safety import SHORT_LINES
from tdmtui.ui.app import TdmApp
from tdmtui.ui.dialogs import NoticeDialog
from tdmtui.ui.safety import NOTICE_MARKER

from uihelpers import settle


def _screen_text(screen) -> str:  # noqa: ANN001
    return " ".join(str(w.render()) for w in screen.query(Static))


async def test_first_run_shows_the_safety_text_once_and_says_how_to_close_it(tmp_path):
    state = tmp_path / "state"
    app = TdmApp(None, None, state=state, first_run_notice=True)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, NoticeDialog)
        text = _screen_text(app.screen)
        assert SHORT_LINES[0].split()[0] in text and "clinical judgement" in text
        assert "[Enter] or [Esc] continue" in text
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, NoticeDialog)
        # closed, nothing lies over the form: a bad weight's reason is on screen beside the field
        field = app.screen.query_one("#pt-weight-input", Input)
        field.focus()
        field.value = ""
        await pilot.press(*"-5 kg")
        await settle(pilot)
        note = str(app.screen.query_one("#pt-weight .field-note", Static).render())
        assert "must be positive" in note
        assert not app._notifications or all("clinical judgement" not in n.message for n in app._notifications)
    marker = state / NOTICE_MARKER
    assert marker.exists() and stat.S_IMODE(marker.stat().st_mode) == 0o600
    again = TdmApp(None, None, state=state, first_run_notice=True)
    async with again.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert not isinstance(again.screen, NoticeDialog)
