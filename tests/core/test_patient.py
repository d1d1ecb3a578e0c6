"""Body size and renal function against outside worked values.

Every expected number is typed in from a named source: pk-sources.md worked
example W1 (section 5), the CKD-EPI 2021 unit values (pk-sources.md 1.5), the
SI Cockcroft-Gault constants (pk-sources.md 1.1), or hand arithmetic on the
published equation (marked as such).
"""

from __future__ import annotations

import pytest

from tdmtui.core.errors import InputError
from tdmtui.core.library import Rules, load_protocol
from tdmtui.core.patient.body import (adjusted_weight, bmi, bsa_dubois, bsa_mosteller, crcl_weight, dosing_weight,
                                      ibw_devine, lbw_janmahasatian)
from tdmtui.core.patient.renal import ckd_epi_2021, cockcroft_gault, deindex_egfr, renal_summary
from tdmtui.core.input.units import parse_quantity

# pk-sources.md W1: female, 68 y, 165 cm, TBW 92 kg, SCr 1.1 mg/dL
W1 = {"age": 68.0, "sex": "female", "weight": 92.0, "height": 165.0, "scr": 1.1}


def _protocol(tmp_path, body: str):
    path = tmp_path / "protocol.toml"
    path.write_text('name = "ward test"\n' + body, encoding="utf-8")
    return load_protocol(path)


# ---------------------------------------------------------------- W1 body size
def test_w1_ibw():
    r = ibw_devine("female", W1["height"])
    assert r.kg == pytest.approx(56.9, abs=0.05)  # pk-sources.md W1: IBW 56.9 kg
    assert r.variant == "devine" and not r.flagged  # 165 cm is over 60 in (Devine 1974)


def test_w1_adjbw_bmi_bsa():
    ibw = ibw_devine("female", W1["height"]).kg
    assert adjusted_weight(W1["weight"], ibw, 0.4) == pytest.approx(70.9, abs=0.05)  # W1: AdjBW 70.9
    assert bmi(W1["weight"], W1["height"]) == pytest.approx(33.8, abs=0.05)  # W1: BMI 33.8
    # W1 / 1.3: Mosteller 2.054. sqrt(165 x 92 / 3600) = 2.05345 by hand, so the sheet's third
    # decimal is rounded up (double rounding via 2.0535): tolerance 0.001 for the sheet's figure.
    assert bsa_mosteller(W1["weight"], W1["height"]) == pytest.approx(2.054, abs=0.001)
    assert bsa_dubois(W1["weight"], W1["height"]) == pytest.approx(1.989, abs=0.0005)  # W1 / 1.3: DuBois 1.989


def test_w1_cockcroft_gault_by_weight():
    ibw = ibw_devine("female", W1["height"]).kg
    adj = adjusted_weight(W1["weight"], ibw, 0.4)
    cg = lambda w: cockcroft_gault(W1["age"], W1["sex"], w, W1["scr"])  # noqa: E731
    assert cg(W1["weight"]) == pytest.approx(71.1, abs=0.05)  # W1: C-G with TBW 71.1 mL/min
    assert cg(ibw) == pytest.approx(44.0, abs=0.05)  # W1: C-G with IBW 44.0
    assert cg(adj) == pytest.approx(54.8, abs=0.05)  # W1: C-G with AdjBW 54.8


def test_w1_ckd_epi_and_deindexed():
    egfr = ckd_epi_2021(W1["age"], W1["sex"], W1["scr"])
    assert egfr == pytest.approx(54.7, abs=0.05)  # W1: CKD-EPI 2021 54.7 mL/min/1.73 m2
    bsa = bsa_mosteller(W1["weight"], W1["height"])
    assert deindex_egfr(egfr, bsa) == pytest.approx(65.0, abs=0.05)  # W1: de-indexed with Mosteller 65.0 mL/min


# ---------------------------------------------------------------- equations
@pytest.mark.parametrize(("age", "sex", "scr", "expected"), [
    (68.0, "female", 1.1, 54.7),  # pk-sources.md 1.5 unit-test value
    (30.0, "male", 0.7, 127.1),  # pk-sources.md 1.5 unit-test value
    (60.0, "male", 1.2, 69.2),  # pk-sources.md 1.5 unit-test value
])
def test_ckd_epi_2021_unit_values(age, sex, scr, expected):
    assert ckd_epi_2021(age, sex, scr) == pytest.approx(expected, abs=0.05)


def test_cockcroft_gault_textbook_check():
    # pk-sources.md W1 textbook-style check (from memory): male 50 y, 70 kg, SCr 0.9 -> 97.2 mL/min
    assert cockcroft_gault(50.0, "male", 70.0, 0.9) == pytest.approx(97.2, abs=0.05)


