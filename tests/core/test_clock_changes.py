"""Clock changes and offsets are never reinterpreted silently.

Europe/London changes at 01:00 UTC on the last Sundays of March and October
(EU summer-time rule, from memory; the IANA tz database holds it): in 2026 the
wall clock skips 01:00-02:00 on 29 March and shows 01:00-02:00 twice on
25 October.
"""

from __future__ import annotations

import pytest

from casedata import base_case
from tdmtui.core.input.case import parse_case
from tdmtui.core.compute import compute
from tdmtui.core.errors import InputError
from tdmtui.core.text.note import render_note


def london_case(level_time: str) -> dict:
    raw = base_case()
    raw["timezone"] = "Europe/London"
    raw["as_of"] = level_time[:11] + "21:00"
    day = level_time[:10]
    raw["patient"]["scr"] = "1.1 mg/dL"
    raw["doses"] = [{"start": f"{day}T00:00", "amount": "1250 mg", "duration": "1 h"}]
    raw["levels"] = [{"time": level_time, "conc": "20 mg/L"}]
    return raw


def test_a_time_in_the_spring_gap_is_an_input_error_naming_the_field():
    with pytest.raises(InputError) as info:
        parse_case(london_case("2026-03-29T01:30"))
    assert info.value.field == "levels[0].time" and "does not exist" in info.value.message
    parse_case(london_case("2026-03-29T02:30"))  # after the gap: fine


def test_an_ambiguous_autumn_time_is_warned_naming_the_field():
    case = parse_case(london_case("2026-10-25T01:30"))
    codes = [(a.code, a.field) for a in case.notices]
    assert ("ambiguous-time", "levels[0].time") in codes
    # read as the first 01:30 (BST, +01:00) = 00:30 UTC: 1.5 h after the 00:00 BST (23:00 UTC) dose
    lv, dose = case.levels[0], case.doses[0]
    assert lv.time - dose.start == pytest.approx(1.5, abs=1e-9)
    assert not parse_case(london_case("2026-10-25T03:30")).notices


def test_a_timezone_ignored_because_every_time_has_an_offset_is_warned_and_not_named_in_the_note():
    raw = base_case()
    for d in raw["doses"]:
        d["start"] += "+01:00"
        if "end" in d:
            d["end"] += "+01:00"
    for lv in raw["levels"]:
        lv["time"] += "+01:00"
    for s in raw["patient"]["scr"]:
        s["time"] += "+01:00"
    raw["as_of"] += "+01:00"
    raw["timezone"] = "America/New_York"
    out = compute(parse_case(raw))
    assert any(w["code"] == "timezone-ignored" and w["field"] == "timezone" for w in out.result["warnings"])
    note = render_note(out)
    assert "time zone America/New_York" not in note
