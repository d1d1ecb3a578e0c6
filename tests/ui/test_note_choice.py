"""The regimen chosen in the app is the note's regimen, saved with the case, and the note is `tdmtui note`'s.

Pilot tests at 80x24 that read the saved file back, not only the screen.
"""

from __future__ import annotations

import json
import subprocess
import sys

from textual.widgets import DataTable, Static

from tdmtui.ui.app import TdmApp
from uihelpers import settle


def cli_note(path, *extra: str) -> str:
    return subprocess.run([sys.executable, "-m", "tdmtui", "note", str(path), *extra], capture_output=True,
                          text=True, check=True).stdout


async def test_chosen_regimen_is_saved_and_the_note_is_the_cli_note(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.note == cli_note(path)  # unchanged case: the same note, the file's digest
        await pilot.press("f6")
        table = app.screen.query_one("#plan-table", DataTable)
        table.focus()
        await pilot.press("down", "enter")
        alt = app.outcome.result["regimen"]["alternatives"][0]
        assert app.chosen["dose_mg"] == alt["dose_mg"]
        await settle(pilot)
        await pilot.press("ctrl+s")
        await pilot.pause()
        saved = json.loads(path.read_text(encoding="utf-8"))
        assert saved["chosen_regimen"] == {"dose": f"{alt['dose_mg']:g} mg", "interval": f"{alt['interval_h']:g} h",
                                           "duration": f"{alt['infusion_h'] * 60:g} min"}
        assert "[saved]" in str(app.screen.query_one("#header", Static).content)
        note = app.note
        verb = "hold, then change to" if alt["hold_until"] else "change to"
        assert f"Chosen in review: {verb} {alt['dose_mg']:g} mg every {alt['interval_h']:g} h" in note
        assert note == cli_note(path)
    # reopened: the choice is still marked and still the note's regimen
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        marks = [str(app.screen.query_one("#plan-table", DataTable).get_row_at(i)[0])
                 for i in range(app.screen.query_one("#plan-table", DataTable).row_count)]
        assert marks[1] == "CHOSEN" and marks[0] == "proposed"
        assert app.note == cli_note(path)


async def test_note_full_toggle_is_the_cli_full_note(state, sample_copy):
    path = sample_copy("vanc-trough-only.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f7", "f")
        assert "REFERENCES" in app.note
        assert app.note == cli_note(path, "--full")
        await pilot.press("f")
        assert app.note == cli_note(path)


async def test_working_view_is_the_notes_working(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f5", "w")
        shown = str(app.screen.query_one("#est-working-text", Static).content)
    block = app.note.split("Working (to check by hand):\n")[1].split("\nOther methods")[0]
    assert " ".join(block.split()) in " ".join(shown.split())


async def test_one_parse_per_recompute(state, sample_copy, monkeypatch):
    """The app reads the case once per recompute: the worker computes the Case the check produced."""
    import tdmtui.core.input.case as case_mod

    calls = []
    real = case_mod.parse_case

    def counting(*args, **kwargs):
        calls.append(1)
        return real(*args, **kwargs)

    monkeypatch.setattr(case_mod, "parse_case", counting)
    import tdmtui.core.compute as compute_mod

    monkeypatch.setattr(compute_mod, "parse_case", counting)  # compute_raw's own reference
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.outcome is not None
        calls.clear()
        app.request_compute(now=True)
        await settle(pilot)
        assert app.outcome is not None and len(calls) == 1