def test_scr_unit_factor_88_4():
    # pk-sources.md 1.4 / W1: 1 mg/dL = 88.4 umol/L; SCr 1.1 mg/dL = 97.2 umol/L
    assert parse_quantity("88.4 umol/L", "scr", "patient.scr") == pytest.approx(1.0, abs=0.0005)
    assert parse_quantity("97.2 umol/L", "scr", "patient.scr") == pytest.approx(1.1, abs=0.0005)


@pytest.mark.parametrize(("sex", "si_constant"), [("male", 1.23), ("female", 1.04)])
def test_cockcroft_gault_si_constants(sex, si_constant):
    # pk-sources.md 1.1 (confirmed-secondary, UK hospital protocol): CrCl = 1.23 (men) or
    # 1.04 (women) x (140 - age) x wt / SCr[umol/L]. The constants are rounded (88.4/72 = 1.228,
    # x 0.85 = 1.044), hence a 0.5 % tolerance.
    age, wt, scr_umol = 72.0, 64.0, 130.0
    by_si = si_constant * (140.0 - age) * wt / scr_umol
    scr_mg_dl = parse_quantity(f"{scr_umol:g} umol/L", "scr", "patient.scr")
    assert cockcroft_gault(age, sex, wt, scr_mg_dl) == pytest.approx(by_si, rel=0.005)


def test_devine_male_hand_arithmetic():
    # Devine 1974 (pk-sources.md 1.2), hand arithmetic: 72 in = 182.88 cm -> 50 + 2.3 x 12 = 77.6 kg
    assert ibw_devine("male", 182.88).kg == pytest.approx(77.6, abs=1e-6)


def test_devine_short_height_variants():
    # 58 in = 147.32 cm. pk-sources.md 1.2: below 60 in variants differ; hand arithmetic:
    # extrapolated 45.5 - 2.3 x 2 = 40.9 kg; floor keeps 45.5 kg.
    ext = ibw_devine("female", 147.32)
    assert ext.kg == pytest.approx(40.9, abs=1e-6)
    assert (ext.variant, ext.flagged) == ("devine-extrapolated", True)
    flo = ibw_devine("female", 147.32, variant="devine-floor")
    assert flo.kg == pytest.approx(45.5, abs=1e-6)
    assert (flo.variant, flo.flagged) == ("devine-floor", True)


def test_devine_non_positive_ibw_is_an_input_error():
    # Devine extrapolated to 95 cm (37.4 in): 50 + 2.3 x (37.4 - 60) < 0 kg
    with pytest.raises(InputError) as exc:
        ibw_devine("male", 95.0)
    assert exc.value.field == "patient.height"


def test_lbw_janmahasatian_hand_arithmetic():
    # Janmahasatian 2005 equation as written in pk-sources.md 1.2 (from memory), hand arithmetic:
    # male 70 kg 175 cm: BMI 22.857 -> 9270 x 70 / (6680 + 216 x 22.857) = 55.86 kg
    assert lbw_janmahasatian("male", 70.0, 175.0) == pytest.approx(55.86, abs=0.01)
    # female 60 kg 160 cm: BMI 23.4375 -> 9270 x 60 / (8780 + 244 x 23.4375) = 38.36 kg
    assert lbw_janmahasatian("female", 60.0, 160.0) == pytest.approx(38.36, abs=0.01)


@pytest.mark.parametrize(("call", "fld"), [
    (lambda: cockcroft_gault(68.0, "other", 92.0, 1.1), "patient.sex"),
    (lambda: cockcroft_gault(68.0, "female", 92.0, 0.0), "patient.scr"),
    (lambda: cockcroft_gault(150.0, "female", 92.0, 1.1), "patient.age"),
    (lambda: cockcroft_gault(68.0, "female", -1.0, 1.1), "patient.weight"),
])
def test_equation_input_errors_name_the_field(call, fld):
    with pytest.raises(InputError) as exc:
        call()
    assert exc.value.field == fld


# ---------------------------------------------------------------- weight rules
def test_crcl_weight_rules_on_w1():
    ibw = ibw_devine("female", 165.0).kg
    kg, text = crcl_weight(92.0, ibw, "tbw-ibw-adj", 1.2, 0.4)
    assert kg == pytest.approx(70.9, abs=0.05)  # W1: AdjBW 70.9 (TBW 162 % of IBW > 120 %)
    assert text.startswith("Cockcroft-Gault with adjusted body weight 70.9 kg")
    assert "TBW 162 % of IBW" in text and "rule tbw-ibw-adj, threshold 120 %" in text  # W1: TBW/IBW 1.62
    assert crcl_weight(92.0, ibw, "tbw", None, 0.4)[0] == pytest.approx(92.0)  # W1 TBW
    assert crcl_weight(92.0, ibw, "ibw", None, 0.4)[0] == pytest.approx(56.9, abs=0.05)  # W1 IBW
    assert crcl_weight(92.0, ibw, "adj", None, 0.4)[0] == pytest.approx(70.9, abs=0.05)  # W1 AdjBW
    assert crcl_weight(92.0, ibw, "lower-of-tbw-ibw", None, 0.4)[0] == pytest.approx(56.9, abs=0.05)
    assert crcl_weight(50.0, ibw, "lower-of-tbw-ibw", None, 0.4)[0] == pytest.approx(50.0)


