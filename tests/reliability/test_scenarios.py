"""The slips people really make when typing a case, each caught with its named code and field.

Every scenario starts from one invented, valid vancomycin course (loading
2000 mg, then 1250 mg 12-hourly; a trough before and a peak after the third
dose) and makes one slip. The expected outcome is either an input error
(exit 2) naming the field, or a warning with its stable code, severity and
field path (case-format.md "warnings"). A stop must withhold the regimen
(case-format.md: "regimen is left out").

Categories: units swapped, AM/PM and date slips, midnight roll-over, level
timing (during the infusion, inside the distribution window, trough after the
next dose started), missed and duplicated doses and levels, rising SCr,
dialysis, out-of-population patients, levels of 0, absurd ages and heights.
"""

from __future__ import annotations

import copy
from typing import Any, Callable

import pytest

from casedata import base_case

from tdmtui.core.compute import compute_raw
from tdmtui.core.errors import InputError

BASE: dict[str, Any] = {**base_case(), "label": "slip scenario"}


def _set(path: str, value: Any) -> Callable[[dict], None]:
    """A slip that replaces one value, ``path`` like ``doses.2.amount``."""
    keys = [int(k) if k.isdigit() else k for k in path.split(".")]

    def slip(raw: dict) -> None:
        node = raw
        for k in keys[:-1]:
            node = node[k]
        node[keys[-1]] = value
    return slip


def _append_copy(name: str, i: int) -> Callable[[dict], None]:
    return lambda raw: raw[name].append(copy.deepcopy(raw[name][i]))


def _drop(name: str, i: int) -> Callable[[dict], None]:
    return lambda raw: raw[name].pop(i)


def _midnight(raw: dict) -> None:
    # 23:30 start, end typed as 01:00 with the same date instead of the next day's
    raw["doses"][1].update(start="2026-03-02T23:30", end="2026-03-02T01:00")


INPUT = "input-error"

#: (category, what was slipped, the slip, expected code (or INPUT), severity, field)
SCENARIOS: list[tuple[str, str, Callable[[dict], None], str, str, str]] = [
    # units swapped
    ("units", "SCr 106 umol/L typed with mg/dL", _set("patient.scr.1.value", "106 mg/dL"), INPUT, "", "patient.scr[1].value"),
    ("units", "SCr 0.1 mg/dL (a slipped digit of 1.1)", _set("patient.scr.1.value", "0.1 mg/dL"), INPUT, "", "patient.scr[1].value"),
    ("units", "SCr 1.2 mg/dL typed with umol/L", _set("patient.scr.1.value", "1.2 umol/L"), INPUT, "", "patient.scr[1].value"),
    ("units", "203 lb typed as kg (BMI 64)", _set("patient.weight", "203 kg"), "obesity-extreme", "caution", "patient.weight"),
    ("units", "440 lb typed as kg", _set("patient.weight", "440 kg"), INPUT, "", "patient.weight"),
    ("units", "dose in mcg instead of mg", _set("doses.2.amount", "1250 mcg"), "dose-implausible", "stop", "doses[2].amount"),
    ("units", "dose in g instead of mg", _set("doses.2.amount", "1250 g"), "dose-implausible", "stop", "doses[2].amount"),
    ("units", "tenfold dose (12500 mg)", _set("doses.2.amount", "12500 mg"), "dose-implausible", "stop", "doses[2].amount"),
    ("units", "level in mg/dL instead of mg/L", _set("levels.1.conc", "31.2 mg/dL"), "level-implausible", "stop", "levels[1].conc"),
    ("units", "height in inches typed as 178 in", _set("patient.height", "178 in"), INPUT, "", "patient.height"),
    # AM/PM and date slips
    ("am-pm", "third dose at 20:00 instead of 08:00", _set("doses.2.start", "2026-03-03T20:00"), "levels-rising", "stop", "levels[1].conc"),
    ("am-pm", "peak at 23:00 instead of 11:00", _set("levels.1.time", "2026-03-03T23:00"), "after-as-of", "caution", "levels[1].time"),
    ("date", "peak dated a year early", _set("levels.1.time", "2025-03-03T11:00"), INPUT, "", "levels[1].time"),
    ("date", "peak dated the next day", _set("levels.1.time", "2026-03-04T11:00"), "after-as-of", "caution", "levels[1].time"),
    ("date", "30 February", _set("levels.1.time", "2026-02-30T11:00"), INPUT, "", "levels[1].time"),
    ("date", "time without a date", _set("doses.1.start", "20:00"), INPUT, "", "doses[1].start"),
    ("date", "hour 25", _set("levels.0.time", "2026-03-03T25:35"), INPUT, "", "levels[0].time"),
    # midnight roll-over
    ("midnight", "infusion end 01:00 left on the start date", _midnight, INPUT, "", "doses[1].end"),
    # level timing
    ("level-timing", "peak drawn during the infusion", _set("levels.1.time", "2026-03-03T09:00"), "level-in-infusion", "caution", "levels[1].time"),
    ("level-timing", "peak drawn 30 min after the end of infusion", _set("levels.1.time", "2026-03-03T10:00"), "level-in-distribution", "caution", "levels[1].time"),
    ("level-timing", "trough drawn after the next dose started", _set("levels.0.time", "2026-03-03T08:20"), "level-in-infusion", "caution", "levels[0].time"),
    # missed or duplicated entries
    ("missed-dose", "the dose between trough and peak not entered", _drop("doses", 2), "levels-rising", "stop", "levels[1].conc"),
    ("duplicate", "the third dose entered twice", _append_copy("doses", 2), "duplicate-dose", "caution", "doses[3]"),
    ("duplicate", "the peak entered twice", _append_copy("levels", 1), "duplicate-level", "caution", "levels[2]"),
    # renal function
    ("renal", "SCr rising 1.1 -> 2.1 mg/dL in 48 h", _set("patient.scr.1.value", "2.1 mg/dL"), "scr-unstable", "caution", "patient.scr[1].value"),
    ("renal", "intermittent haemodialysis", _set("patient.renal_replacement", "ihd"), "renal-replacement", "stop", "patient.renal_replacement"),
    ("renal", "CRRT", _set("patient.renal_replacement", "crrt"), "renal-replacement", "stop", "patient.renal_replacement"),
    # out of population
    ("population", "a 16-year-old", _set("patient.age", "16 yr"), "age-out-of-range", "stop", "patient.age"),
    ("population", "age typed in months (67 month)", _set("patient.age", "67 month"), "age-out-of-range", "stop", "patient.age"),
    ("population", "pregnancy", _set("patient.conditions", ["pregnancy"]), "condition", "caution", "patient.conditions[0]"),
    # levels of 0
    ("level-zero", "peak reported as 0 mg/L", _set("levels.1.conc", "0 mg/L"), "level-zero", "caution", "levels[1].conc"),
    # absurd ages and heights
    ("absurd", "age 670 yr", _set("patient.age", "670 yr"), INPUT, "", "patient.age"),
    ("absurd", "height 17.8 cm", _set("patient.height", "17.8 cm"), INPUT, "", "patient.height"),
    ("absurd", "height 1.78 cm (metres typed as cm)", _set("patient.height", "1.78 cm"), INPUT, "", "patient.height"),
    ("absurd", "height 70 cm", _set("patient.height", "70 cm"), INPUT, "", "patient.height"),
    ("absurd", "weight 9.2 kg", _set("patient.weight", "9.2 kg"), INPUT, "", "patient.weight"),
]


