"""Renal function that changes during the course: the fits follow each dated SCr.

References outside the project: Cockcroft-Gault (1976) and each model's published
clearance equation (pk-sources.md 1.1, 3.4.2, 3.4.3), evaluated by hand here; scipy's
solve_ivp (ode_reference_tv.py) for the concentrations with the parameters switched
at each SCr time. Patients and courses are invented.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from casedata import SAMPLES, base_case
from ode_reference_tv import ode_reference_tv

from tdmtui.core.estimation import bayes
from tdmtui.core.estimation.posterior import Observations
from tdmtui.core.estimation import popmodels
from tdmtui.core.estimation import renalcourse
from tdmtui.core.input.case import parse_case
from tdmtui.core.compute import compute
from tdmtui.core.models import DoseArrays


def _cg(age: float, weight: float, scr: float) -> float:
    # Cockcroft-Gault, male (Cockcroft & Gault 1976; pk-sources.md 1.1)
    return (140.0 - age) * weight / (72.0 * scr)


def _rising_case() -> dict:
    """SCr 0.9 -> 1.3 -> 1.9 mg/dL, the changes falling inside infusions; levels before and after."""
    c = base_case()
    c["as_of"] = "2026-03-05T20:00"
    c["patient"].update({"age": "64 yr", "weight": "80 kg", "scr": [
        {"time": "2026-03-02T06:00", "value": "0.9 mg/dL"},
        {"time": "2026-03-03T08:45", "value": "1.3 mg/dL"},   # inside the 08:00 infusion
        {"time": "2026-03-04T20:30", "value": "1.9 mg/dL"}]})  # inside the 20:00 infusion
    c["doses"] = [{"start": f"2026-03-0{d}T{h}:00", "amount": "1250 mg", "duration": "90 min"}
                  for d in (2, 3, 4, 5) for h in ("08", "20") if not (d == 5 and h == "20")]
    c["levels"] = [{"time": "2026-03-03T07:30", "conc": "11.0 mg/L"},
                   {"time": "2026-03-05T07:30", "conc": "24.0 mg/L"}]
    return c


def test_each_dated_scr_gives_the_models_crcl_from_its_draw() -> None:
    # Reference: Cockcroft-Gault by hand; Buelga 2005 CL = 1.08 x CrCl (L/h) (pk-sources.md 3.4.2).
    case = parse_case(_rising_case())
    steps = renalcourse.steps_of(case)
    assert [s.scr_mg_dl for s in steps] == pytest.approx([0.9, 1.3, 1.9])
    model = popmodels.get_model("vancomycin-buelga-2005")
    cov = popmodels.Covariates(64.0, "male", 80.0, 178.0, 1.9)
    sched = renalcourse.schedule_for(model, cov, steps)
    assert sched is not None and len(sched.changes) == 2
    for typ, scr in zip(sched.typicals, (0.9, 1.3, 1.9)):
        crcl = _cg(64.0, 80.0, scr)
        assert typ.covariates["crcl_cg"] == pytest.approx(crcl, rel=1e-9)
        assert typ.params.cl == pytest.approx(1.08 * crcl * 0.06, rel=1e-9)
    rows = renalcourse.intervals(sched, case.clock)
    assert rows[0]["from"] is None and rows[0]["until"] == "2026-03-03T08:45"
    assert rows[-1]["until"] is None and rows[-1]["crcl_ml_min"] == pytest.approx(_cg(64.0, 80.0, 1.9))


@pytest.mark.parametrize("model_id", ["vancomycin-buelga-2005", "vancomycin-goti-2018"],
                         ids=["one-compartment", "two-compartment"])
def test_time_varying_map_predictions_match_the_ode(model_id: str) -> None:
    # Reference: solve_ivp with the fitted individual's parameters switched at both SCr times
    # (typical values by the published equation, times exp(eta) of the fit); infusions span both changes.
    case = parse_case(_rising_case())
    model = popmodels.get_model(model_id)
    cov = popmodels.Covariates(64.0, "male", 80.0, 178.0, 1.9)
    sched = renalcourse.schedule_for(model, cov, renalcourse.steps_of(case))
    course = renalcourse.build_course(sched, sched.latest)
    doses = DoseArrays.from_lists([d.start for d in case.doses], [d.duration for d in case.doses],
                                  [d.amount for d in case.doses])
    obs = Observations.from_lists([lv.time for lv in case.levels], [lv.conc for lv in case.levels])
    fit = bayes.map_fit(model, cov, doses, obs, course=course, typical=sched.latest)
    eta = dict(zip(model.eta_names, np.exp(fit.eta)))
    pieces = []
    for scr in (0.9, 1.3, 1.9):
        crcl = min(_cg(64.0, 80.0, max(scr, 1.0) if model_id.endswith("goti-2018") else scr), 150.0)
        if model_id.endswith("buelga-2005"):  # CL = 1.08 CrCl(L/h), V = 0.98 TBW (pk-sources.md 3.4.2)
            pieces.append((1.08 * crcl * 0.06 * eta["cl"], 0.98 * 80.0 * eta.get("v1", 1.0), 0.0, 0.0))
        else:  # Goti 2018: CL = 4.5 (CrCl/120)^0.8, V1 = 58.4 WT/70, Q 6.5, V2 = 38.4 WT/70 (pk-sources.md 3.4.3)
            pieces.append((4.5 * (crcl / 120.0) ** 0.8 * eta["cl"], 58.4 * 80.0 / 70.0 * eta["v1"], 6.5,
                           38.4 * 80.0 / 70.0 * eta["v2"]))
    t = np.concatenate([obs.time, np.linspace(1.0, case.as_of - doses.start[0], 60) + doses.start[0]])
    ref, _ = ode_reference_tv(list(course.changes), pieces, doses.start, doses.duration, doses.amount, t)
    assert np.allclose(fit.predict(t), ref, rtol=1e-6, atol=1e-6)
    # the estimate's parameters are the latest piece (the forecast's)
    assert fit.params.cl == pytest.approx(pieces[-1][0], rel=1e-9)


def test_the_fit_says_which_crcl_held_when_and_the_fixed_fit_stands_beside_it() -> None:
    # SCr 0.9 -> 1.9 mg/dL is a KDIGO rise (>= 0.3 mg/dL in 48 h; from memory): scr-unstable fires.
    out = compute(parse_case(_rising_case()), method="bayesian")
    codes = {w["code"] for w in out.result["warnings"]}
    assert "scr-unstable" in codes
    est = out.result["estimate"]
    assert len(est["renal_course"]) == 3
    assert est["renal_course"][1]["crcl_ml_min"] == pytest.approx(_cg(64.0, 80.0, 1.3), rel=1e-3)
    assert "the forecast uses the latest CrCl" in est["assumption"]
    fixed = out.result["methods"]["bayesian:fixed-renal"]
    assert "renal_course" not in fixed
    # with CrCl falling through the course the fixed (latest CrCl) fit must give the earlier
    # doses the same low clearance: its CL differs from the time-varying fit's
    assert abs(fixed["cl_l_per_h"] - est["cl_l_per_h"]) / est["cl_l_per_h"] > 0.02


def test_a_level_after_the_change_keeps_the_regimen_none_gives_hold_and_redraw() -> None:
    out = compute(parse_case(_rising_case()), method="bayesian")
    reg = out.result["regimen"]
    # the level at 03-05 07:30 was drawn after the latest rise (03-04 20:30): the regimen stands
    assert reg["mode"] != "redose-by-level"
    assert "renal-levels-after-change" in {w["code"] for w in out.result["warnings"]}
    c = _rising_case()
    c["levels"] = c["levels"][:1]  # only the level drawn before both rises
    out = compute(parse_case(c), method="bayesian")
    reg = out.result["regimen"]
    assert reg["action"] == "hold-and-redraw" and reg["mode"] == "redose-by-level"
    # redraw when the next dose is due: the last dose 03-05 08:00 + 12 h = 20:00 (the as_of here)
    assert reg["redraw_level_at"] == "2026-03-05T20:00"
    assert reg["next_dose_at"] is None and reg["for_reference"]["dose_mg"] > 0
    assert out.plan is None
    assert "renal-redose-by-level" in {w["code"] for w in out.result["warnings"]}


def test_one_scr_or_equal_values_give_no_course() -> None:
    c = _rising_case()
    c["patient"]["scr"] = [{"time": "2026-03-02T06:00", "value": "1.1 mg/dL"},
                           {"time": "2026-03-04T06:00", "value": "1.1 mg/dL"}]
    assert renalcourse.steps_of(parse_case(c)) == []
    c["patient"]["scr"] = "1.1 mg/dL"
    assert renalcourse.steps_of(parse_case(c)) == []


def test_a_scr_after_as_of_is_not_followed() -> None:
    c = _rising_case()
    c["patient"]["scr"].append({"time": "2026-03-06T06:00", "value": "2.5 mg/dL"})
    steps = renalcourse.steps_of(parse_case(c))
    assert steps[-1].scr_mg_dl == pytest.approx(1.9)
    assert math.isclose(len(steps), 3)


def test_one_ke_methods_are_withheld_when_their_levels_straddle_an_unstable_change() -> None:
    # Sample: troughs 15.8 and 30.9 mg/L either side of a rise 0.8 -> 1.6 mg/dL; a single ke from two troughs
    # that RISE while the doses stay the same would mean a half-life of days (ln(15.8/30.9) < 0 between troughs).
    out = compute(parse_case(json.loads((SAMPLES / "vanc-aki-levels-after.json").read_text())))
    assert "two-level" not in out.result["methods"] and out.result["method"] == "bayesian"
    assert "either side of a change in renal function" in out.result["methods_unavailable"]["two-level"]
    assert len(out.result["estimate"]["renal_course"]) == 3
    # the levels were computed from Thomson 2009 with CL following each SCr, CL 14 % below typical:
    # the averaged fit that follows each SCr lands nearer that truth than the averaged fit with the latest CrCl
    # held throughout (both averages of the same models)
    model = popmodels.get_model("vancomycin-thomson-2009")
    typical = model.typical(popmodels.Covariates(72.0, "female", 68.0, 165.0, 1.6)).params.cl
    truth = typical * math.exp(-0.15)
    tv = out.result["estimate"]["cl_l_per_h"]
    fixed = out.result["methods"]["bayesian:fixed-renal"]["cl_l_per_h"]
    assert abs(tv - truth) < abs(fixed - truth)
    assert tv == pytest.approx(truth, rel=0.20)


@pytest.mark.parametrize("name, rises", [
    # KDIGO 2012 AKI (pk-sources.md 6.1, from memory): a rise of >= 0.3 mg/dL within 48 h, or to >= 1.5 x the
    # lowest value within 7 days. 0.8 -> 1.0 -> 1.4 mg/dL a day apart: 1.0 is +0.2 and 1.25 x (no), 1.4 is
    # +0.6 over 0.8 within 48 h (yes).
    ("vanc-rising-scr", ["2026-03-29T06:00"]),
    # 0.8, 0.8, 1.2, 1.6 mg/dL a day apart: 1.2 and 1.6 are each +0.4 in 24 h.
    ("vanc-aki-levels-after", ["2026-05-13T06:00", "2026-05-14T06:00"]),
])
def test_unstable_renal_function_is_found_once_and_exposure_and_the_renal_plan_read_the_same_flag(
        name, rises, monkeypatch) -> None:
    from tdmtui.core.patient import renaltrend
    from tdmtui.core.regimen import exposure, renalplan

    calls, seen = [], {}
    real_changes, real_exposure, real_adjust = renaltrend.changes, exposure.exposure_alerts, renalplan.adjust

    def changes(*args, **kw):
        calls.append(args)
        return real_changes(*args, **kw)

    def exposure_alerts(ctx, *args, **kw):
        seen["exposure"] = ctx.renal
        return real_exposure(ctx, *args, **kw)

    def adjust(ctx, *args, **kw):
        seen["renal plan"] = ctx.renal
        return real_adjust(ctx, *args, **kw)

    monkeypatch.setattr(renaltrend, "changes", changes)
    monkeypatch.setattr(exposure, "exposure_alerts", exposure_alerts)
    monkeypatch.setattr(renalplan, "adjust", adjust)
    case = parse_case(json.loads((SAMPLES / f"{name}.json").read_text()))
    out = compute(case)
    assert len(calls) == 1  # the rule runs once, in the patient stage
    assert seen["exposure"] is seen["renal plan"] is out.renal
    assert out.renal.unstable
    assert [case.clock.format(t) for t in out.renal.scr_change_times] == rises
    assert [a.field for a in out.alerts if a.code == "scr-unstable"] == \
        [f"patient.scr[{i}].value" for i in range(len(case.patient.scr) - len(rises), len(case.patient.scr))]
    # the renal plan acted on the latest rise: the estimate rests on levels drawn after it
    (after,) = [a for a in out.alerts if a.code == "renal-levels-after-change"]
    assert f"SCr at {rises[-1]}" in after.message


def test_stable_renal_function_is_one_flag_too(monkeypatch) -> None:
    from tdmtui.core.regimen import exposure

    seen = []
    real = exposure.exposure_alerts
    monkeypatch.setattr(exposure, "exposure_alerts", lambda ctx, *a, **kw: seen.append(ctx.renal) or real(ctx, *a, **kw))
    out = compute(parse_case(json.loads((SAMPLES / "vanc-steady-state.json").read_text())))
    assert seen == [out.renal] and not out.renal.unstable and out.renal.unstable_since is None
    assert not [a for a in out.alerts if a.code.startswith(("scr-unstable", "renal-"))]
