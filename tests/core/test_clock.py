"""Case times: offsets, IANA zones across a clock change, naive clock arithmetic."""

from __future__ import annotations

from datetime import datetime, timezone
from zoneinfo import ZoneInfo

import pytest

from tdmtui.core.input.clock import clock_for
from tdmtui.core.errors import InputError


def test_zone_handles_spring_forward():
    # Europe/London went from GMT to BST at 01:00 UTC on 2026-03-29 (reference: the zoneinfo database)
    c = clock_for([("a", "2026-03-28T20:00"), ("b", "2026-03-29T08:00")], "Europe/London")
    a = datetime(2026, 3, 28, 20, tzinfo=ZoneInfo("Europe/London"))
    b = datetime(2026, 3, 29, 8, tzinfo=ZoneInfo("Europe/London"))
    # same-zone datetime subtraction is wall-clock in Python, so compare POSIX timestamps
    elapsed = (b.timestamp() - a.timestamp()) / 3600
    assert elapsed == 11.0
    assert c.parse("2026-03-29T08:00", "b") - c.parse("2026-03-28T20:00", "a") == pytest.approx(elapsed)
    assert c.format(c.parse("2026-03-29T08:00", "b")) == "2026-03-29T08:00"


def test_offsets_are_honoured_and_written_back():
    c = clock_for([("a", "2026-03-28T20:00+00:00"), ("b", "2026-03-29T08:00+01:00")], None)
    assert c.parse("2026-03-29T08:00+01:00", "b") - c.parse("2026-03-28T20:00+00:00", "a") == pytest.approx(11.0)
    assert c.format(c.parse("2026-03-29T08:00+01:00", "b")) == "2026-03-29T08:00+01:00"
    z = datetime(2026, 3, 29, 7, tzinfo=timezone.utc)
    assert c.parse("2026-03-29T07:00Z", "x") == pytest.approx(z.timestamp() / 3600)


def test_mixed_offsets_rejected_naming_field():
    with pytest.raises(InputError) as exc:
        clock_for([("doses[0].start", "2026-03-28T20:00+00:00"), ("levels[1].time", "2026-03-29T08:00")], None)
    assert exc.value.field == "levels[1].time"


def test_naive_warns_when_span_crosses_common_clock_change():
    c = clock_for([("a", "2026-03-28T20:00")], None)
    assert c.may_span_clock_change(c.parse("2026-03-28T20:00", ""), c.parse("2026-03-29T08:00", ""))
    assert not c.may_span_clock_change(c.parse("2026-06-10T08:00", ""), c.parse("2026-06-12T08:00", ""))


@pytest.mark.parametrize("text", ["2026-02-30T08:00", "2026-03-03 08:00", "08:00", "2026-03-03T25:00"])
def test_bad_times(text):
    c = clock_for([], None)
    with pytest.raises(InputError) as exc:
        c.parse(text, "levels[0].time")
    assert exc.value.field == "levels[0].time"


def test_unknown_zone():
    with pytest.raises(InputError) as exc:
        clock_for([("a", "2026-03-28T20:00")], "Mars/Olympus")
    assert exc.value.field == "timezone"


# "Europe" and "Etc" are folders of the zoneinfo database, not zones; the others are files in it that are
# not zones, or paths out of it. Each is an input error naming timezone, never an internal error.
@pytest.mark.parametrize("name", ["Europe", "Etc", "America/", "zone.tab", "tzdata.zi", "__init__.py",
                                  "..", "/etc/passwd", "Europe/../Europe/London", "UTC\x00", ""])
def test_folder_or_file_that_is_not_a_zone_is_an_input_error(name):
    with pytest.raises(InputError) as exc:
        clock_for([("a", "2026-03-28T20:00")], name)
    assert exc.value.field == "timezone"


def test_folder_zone_from_the_command_line_names_the_field(tmp_path, capsys):
    import json
    from pathlib import Path

    from tdmtui.cli import main

    raw = json.loads((Path(__file__).parents[2] / "sample_cases" / "vanc-trough-only.json").read_text("utf-8"))
    raw["timezone"] = "Europe"
    path = tmp_path / "zone.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    assert main(["note", str(path)]) == 2
    assert capsys.readouterr().err.startswith("timezone: 'Europe' is not a known IANA time zone name")
