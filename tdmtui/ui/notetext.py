"""The chart note text in the app: the same note ``tdmtui note`` writes for the same case and choice."""

from __future__ import annotations

import copy
from typing import Any

from tdmtui.core.textsafe import neutralise_block


def note_text(outcome: Any, full: bool = False, saved_digest: str | None = None) -> str:
    """The note for an Outcome; the regimen chosen in review comes from the case (``chosen_regimen``).

    Args:
        outcome: the computed case.
        full: add every method, every model and the references (``tdmtui note --full``).
        saved_digest: sha256 of the case file when the app's case is saved unchanged in it,
            so the note's record names the file as ``tdmtui note`` on that file does.
    """
    from tdmtui.core.note import render_note

    if saved_digest and saved_digest == outcome.result.get("input_sha256"):
        outcome = copy.copy(outcome)
        outcome.result = dict(outcome.result, input_saved=True)
    return neutralise_block(render_note(outcome, full=full))
