"""Indication changes targets where the trade does; the obese vancomycin daily cap only where its source says.

Sources: gentamicin for gram-positive synergy (endocarditis) peak 3-5 mg/L, trough < 1 mg/L
(pk-sources.md 4.1, from memory) against traditional 6-10 / < 2 (KDIGO 2012; Bauer, confirmed text);
2020 vancomycin guideline: obese patients' initial maintenance generally not above 4,500 mg/day
(pk-sources.md 3.1, from memory); never-exceed 60 mg/kg/day (pk-sources.md 3.1, from memory).
"""

from __future__ import annotations

import json

import pytest

from casedata import SAMPLES

from tdmtui.core.compute import compute_raw
from tdmtui.core.library import Rules, protocol_from_tree
from tdmtui.core.regimen.dailycap import daily_cap
from tdmtui.core.regimen.targets import resolve_targets


def _sample(name):
    return json.loads((SAMPLES / name).read_text("utf-8"))


def _synergy_course(conditions, indication):
    raw = _sample("gent-peak-trough.json")
    raw["target"] = {"indication": indication}
    raw["patient"]["conditions"] = conditions
    for d in raw["doses"]:
        d["amount"] = "80 mg"  # about 1 mg/kg, a synergy dose (common practice)
    raw["levels"][0]["conc"], raw["levels"][1]["conc"] = "4.0 mg/L", "1.5 mg/L"
    return raw


@pytest.mark.parametrize(("conditions", "indication"), [
    (["endocarditis"], "demo: enterococcal valve infection with ampicillin"),   # by the documented condition
    ([], "demo: infective endocarditis, streptococcal"),                        # by the indication text
])
def test_gentamicin_endocarditis_gets_synergy_targets(conditions, indication):
    out = compute_raw(_synergy_course(conditions, indication))
    target = out.result["target"]
    assert target["mode"] == "peak-trough"
    assert target["peak_mg_per_l"] == [3.0, 5.0] and target["trough_mg_per_l"] == [0.0, 1.0]
    assert target["citations"]["variant"].startswith("endocarditis:")
    # the proposal is judged by them: its predicted peak (at 1 h after the start) is inside 3-5 mg/L
    pred = out.result["regimen"]["predicted"]
    assert 3.0 <= pred["peak_at_reference_mg_per_l"] <= 5.0 and pred["trough_mg_per_l"] <= 1.0
    # a measured trough of 1.5 mg/L is above the synergy ceiling of 1 mg/L
    assert any(a.code == "trough-high" and "1 mg/L limit" in a.message for a in out.alerts)


def test_without_endocarditis_the_traditional_targets_stand():
    out = compute_raw(_synergy_course([], "demo: gram-negative pneumonia"))
    assert out.result["target"]["peak_mg_per_l"] == [6.0, 10.0]
    assert out.result["target"]["trough_mg_per_l"] == [0.0, 2.0]


def test_targets_written_in_the_case_still_win_over_the_condition():
    raw = _synergy_course(["endocarditis"], "demo")
    raw["target"].update(peak=["8 mg/L", "10 mg/L"], trough=["0 mg/L", "2 mg/L"])
    assert compute_raw(raw).result["target"]["peak_mg_per_l"] == [8.0, 10.0]


def test_condition_variant_only_where_the_drug_has_it():
    # vancomycin has no endocarditis variant: the AUC24 band is unchanged (Rybak 2020)
    t = resolve_targets(Rules("vancomycin"), None, "auc", ("endocarditis",))
    assert t.auc24 == (400.0, 600.0)


def test_obese_initial_cap_applies_to_an_obese_first_regimen():
    # 150 kg, 175 cm: BMI 49 >= 30 (loading.obese_bmi); no level yet
    cap, why = daily_cap(Rules("vancomycin"), 150.0, 49.0, levels_used=0)
    assert cap == 4500.0 and "obese" in why


def test_obese_initial_cap_does_not_apply_once_levels_guide_the_dose():
    cap, why = daily_cap(Rules("vancomycin"), 150.0, 49.0, levels_used=2)
    assert cap == 9000.0 and "obese patient" not in why  # 60 mg/kg/day x 150 kg = 9000 = the daily limit


def test_obese_initial_cap_does_not_apply_to_a_patient_who_is_not_obese():
    # vanc-below-loq: 76 kg, BMI 24, augmented clearance: needs about 5,400 mg/day; bounded by the
    # never-exceed 60 mg/kg/day = 4,560 mg, not by the obese 4,500 mg/day
    out = compute_raw(_sample("vanc-below-loq.json"))
    (a,) = [x for x in out.alerts if x.code == "regimen-cap"]
    assert "4560 mg" in a.message and "obese" not in a.message and "60 mg/kg a day" in a.message
    reg = out.result["regimen"]
    assert reg["dose_mg"] * 24 / reg["interval_h"] <= 60 * 76 + 1e-6


def test_a_local_daily_cap_still_binds():
    proto = protocol_from_tree({"vancomycin": {"regimen": {"max_daily_dose_mg": {"value": 4000.0, "source": "local"}}}},
                               "x")
    cap, why = daily_cap(Rules("vancomycin", proto), 76.0, 24.0, levels_used=2)
    assert (cap, why) == (4000.0, "local")


def test_obese_first_regimen_through_compute_is_held_to_4500():
    raw = _sample("vanc-elderly-low-scr.json")
    raw["patient"].update(age="30 yr", sex="male", weight="150 kg", height="175 cm", conditions=[])
    raw["patient"]["scr"][0]["value"] = "0.7 mg/dL"
    out = compute_raw(raw)
    reg = out.result["regimen"]
    assert reg["dose_mg"] * 24 / reg["interval_h"] <= 4500 + 1e-6
    assert any(a.code == "regimen-cap" and "obese patient (BMI 49.0)" in a.message for a in out.alerts)