def test_crcl_weight_unknown_rule():
    with pytest.raises(InputError) as exc:
        crcl_weight(92.0, 56.9, "heaviest", 1.2, 0.4)
    assert exc.value.field == "renal.crcl_weight_rule"


@pytest.mark.parametrize(("drug", "tbw", "expected", "kind"), [
    # common practice (pk-sources.md 1.2; Traynor 1995): aminoglycosides on TBW below IBW,
    # IBW up to 120 % of IBW, AdjBW (0.4) above. IBW 56.9 kg (W1, female 165 cm).
    ("gentamicin", 50.0, 50.0, "total body weight"),  # TBW < IBW -> TBW
    ("gentamicin", 65.0, 56.9, "ideal body weight"),  # 114 % -> IBW
    ("tobramycin", 68.0, 56.9, "ideal body weight"),  # 119.5 % -> IBW
    ("amikacin", 92.0, 70.9, "adjusted body weight"),  # 162 % -> AdjBW 70.9 (W1)
    # 2020 vancomycin guideline (pk-sources.md 1.2 / 3.1): actual body weight, obese included
    ("vancomycin", 92.0, 92.0, "total body weight"),
])
def test_dosing_weight_rules(drug, tbw, expected, kind):
    kg, text = dosing_weight(tbw, ibw_devine("female", 165.0).kg, Rules(drug))
    assert kg == pytest.approx(expected, abs=0.05)
    assert kind in text and "source:" in text and "[library]" in text


def test_dosing_weight_threshold_from_protocol(tmp_path):
    # Some protocols use 130 % instead of 120 % (pk-sources.md 1.2): 72 kg = 126 % of 56.9 -> IBW
    proto = _protocol(tmp_path, '[gentamicin.dosing_weight.threshold]\nvalue = 1.3\nsource = "ward rule"\n')
    ibw = ibw_devine("female", 165.0).kg
    assert dosing_weight(72.0, ibw, Rules("gentamicin"))[0] == pytest.approx(adjusted_weight(72.0, ibw, 0.4))
    kg, text = dosing_weight(72.0, ibw, Rules("gentamicin", proto))
    assert kg == pytest.approx(56.9, abs=0.05)
    assert "threshold 130 %" in text


# ---------------------------------------------------------------- summary
def test_renal_summary_w1_gentamicin():
    s = renal_summary(68.0, "female", 92.0, 165.0, [(0.0, 1.1, 0)], Rules("gentamicin"))
    assert s.ibw == pytest.approx(56.9, abs=0.05)  # W1
    assert s.adjbw == pytest.approx(70.9, abs=0.05)  # W1
    assert s.bmi == pytest.approx(33.8, abs=0.05)  # W1
    assert s.bsa == pytest.approx(2.054, abs=0.001)  # W1 Mosteller (sheet rounds 2.05345 up)
    assert s.crcl_ml_min == pytest.approx(54.8, abs=0.05)  # W1 C-G with AdjBW (library rule tbw-ibw-adj)
    assert s.egfr_ckd_epi == pytest.approx(54.7, abs=0.05)  # W1 CKD-EPI 2021
    assert s.egfr_ckd_epi_ml_min == pytest.approx(65.0, abs=0.05)  # W1 de-indexed
    assert s.dosing_weight_kg == pytest.approx(70.9, abs=0.05)  # aminoglycoside AdjBW (common practice)
    assert "adjusted body weight 70.9 kg" in s.crcl_rule and "patient.scr[0]" in s.crcl_rule
    assert s.alerts == []
    assert set(s.to_dict()) == {"crcl_ml_min", "crcl_rule", "ibw_kg", "dosing_weight_kg", "dosing_weight_rule"}


