"""After a hold for high exposure, the first dose of the new regimen waits on a level.

Sources of the expected values:
- the rule: the exposure cautions' own advice ("hold the next dose, redraw a level before it is due and
  redose only below <limit> mg/L"; tdmtui/core/regimen/exposure.py), common practice after a toxic level;
- the limits: the drug library's regimen.hold_above_mg_l (vancomycin 20 mg/L; gentamicin 2 mg/L, the
  traditional trough ceiling, KDIGO 2012) and monitoring.trough_before_h (30 min, common practice);
- the times: worked by hand from the sample cases (the first dose on the half-hour grid, the draw 30 min
  before it).
"""

from __future__ import annotations

from datetime import datetime, timedelta
from functools import lru_cache

import pytest

from casedata import SAMPLES
from tdmtui.core.compute import compute
from tdmtui.core.input.case import load_case
from tdmtui.core.text.note import render_note

HELD = {  # case -> (hold limit mg/L, first dose of the proposal, worked from the case)
    "vanc-high-auc": (20.0, "2026-10-06T08:00"),
    "vanc-hold-two-doses": (20.0, "2026-09-17T18:00"),
    "gent-high-trough": (2.0, "2026-09-10T10:00"),
}


@lru_cache(maxsize=None)
def outcome_of(name: str):
    return compute(load_case(SAMPLES / f"{name}.json"))


def _t(text: str) -> datetime:
    return datetime.fromisoformat(text[:16])


def _check(shape: dict) -> list[dict]:
    return [nl for nl in shape.get("next_levels") or [] if nl.get("give_below_mg_l") is not None]


@pytest.mark.parametrize("name", sorted(HELD))
def test_the_first_dose_after_a_hold_waits_on_a_level_below_the_limit(name):
    limit, first = HELD[name]
    out = outcome_of(name)
    codes = {w["code"] for w in out.result["warnings"]}
    assert codes & {"auc-toxic", "trough-high"}  # the caution that asks for it
    reg = out.result["regimen"]
    assert reg["next_dose_at"][:16] == first
    [check] = _check(reg)
    assert check["give_below_mg_l"] == pytest.approx(limit)
    assert check["kind"] == "trough"
    assert _t(first) - _t(check["at"]) == timedelta(minutes=30)
    assert reg["next_levels"][0] is check  # drawn before anything else booked
    assert all(_t(nl["at"]) > _t(first) for nl in reg["next_levels"][1:])


@pytest.mark.parametrize("name", sorted(HELD))
def test_every_alternative_that_leaves_doses_out_waits_on_its_own_level(name):
    limit, _ = HELD[name]
    for alt in outcome_of(name).result["regimen"]["alternatives"]:
        if alt["skipped_doses"] or alt.get("hold_until"):
            [check] = _check(alt)
            assert check["give_below_mg_l"] == pytest.approx(limit)
            assert _t(alt["next_dose_at"]) - _t(check["at"]) == timedelta(minutes=30)


@pytest.mark.parametrize("name", ["vanc-steady-state", "vanc-trough-only", "gent-peak-trough", "vanc-obese"])
def test_no_such_level_without_a_hold_caution(name):
    reg = outcome_of(name).result["regimen"]
    assert not _check(reg) and not any(_check(a) for a in reg.get("alternatives", []))


def test_the_note_names_the_level_with_the_next_dose_and_not_twice():
    note = " ".join(render_note(outcome_of("gent-high-trough")).split())
    assert "next dose 2026-09-10 10:00 if a level at 09:30 is below 2 mg/L" in note
    assert "09:30" not in note.split("Next levels:", 1)[1].split("WARNINGS", 1)[0]
    held = " ".join(render_note(outcome_of("vanc-hold-two-doses")).split())
    assert "until 18:00, the next dose if a level at 17:30 is below 20 mg/L)" in held
