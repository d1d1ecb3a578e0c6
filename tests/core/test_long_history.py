"""A 5,000-dose course: computed whole, it agrees with its last 60 doses alone, where the older doses have
decayed far below rounding (vancomycin half-life hours, the 60 doses span 30 days); the reference for the
concentrations is scipy's solve_ivp on the truncated course (tests/core/ode_reference.py)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from ode_reference import ode_reference
from tdmtui.core import models
from tdmtui.core.compute import compute_raw
from tdmtui.core.models import DoseArrays
from tdmtui.core.models.batch import Design, batch_concentration

T0 = dt.datetime(2026, 1, 1, 8, 0)
N, KEEP, TAU = 5000, 60, 12.0


def _at(h: float) -> str:
    return (T0 + dt.timedelta(hours=h)).strftime("%Y-%m-%dT%H:%M")


def long_case(first: int) -> dict:
    """Invented: vancomycin 1000 mg over 1 h every 12 h, doses ``first``..4999; a trough and a peak around
    the last dose but one, as of 2 h after the last dose started."""
    doses = [{"start": _at(i * TAU), "amount": "1000 mg", "duration": "1 h"} for i in range(first, N)]
    levels = [{"time": _at((N - 2) * TAU - 0.5), "conc": "14.1 mg/L"},
              {"time": _at((N - 2) * TAU + 2.0), "conc": "29.5 mg/L"}]
    return {"format": "tdmtui.case/1", "label": "invented long course", "drug": "vancomycin",
            "as_of": _at((N - 1) * TAU + 2.0),
            "patient": {"age": "58 yr", "sex": "female", "weight": "70 kg", "height": "165 cm", "scr": "0.9 mg/dL"},
            "doses": doses, "levels": levels, "method": "bayesian",
            "schedule": {"dose": "1000 mg", "interval": "12 h", "duration": "1 h"}}


@pytest.mark.parametrize("params", [(4.0, 60.0, 0.0, 0.0), (3.5, 30.0, 6.0, 40.0)], ids=["one", "two"])
def test_5000_dose_curve_matches_the_ode_on_the_last_60_doses(params: tuple[float, float, float, float]) -> None:
    cl, v1, q, v2 = params
    every = DoseArrays.regimen(0.0, 1000.0, TAU, 1.0, N)
    last = DoseArrays.regimen((N - KEEP) * TAU, 1000.0, TAU, 1.0, KEEP)
    t = np.array([(N - 3) * TAU + 0.5, (N - 2) * TAU - 0.5, (N - 2) * TAU + 1.0, (N - 1) * TAU + 0.3,
                  (N - 1) * TAU + 30.0])
    ref, _ = ode_reference(cl, v1, q, v2, last.start, last.duration, last.amount, t)
    p = models.PKParams(cl, v1, q, v2)
    assert models.concentration(p, every, t) == pytest.approx(ref, rel=1e-7)
    batch = batch_concentration([cl, cl * 1.2], [v1, v1], [q, q], [v2, v2], Design.build(every, t))
    assert batch[0] == pytest.approx(ref, rel=1e-7)
    assert models.auc(p, every, t[0], t[-1]) == pytest.approx(models.auc(p, last, t[0], t[-1]), rel=1e-9)


def test_5000_dose_case_computes_as_its_last_60_doses() -> None:
    whole = compute_raw(long_case(0))
    cut = compute_raw(long_case(N - KEEP))
    assert len(whole.history) == N and len(cut.history) == KEEP
    a, b = whole.result, cut.result
    assert a["status"] == b["status"] == "ok"
    for key, est in a["methods"].items():  # each model's MAP, the classic methods: the same to rounding
        if est is not None and key in b["methods"] and "ke_per_h" in est:
            assert est["ke_per_h"] == pytest.approx(b["methods"][key]["ke_per_h"], rel=1e-6), key
    # The model average weighs each model by the levels' likelihood over its prior (importance sampling):
    # a few draws of very slow elimination still feel doses older than 30 days, so the averaged figures
    # agree to 1e-3 only (measured 2e-4), which is the honest difference, not a truncation error.
    for key in ("ke_per_h", "vd_l", "cl_l_per_h"):
        assert a["estimate"][key] == pytest.approx(b["estimate"][key], rel=1e-3)
    for key in ("auc24_mg_h_per_l", "trough_mg_per_l"):
        assert a["estimate"]["current"][key] == pytest.approx(b["estimate"]["current"][key], rel=1e-3)
    assert (a["regimen"]["dose_mg"], a["regimen"]["interval_h"]) == (b["regimen"]["dose_mg"], b["regimen"]["interval_h"])
    assert a["regimen"]["forecast_auc"]["day1_mg_h_per_l"] == pytest.approx(
        b["regimen"]["forecast_auc"]["day1_mg_h_per_l"], rel=1e-3)
    # the fitted curve over the last days against the ODE on the truncated course (same parameters)
    p = whole.params
    t = np.linspace((N - 3) * TAU, (N - 1) * TAU + 24.0, 9)
    last = cut.history
    ref, _ = ode_reference(p.cl, p.v1, p.q, p.v2, last.start, last.duration, last.amount, t)
    assert models.concentration(p, whole.history, t) == pytest.approx(ref, rel=1e-7)
    band = whole.band_over(float(t[0]), float(t[-1]), 50)
    assert band is not None and np.all(band[1] <= band[2]) and band[0][0] == pytest.approx(t[0])
