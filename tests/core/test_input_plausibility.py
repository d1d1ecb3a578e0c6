"""Implausible input is stopped, never used: SCr floor, low SCr in the frail elderly, CrCl cap,
a level before the first recorded dose."""

from __future__ import annotations

import copy
import json

import pytest

from casedata import SAMPLES, base_case

from tdmtui.core.compute import compute_raw
from tdmtui.core.errors import InputError
from tdmtui.core.library import Rules, protocol_from_tree
from tdmtui.core.patient.renal import cockcroft_gault, renal_summary


def _codes(out):
    return [a.code for a in out.alerts]


def _proto(common=None, **drugs):
    tree = {} if common is None else {"common": common}
    tree.update(drugs)
    return protocol_from_tree(tree, "x")


def test_scr_0_1_is_an_input_error_naming_the_field():
    # Cockcroft 1976: (140 - 67) x 78.9 / (72 x 0.1) = 800 mL/min for the base patient: no adult has it
    assert cockcroft_gault(67, "male", 78.9, 0.1) == pytest.approx(800, rel=0.01)
    raw = base_case()
    raw["patient"]["scr"][1]["value"] = "0.1 mg/dL"
    with pytest.raises(InputError) as err:
        compute_raw(raw)
    assert err.value.field == "patient.scr[1].value"
    assert "0.1 mg/dL" in str(err.value) and "0.2-20" in str(err.value)


def test_scr_0_1_in_umol_l_is_the_same_error():
    # 8.84 umol/L = 0.1 mg/dL (88.4 umol/L per mg/dL, pk-sources.md 1.4)
    raw = base_case()
    raw["patient"]["scr"][0]["value"] = "8.84 umol/L"
    with pytest.raises(InputError) as err:
        compute_raw(raw)
    assert err.value.field == "patient.scr[0].value"


def test_scr_floor_of_plausibility_is_library_data_with_source():
    r = Rules("vancomycin")
    assert r.value("plausible.scr_mg_dl") == [0.2, 20.0]
    assert "entry slip" in r.citation("plausible.scr_mg_dl")


def _elderly(conditions=(), age="86 yr", scr="0.5 mg/dL"):
    raw = json.loads((SAMPLES / "vanc-elderly-low-scr.json").read_text("utf-8"))
    raw["patient"].update(age=age, conditions=list(conditions))
    raw["patient"]["scr"][0]["value"] = scr
    return raw


def test_low_scr_in_an_86_year_old_is_a_caution_offering_the_protocol_options():
    # pk-sources.md 1.1/1.4: C-G overestimates with a low SCr in the frail elderly; rounding up to 0.8
    # (Reichley 1995) or 1.0 mg/dL is common practice; a 150 mL/min cap was evaluated (Hughes 2024)
    out = compute_raw(_elderly())
    (a,) = [x for x in out.alerts if x.code == "scr-low"]
    assert (a.severity, a.field) == ("caution", "patient.scr[0].value")
    for words in ("renal.scr_floor_mg_dl", "renal.crcl_cap_ml_min", "Reichley 1995", "Hughes 2024", "0.5 mg/dL"):
        assert words in a.message
    # Cockcroft 1976, by hand: IBW 45.5 + 2.3 x (155/2.54 - 60) = 47.86 kg (< TBW 48, within 120 %: IBW used);
    # (140 - 86) x 47.86 / (72 x 0.5) x 0.85 = 61.0 mL/min
    assert out.renal.crcl_ml_min == pytest.approx(61.0, abs=0.2)
    assert "CrCl 61 mL/min" in a.message


def test_low_scr_caution_for_low_muscle_mass_at_any_adult_age():
    out = compute_raw(_elderly(conditions=["amputation"], age="45 yr"))
    (a,) = [x for x in out.alerts if x.code == "scr-low"]
    assert "amputation" in a.message


