"""Quick time entry: clock times roll over, relative times count from the row above.

Expected values are calendar arithmetic worked by hand (common practice:
a clock time earlier than the previous dose is read as the next day).
"""

from __future__ import annotations

import pytest

from tdmtui.core.input.clock import Clock
from tdmtui.core.errors import InputError
from tdmtui.core.input.timeentry import repeat_rows, resolve_time

NAIVE = Clock("naive")


def _h(iso: str, clock: Clock = NAIVE) -> float:
    return clock.parse(iso, "t")


def test_full_datetime_passes_through():
    e = resolve_time("2026-03-03T08:00", None, NAIVE, "doses[0].start")
    assert e.iso == "2026-03-03T08:00" and e.note == ""


def test_space_instead_of_t_and_single_digit_hour():
    assert resolve_time("2026-03-03 8:05", None, NAIVE, "f").iso == "2026-03-03T08:05"


def test_clock_time_later_same_day():
    e = resolve_time("20:00", _h("2026-03-03T08:00"), NAIVE, "doses[1].start")
    assert e.iso == "2026-03-03T20:00"
    assert e.note.startswith("same day")


def test_clock_time_earlier_rolls_to_next_day_and_says_so():
    e = resolve_time("08:00", _h("2026-03-03T20:00"), NAIVE, "doses[2].start")
    assert e.iso == "2026-03-04T08:00"
    assert e.note == "next day: 2026-03-04T08:00"
    # 12 h after the row above, by hand
    assert e.hours - _h("2026-03-03T20:00") == pytest.approx(12.0)


def test_clock_time_rolls_over_month_end():
    assert resolve_time("6:30", _h("2026-02-28T22:00"), NAIVE, "f").iso == "2026-03-01T06:30"


def test_relative_hours_and_minutes():
    a = _h("2026-03-03T20:00")
    assert resolve_time("+12h", a, NAIVE, "f").iso == "2026-03-04T08:00"
    assert resolve_time("+90 min", a, NAIVE, "f").iso == "2026-03-03T21:30"
    assert resolve_time("-30min", a, NAIVE, "f").iso == "2026-03-03T19:30"
    assert resolve_time("+1 day", a, NAIVE, "f").iso == "2026-03-04T20:00"


def test_offset_clock_keeps_the_offset():
    clock = Clock("offset", None, "+01:00")
    a = clock.parse("2026-03-03T20:00+01:00", "f")
    e = resolve_time("07:00", a, clock, "f")
    assert e.iso == "2026-03-04T07:00+01:00"
    assert e.hours - a == pytest.approx(11.0)


def test_clock_time_without_row_above_is_an_error_naming_the_field():
    with pytest.raises(InputError) as err:
        resolve_time("08:00", None, NAIVE, "doses[0].start")
    assert err.value.field == "doses[0].start"
    assert "full date-time" in err.value.message


@pytest.mark.parametrize("text", ["tomorrow", "8am", "+12", "25:00", "2026-13-01T08:00", ""])
def test_rubbish_is_an_input_error(text):
    with pytest.raises(InputError) as err:
        resolve_time(text, _h("2026-03-03T08:00"), NAIVE, "levels[1].time")
    assert err.value.field == "levels[1].time"


def test_repeat_rows_every_12h_three_times():
    row = {"start": "2026-03-02T08:00", "amount": "2000 mg", "duration": "2 h", "kind": "loading"}
    rows = repeat_rows(row, 12.0, 3, NAIVE)
    assert [r["start"] for r in rows] == ["2026-03-02T20:00", "2026-03-03T08:00", "2026-03-03T20:00"]
    assert all(r["kind"] == "maintenance" and r["amount"] == "2000 mg" for r in rows)
    assert row["kind"] == "loading"  # the original row is untouched


def test_repeat_rows_moves_end_times_too():
    row = {"start": "2026-03-02T20:00", "amount": "1250 mg", "end": "2026-03-02T21:30"}
    rows = repeat_rows(row, 8.0, 2, NAIVE)
    assert rows[1] == {"start": "2026-03-03T12:00", "amount": "1250 mg", "end": "2026-03-03T13:30"}


def test_repeat_rows_rejects_zero_interval_and_silly_counts():
    row = {"start": "2026-03-02T08:00", "amount": "1 g", "duration": "1 h"}
    with pytest.raises(InputError):
        repeat_rows(row, 0.0, 3, NAIVE)
    with pytest.raises(InputError):
        repeat_rows(row, 12.0, 0, NAIVE)


@pytest.mark.parametrize("typed, expected", [
    ("+12h25min", "2026-03-03T20:25"), ("+12h 25min", "2026-03-03T20:25"), ("+1 h 30 min", "2026-03-03T09:30"),
    ("0805", "2026-03-04T08:05"), ("2359", "2026-03-03T23:59"), ("-2h", "2026-03-03T06:00"),
])
def test_times_as_people_type_them(typed, expected):
    # clock arithmetic by hand from the row above at 2026-03-03 08:00; for 0805 the row above is at
    # 08:10, so 08:05 is earlier and rolls to the next day (as 08:05 typed with a colon does)
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.input.timeentry import resolve_time

    clock = Clock("naive")
    anchor = clock.parse("2026-03-03T08:10", "x") if typed == "0805" else clock.parse("2026-03-03T08:00", "x")
    assert resolve_time(typed, anchor, clock, "doses[1].start").iso == expected


def test_a_negative_or_zero_weight_must_be_positive():
    from tdmtui.ui.entry import quantity_entry

    for typed in ("-70", "-70 kg", "0"):
        e = quantity_entry(typed, "weight", "kg", "patient.weight")
        assert e.error == "must be positive" and e.stored  # kept as typed, never dropped


def test_messages_count_rows_as_the_tables_show_them():
    from tdmtui.ui.fieldmap import rows_in_words

    assert rows_in_words("doses[2].amount: a dose must be more than 0 mg") == "dose 3 amount: a dose must be more than 0 mg"
    assert rows_in_words("levels[0].below_loq") == "level 1 below loq"
    assert rows_in_words("patient.scr[1].time") == "SCr 2 time"
