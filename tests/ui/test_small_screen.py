"""What a pharmacist reads at 80x24: titles that match the view, no empty headers, fields not cut."""

from __future__ import annotations

from textual.widgets import DataTable, Input, Label

from tdmtui.ui.app import TdmApp
from uihelpers import opened, screen_lines, settle


def title(app) -> str:  # noqa: ANN001
    return str(app.screen.query_one("#est-title", Label).render())


async def test_only_the_table_names_its_page(state, sample_copy):
    async with opened(state, sample_copy, "vanc-obese.json", "f5") as pilot:
        app = pilot.app
        assert "Page 1/" in title(app)  # more methods than fit 80 columns: the table is in pages
        await pilot.press("right_square_bracket")
        await pilot.pause()
        assert "Page 2/" in title(app)
        for view in ("g", "w", "m"):
            await pilot.press(view)
            await pilot.pause()
            assert "Page" not in title(app), view
            assert title(app).startswith("* used: two-level")
            assert not any("Page" in line for line in screen_lines(app)), view
        await pilot.press("right_square_bracket")  # no page to turn outside the table
        await pilot.press("t")
        await pilot.pause()
        assert "Page 2/" in title(app)


async def test_a_dialysis_plan_has_no_empty_candidates_table(state, sample_copy):
    async with opened(state, sample_copy, "vanc-haemodialysis.json", "f6") as pilot:
        app = pilot.app
        assert app.outcome.result["regimen"]["mode"] == "dialysis"
        lines = screen_lines(app)
        text = "\n".join(lines)
        assert not app.screen.query_one("#plan-table", DataTable).display
        assert not any("Action" in line and "Dose" in line for line in lines)  # no header of an empty table
        assert "Candidates (Enter" not in text
        assert sum("No candidates to choose" in line for line in lines) == 1
        # the proposal and the whole caution are on screen together
        assert "After the session ending 2026-09-09 12:00: 750 mg" in text
        assert "Decision support only" in text and "licensed clinical judgement decide." in text


async def test_a_stop_shows_neither_candidates_nor_their_header(state, sample_copy):
    async with opened(state, sample_copy, "vanc-stop-dialysis.json", "f6") as pilot:
        app = pilot.app
        text = "\n".join(screen_lines(app))
        assert "No regimen: a STOP warning stands" in text
        assert "Candidates" not in text and "No candidates" not in text
        assert "licensed clinical judgement decide." in text


async def test_candidates_still_shown_with_their_header(state, sample_copy):
    async with opened(state, sample_copy, "vanc-obese.json", "f6") as pilot:
        app = pilot.app
        table = app.screen.query_one("#plan-table", DataTable)
        assert table.display and table.row_count == len(app.query_one("PlanSection").options) >= 2
        text = "\n".join(screen_lines(app))
        assert "Candidates (Enter chooses" in text and "proposed  continue  1750 mg" in text


async def test_the_indication_is_readable_whole_at_80_columns(state, sample_copy):
    path = sample_copy("vanc-haemodialysis.json")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        field = app.screen.query_one("#pt-indication-input", Input)
        field.focus()
        await pilot.pause()
        given = "demo: tunnelled line infection; doses after each session"
        assert any(line.startswith("Indication") and given in line for line in screen_lines(app))
        longer = given + "; line removed 2026-09-01, blood cultures pending, echo booked for Friday"
        field.value = longer
        await pilot.pause()
        await pilot.press("tab")  # on to the next field: the whole text stays readable under the field
        await pilot.pause()
        lines = screen_lines(app)
        row = next(i for i, line in enumerate(lines) if line.startswith("Indication"))
        under = " ".join(line[:78].strip() for line in lines[row + 1:row + 3])  # the form's scrollbar aside
        assert under == longer
        assert all(line.startswith(" " * 12) for line in lines[row + 1:row + 3])  # lined up with the field
        assert app.doc.raw["target"]["indication"] == longer
        field.value = given  # short again: nothing under the field
        await pilot.pause()
        await pilot.pause()
        assert not app.screen.query_one("#pt-indication-whole").display


async def test_an_undo_shows_in_the_table_it_changed(state, sample_copy):
    async with opened(state, sample_copy, "vanc-obese.json", "f3") as pilot:
        app = pilot.app
        doses = app.screen.query_one("#doses-table", DataTable)
        assert doses.row_count == 3
        await pilot.press("x")  # a dose deleted ...
        await settle(pilot)
        assert doses.row_count == 2 == len(app.doc.raw["doses"])
        await pilot.press("f4", "u")  # ... and undone from the levels table
        await settle(pilot)
        assert len(app.doc.raw["doses"]) == 3
        await pilot.press("f3")
        await pilot.pause()
        assert doses.row_count == 3  # the doses table shows the dose back, not the case before the undo
        assert any(line.startswith(" 1  08-03 10:00  3000 mg") for line in screen_lines(app))


async def test_an_empty_field_named_by_the_engine_still_gives_its_unit(state):
    app = TdmApp(None, None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        lines = screen_lines(app)
        assert any(line.startswith("Age") and line.rstrip().endswith("! still to fill in (yr)") for line in lines)
        assert any("No SCr values yet: press a" in line for line in lines)


async def test_help_and_warnings_say_how_to_close_them_and_scroll(state, sample_copy):
    from tdmtui.ui.dialogs import HelpScreen

    async with opened(state, sample_copy, "vanc-obese.json") as pilot:
        app = pilot.app
        for key in ("f1", "f8"):
            await pilot.press(key)
            await pilot.pause()
            assert isinstance(app.screen, HelpScreen)
            assert any("[Esc] close" in line for line in screen_lines(app)), key
            scroll = app.screen.query_one("VerticalScroll")
            if key == "f1":  # the help is longer than the frame: the keys scroll it
                await pilot.press("pagedown")
                await pilot.pause()
                assert scroll.scroll_y > 0
            await pilot.press("escape")
            await pilot.pause()
            assert not isinstance(app.screen, HelpScreen)


async def test_the_plan_says_the_next_dose_waits_on_a_level_after_a_hold(state, sample_copy):
    # vanc-high-auc: AUC24 1137 and a trough of 34.5 mg/L; the new regimen's first dose (2026-10-06 08:00)
    # is given only if a level drawn 30 min before it is below 20 mg/L (tests/core/test_restart_check.py)
    async with opened(state, sample_copy, "vanc-high-auc.json", "f6") as pilot:
        app = pilot.app
        lines = screen_lines(app)
        at = next(i for i, line in enumerate(lines) if line.startswith("Next dose: 2026-10-06T08:00"))
        assert lines[at + 1].startswith("Give it only if a level drawn at 2026-10-06T07:30 is below 20 mg/L")
