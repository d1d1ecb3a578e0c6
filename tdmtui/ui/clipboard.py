"""Copy the note to the local clipboard (OSC 52) and write it to a file.

OSC 52 reaches the user's own clipboard over SSH when the terminal allows it;
some terminals ignore it and tmux passes it on only with
``set -g set-clipboard on``. There is no acknowledgement, so the app says so
plainly and always offers to write the note to a file.
"""

from __future__ import annotations

from pathlib import Path

from tdmtui.core.input.casefile import write_atomic
from tdmtui.core.input.textsafe import neutralise_block

COPY_CAVEAT = ("Sent to your clipboard by OSC 52. Some terminals and tmux (unless set-clipboard is on) "
               "block it: if nothing pastes, press w to write the note to a file.")
#: The Note section's standing line: what c does and its limit, true before anything is copied.
COPY_HINT = "c copies by OSC 52; if nothing pastes (some terminals, tmux), w writes a file"


def clipboard_text(text: str) -> str:
    """What OSC 52 sends: the note with every control character shown, never obeyed."""
    return neutralise_block(text)


def default_note_path(case_path: str | None) -> str:
    """Where the note goes by default: beside the case (``case.note.txt``) or ``./tdm-note.txt``."""
    if case_path:
        p = Path(case_path)
        return str(p.with_name(p.stem + ".note.txt"))
    return "tdm-note.txt"


def write_note(path: str, text: str) -> Path:
    """Write the note atomically with mode 0600; returns the path written."""
    p = Path(path).expanduser()
    write_atomic(p, neutralise_block(text).encode("utf-8"))
    return p