@pytest.mark.parametrize(("age", "scr", "conditions"), [
    ("45 yr", "0.5 mg/dL", []),         # younger, no low-muscle-mass condition
    ("86 yr", "0.8 mg/dL", []),         # at the 0.8 mg/dL rounding point (Reichley 1995): not low
    ("86 yr", "1.1 mg/dL", ["frailty"]),
])
def test_low_scr_caution_stays_quiet(age, scr, conditions):
    assert "scr-low" not in _codes(compute_raw(_elderly(conditions, age, scr)))


def test_low_scr_caution_is_resolved_by_a_local_scr_floor():
    # with the protocol's rounding rule (0.8 mg/dL, Reichley 1995) the value used is stated, no caution
    proto = _proto({"renal": {"scr_floor_mg_dl": {"value": 0.8, "source": "local rule"}}})
    out = compute_raw(_elderly(), protocol=proto)
    assert "scr-low" not in _codes(out)
    # (140 - 86) x 47.86 / (72 x 0.8) x 0.85 = 38.1 mL/min (Cockcroft 1976)
    assert out.renal.crcl_ml_min == pytest.approx(38.1, abs=0.2)
    assert "computed with 0.8 per local rule" in out.renal.crcl_rule


def test_crcl_cap_option_caps_and_says_so():
    # young man, SCr 0.4 mg/dL, IBW 50 + 2.3 x (178/2.54 - 60) = 73.18 kg (Devine; TBW 76 within 120 %):
    # (140 - 25) x 73.18 / (72 x 0.4) = 292 mL/min (Cockcroft 1976); capped at 150
    # as evaluated by Hughes 2024 (pk-sources.md 3.4.2)
    proto = _proto({"renal": {"crcl_cap_ml_min": {"value": 150.0, "source": "local cap"}}})
    series = [(None, 0.4, None)]
    plain = renal_summary(25.0, "male", 76.0, 178.0, series, Rules("vancomycin"))
    assert plain.crcl_ml_min == pytest.approx(292.2, abs=0.2)
    capped = renal_summary(25.0, "male", 76.0, 178.0, series, Rules("vancomycin", proto))
    assert capped.crcl_ml_min == 150.0
    assert "capped at 150 mL/min per local rule" in capped.crcl_rule
    # no cap by default (library value 0 = none)
    assert Rules("vancomycin").value("renal.crcl_cap_ml_min") == 0.0


def test_crcl_cap_out_of_range_in_a_protocol_is_an_error_naming_the_key():
    with pytest.raises(InputError) as err:
        _proto({"renal": {"crcl_cap_ml_min": {"value": 900.0, "source": "x"}}})
    assert "crcl_cap_ml_min" in err.value.field


def test_level_before_the_first_dose_is_an_input_error_naming_the_level():
    # a peak dated a year early: common practice says a level before any dose means a mistyped date
    raw = base_case()
    raw["levels"][1]["time"] = "2025-03-03T11:00"
    with pytest.raises(InputError) as err:
        compute_raw(raw)
    assert err.value.field == "levels[1].time"
    assert "2025-03-03T11:00" in str(err.value) and "doses[0]" in str(err.value)


def test_level_with_no_dose_recorded_is_an_input_error():
    raw = base_case()
    raw["doses"] = []
    with pytest.raises(InputError) as err:
        compute_raw(raw)
    assert err.value.field == "levels[0].time"


@pytest.mark.parametrize("change", [
    {"below_loq": True, "conc": "2 mg/L"},                # a baseline level under the assay limit
    {"use": False, "reason": "drawn before transfer"},   # set aside by the user
])
def test_a_baseline_level_that_is_not_quantified_or_set_aside_is_fine(change):
    raw = base_case()
    raw["levels"].insert(0, {"time": "2026-03-02T07:30", "conc": "3 mg/L", **change})
    out = compute_raw(copy.deepcopy(raw))
    assert out.result["status"] == "ok"
