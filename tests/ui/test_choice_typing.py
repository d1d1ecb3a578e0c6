"""Typing into a choice field: the start of an option chooses it; anything else changes nothing, and says so.

Pilot tests at 80x24 on an invented sample case (common practice for type-ahead lists: letters typed
close together make one prefix).
"""

from __future__ import annotations

import pytest

from tdmtui.ui.widgets import cycler
from tdmtui.ui.widgets.cycler import Cycler
from uihelpers import opened


class Clock:
    """A stand-in for time.monotonic: the test says when a pause between words happens."""

    now = 100.0

    def monotonic(self) -> float:
        return self.now


@pytest.fixture
def clock(monkeypatch: pytest.MonkeyPatch) -> Clock:
    """The choice fields' clock, moved on by the test."""
    c = Clock()
    monkeypatch.setattr(cycler, "time", c)
    return c


def choice(pilot, name: str) -> Cycler:  # noqa: ANN001
    """The Patient section's choice field ``name``, focused."""
    widget = pilot.app.screen.query_one(f"#pt-{name}-input", Cycler)
    widget.focus()
    return widget


async def test_a_word_typed_into_the_drug_field_does_not_hop_from_drug_to_drug(state, sample_copy, clock):
    async with opened(state, sample_copy, "vanc-steady-state.json") as pilot:
        app = pilot.app
        drug = choice(pilot, "drug")
        assert drug.value == "vancomycin"
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


async def test_a_pause_starts_a_new_prefix_and_an_exact_word_wins(state, sample_copy, clock):
    async with opened(state, sample_copy, "vanc-steady-state.json") as pilot:
        sex = choice(pilot, "sex")
        await pilot.press("f")
        assert sex.value == "female"
        clock.now += 0.5  # within the type-ahead time: "fm" is one prefix, and starts nothing
        await pilot.press("m")
        assert sex.value == "female"
        clock.now += 1.5  # after a pause: "m" alone
        await pilot.press("m")
        assert sex.value == "male"
        clock.now += 2.0
        method = choice(pilot, "method")
        await pilot.press(*"one-level")
        assert method.value == "one-level"
        await pilot.press(*"-s")
        assert method.value == "one-level-steady-state"
