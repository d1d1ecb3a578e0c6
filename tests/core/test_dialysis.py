"""Intermittent haemodialysis as events: sessions in the case, levels and doses beside them, the plan.

References outside the project: scipy's solve_ivp (ode_reference_tv.py) for a course
whose clearance rises during each session (the session model: a clearance added while
a session runs, here an invented protocol value); the 2020 vancomycin consensus
guideline's pre-dialysis band 15-20 mg/L (pk-sources.md 3.1, confirmed-secondary).
Patients, sessions and levels are invented.
"""

from __future__ import annotations

import copy
import json

import numpy as np
import pytest
from casedata import SAMPLES
from ode_reference_tv import ode_reference_tv

from tdmtui.core.estimation import bayes
from tdmtui.core.estimation.posterior import Observations
from tdmtui.core.estimation import popmodels
from tdmtui.core.estimation import renalcourse
from tdmtui.core.input.case import parse_case
from tdmtui.core.compute import compute
from tdmtui.core.errors import InputError
from tdmtui.core.library import load_protocol
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen import dialysis as plan_dialysis

SAMPLE = SAMPLES / "vanc-haemodialysis.json"


def _case() -> dict:
    return json.loads(SAMPLE.read_text())


def _error(raw: dict) -> InputError:
    with pytest.raises(InputError) as exc:
        parse_case(raw)
    return exc.value


def test_sessions_that_overlap_end_early_or_lie_after_as_of_are_errors_naming_the_field() -> None:
    raw = _case()
    raw["dialysis"]["sessions"][1]["start"] = raw["dialysis"]["sessions"][0]["start"].replace("08:00", "10:00")
    raw["dialysis"]["sessions"][1]["end"] = raw["dialysis"]["sessions"][0]["end"].replace("12:00", "13:00")
    assert _error(raw).field == "dialysis.sessions[1].start"
    raw = _case()
    s = raw["dialysis"]["sessions"][1]
    s["end"] = s["start"].replace("08:00", "07:00")
    assert _error(raw).field == "dialysis.sessions[1].end"
    raw = _case()
    raw["dialysis"]["sessions"].append({"start": "2026-09-10T08:00", "end": "2026-09-10T12:00"})
    err = _error(raw)
    assert err.field == f"dialysis.sessions[{len(raw['dialysis']['sessions']) - 1}].start"
    raw = _case()
    raw["dialysis"]["sessions"][-1]["end"] = "2026-09-09T13:00"  # after as_of 12:30
    assert _error(raw).field == f"dialysis.sessions[{len(raw['dialysis']['sessions']) - 1}].end"
    raw = _case()
    raw["dialysis"]["planned"][0]["start"] = "2026-09-09T09:00"
    raw["dialysis"]["planned"][0]["end"] = "2026-09-09T10:00"
    assert _error(raw).field == "dialysis.planned[0].start"
    raw = _case()
    raw["dialysis"]["sessions"][0]["flow"] = "300 mL/min"
    assert _error(raw).field == "dialysis.sessions[0].flow"
    raw = _case()
    raw["patient"]["renal_replacement"] = "none"
    assert _error(raw).field == "patient.renal_replacement"


def test_a_cases_without_dialysis_load_unchanged_and_the_old_stop_stands() -> None:
    raw = json.loads((SAMPLES / "vanc-stop-dialysis.json").read_text())
    case = parse_case(raw)
    assert case.dialysis is None
    out = compute(case)
    assert out.result["status"] == "stop"
    msg = next(w["message"] for w in out.result["warnings"] if w["code"] == "renal-replacement")
    assert "dialysis.sessions" in msg


@pytest.mark.parametrize("rrt, words", [("crrt", "continuous renal replacement"), ("pd", "peritoneal dialysis")])
def test_crrt_and_peritoneal_dialysis_remain_a_stop_with_a_clear_message(rrt: str, words: str) -> None:
    raw = json.loads((SAMPLES / "vanc-stop-dialysis.json").read_text())
    raw["patient"]["renal_replacement"] = rrt
    out = compute(parse_case(raw))
    w = next(w for w in out.result["warnings"] if w["code"] == "renal-replacement")
    assert w["severity"] == "stop" and words in w["message"]
    assert "regimen" not in out.result


