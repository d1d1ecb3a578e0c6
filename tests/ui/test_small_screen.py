"""What a pharmacist reads at 80x24: titles that match the view, no empty headers, fields not cut."""

from __future__ import annotations

from textual.widgets import DataTable, Label

from tdmtui.ui.app import TdmApp
from uihelpers import screen_lines, settle


def title(app) -> str:  # noqa: ANN001
    return str(app.screen.query_one("#est-title", Label).render())


async def test_only_the_table_names_its_page(state, sample_copy):
    app = TdmApp(str(sample_copy("vanc-obese.json")), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f5")
        await pilot.pause()
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
