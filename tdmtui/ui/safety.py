"""The safety text the app shows (from tdmtui.core.text.safety), and the once-only first-run notice."""

from __future__ import annotations

import os
from pathlib import Path

from tdmtui.core.text.safety import SCREEN_LINE, SHORT

#: Marker file in the state folder: the first-run notice has been shown.
NOTICE_MARKER = "safety-notice-shown"


def short_text() -> str:
    """The short safety text for the help screen and the first-run notice."""
    return SHORT


def caution_line() -> str:
    """The one-line caution every result section carries."""
    return SCREEN_LINE


def first_run(state: Path) -> bool:
    """True the first time for this user (no marker yet); writes the marker (folder 0700, file 0600)."""
    marker = state / NOTICE_MARKER
    if marker.exists():
        return False
    try:
        state.mkdir(parents=True, exist_ok=True, mode=0o700)
        fd = os.open(str(marker), os.O_WRONLY | os.O_CREAT, 0o600)
        os.close(fd)
    except OSError:
        pass  # a read-only home: show the notice every time rather than never
    return True
