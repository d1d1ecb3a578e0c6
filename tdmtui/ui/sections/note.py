"""Note: the chart note, copied to the clipboard (c), written to a file (w), full detail (f)."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.widgets import Label, Static

from tdmtui.ui.clipboard import COPY_HINT


TITLE = "c copy  w write to a file  f full detail"


class NoteSection(Vertical):
    """The note text with copy and write keys."""

    BINDINGS = [
        Binding("c", "app.copy_note", "Copy note", id="note.copy"),
        Binding("w", "app.write_note", "Write to file", id="note.write"),
        Binding("f", "app.note_full", "Full detail", id="note.full"),
    ]

    def compose(self) -> ComposeResult:
        yield Label(TITLE, id="note-title", classes="section-title", markup=False)
        with VerticalScroll(id="note-scroll"):
            yield Static("The note appears when the case computes.", id="note-text", markup=False)
        yield Label(COPY_HINT, id="note-caveat", markup=False)

    def show(self, text: str) -> None:
        """Show the note text and its length (arrows and PgUp/PgDn scroll it)."""
        self.query_one("#note-text", Static).update(text)
        self.query_one("#note-title", Label).update(f"{TITLE}  ({len(text.splitlines())} lines, PgDn)")
