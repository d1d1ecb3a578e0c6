"""The timing sensitivity's batched refits (estimation/shiftmap.py) against fits made one by one.

References: scipy.optimize.minimize (L-BFGS-B, tight tolerances) on each shifted copy's own objective,
built from the copy's own doses and level times; and the engine's single-copy MAP fit, which the batch
must reproduce (same start, same steps, same stopping rule) to well within the fit's tolerance.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import minimize

from tdmtui.core import registry
from tdmtui.core.compute import compute
from tdmtui.core.estimation import bayes_refit, shiftmap
from tdmtui.core.estimation.bayes import BOUND_SD, map_fit
from tdmtui.core.estimation.popmodels import Covariates, get_model
from tdmtui.core.estimation.posterior import Observations, Posterior
from tdmtui.core.input.case import load_case
from tdmtui.core.models import DoseArrays

SAMPLES = Path(__file__).resolve().parents[2] / "sample_cases"
ADULT = Covariates(age=60.0, sex="male", weight=80.0, height=175.0, scr=1.1)

# An invented course: vancomycin 1000 mg over 1 h every 12 h, 6 doses; a peak 2 h after the start of
# dose 5 and a trough 0.5 h before dose 6 (measured values invented, plausible for this patient).
DOSES = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 6)
TIMES = np.array([50.0, 59.5])
CONC = np.array([28.0, 14.5])


def _copies() -> list[tuple[DoseArrays, np.ndarray]]:
    """Each level moved 15 min either way, and the infusion before each moved to end 15 min early or late."""
    out = []
    for j in range(TIMES.size):
        for dh in (-0.25, 0.25):
            t = TIMES.copy()
            t[j] += dh
            out.append((DOSES, t))
        k = int(np.flatnonzero(DOSES.start < TIMES[j])[-1])
        for dh in (-0.25, 0.25):
            dur = DOSES.duration.copy()
            dur[k] += dh
            out.append((DoseArrays(DOSES.start, dur, DOSES.amount), TIMES.copy()))
    return out


@pytest.mark.parametrize("model_id", ["vancomycin-goti-2018", "vancomycin-thomson-2009"])
def test_batched_refits_match_scipy_and_single_fits(model_id: str) -> None:
    model = get_model(model_id)
    typical = model.typical(ADULT)
    base = map_fit(model, ADULT, DOSES, Observations.from_lists(TIMES, CONC), typical=typical)
    post = Posterior(model, typical, DOSES, Observations.from_lists(TIMES, CONC))
    bound = BOUND_SD * np.sqrt(np.diag(model.omega))
    copies = [shiftmap.Copy(t, shiftmap.added_doses(DOSES, d)) for d, t in _copies()]
    etas = shiftmap.solve(post, base.eta, bound, copies)
    moved = 0.0
    for (doses, t), eta in zip(_copies(), etas):
        assert eta is not None
        own = Posterior(model, typical, doses, Observations.from_lists(t, CONC))
        ref = minimize(lambda e: float(own(e[None, :])[0]), base.eta, method="L-BFGS-B",
                       options={"ftol": 1e-15, "gtol": 1e-10, "maxiter": 2000})
        assert np.allclose(eta, ref.x, atol=2e-4), (eta, ref.x)
        single = map_fit(model, ADULT, doses, Observations.from_lists(t, CONC), typical=typical, start=base.eta)
        assert np.allclose(eta, single.eta, rtol=0, atol=1e-7)
        moved = max(moved, float(np.max(np.abs(eta - base.eta))))
    assert moved > 1e-3  # the copies really moved the estimate: the check above is not of the base fit


def test_added_doses_is_the_change_in_durations_only() -> None:
    longer = DoseArrays(DOSES.start, DOSES.duration + np.eye(6)[4] * 0.25, DOSES.amount)
    added = shiftmap.added_doses(DOSES, longer)
    assert added is not None and list(added.duration) == [1.25, 1.0] and list(added.amount) == [1000.0, -1000.0]
    assert len(shiftmap.added_doses(DOSES, DOSES)) == 0
    moved_start = DoseArrays(DOSES.start + np.eye(6)[2], DOSES.duration, DOSES.amount)
    assert shiftmap.added_doses(DOSES, moved_start) is None  # not representable: fitted on its own
    assert shiftmap.added_doses(DOSES, DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 5)) is None


def _one_by_one(monkeypatch: pytest.MonkeyPatch) -> None:
    rec = registry.get("bayesian")
    assert rec is not None and rec.refit_many is not None
    single = dataclasses.replace(rec, refit_many=None)
    real = registry.get
    monkeypatch.setattr(registry, "get", lambda mid: single if mid.split(":")[0] == "bayesian" else real(mid))


# A fixed course, a rising SCr (typical values change during the course), dialysis sessions, censored
# levels, an aminoglycoside; and a late dose whose moved infusion end the batch leaves to the single fit.
@pytest.mark.parametrize(("name", "left"), [("vanc-obese", 0), ("vanc-rising-scr", 0), ("vanc-haemodialysis", 0),
                                            ("vanc-below-loq", 0), ("gent-peak-trough", 0), ("vanc-late-dose", 1)])
def test_sensitivity_rows_equal_the_one_by_one_refits(name: str, left: int, monkeypatch: pytest.MonkeyPatch) -> None:
    one_by_one = []
    real_refit = bayes_refit.refit
    monkeypatch.setattr(bayes_refit, "refit", lambda *a, **k: one_by_one.append(1) or real_refit(*a, **k))
    batched = compute(load_case(SAMPLES / f"{name}.json"), method="bayesian").result["timing_sensitivity"]
    assert len(one_by_one) == left  # the batch settled the others: the comparison below is of the batch
    _one_by_one(monkeypatch)
    single = compute(load_case(SAMPLES / f"{name}.json"), method="bayesian").result["timing_sensitivity"]
    assert len(one_by_one) == left + len(single)
    assert batched and len(batched) == len(single)
    for a, b in zip(batched, single):
        assert (a["moved"], a["shift_min"]) == (b["moved"], b["shift_min"])
        if b["ke_per_h"] is None:
            assert a["ke_per_h"] is None
            continue
        assert a["ke_per_h"] == pytest.approx(b["ke_per_h"], rel=1e-6)
        assert a["auc24_mg_h_per_l"] == pytest.approx(b["auc24_mg_h_per_l"], rel=1e-6)
        assert a["change"] == pytest.approx(b["change"], abs=1e-6)
