"""Typing into a choice field: the start of an option chooses it; anything else changes nothing, and says so.

Pilot tests at 80x24 on an invented sample case (common practice for type-ahead lists: letters typed
close together make one prefix).
"""

from __future__ import annotations

from tdmtui.ui.app import TdmApp
from tdmtui.ui.widgets import cycler
from tdmtui.ui.widgets.cycler import Cycler
from uihelpers import settle


class Clock:
    """A stand-in for time.monotonic: the test says when a pause between words happens."""

    now = 100.0

    def monotonic(self) -> float:
        return self.now


async def test_a_word_typed_into_the_drug_field_does_not_hop_from_drug_to_drug(state, sample_copy, monkeypatch):
    clock = Clock()
    monkeypatch.setattr(cycler, "time", clock)
    app = TdmApp(str(sample_copy("vanc-steady-state.json")), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        drug = app.screen.query_one("#pt-drug-input", Cycler)
        assert drug.value == "vancomycin"
        drug.focus()
        await pilot.press(*"label")  # 'l' starts no drug: nothing changes (letter by letter, 'a' was amikacin)
        await pilot.pause()
        assert drug.value == "vancomycin"
        assert [n.message for n in app._notifications].count("No choice starts with 'l': it stays vancomycin.") == 1
        clock.now += 2.0  # a pause: the next letters are a new prefix
        await pilot.press(*"gent")  # a prefix: gentamicin, and 't' does not hop to tobramycin
        await pilot.pause()
        assert drug.value == "gentamicin"
        await pilot.press("x")
        await pilot.pause()
        assert drug.value == "gentamicin"
        assert any("No choice starts with 'gentx': it stays gentamicin" in str(n.message) for n in app._notifications)


async def test_a_pause_starts_a_new_prefix_and_an_exact_word_wins(state, sample_copy, monkeypatch):
    clock = Clock()
    monkeypatch.setattr(cycler, "time", clock)
    app = TdmApp(str(sample_copy("vanc-steady-state.json")), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        sex = app.screen.query_one("#pt-sex-input", Cycler)
        sex.focus()
        await pilot.press("f")
        assert sex.value == "female"
        clock.now += 0.5  # within the type-ahead time: "fm" is one prefix, and starts nothing
        await pilot.press("m")
        assert sex.value == "female"
        clock.now += 1.5  # after a pause: "m" alone
        await pilot.press("m")
        assert sex.value == "male"
        clock.now += 2.0
        method = app.screen.query_one("#pt-method-input", Cycler)
        method.focus()
        await pilot.press(*"one-level")
        assert method.value == "one-level"
        await pilot.press(*"-s")
        assert method.value == "one-level-steady-state"