def test_renal_summary_uses_latest_scr_by_time_not_file_order():
    # case-format.md: the latest value drives Cockcroft-Gault. File order: 1.1 at 48 h, then 1.0 at 0 h.
    s = renal_summary(68.0, "female", 92.0, 165.0, [(48.0, 1.1, 0), (0.0, 1.0, 1)], Rules("vancomycin"))
    assert (s.scr_index, s.scr_measured_mg_dl, s.scr_time_h) == (0, 1.1, 48.0)
    assert s.crcl_ml_min == pytest.approx(54.8, abs=0.05)  # W1 C-G with AdjBW at SCr 1.1
    assert s.dosing_weight_kg == pytest.approx(92.0)  # vancomycin on TBW (2020 guideline)


def test_renal_summary_scr_floor_from_protocol(tmp_path):
    proto = _protocol(tmp_path, '[common.renal.scr_floor_mg_dl]\nvalue = 1.0\nsource = "ward rule"\n')
    s = renal_summary(68.0, "female", 92.0, 165.0, [(None, 0.6, None)], Rules("gentamicin", proto))
    # W1 C-G with AdjBW is 54.8 at SCr 1.1, so 54.8 x 1.1 / 1.0 = 60.3 at the floor of 1.0
    assert s.crcl_ml_min == pytest.approx(60.3, abs=0.1)
    assert s.scr_used_mg_dl == 1.0 and s.scr_measured_mg_dl == 0.6
    # pk-sources.md 1.4: the floor is stated ("SCr 0.6 mg/dL; computed with 1.0 per local rule")
    assert "SCr 0.6 mg/dL" in s.crcl_rule and "computed with 1.0 per local rule" in s.crcl_rule
    # without a floor (library default 0 = off) the measured value is used
    plain = renal_summary(68.0, "female", 92.0, 165.0, [(None, 1.1, None)], Rules("gentamicin"))
    assert "computed with" not in plain.crcl_rule


def test_renal_summary_short_height_alert():
    s = renal_summary(70.0, "female", 50.0, 147.32, [(None, 0.9, None)], Rules("gentamicin"))
    assert s.ibw == pytest.approx(40.9, abs=1e-6)  # Devine extrapolated, hand arithmetic (58 in)
    assert s.ibw_variant == "devine-extrapolated" and s.ibw_flagged
    (alert,) = [a for a in s.alerts if a.code == "ibw-short-height"]
    assert (alert.severity, alert.field) == ("caution", "patient.height")
    assert "devine-extrapolated" in alert.message


def _unstable(series, drug="gentamicin"):
    s = renal_summary(68.0, "female", 92.0, 165.0, series, Rules(drug))
    return [a for a in s.alerts if a.code == "scr-unstable"]


def test_scr_rise_of_0_3_in_24_h_is_warned():
    # KDIGO 2012 AKI (from memory; pk-sources.md 6.1): rise >= 0.3 mg/dL within 48 h
    (a,) = _unstable([(0.0, 1.1, 0), (24.0, 1.4, 1)])
    assert (a.severity, a.field) == ("caution", "patient.scr[1].value")
    assert "rose" in a.message and "1.1" in a.message and "1.4" in a.message


def test_scr_rise_of_0_2_in_24_h_is_not_warned():
    # below the 0.3 mg/dL and 50 % thresholds (KDIGO 2012, from memory; case-format.md)
    assert _unstable([(0.0, 1.1, 0), (24.0, 1.3, 1)]) == []


def test_scr_rise_of_0_3_outside_48_h_under_50_percent_is_not_warned():
    # 1.0 -> 1.3 over 72 h: outside the 48 h window, and 30 % < 50 % (case-format.md patient.scr)
    assert _unstable([(0.0, 1.0, 0), (72.0, 1.3, 1)]) == []


def test_scr_fall_of_50_percent_is_warned():
    # case-format.md: a change >= 50 % raises the unstable-renal-function warning
    (a,) = _unstable([(0.0, 1.2, 0), (96.0, 0.6, 1)])
    assert a.field == "patient.scr[1].value" and "fell" in a.message and "1.2" in a.message


def test_scr_change_within_window_between_non_consecutive_values():
    # 1.0 (0 h) -> 1.15 (12 h) -> 1.3 (24 h): 0.3 within 48 h though each step is 0.15
    (a,) = _unstable([(0.0, 1.0, 0), (12.0, 1.15, 1), (24.0, 1.3, 2)])
    assert a.field == "patient.scr[2].value" and "1.0 mg/dL" in a.message


@pytest.mark.parametrize(("series", "fld"), [
    ([], "patient.scr"),
    ([(0.0, 1.1, 0), (None, 1.2, 1)], "patient.scr[1].time"),
    ([(0.0, 0.0, 0)], "patient.scr[0].value"),
])
def test_renal_summary_input_errors(series, fld):
    with pytest.raises(InputError) as exc:
        renal_summary(68.0, "female", 92.0, 165.0, series, Rules("gentamicin"))
    assert exc.value.field == fld
