"""Loading doses: vancomycin mg/kg of actual weight with the 3,000 mg cap (2020 consensus
guideline; 20-35 mg/kg from memory, cap confirmed-secondary; pk-sources.md 3.1), aminoglycoside
loading to a target peak (pk-sources.md 2.4: LD = Cmax ke V t' / (1 - e^(-ke t'))), and a
top-up from the predicted concentration when drug is on board.
"""

from __future__ import annotations

import math

import pytest

from tdmtui.core.input.casetypes import Target
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen import CurrentRegimen, design
from tdmtui.core.regimen.loading import to_target, weight_based

from regimen_cases import CLOCK, T0, inp, rules


@pytest.mark.parametrize("weight,bmi,dose,capped", [
    (80.0, 25.0, 2000.0, False),    # 25 mg/kg x 80 kg = 2000 mg (library default inside 20-35)
    (60.0, 22.0, 1500.0, False),    # 25 x 60 = 1500
    (130.0, 41.0, 3000.0, True),    # 25 x 130 = 3250 -> 3,000 mg cap (2020 guideline)
])
def test_vancomycin_new_start_load(weight: float, bmi: float, dose: float, capped: bool) -> None:
    ld = weight_based(rules("vancomycin"), weight, bmi)
    assert ld.dose_mg == dose and ld.capped is capped
    assert ld.exact_mg == pytest.approx(25.0 * weight)


def test_obese_load_uses_the_obese_range() -> None:
    """Protocol 30 mg/kg, but BMI >= 30 caps it at 25 mg/kg (obese 20-25 mg/kg, from memory)."""
    ld = weight_based(rules("vancomycin", loading__mg_per_kg=30.0), 90.0, 33.0)
    assert ld.exact_mg == pytest.approx(25.0 * 90.0)


def test_aminoglycoside_load_matches_the_textbook_equation() -> None:
    """W2 patient: LD = 8 x 0.299 x 18.2 x 1 / (1 - e^-0.299) (pk-sources.md 2.4)."""
    ke, v = 0.00293 * 97.2 + 0.014, 18.2
    ld = to_target(PKParams.one_compartment(ke, v), rules("gentamicin"), 8.0, 1.0)
    assert ld.exact_mg == pytest.approx(8.0 * ke * v * 1.0 / -math.expm1(-ke), rel=1e-9)
    assert ld.dose_mg == 170.0  # 168.4 mg on the 10 mg grid


def test_new_start_design_includes_the_load_first() -> None:
    reg = design(inp("vancomycin", PKParams.one_compartment(0.0827, 51.6), as_of=T0)).regimen
    ld = reg["loading_dose"]
    assert ld["dose_mg"] == 2000.0 and ld["at"] == CLOCK.format(T0)
    assert ld["infusion_h"] == 2.0  # 2000 mg no faster than 1 g/h (pk-sources.md 3.1)
    assert CLOCK.parse(reg["next_dose_at"], "t") == pytest.approx(T0 + reg["interval_h"])


def test_on_board_never_a_mg_per_kg_load() -> None:
    """Drug on board near target: no load; far below: a top-up, not 25 mg/kg."""
    params = PKParams.one_compartment(0.0827, 51.6)
    hist = DoseArrays.regimen(T0, 1000.0, 12.0, 1.0, 8)
    reg = design(inp("vancomycin", params, hist, as_of=float(hist.start[-1]) + 6.0,
                     current=CurrentRegimen(750.0, 12.0, 1.0))).regimen
    assert reg["loading_dose"] is None
    hist = DoseArrays.from_lists([T0], [1.0], [250.0])
    reg = design(inp("vancomycin", params, hist, as_of=T0 + 40.0, tbw_kg=80.0)).regimen
    ld = reg["loading_dose"]
    assert ld is not None and "top-up" in ld["basis"] and ld["exact_mg"] != pytest.approx(25.0 * 80.0)


def test_continuous_new_start_load() -> None:
    """Continuous infusion: 20 mg/kg load (pk-sources.md 3.1, from memory), then the rate."""
    reg = design(inp("vancomycin", PKParams.one_compartment(0.0827, 51.6), as_of=T0, tbw_kg=70.0,
                     target=Target(css=(20.0, 25.0)))).regimen
    assert reg["loading_dose"]["dose_mg"] == 1500.0  # 20 x 70 = 1400 -> 1500 on the 250 mg grid
    assert CLOCK.parse(reg["next_dose_at"], "t") == pytest.approx(T0 + reg["loading_dose"]["infusion_h"])
