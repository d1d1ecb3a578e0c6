"""Case file loading, field-path errors, atomic 0600 save and round trip."""

from __future__ import annotations

import json
import os
import stat

import pytest

from tdmtui.core.input.case import load_case, parse_case
from tdmtui.core.input.casefile import canonical_bytes, save_case
from tdmtui.core.errors import InputError


def _err(raw) -> InputError:
    with pytest.raises(InputError) as exc:
        parse_case(raw)
    return exc.value


def test_valid_case_parses(case_dict):
    c = parse_case(case_dict)
    assert c.drug == "vancomycin"
    assert [d.index for d in c.doses] == [0, 1, 2]
    assert c.doses[1].duration == pytest.approx(1.5)  # end 21:30 after start 20:00
    assert c.patient.scr[-1].value == 1.2
    assert not c.saved


@pytest.mark.parametrize("path,value,field", [
    (("doses", 2, "amount"), "1250", "doses[2].amount"),
    (("doses", 1, "amount"), "2*500 mg", "doses[1].amount"),
    (("levels", 1, "conc"), "31.2 mg", "levels[1].conc"),
    (("levels", 0, "time"), "2026-03-03 07:35", "levels[0].time"),
    (("patient", "sex"), "m", "patient.sex"),
    (("patient", "age"), "400 yr", "patient.age"),
    (("patient", "weight"), "92", "patient.weight"),
    (("patient", "scr", 1, "value"), "1.2 mg/L", "patient.scr[1].value"),
    (("drug",), "vancomycine", "drug"),
    (("format",), "other/1", "format"),
])
def test_errors_name_the_field(case_dict, path, value, field):
    node = case_dict
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    assert _err(case_dict).field == field


def test_missing_required_key(case_dict):
    del case_dict["patient"]["height"]
    e = _err(case_dict)
    assert e.field == "patient.height" and "missing" in e.message


def test_duration_and_end_both(case_dict):
    case_dict["doses"][1]["duration"] = "90 min"
    assert _err(case_dict).field == "doses[1]"


def test_use_false_needs_reason(case_dict):
    case_dict["levels"][0]["use"] = False
    assert _err(case_dict).field == "levels[0].reason"


def test_as_of_defaults_to_latest_event(case_dict):
    del case_dict["as_of"]
    c = parse_case(case_dict)
    assert c.clock.format(c.as_of) == "2026-03-03T11:00"


def test_save_round_trip_atomic_and_private(tmp_path, case_dict):
    p = tmp_path / "case.json"
    digest = save_case(p, case_dict)
    assert stat.S_IMODE(os.stat(p).st_mode) == 0o600
    again = load_case(p)
    assert again.raw == case_dict
    assert again.sha256 == digest
    assert again.saved
    assert p.read_bytes() == canonical_bytes(case_dict)
    assert not [f for f in os.listdir(tmp_path) if f.endswith(".tmp")]


def test_unreadable_and_not_json(tmp_path):
    with pytest.raises(InputError) as exc:
        load_case(tmp_path / "missing.json")
    assert exc.value.field == "(file)"
    bad = tmp_path / "bad.json"
    bad.write_text("{not json", encoding="utf-8")
    with pytest.raises(InputError, match="not valid JSON"):
        load_case(bad)


def test_unsaved_digest_is_of_canonical_serialisation(case_dict):
    import hashlib

    c = parse_case(case_dict)
    assert c.sha256 == hashlib.sha256(canonical_bytes(case_dict)).hexdigest()
    assert json.loads(canonical_bytes(case_dict)) == case_dict
