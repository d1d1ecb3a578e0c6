"""Probability of target: one implementation behind the estimate, the plan's rows and the note.

Independent check: the steady-state two-compartment concentrations of each
posterior draw from the textbook closed form (macro-constants alpha and beta of
the central compartment after a short infusion, summed over an infinite train
of doses: Gibaldi M, Perrier D. Pharmacokinetics, 2nd ed., ch. 2 and appendix;
from memory), judged against the case's bands with the library's peak
reference time (1 h after the start of the dose for tobramycin).
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from casedata import SAMPLES
from tdmtui.core.input.case import load_case
from tdmtui.core.compute import compute
from tdmtui.core.text.note import render_note


@pytest.fixture(scope="module")
def tobra_bayes():
    return compute(load_case(SAMPLES / "tobra-us-units.json"), method="bayesian")


def _ss_conc(cl, v1, q, v2, dose, tau, tinf, t):
    """Steady-state central concentration t h after the start of a dose (t >= tinf), per draw."""
    k10, k12, k21 = cl / v1, q / v1, q / v2
    s = k10 + k12 + k21
    root = np.sqrt(s * s - 4 * k10 * k21)
    alpha, beta = (s + root) / 2, (s - root) / 2
    a = (alpha - k21) / (v1 * (alpha - beta))
    b = (k21 - beta) / (v1 * (alpha - beta))
    k0 = dose / tinf
    out = np.zeros_like(cl)
    for coef, lam in ((a, alpha), (b, beta)):
        out += k0 * coef / lam * (1 - np.exp(-lam * tinf)) * np.exp(-lam * (t - tinf)) / (1 - np.exp(-lam * tau))
    return out


def test_estimate_probability_against_closed_form(tobra_bayes):
    est = tobra_bayes.estimates["bayesian"]
    s = est.samples
    peak = _ss_conc(s.cl, s.v1, s.q, s.v2, 100.0, 8.0, 0.5, 1.0)      # 1 h after the start
    trough = _ss_conc(s.cl, s.v1, s.q, s.v2, 100.0, 8.0, 0.5, 8.0)    # just before the next dose
    on = (peak >= 6.0) & (peak <= 10.0) & (trough >= 0.0) & (trough <= 2.0)
    w = s.weights
    expected = float(np.mean(on) if w is None else np.sum(w[on]))
    assert est.target_probability == pytest.approx(expected, abs=1.5 / len(s))
    assert est.target_probability < 0.05  # most draws give a trough over 2 mg/L at 100 mg every 8 h


def test_estimate_plan_and_note_agree(tobra_bayes):
    res = tobra_bayes.result
    p_est = res["estimate"]["target_probability"]
    rows = [r for r in tobra_bayes.regimen_plan.candidates
            if r["dose_mg"] == pytest.approx(100.0) and r["interval_h"] == pytest.approx(8.0)]
    assert rows, "100 mg every 8 h is on the candidate grid"
    assert rows[0]["probability"] == pytest.approx(p_est, abs=1e-9)
    text = " ".join(render_note(tobra_bayes).split())
    m = re.search(r"chance of meeting the target (<?[\d.]+) ?%", text)
    assert m, "the note states the proposal's chance of target"
    proposal = res["regimen"]["predicted"]["target_probability"]
    assert float(m.group(1)) == pytest.approx(100 * proposal, abs=0.51)
    chosen = [r for r in tobra_bayes.regimen_plan.candidates
              if r["dose_mg"] == pytest.approx(res["regimen"]["dose_mg"])
              and r["interval_h"] == pytest.approx(res["regimen"]["interval_h"])]
    assert chosen and chosen[0]["probability"] == pytest.approx(proposal, abs=1e-9)
    assert math.isfinite(p_est)