def test_post_dialysis_level_is_set_aside_unless_kept() -> None:
    raw = _case()
    raw["levels"].append({"time": "2026-09-07T13:30", "conc": "29.0 mg/L"})  # 1.5 h after the session ended
    out = compute(parse_case(raw))
    row = next(r for r in out.result["levels"] if r["field"] == f"levels[{len(raw['levels']) - 1}]")
    assert not row["usable"] and "redistribution" in row["excluded_because"]
    assert f"levels[{len(raw['levels']) - 1}]" not in out.result["estimate"]["levels_used"]
    raw["levels"][-1]["use"] = True
    out = compute(parse_case(raw))
    assert f"levels[{len(raw['levels']) - 1}]" in out.result["estimate"]["levels_used"]


def test_the_course_knows_which_doses_followed_a_session() -> None:
    out = compute(parse_case(_case()))
    rel = out.result["dialysis"]["doses"]
    assert [r["relation"] for r in rel] == ["after", "after", "after"]
    assert rel[0]["session"] == "dialysis.sessions[0]" and rel[0]["hours_after_end"] == pytest.approx(0.25)
    raw = _case()
    raw["doses"][1]["start"] = "2026-09-04T10:00"  # given during the second session
    rel = compute(parse_case(raw)).result["dialysis"]["doses"]
    assert rel[1]["relation"] == "during" and rel[1]["session"] == "dialysis.sessions[1]"


def test_each_level_is_placed_against_the_nearest_session() -> None:
    # sessions 08:00-12:00 on 09-02, 09-04, 09-07, 09-09 (the sample); levels 07:40 before the last three
    rel = compute(parse_case(_case())).result["dialysis"]["levels"]
    assert [(r["relation"], r["session_number"]) for r in rel] == [("before", 2), ("before", 3), ("before", 4)]
    assert all(r["hours"] == pytest.approx(1 / 3, abs=0.005) for r in rel)  # 20 min, rounded to 0.01 h
    raw = _case()
    raw["levels"][0]["time"] = "2026-09-04T09:30"  # during session 2
    raw["levels"][1]["time"] = "2026-09-05T10:00"  # 22 h after session 2 ended, 46 h before session 3
    rel = compute(parse_case(raw)).result["dialysis"]["levels"]
    assert (rel[0]["relation"], rel[0]["session"], rel[0]["hours"]) == ("during", "dialysis.sessions[1]", None)
    assert (rel[1]["relation"], rel[1]["session_number"], rel[1]["hours"]) == ("after", 2, pytest.approx(22.0))


def test_the_plan_doses_after_each_session_at_the_pre_dialysis_band_checked_against_the_ode() -> None:
    # Reference: solve_ivp on the fitted parameters with history + proposed doses; the guideline's band 15-20 mg/L.
    out = compute(parse_case(_case()))
    reg = out.result["regimen"]
    assert reg["mode"] == "dialysis" and reg["pre_dialysis_target_mg_per_l"] == [15.0, 20.0]
    case = out.case
    p = out.params
    doses = out.history.concat(out.plan)
    rows = reg["after_sessions"]
    times = np.array([case.clock.parse(r["next_session_start"], "t") for r in rows])
    ref, _ = ode_reference_tv([], [(p.cl, p.v1, p.q, p.v2)], doses.start, doses.duration, doses.amount, times)
    got = [r["pre_dialysis_next_mg_per_l"] for r in rows]
    assert np.allclose(got, ref, rtol=1e-6)
    assert all(15.0 <= c <= 20.0 for c in ref)
    # every dose is given at the end of its session (the last one just ended: now)
    for r in rows:
        if r["dose_mg"] > 0:
            assert r["dose_at"] in (r["session_end"], case.clock.format(case.as_of))
    assert reg["next_levels"][0]["kind"] == "pre-dialysis"


