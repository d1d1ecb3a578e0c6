"""Worked regimen-redesign examples W2-W5 of pk-sources.md section 5.

Every expected value is typed in from the sheet; the source tag sits beside it.
"""

from __future__ import annotations

import pytest

from tdmtui.core.input.casetypes import Target
from tdmtui.core.library import Rules
from tdmtui.core.models import DoseArrays, PKParams, concentration
from tdmtui.core.regimen import CurrentRegimen, design
from tdmtui.core.regimen.candidates import evaluate
from tdmtui.core.regimen.steadystate import textbook_redesign
from tdmtui.core.regimen.targets import resolve_targets

from regimen_cases import CLOCK, T0, inp, rules

GENT_INTERVALS = [6.0, 8.0, 12.0, 24.0, 36.0, 48.0]


def test_w2_textbook_initial_regimen() -> None:
    """W2 (pk-sources.md 5, textbook method): ke 0.299, V 18.2 L, Cmax 8 / Cmin 1, 1-h infusion."""
    ke = 0.00293 * 97.2 + 0.014  # W2: ke = 0.299 1/h from CrCl 97.2 (pk-sources.md 4.2 equation)
    r = textbook_redesign(ke, 18.2, 1.0, 8.0, 1.0, GENT_INTERVALS, 10.0)
    assert r["tau_exact"] == pytest.approx(7.96, abs=0.01)  # W2: tau = 7.96 h
    assert r["tau"] == 8.0                                   # W2: -> 8 h
    assert r["dose_exact"] == pytest.approx(153.0, abs=0.5)  # W2: k0 = 153 mg (1-h infusion)
    assert r["dose"] == 150.0                                # W2: -> 150 mg q8h


def test_w2_design_picks_150_q8h() -> None:
    """W2 through the candidate search: 150 mg q8h, Cmax 7.84, Cmin 0.97 (pk-sources.md W2, derived)."""
    ke = 0.00293 * 97.2 + 0.014
    # sheet targets Cmax 8, Cmin 1 written as bands around them; textbook peak = end of the 1-h infusion
    r = rules("gentamicin", regimen__min_infusion_h=1.0, targets__peak_reference="end")
    plan = design(inp("gentamicin", PKParams.one_compartment(ke, 18.2), r=r,
                      target=Target(peak=(7.0, 9.0), trough=(0.5, 1.5))))
    reg = plan.regimen
    assert (reg["dose_mg"], reg["interval_h"], reg["infusion_h"]) == (150.0, 8.0, 1.0)
    assert reg["predicted"]["peak_mg_per_l"] == pytest.approx(7.84, abs=0.01)   # W2: Cmax 7.84
    assert reg["predicted"]["trough_mg_per_l"] == pytest.approx(0.97, abs=0.01)  # W2: Cmin 0.97


def _w3_history() -> DoseArrays:
    # W3: gentamicin 120 mg q8h over 0.5 h at steady state (40 doses)
    return DoseArrays.regimen(T0, 120.0, 8.0, 0.5, 40)


def test_w3_textbook_redesign() -> None:
    """W3 (pk-sources.md 5, constructed textbook case): ke 0.1544, V 25.1 -> 180 mg q12h."""
    r = textbook_redesign(0.1544, 25.1, 0.5, 8.0, 1.0, GENT_INTERVALS, 10.0)
    assert r["tau_exact"] == pytest.approx(13.97, abs=0.01)  # W3 step 4: 13.97 h
    assert r["tau"] == 12.0                                   # W3: -> 12 h
    assert r["dose_exact"] == pytest.approx(176.0, abs=0.5)   # W3 step 5: 176 mg
    assert r["dose"] == 180.0                                 # W3: -> 180 mg over 0.5 h q12h


def test_w3_design_and_handover() -> None:
    """W3 steps 5-7: 180 mg q12h over 0.5 h, Cmax 8.18, Cmin 1.39, peak 0.5 h after end 7.57,
    first new dose 12 h after the start of the last dose (level then 1.10 mg/L)."""
    params = PKParams.one_compartment(0.1544, 25.1)
    hist = _w3_history()
    last = float(hist.start[-1])
    r = rules("gentamicin", targets__peak_reference="end")
    plan = design(inp("gentamicin", params, hist, as_of=last + 7.5, r=r,
                      current=CurrentRegimen(120.0, 8.0, 0.5, "schedule"),
                      target=Target(peak=(7.0, 9.0), trough=(0.5, 2.0))))
    reg = plan.regimen
    assert reg["action"] == "change"
    assert (reg["dose_mg"], reg["interval_h"], reg["infusion_h"]) == (180.0, 12.0, 0.5)
    assert reg["predicted"]["peak_mg_per_l"] == pytest.approx(8.18, abs=0.01)   # W3 step 6: Cmax 8.18
    assert reg["predicted"]["trough_mg_per_l"] == pytest.approx(1.39, abs=0.01)  # W3 step 6: Cmin 1.39
    assert reg["hold_until"] is None
    assert reg["next_dose_at"] == CLOCK.format(last + 12.0)                     # W3 step 7: 12 h after
    assert float(concentration(params, hist, last + 12.0)) == pytest.approx(1.10, abs=0.01)  # W3 step 7
    # peak 0.5 h after the end of the infusion (W3 step 6: 7.57 mg/L), at a start+1h reference
    t1 = resolve_targets(rules("gentamicin"), Target(peak=(7.0, 9.0), trough=(0.5, 2.0)), "peak-trough")
    assert evaluate(params, t1, 180.0, 12.0, 0.5).peak_ref == pytest.approx(7.57, abs=0.01)


