"""The app's last line against terminal injection: no control character reaches the screen.

The note, summary and clipboard text are neutralised by
:mod:`tdmtui.core.input.textsafe` (``\\x1b``, ``<U+202E>``). Other free text on
screen (the fields being edited, table cells, messages) is drawn by Textual
and Rich, which drop a few controls (BEL, BS, VT, FF, CR) but pass ESC, C1
and bidirectional controls to the terminal. :func:`install` widens their
translation table so every such character is drawn as one visible stand-in
of the same length (control pictures such as U+241B for ESC, U+FFFD for C1,
bidirectional controls and lone surrogates). Only the drawing changes: a
field's value keeps what was typed or read.

:func:`plain` gives a table cell that is never read as Rich markup.
"""

from __future__ import annotations

from rich.text import Text

from tdmtui.core.input.textsafe import BIDI, neutralise

#: codepoint -> visible stand-in of one cell (line break and tab are left to the widgets)
STAND_INS: dict[int, str] = {
    **{c: chr(0x2400 + c) for c in range(0x20) if c not in (0x09, 0x0A)},
    0x7F: "\u2421",
    **{c: "\ufffd" for c in range(0x80, 0xA0)},
    **{ord(c): "\ufffd" for c in BIDI},
    **{c: "\ufffd" for c in range(0xD800, 0xE000)},
}


def install() -> None:
    """Make Textual's and Rich's control-code filter show every control as a stand-in."""
    import rich.control
    import textual.content

    for table in (textual.content._CONTROL_STRIP_TRANSLATE, rich.control._CONTROL_STRIP_TRANSLATE):
        table.update(STAND_INS)  # type: ignore[arg-type]


def plain(text: object) -> Text:
    """A table cell or label from free text: neutralised, never interpreted as markup."""
    return Text(neutralise(text))
