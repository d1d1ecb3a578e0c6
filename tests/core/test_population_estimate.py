"""Textbook population estimates (hand-calculation relations from the drug library)."""

from __future__ import annotations

import pytest

from tdmtui.core.estimation.estimates import textbook_population
from tdmtui.core.library import Rules
from tdmtui.core.patient.renal import cockcroft_gault


def test_w2_aminoglycoside_initial_estimate_textbook_patient():
    # pk-sources.md W2 (Bauer's "pharmacokinetic dosing method"; the patient's inputs are from memory,
    # low-moderate confidence they match the printed example): male 50 y, 70 kg, SCr 0.9 mg/dL ->
    # CrCl 97.2 mL/min; ke = 0.00293 x 97.2 + 0.014 = 0.299 /h; t1/2 2.32 h; V = 0.26 x 70 = 18.2 L
    crcl = cockcroft_gault(50, "male", 70, 0.9)
    assert crcl == pytest.approx(97.2, abs=0.05)
    est = textbook_population(Rules("gentamicin"), crcl, 70.0, 70.0)
    assert est.params.ke == pytest.approx(0.299, abs=5e-4)
    assert est.params.half_life == pytest.approx(2.32, abs=5e-3)
    assert est.params.v1 == pytest.approx(18.2, abs=0.05)


def test_vancomycin_population_matches_matzke_line():
    # pk-sources.md 3.3: ke = 0.00083 x CrCl + 0.0044 (textbook, confirmed-secondary), V = 0.7 L/kg;
    # numerically Matzke 1984 CL = 0.06 x (0.689 CrCl + 3.66) L/h divided by 49 L for a 70 kg patient
    est = textbook_population(Rules("vancomycin"), 90.0, 70.0, 70.0)
    assert est.params.v1 == pytest.approx(49.0, rel=1e-12)
    assert est.params.ke == pytest.approx(0.00083 * 90 + 0.0044, rel=1e-12)
    matzke_cl = 0.06 * (0.689 * 90 + 3.66)
    assert est.params.cl == pytest.approx(matzke_cl, rel=0.02)
