"""The app never writes a case's control characters or markup to the terminal or clipboard.

A case whose free text holds escape sequences (ECMA-48 CSI/OSC; OSC 52 is the
xterm clipboard convention, common practice), BEL, NUL, DEL, C1 and
bidirectional controls (Unicode UAX #9) is opened; every section is shown and
what Textual would write to the terminal is read back: none of the case's
sequences may be in it, and its markup-like text must show as typed.
"""

from __future__ import annotations

import json

from textual.widgets import DataTable

from casedata import base_case
from tdmtui.ui.app import TdmApp
from tdmtui.ui.textguard import STAND_INS, install, plain
from uihelpers import settle

EVIL = "\x1b]0;PWNED\x07\x1b]52;c;cm0gLXJmIH4K\x07\x1b[2J\x9b1;31m\u202eGIVE 10 g NOW\u2066\x00\x7f[bold]MARK[/bold]"
#: what the case injects, and what Textual itself never writes
INJECTED = ("\x1b]0;PWNED", "\x1b]52;", "\x1b[2J", "\x9b", "\u202e", "\u2066", "\x00", "\x7f", "\x07")


def hostile_raw() -> dict:
    raw = base_case()
    raw["label"] = "L" + EVIL
    raw["patient"]["comedications"] = ["C" + EVIL]
    raw["target"] = {"indication": "I" + EVIL}
    raw["levels"].append({"time": "2026-03-03T12:00", "conc": "30 mg/L", "use": False, "reason": "R[bold]M[/bold]" + EVIL})
    return raw


def terminal_output(app: TdmApp) -> str:
    """What the screen's full repaint writes to the terminal (Textual's own escapes included)."""
    return app.screen._compositor.render_full_update().render_segments(app.console)


def test_stand_ins_are_one_cell_each_and_cover_the_controls():
    install()
    from rich.cells import cell_len
    from rich.text import Text

    assert all(cell_len(s) == 1 for s in STAND_INS.values())
    shown = Text("a\x1b[2Jb\u202ec\x9b").plain
    assert shown == "a\u241b[2Jb\ufffdc\ufffd"
    assert plain("[bold]x[/bold]\x1b").plain == "[bold]x[/bold]\\x1b"


async def test_every_section_of_a_hostile_case_reaches_the_terminal_neutralised(state, tmp_path):
    path = tmp_path / "hostile.json"
    path.write_text(json.dumps(hostile_raw(), ensure_ascii=False), encoding="utf-8")
    copied: list[str] = []
    app = TdmApp(str(path), None, state=state)
    app.copy_to_clipboard = copied.append  # type: ignore[method-assign]
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.note, "the hostile case computes"
        seen = []
        for key in ("f2", "f3", "f4", "f5", "f6", "f7", "f8", "escape", "f1", "escape"):
            await pilot.press(key)
            await pilot.pause()
            out = terminal_output(app)
            seen.append(out)
            for seq in INJECTED:
                assert seq not in out, (key, repr(seq))
        screens = "".join(seen)
        assert "PWNED" in screens  # the text is shown, its controls are not obeyed
        await pilot.press("f4")
        await pilot.pause()
        table = app.screen.query_one("#levels DataTable", DataTable)
        cells = [str(c) for i in range(table.row_count) for c in table.get_row_at(i)]
        assert any(c.startswith("R[bold]M[/bold]\\x1b]0;PWNED") for c in cells)  # markup in a reason is shown, not interpreted
        await pilot.press("f7", "c")
        await pilot.pause()
    assert copied, "the note was sent to the clipboard"
    for seq in INJECTED:
        assert seq not in copied[0]
    assert "\\x1b]52;c;" in copied[0]
