"""Whole journeys through the app with Textual's pilot at 80x24.

Numbers on screen are checked against the engine's result dict (what
``tdmtui compute --json`` prints) rounded by the display rules written out
here (ke 3 decimals, Vd 1, CL 2, AUC whole, levels 1), not by the app's
own formatter.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys

from textual.widgets import DataTable, Static

from tdmtui.ui.app import TdmApp
from tdmtui.ui.dialogs import AskDialog
from tdmtui.ui.document import new_case_raw
from tdmtui.ui.recovery import read_recovery, recovery_path, write_recovery
from tdmtui.ui.widgets.form import FieldRow
from uihelpers import SAMPLES, settle


async def type_into(pilot, selector: str, text: str) -> None:
    await pilot.pause()  # let the start-up focus settle first
    widget = pilot.app.screen.query_one(selector)
    widget.focus()
    widget.value = ""
    await pilot.press(*list(text))


def table_rows(table: DataTable) -> list[list[str]]:
    return [[str(c) for c in table.get_row_at(i)] for i in range(table.row_count)]


async def every_method_column(pilot, table: DataTable) -> list[tuple[str, str]]:
    """Page through the estimate table (]): (header, ke) of every method beside the one used, in order.

    Each page fits the 80 columns (the cells and their padding), so nothing scrolls sideways.
    """
    seen: list[tuple[str, str]] = []
    for _ in range(20):
        widths = sum(col.get_render_width(table) for col in table.ordered_columns)
        assert widths <= 80, widths
        heads = [" ".join(str(col.label).split()) for col in table.ordered_columns]
        ke = table_rows(table)[0]
        page = list(zip(heads[2:], ke[2:]))
        if page and page[0] in seen:
            break
        seen += page
        await pilot.press("right_square_bracket")
        await pilot.pause()
    for head, _ in seen:
        assert not re.match(r"(pop|bay):|(prior|MAP)\b", head), head
    return seen


async def test_type_a_new_vancomycin_case_fit_choose_and_copy_note(state):
    app = TdmApp(None, None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.doc.raw["drug"] == "vancomycin"
        await type_into(pilot, "#pt-age-input", "67")
        await pilot.press("tab", "m")  # sex: first letter chooses
        await type_into(pilot, "#pt-weight-input", "92")
        await type_into(pilot, "#pt-height-input", "178")
        await type_into(pilot, "#scr-value-input", "97 umol/L")
        p = app.doc.raw["patient"]
        assert (p["age"], p["sex"], p["weight"], p["height"], p["scr"]) == ("67 yr", "male", "92 kg", "178 cm", "97 umol/L")
        # derived values as typed: CrCl shown in the header
        assert "CrCl" in str(app.screen.query_one("#header", Static).content)

        await pilot.press("f3")
        await pilot.press("a")  # first dose row, form focused
        await pilot.press(*"2026-03-02T08:00", "tab", *"1500", "tab", *"90")
        await pilot.press("escape", "r")  # repeat every 12 h x 5 from the dialog
        dialog = app.screen
        dialog.query_one("Input").value = ""
        await pilot.press(*"12h x 5", "enter")
        await pilot.pause()
        starts = [d["start"] for d in app.doc.raw["doses"]]
        assert starts == ["2026-03-02T08:00", "2026-03-02T20:00", "2026-03-03T08:00", "2026-03-03T20:00",
                          "2026-03-04T08:00", "2026-03-04T20:00"]
        assert app.doc.raw["doses"][0] == {"start": "2026-03-02T08:00", "amount": "1500 mg", "duration": "90 min"}

        await pilot.press("f4", "a")
        await pilot.press(*"2026-03-04T10:30", "tab", *"35")
        await pilot.press("escape", "a")
        await pilot.press(*"19:30", "tab", *"15")  # clock time: same day as the row above
        assert app.doc.raw["levels"] == [{"time": "2026-03-04T10:30", "conc": "35 mg/L"},
                                         {"time": "2026-03-04T19:30", "conc": "15 mg/L"}]
        await settle(pilot)
        assert app.outcome is not None, app.screen.query_one("#status", Static).content
        assert app.outcome.result["method"] == "two-level"

        await pilot.press("f6")
        await settle(pilot)
        plan_table = app.screen.query_one("#plan-table", DataTable)
        assert plan_table.row_count >= 2
        plan_table.focus()
        await pilot.press("down", "enter")
        await settle(pilot)  # the choice rewrites the note: wait for it before copying
        assert app.chosen is not None
        second = app.outcome.result["regimen"].get("candidates") or [None, *app.outcome.result["regimen"]["alternatives"]]
        assert app.chosen["dose_mg"] == second[1]["dose_mg"]
        await pilot.press("f7")
        await pilot.pause()
        # before anything is copied the section says what c does, not that something was sent
        hint = str(app.screen.query_one("#note-caveat", Static).content)
        assert "OSC 52" in hint and "Sent" not in hint and len(hint) <= 80
        await pilot.press("c")
        await pilot.pause()
        assert any("Sent to your clipboard" in n.message for n in app._notifications)
        assert app.clipboard == app.note
        assert "Chosen in review: " in app.clipboard
        assert f"{app.chosen['dose_mg']:.0f} mg" in app.clipboard


async def test_open_sample_case_screen_matches_the_engine(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    cli = subprocess.run([sys.executable, "-m", "tdmtui", "compute", str(path), "--json"],
                         capture_output=True, text=True, check=True)
    expected = json.loads(cli.stdout)
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.screen.query_one("#pt-weight-input").value == "74 kg"
        await pilot.press("f5")
        table = app.screen.query_one("#est-table", DataTable)
        rows = {r[0]: r[1:] for r in table_rows(table)}
        est = expected["estimate"]
        # display rounding written out independently of the app's formatter (numfmt's table:
        # ke 3 significant figures, as the note and the command-line summary print it)
        assert rows["ke (1/h)"][0] == f"{est['ke_per_h']:#.3g}"
        assert rows["half-life (h)"][0] == f"{est['half_life_h']:.1f}"
        assert rows["Vd (L)"][0] == f"{est['vd_l']:.1f}"
        assert rows["CL (L/h)"][0] == f"{est['cl_l_per_h']:.2f}"
        assert rows["AUC24 (mg*h/L)"][0] == f"{est['current']['auc24_mg_h_per_l']:.0f}"
        assert rows["ss trough (mg/L)"][0] == f"{est['current']['trough_mg_per_l']:.1f}"
        iv = est.get("interval90", {}).get("ke_per_h")
        if iv:  # the method used: its 90 % interval beside it, same rounding
            assert rows["ke (1/h)"][0].split()[1] == f"[{iv[0]:#.3g}-{iv[1]:#.3g}]"
        others = await every_method_column(pilot, table)
        assert len(others) == len(expected["methods"])
        for (title, ke), (name, other) in zip(others, expected["methods"].items()):
            assert ke == f"{other['ke_per_h']:#.3g}", name
            family, _, model = name.partition(":")
            assert title.replace("- ", "-").split(" (")[0] == family, (title, name)  # the note's naming, in full
        header = str(app.screen.query_one("#header", Static).content)
        assert f"CrCl {expected['patient']['crcl_ml_min']:.0f} mL/min" in header
        reg = expected.get("regimen")
        if reg:  # the plan's first row is the proposal, to display rounding
            await pilot.press("f6")
            first = table_rows(app.screen.query_one("#plan-table", DataTable))[0]
            assert first[2] == f"{reg['dose_mg']:.0f} mg"
            assert first[5] == f"{reg['predicted']['auc24_mg_h_per_l']:.0f}"
            assert first[7] == f"{reg['predicted']['trough_mg_per_l']:.1f}"
            summary = str(app.screen.query_one("#plan-summary", Static).content)
            assert f"Next dose: {reg['next_dose_at']}" in summary


async def test_show_working_recomputes_from_its_own_numbers(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f5", "w")
        text = str(app.screen.query_one("#est-working-text", Static).content)
    checked = 0
    # each "= a / b" or "= a x b" line, recomputed here, must give the "-> value" under it
    for sub, value in re.findall(r"= ([0-9.]+ [/x] [0-9.]+)\n\s+-> (?:[a-zA-Z0-9/ ]+ = )?([0-9.]+)", text):
        a, op, b = sub.split()
        got = float(a) / float(b) if op == "/" else float(a) * float(b)
        assert abs(got - float(value)) <= 0.002 * abs(float(value)) + 1e-9, (sub, value)
        checked += 1
    assert checked >= 2, text


async def test_recover_after_a_crash(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    raw = json.loads(path.read_text())
    raw["patient"]["weight"] = "81 kg"
    rp = recovery_path(str(path), state)
    write_recovery(rp, str(path), raw)  # as if the last session died after this edit
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, AskDialog)
        await pilot.press("r")
        await settle(pilot)
        assert app.doc.raw["patient"]["weight"] == "81 kg"
        assert app.screen.query_one("#pt-weight-input").value == "81 kg"
        assert "UNSAVED" in str(app.screen.query_one("#header", Static).content)
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert json.loads(path.read_text())["patient"]["weight"] == "81 kg"
        assert read_recovery(rp) is None  # a successful save removes it


async def test_bad_input_shows_its_reason_and_keeps_the_text(state):
    app = TdmApp(None, None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await type_into(pilot, "#pt-weight-input", "92 stone")
        row = app.screen.query_one("#pt-weight", FieldRow)
        assert row.has_class("-bad")
        note = str(row.query_one(".field-note").content)
        assert note.startswith("! unknown unit 'stone'")
        assert app.doc.raw["patient"]["weight"] == "92 stone"
        await settle(pilot)
        rec = read_recovery(recovery_path(None, state))
        assert rec is not None and rec.raw["patient"]["weight"] == "92 stone"  # nothing typed is lost
        status = str(app.screen.query_one("#status", Static).content)
        assert status.startswith("INPUT patient.")


async def test_clock_time_rolls_to_next_day_and_says_so(state):
    app = TdmApp(None, None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f3", "a")
        await pilot.press(*"2026-03-02T20:00", "tab", *"1 g", "tab", *"60")
        await pilot.press("escape", "a")
        start = app.screen.query_one("#doses-start-input")
        start.value = ""
        await pilot.press(*"08:00")
        assert app.doc.raw["doses"][1]["start"] == "2026-03-03T08:00"
        note = str(app.screen.query_one("#doses-start", FieldRow).query_one(".field-note").content)
        assert note == "next day: 2026-03-03T08:00"


async def test_delete_and_undo_a_dose(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f3")
        n = len(app.doc.raw["doses"])
        await pilot.press("x")
        assert len(app.doc.raw["doses"]) == n - 1
        await pilot.press("u")
        assert len(app.doc.raw["doses"]) == n
        assert app.screen.query_one("#doses-table", DataTable).row_count == n


async def test_save_refuses_a_file_changed_by_another_session(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_into(pilot, "#pt-weight-input", "75 kg")
        other = json.loads(path.read_text())
        other["label"] = "changed elsewhere"
        path.write_text(json.dumps(other))
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert isinstance(app.screen, AskDialog)
        assert json.loads(path.read_text())["label"] == "changed elsewhere"
        await pilot.press("a")  # save as
        await pilot.pause()
        field = app.screen.query_one("Input")
        field.value = str(path.with_name("mine.json"))
        await pilot.press("enter")
        await pilot.pause()
        assert json.loads(path.with_name("mine.json").read_text())["patient"]["weight"] == "75 kg"
        assert json.loads(path.read_text())["label"] == "changed elsewhere"


async def test_quit_with_unsaved_changes_asks_first(state):
    app = TdmApp(None, None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_into(pilot, "#pt-age-input", "50")
        await pilot.press("ctrl+q")
        await pilot.pause()
        assert isinstance(app.screen, AskDialog)
        await pilot.press("escape")
        await pilot.pause()
        assert app.is_running
        await pilot.press("ctrl+q", "k")  # keep for later: quits, the recovery file stays
        await pilot.pause()
    assert app.return_code == 0
    assert read_recovery(recovery_path(None, state)).raw["patient"]["age"] == "50 yr"


async def test_quit_and_discard_removes_the_recovery_file(state):
    app = TdmApp(None, None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_into(pilot, "#pt-age-input", "50")
        assert read_recovery(recovery_path(None, state)) is not None
        await pilot.press("ctrl+q", "d")
        await pilot.pause()
    assert read_recovery(recovery_path(None, state)) is None


async def test_new_case_raw_is_the_default(state):
    app = TdmApp(None, None, state=state)
    assert app.doc.raw == new_case_raw()
    assert SAMPLES.exists()


async def test_infusion_by_end_time_and_a_level_set_aside_with_reason(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f3")
        await type_into(pilot, "#doses-infusion-input", "21:45")  # row 1 starts 2026-01-11T20:00
        row = app.doc.raw["doses"][0]
        assert row.get("end") == "2026-01-11T21:45" and "duration" not in row
        note = str(app.screen.query_one("#doses-infusion", FieldRow).query_one(".field-note").content)
        assert note == "ends 21:45, 1.75 h"
        await pilot.press("f4")
        app.screen.query_one("#levels-use-input").focus()
        await pilot.pause()
        await pilot.press("s")  # use -> set-aside
        assert app.doc.raw["levels"][0]["use"] is False
        await settle(pilot)
        status = str(app.screen.query_one("#status", Static).content)
        assert status.startswith("INPUT level 1 reason")  # a set-aside level needs its reason (rows as the table counts)
        await type_into(pilot, "#levels-reason-input", "drawn from the line")
        assert app.doc.raw["levels"][0]["reason"] == "drawn from the line"
        await settle(pilot)
        assert app.outcome is not None
        table = {r["field"]: r for r in app.outcome.result["levels"]}
        assert table["levels[0]"]["usable"] is False


async def test_write_note_to_a_file_0600(state, sample_copy):
    import os
    import stat

    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f7", "w")
        await pilot.pause()
        field = app.screen.query_one("Input")
        assert field.value == str(path.with_name("vanc-steady-state.note.txt"))
        await pilot.press("enter")
        await pilot.pause()
    out = path.with_name("vanc-steady-state.note.txt")
    from tdmtui.core.text.safety import NOTE_LINE

    # the note carries the standing caution (wrapped at 80 columns)
    assert out.read_text() == app.note and " ".join(NOTE_LINE.split()) in " ".join(app.note.split())
    assert stat.S_IMODE(os.stat(out).st_mode) == 0o600


async def test_a_small_window_is_named(state):
    app = TdmApp(None, None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.resize_terminal(60, 20)
        await pilot.pause()
        assert any("60x20" in n.message for n in app._notifications)


async def test_opening_is_not_an_edit_and_targets_can_be_typed(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert not app.doc.dirty and "[saved]" in str(app.screen.query_one("#header", Static).content)
        assert app.screen.query_one("#pt-target-input").value == "auc24 400-600 mg*h/L"
        await type_into(pilot, "#pt-target-input", "auc24 450-550")
        assert app.doc.raw["target"]["auc24"] == ["450 mg*h/L", "550 mg*h/L"]
        assert app.doc.raw["target"]["mic"] == "1 mg/L"  # other target keys are kept
        assert "UNSAVED" in str(app.screen.query_one("#header", Static).content)


async def test_a_new_file_name_starts_a_new_case_saved_there(state, tmp_path):
    target = tmp_path / "bed7.json"
    app = TdmApp(str(target), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_into(pilot, "#pt-age-input", "71")
        await pilot.press("ctrl+s")
        await pilot.pause()
    assert json.loads(target.read_text())["patient"]["age"] == "71 yr"


async def test_a_file_that_is_not_json_is_named_and_not_touched(state, tmp_path):
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    app = TdmApp(str(bad), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert any("Could not open" in n.message for n in app._notifications)
        assert app.doc.path is None
    assert bad.read_text() == "{not json"


async def test_an_engine_error_is_shown_on_the_field_it_names(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await type_into(pilot, "#pt-weight-input", "0.1 kg")  # reads as a quantity; impossible as a weight
        await settle(pilot)
        row = app.screen.query_one("#pt-weight", FieldRow)
        assert row.has_class("-bad")
        assert "not a possible weight" in str(row.query_one(".field-note").content)
        await type_into(pilot, "#pt-weight-input", "74 kg")
        await settle(pilot)
        assert not row.has_class("-bad") and app.outcome is not None


async def test_a_slow_computation_shows_progress_and_typing_goes_on(state, sample_copy, monkeypatch):
    import threading

    import tdmtui.core.compute as engine

    release = threading.Event()
    real = engine.compute

    def slow(*args, **kwargs):
        release.wait(10)  # held until the test has looked at the screen
        return real(*args, **kwargs)

    monkeypatch.setattr(engine, "compute", slow)
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.3)
        assert str(app.screen.query_one("#status", Static).content).startswith("Computing")
        await type_into(pilot, "#pt-age-input", "56")  # the UI answers while the engine works
        assert app.doc.raw["patient"]["age"] == "56 yr"
        release.set()
        await settle(pilot)
        assert app.outcome is not None


async def test_standing_order_is_the_case_schedule(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f3")
        assert isinstance(app.focused, DataTable)  # the table first, so a/x/u/r work at once
        await type_into(pilot, "#order-schedule-input", "1250 mg every 12 h over 90 min")
        assert app.doc.raw["schedule"] == {"dose": "1250 mg", "interval": "12 h", "duration": "90 min"}
        await settle(pilot)
        assert app.outcome.result["current_regimen"]["dose_mg"] == 1250.0


async def test_a_malformed_case_opens_and_names_the_problem(state, tmp_path):
    bad = tmp_path / "odd.json"
    bad.write_text(json.dumps({"format": "tdmtui.case/1", "drug": "vancomycin", "patient": "none", "doses": []}))
    app = TdmApp(str(bad), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert str(app.screen.query_one("#status", Static).content).startswith("INPUT patient")
        await pilot.press("f3", "f4", "f5", "f6", "f7")
        await pilot.pause()
        assert app.is_running
