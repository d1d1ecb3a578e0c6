"""A field's error is shown whole beside it, and no figure is derived from a value the engine refuses.

Pilot tests at 80x24 on an invented sample case; the plausible adult weight is the drug library's
``plausible.weight_kg`` (25-350 kg).
"""

from __future__ import annotations

from textual.widgets import Input, Static

from uihelpers import opened, screen_lines, settle


async def test_a_long_field_error_wraps_under_its_note_and_the_header_shows_no_crcl(state, sample_copy):
    async with opened(state, sample_copy, "vanc-obese.json") as pilot:
        app = pilot.app
        assert "CrCl 146 mL/min" in str(app.screen.query_one("#header", Static).content)
        weight = app.screen.query_one("#pt-weight-input", Input)
        weight.focus()
        weight.value = ""
        await pilot.press("9")
        await settle(pilot)
        text = " ".join(line.strip() for line in screen_lines(app)[:12])
        assert "! 9 kg is outside the plausible adult weight 25-350 kg (check the number and the unit" in text
        header = str(app.screen.query_one("#header", Static).content)
        assert "9 kg CrCl ?" in header  # no CrCl from a weight the engine refuses
        await pilot.press("0")  # 90 kg: plausible again, the note back on one line and a CrCl from it
        await settle(pilot)
        lines = screen_lines(app)
        assert not any("25-350 kg" in line for line in lines[:12])
        assert "90 kg CrCl ?" not in str(app.screen.query_one("#header", Static).content)
