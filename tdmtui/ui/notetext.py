"""The chart note text in the app: the same note ``tdmtui note`` writes for the same case and choice."""

from __future__ import annotations

from typing import Any

from tdmtui.core.input.textsafe import neutralise_block


def note_text(outcome: Any, chosen: dict[str, Any] | None = None, full: bool = False,
              saved_digest: str | None = None) -> str:
    """The note for an Outcome and the regimen chosen in review (``render_note``'s, nothing added).

    Args:
        outcome: the computed case.
        chosen: the regimen chosen in the plan view (``dose_mg``, ``interval_h``, ``infusion_h``);
            None reads the case's ``chosen_regimen`` as ``tdmtui note`` does.
        full: add every method, every model and the references (``tdmtui note --full``).
        saved_digest: sha256 of the case file when the app's case is saved unchanged in it,
            so the note's record names the file as ``tdmtui note`` on that file does.
    """
    from tdmtui.core.text.note import render_note

    if saved_digest and saved_digest == outcome.result.get("input_sha256"):
        outcome = outcome.with_result(input_saved=True)
    return neutralise_block(render_note(outcome, chosen=chosen, full=full))
