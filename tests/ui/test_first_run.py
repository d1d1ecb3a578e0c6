"""The short safety text is shown once, on the first run, and the marker is private."""

from __future__ import annotations

import stat

from tdmtui.core.safety import SHORT_LINES
from tdmtui.ui.app import TdmApp
from tdmtui.ui.safety import NOTICE_MARKER


async def test_first_run_shows_the_safety_text_once(tmp_path):
    state = tmp_path / "state"
    app = TdmApp(None, None, state=state, first_run_notice=True)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        shown = [n.message for n in app._notifications]
        assert any(SHORT_LINES[0].split()[0] in m and "clinical judgement" in m for m in shown)
    marker = state / NOTICE_MARKER
    assert marker.exists() and stat.S_IMODE(marker.stat().st_mode) == 0o600
    again = TdmApp(None, None, state=state, first_run_notice=True)
    async with again.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert not any("clinical judgement" in n.message for n in again._notifications)