def test_w4_extended_interval_redesign() -> None:
    """W4 (Bauer, partially confirmed; pk-sources.md 5): ke 0.092, V 20.4, Cmax 20 / Cmin 0.5."""
    # the book rounds 411 mg to 400 mg: a 50 mg step reproduces its choice
    r = textbook_redesign(0.092, 20.4, 1.0, 20.0, 0.5, [24.0, 36.0, 48.0], 50.0)
    assert r["tau_exact"] == pytest.approx(41.0, abs=0.2)  # W4: tau = 41 h
    assert r["tau"] == 36.0                                 # W4: book's choice 36 h
    assert r["dose_exact"] == pytest.approx(411.0, abs=1.0)  # W4: k0 = 411 mg
    assert r["dose"] == 400.0                               # W4: 400 mg q36h
    t = resolve_targets(rules("gentamicin"), Target(peak=(15.0, 25.0)), "extended")
    c = evaluate(PKParams.one_compartment(0.092, 20.4), t, 400.0, 36.0, 1.0)
    assert c.peak == pytest.approx(19.4, abs=0.05)   # W4 re-check: Cmax 19.4
    assert c.trough == pytest.approx(0.78, abs=0.01)  # W4 re-check: Cmin 0.78


def test_w5_vancomycin_auc_redesign() -> None:
    """W5 (constructed, Pai-style; pk-sources.md 5): 1500 mg q12h over 1.5 h, AUC24 702 -> 1000 mg q12h."""
    params = PKParams.one_compartment(0.0827, 51.6)   # W5: ke 0.0827, V 51.6 L (CL 4.27 L/h)
    hist = DoseArrays.regimen(T0, 1500.0, 12.0, 1.5, 20)
    last = float(hist.start[-1])
    r = rules("vancomycin", regimen__min_infusion_h=1.5)  # the sheet keeps the 1.5 h infusion
    plan = design(inp("vancomycin", params, hist, as_of=last + 11.5, r=r,
                      current=CurrentRegimen(1500.0, 12.0, 1.5, "schedule"), method="two-level"))
    reg = plan.regimen
    assert reg["current_predicted"]["auc24_mg_h_per_l"] == pytest.approx(703.0, abs=1.0)  # W5 step 4: 703
    assert (reg["dose_mg"], reg["interval_h"]) == (1000.0, 12.0)                       # W5 step 6
    assert reg["predicted"]["auc24_mg_h_per_l"] == pytest.approx(469.0, abs=0.5)  # W5 step 5: 469
    assert reg["predicted"]["peak_mg_per_l"] == pytest.approx(29.0, abs=0.05)     # W5 step 5: Cmax 29.0
    assert reg["predicted"]["trough_mg_per_l"] == pytest.approx(12.2, abs=0.05)   # W5 step 5: Cmin 12.2
    row = next(c for c in plan.candidates if c["dose_mg"] == 1250.0 and c["interval_h"] == 12.0)
    assert row["auc24_mg_h_per_l"] == pytest.approx(586.0, abs=0.5)  # W5 step 5: 1250 mg -> 586
    assert row["peak_mg_per_l"] == pytest.approx(36.2, abs=0.05)     # W5 step 5: Cmax 36.2
    assert row["trough_mg_per_l"] == pytest.approx(15.2, abs=0.05)   # W5 step 5: Cmin 15.2


def test_w6_individualised_extended_interval() -> None:
    """W6 (pk-sources.md 5, constructed): ke 0.194, V 25.7 L (CL 4.98 L/h) after 560 mg.
    AUC 560 mg -> 112 (above 70-100); 480 mg (6 mg/kg) -> ~96; q24h (under 0.5 mg/L by 20 h)."""
    params = PKParams.one_compartment(0.194, 25.7)
    hist = DoseArrays.from_lists([T0], [1.0], [560.0])
    plan = design(inp("gentamicin", params, hist, as_of=T0 + 9.5, method="two-level",
                      current=CurrentRegimen(560.0, 24.0, 1.0), dosing_weight_kg=80.0))
    reg = plan.regimen
    assert reg["mode"] == "extended" and reg["interval_h"] == 24.0
    assert 70.0 <= reg["predicted"]["auc24_mg_h_per_l"] <= 100.0  # Plajer 2015 band (pk-sources.md 4.3)
    assert reg["current_predicted"]["auc24_mg_h_per_l"] == pytest.approx(112.0, abs=0.5)  # W6: 112
    row = next(c for c in plan.candidates if c["dose_mg"] == 480.0 and c["interval_h"] == 24.0)
    assert row["auc24_mg_h_per_l"] == pytest.approx(96.0, abs=0.5)  # W6: 6 mg/kg -> ~96


def test_cap_and_no_candidate_on_target() -> None:
    """AUC24 = daily dose / CL (pk-sources.md 2.3): with CL 12 L/h the 4,500 mg/day cap (the obese
    first-maintenance cap, pk-sources.md 3.1 from memory, as regimen/dailycap.py gives it to the design
    for a BMI 35 patient before any level) reaches 375 < 400: no candidate on target."""
    from tdmtui.core.regimen.dailycap import design_rules

    capped = design_rules(Rules("vancomycin"), 90.0, 35.0, 0)
    plan = design(inp("vancomycin", PKParams(cl=12.0, v1=70.0), tbw_kg=90.0, r=capped))
    codes = [a.code for a in plan.alerts]
    assert "regimen-cap" in codes and "regimen-off-target" in codes
    assert plan.regimen["predicted"]["auc24_mg_h_per_l"] == pytest.approx(4500.0 / 12.0)