def _id(p: Any) -> str:
    values = p.values if hasattr(p, "values") else p
    return f"{values[0]}: {values[1]}"


def test_the_unslipped_course_computes_with_a_regimen():
    """The base course is valid: every slip below is the only thing wrong."""
    result = compute_raw(copy.deepcopy(BASE)).result
    assert result["status"] == "ok"
    assert "regimen" in result
    assert not [w for w in result["warnings"] if w["severity"] == "stop"]


@pytest.mark.parametrize("category, what, slip, code, severity, field", SCENARIOS, ids=[_id(s) for s in SCENARIOS])
def test_slip_is_caught_with_its_code_and_field(category, what, slip, code, severity, field):
    raw = copy.deepcopy(BASE)
    slip(raw)
    if code == INPUT:
        with pytest.raises(InputError) as err:
            compute_raw(raw)
        assert err.value.field == field, str(err.value)
        assert "\n" not in str(err.value)
        return
    result = compute_raw(raw).result
    hits = [w for w in result["warnings"] if w["code"] == code]
    assert hits, f"no {code} among {[(w['code'], w['field']) for w in result['warnings']]}"
    assert any(w["field"] == field and w["severity"] == severity for w in hits), hits
    if severity == "stop":
        assert result["status"] == "stop"
        assert "regimen" not in result


def test_every_category_of_the_issue_has_a_scenario():
    wanted = {"units", "am-pm", "date", "midnight", "level-timing", "missed-dose", "duplicate", "renal",
              "population", "level-zero", "absurd"}
    have = {(s.values if hasattr(s, "values") else s)[0] for s in SCENARIOS}
    assert wanted <= have


@pytest.mark.parametrize("category, what, slip, code, severity, field", SCENARIOS, ids=[_id(s) for s in SCENARIOS])
def test_slip_through_the_command_line(tmp_path, capsys, category, what, slip, code, severity, field):
    """The same slips through ``tdmtui compute --json`` (its main(), in-process): exit 2 and one line, or exit 0."""
    import json

    from tdmtui.cli import main

    raw = copy.deepcopy(BASE)
    slip(raw)
    path = tmp_path / "case.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    status = main(["compute", str(path), "--json"])
    out, err = capsys.readouterr()
    if code == INPUT:
        assert status == 2, err
        assert out == ""
        assert len(err.splitlines()) == 1 and err.startswith(f"{field}: "), err
        return
    assert status == 0, err
    result = json.loads(out)
    assert any(w["code"] == code and w["field"] == field for w in result["warnings"])
