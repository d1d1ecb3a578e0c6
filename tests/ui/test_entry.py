"""Entry fields: what typed text becomes in the case (hand-worked expectations)."""

from __future__ import annotations

import pytest

from tdmtui.core.input.clock import Clock
from tdmtui.ui.entry import anchor_for, case_clock, infusion_entry, quantity_entry, time_entry
from tdmtui.ui.sections.doses import parse_repeat

NAIVE = Clock("naive")
START = NAIVE.parse("2026-03-02T20:00", "t")


def test_infusion_duration_bare_number_is_minutes():
    e = infusion_entry("90", START, NAIVE, "doses[1]")
    assert (e.stored, e.key, e.error) == ("90 min", "duration", "")
    assert e.note == "= 1.5 h"


def test_infusion_end_as_clock_time_past_midnight():
    e = infusion_entry("00:30", START, NAIVE, "doses[1]")  # 20:00 -> 00:30 next day = 4.5 h
    assert (e.stored, e.key) == ("2026-03-03T00:30", "end")
    assert e.note == "ends 00:30, 4.5 h"


def test_infusion_end_relative_and_rubbish():
    assert infusion_entry("+2h", START, NAIVE, "doses[1]").stored == "2026-03-02T22:00"
    bad = infusion_entry("ninety", START, NAIVE, "doses[1]")
    assert bad.error.startswith("'ninety' is neither a duration")
    assert bad.stored == "ninety"  # kept as typed


def test_quantity_entry_notes_the_conversion():
    e = quantity_entry("180 lb", "weight", "kg", "patient.weight")
    assert e.stored == "180 lb" and e.note == "= 81.65 kg"  # 180 x 0.45359237
    assert quantity_entry("92", "weight", "kg", "patient.weight").note == ""


def test_time_entry_keeps_bad_text():
    e = time_entry("yesterday", START, NAIVE, "levels[0].time")
    assert e.stored == "yesterday" and "not a time" in e.error


def test_anchor_is_the_row_above_or_the_last_dose_for_the_first_level():
    raw = {"doses": [{"start": "2026-03-02T08:00"}, {"start": "2026-03-02T20:00"}],
           "levels": [{"time": "bad"}, {"time": "2026-03-03T07:30"}]}
    clock = case_clock(raw)
    assert anchor_for(raw, "doses", 1, clock) == NAIVE.parse("2026-03-02T08:00", "t")
    assert anchor_for(raw, "doses", 0, clock) is None
    assert anchor_for(raw, "levels", 0, clock) == NAIVE.parse("2026-03-02T20:00", "t")
    assert anchor_for(raw, "levels", 2, clock) == NAIVE.parse("2026-03-03T07:30", "t")


@pytest.mark.parametrize("text, expected", [("12h x 3", (12.0, 3)), ("every 8 h x 4", (8.0, 4)),
                                            ("12 x 2", (12.0, 2)), ("90min x 2", (1.5, 2))])
def test_parse_repeat(text, expected):
    assert parse_repeat(text) == expected


def test_parse_repeat_names_its_mistake():
    from tdmtui.core.errors import InputError

    with pytest.raises(InputError):
        parse_repeat("12h")
    with pytest.raises(InputError):
        parse_repeat("12h x three")


@pytest.mark.parametrize("field, expected", [
    ("patient.weight", "pt-weight"), ("target.auc24[1]", "pt-target"), ("as_of", "pt-as_of"),
    ("patient.scr[1].value", "scr-value"), ("patient.scr[1].time", "scr-time"), ("patient.scr[0].time", ""),
    ("patient.scr", "scr-value"),
    ("doses[2].end", "doses-infusion"), ("doses[3].amount", ""), ("levels[0].below_loq", "levels-limit"),
    ("levels[0]", "levels-time"), ("format", ""),
])
def test_engine_fields_map_to_form_fields(field, expected):
    from tdmtui.ui.fieldmap import widget_id_for

    assert widget_id_for(field, dose_row=2, level_row=0, scr_row=1) == expected


def test_schedule_entry_reads_the_standing_order():
    from tdmtui.ui.entry import schedule_entry, schedule_text

    e = schedule_entry("1250 mg every 12 h over 90 min")
    assert e.stored == {"dose": "1250 mg", "interval": "12 h", "duration": "90 min"}
    assert schedule_text(e.stored) == "1250 mg every 12 h over 90 min"
    assert schedule_entry("1 g q8").stored == {"dose": "1 g", "interval": "8 h"}
    assert schedule_entry("every 24 over 60").stored == {"interval": "24 h", "duration": "60 min"}
    assert schedule_entry("").stored is None
    assert schedule_entry("twice a day").error.startswith("type e.g.")
    assert "unknown unit" in schedule_entry("1250 mg every 12 weeks").error