def test_session_model_in_the_fit_matches_the_ode() -> None:
    # A protocol clearance of 6 L/h during each session (invented value): the Bayesian course adds it while
    # a session runs; reference solve_ivp with CL switched at every session start and end.
    case = parse_case(_case())
    model = popmodels.get_model("vancomycin-goti-2018")
    cov = popmodels.Covariates(58.0, "female", 71.0, 163.0, 6.8, "ihd")
    typ = model.typical(cov)
    sessions = [(s.start, s.end) for s in case.dialysis.sessions]
    course = renalcourse.build_course(None, typ, sessions, 6.0)
    assert len(course.changes) == 2 * len(sessions)
    doses = DoseArrays.from_lists([d.start for d in case.doses], [d.duration for d in case.doses],
                                  [d.amount for d in case.doses])
    obs = Observations.from_lists([lv.time for lv in case.levels], [lv.conc for lv in case.levels])
    fit = bayes.map_fit(model, cov, doses, obs, course=course, typical=typ)
    eta = dict(zip(model.eta_names, np.exp(fit.eta)))
    base = (typ.params.cl * eta["cl"], typ.params.v1 * eta["v1"], typ.params.q, typ.params.v2 * eta["v2"])
    pieces = []
    for j in range(len(course.changes) + 1):
        on = j % 2 == 1  # pieces alternate: before a session, during it
        pieces.append((base[0] + (6.0 if on else 0.0),) + base[1:])
    t = np.linspace(doses.start[0] + 0.5, case.as_of, 120)
    t = np.concatenate([t, [s[0] + 2.0 for s in sessions]])  # mid-session too
    ref, _ = ode_reference_tv(list(course.changes), pieces, doses.start, doses.duration, doses.amount, t)
    assert np.allclose(fit.predict(t), ref, rtol=1e-6, atol=1e-6)
    # the regimen's predictor with the same session model agrees with the ODE as well
    p = PKParams(*base)
    got = plan_dialysis.predict(p, doses, t, sessions, 6.0)
    assert np.allclose(got, ref, rtol=1e-6, atol=1e-6)


def test_a_protocol_session_clearance_enters_the_fit_with_its_source(tmp_path) -> None:  # noqa: ANN001
    text = ('[vancomycin.dialysis.session_clearance_l_h]\nvalue = 6.0\n'
            'source = "local dialysis unit measurement (invented for a test)"\n')
    path = tmp_path / "p.toml"
    path.write_text(text)
    proto = load_protocol(path)
    with_cl = compute(parse_case(_case()), proto).result
    without = compute(parse_case(_case())).result
    assert with_cl["dialysis"]["session_removal"]["clearance_l_per_h"] == 6.0
    assert without["dialysis"]["session_removal"] is None
    assert "no intradialytic clearance is confirmed" in without["dialysis"]["session_removal_note"]
    assert with_cl["estimate"]["cl_l_per_h"] != pytest.approx(without["estimate"]["cl_l_per_h"], rel=1e-3)


def test_without_planned_sessions_last_weeks_pattern_is_repeated() -> None:
    raw = _case()
    del raw["dialysis"]["planned"]
    out = compute(parse_case(raw))
    d = out.result["dialysis"]
    assert d["plan_sessions_projected"] is True
    # the sessions of 09-02, 04, 07, 09 a week later; those from as_of on: 09-11, 14, 16
    assert [s["start"][:10] for s in d["plan_sessions"]][:3] == ["2026-09-11", "2026-09-14", "2026-09-16"]
    assert "dialysis-projected" in {w["code"] for w in out.result["warnings"]}


def test_old_cases_are_the_same_object_after_the_new_field() -> None:
    raw = json.loads((SAMPLES / "vanc-steady-state.json").read_text())
    before = copy.deepcopy(raw)
    case = parse_case(raw)
    assert raw == before and case.dialysis is None
