"""One-level methods, continuous-infusion levels and censored bounds, against outside references.

References: worked examples W3 and W6 of pk-sources.md section 5 (values typed in from the
sheet), scipy's solve_ivp (ode_reference.py) for levels during a continuous infusion, and
the 2020 vancomycin consensus guideline's identity AUC24 = Css x 24 (pk-sources.md 2.5 and
3.1, from memory).
"""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path

import pytest
from ode_reference import ode_reference

from tdmtui.core.estimation import onelevel
from tdmtui.core.input.casetypes import Dose, Level
from tdmtui.core.compute import compute_raw
from tdmtui.core.errors import NoEstimateError
from tdmtui.core.models import DoseArrays
from tdmtui.core.estimation.working import WorkingStep

ROOT = Path(__file__).resolve().parents[2]
V_STEP = WorkingStep("Volume (population)", "V = given", "", "", "test")


def _inp(doses, level, v, tau=None):
    arr = DoseArrays.from_lists([d.start for d in doses], [d.duration for d in doses], [d.amount for d in doses])
    before = [d for d in doses if d.start < level.time]
    return onelevel.OneLevelInput(arr, level, v, V_STEP, tau, before[-1], 0.05)


def test_w3_steady_state_trough_with_its_volume_gives_its_ke():
    # W3 (pk-sources.md 5): gentamicin 120 mg q8h over 0.5 h at steady state, trough 2.2 mg/L 7.5 h
    # after the start, V 25.1 L -> ke 0.1544 /h (sheet). The classic one-level method, given W3's V,
    # must give back W3's ke from the trough alone; so must the peak 6.0 mg/L at 1.0 h.
    doses = [Dose(i, 8.0 * i, 0.5, 120.0) for i in range(10)]
    for lv in (Level(0, 72 + 7.5, 2.2), Level(1, 72 + 1.0, 6.0)):
        r = onelevel.steady_state_trough(_inp(doses, lv, 25.1, 8.0))
        assert r.params.ke == pytest.approx(0.1544, abs=1e-3)
        assert r.params.cl == pytest.approx(3.88, abs=0.03)
        # superposition over the ten doses agrees at steady state (pk-sources.md 2.2 vs 2.3)
        s = onelevel.superposition(_inp(doses, lv, 25.1))
        assert s.params.ke == pytest.approx(r.params.ke, rel=2e-3)


def test_w6_first_dose_level_by_superposition():
    # W6 (pk-sources.md 5): 560 mg over 1 h, 4.2 mg/L at 9.0 h; ke 0.194 /h and V 25.7 L (sheet).
    r = onelevel.superposition(_inp([Dose(0, 0.0, 1.0, 560.0)], Level(0, 9.0, 4.2), 25.7))
    assert r.params.ke == pytest.approx(0.194, abs=1e-3)
    assert r.params.cl == pytest.approx(4.98, abs=0.03)
    # on a 12 h interval one dose is far from steady state (accumulation 1 / (1 - e^(-0.194 x 12)) = 1.11,
    # pk-sources.md 2.3): the classic method refuses, naming the level. On 24 h it is within 1 % and applies.
    with pytest.raises(NoEstimateError, match=r"levels\[0\] is not at steady state"):
        onelevel.steady_state_trough(_inp([Dose(0, 0.0, 1.0, 560.0)], Level(0, 9.0, 4.2), 25.7, 12.0))
    q24 = onelevel.steady_state_trough(_inp([Dose(0, 0.0, 1.0, 560.0)], Level(0, 9.0, 4.2), 25.7, 24.0))
    assert q24.params.ke == pytest.approx(0.194, abs=3e-3)


def test_below_limit_level_gives_a_bound_not_a_value():
    # W6 again with the 9 h level reported below a 5 mg/L limit: the true 4.2 mg/L means ke > 0.194,
    # so the bound stated must lie below 0.194 and C(bound) must equal the limit (pk-sources.md 2.2).
    lv = Level(0, 9.0, 5.0, below_loq=True)
    with pytest.raises(NoEstimateError) as exc:
        onelevel.superposition(_inp([Dose(0, 0.0, 1.0, 560.0)], lv, 25.7))
    bound = float(exc.value.why.split("ke is at least ")[1].split(" ")[0])
    c = 560.0 / (bound * 25.7) * (1 - math.exp(-bound)) * math.exp(-bound * 8.0)
    assert c == pytest.approx(5.0, rel=1e-3) and bound < 0.194
    assert "below the assay limit" in exc.value.why and "observed" not in exc.value.why


def _case(name):
    return json.loads((ROOT / "sample_cases" / name).read_text())


def test_continuous_infusion_level_at_steady_state_is_css():
    # vanc-continuous-levels.json: 2400 mg/24 h (100 mg/h) by continuous infusion; the level of day 3
    # (25.5 mg/L) is at steady state. Guideline identity: CL = rate / Css, AUC24 = Css x 24.
    res = compute_raw(_case("vanc-continuous-levels.json")).result
    e = res["methods"].get("continuous-steady-state") or res["estimate"]
    assert e["method"] == "continuous-steady-state"
    assert e["cl_l_per_h"] == pytest.approx(100.0 / 25.5, rel=1e-9)
    assert e["current"]["auc24_mg_h_per_l"] == pytest.approx(25.5 * 24, rel=1e-6)
    # the levels are not 'in infusion': no such warning, and the method used rests on both levels
    assert "level-in-infusion" not in {w["code"] for w in res["warnings"]}
    assert res["method"] != "population" and len(res["estimate"]["levels_used"]) == 2


def test_continuous_infusion_levels_before_steady_state_match_the_ode():
    # A continuous infusion of 100 mg/h from t = 0 (24 h bags), ke 0.07 /h, V 55 L; levels at 10 h and
    # 20 h, far from steady state, from scipy's solve_ivp. The two-level fit must give back ke and V;
    # the steady-state shortcut must refuse (not at steady state).
    ke, v = 0.07, 55.0
    raw = _case("vanc-continuous-levels.json")
    conc, _ = ode_reference(ke * v, v, 0.0, 0.0, [0.0, 24.0], [24.0, 24.0], [2400.0, 2400.0], [10.0, 20.0])
    raw = copy.deepcopy(raw)
    raw["doses"] = raw["doses"][:2]
    raw["levels"] = [{"time": "2026-06-01T18:00", "conc": f"{conc[0]:.6f} mg/L"},
                     {"time": "2026-06-02T04:00", "conc": f"{conc[1]:.6f} mg/L"}]
    raw["as_of"] = "2026-06-02T04:30"
    res = compute_raw(raw).result
    two = res["estimate"] if res["method"] == "two-level" else res["methods"]["two-level"]
    assert two["ke_per_h"] == pytest.approx(ke, rel=1e-4)
    assert two["vd_l"] == pytest.approx(v, rel=1e-4)
    assert "continuous-steady-state" in res["methods_unavailable"]
    assert "not at steady state" in res["methods_unavailable"]["continuous-steady-state"]
    assert "bayesian" in res["methods"] or res["method"] == "bayesian"


def test_one_level_amikacin_auto_uses_the_level():
    # amikacin has no population model in the library (pk-sources.md has none): with one level,
    # auto must use it through the one-level method, never the population values.
    raw = _case("amikacin.json")
    raw["levels"] = raw["levels"][-1:]
    res = compute_raw(raw).result
    assert res["method"] == "one-level"
    assert res["estimate"]["levels_used"] == ["levels[0]"]
    assert "levels-unused" not in {w["code"] for w in res["warnings"]}
    assert "amikacin" in res["methods_unavailable"]["bayesian"]


@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "sample_cases").glob("*.json")))
def test_auto_uses_a_usable_level_on_every_sample_and_its_one_level_variant(name):
    # issue rule (common practice of the 2020 guideline: a Bayesian estimate from one trough): whenever
    # a usable level exists, auto's method is not the population one, and the result says why.
    raw = _case(name)
    raw["method"] = "auto"
    variants = [raw]
    if len(raw.get("levels", [])) >= 2:
        one = copy.deepcopy(raw)
        one["levels"] = one["levels"][-1:]
        variants.append(one)
    for case in variants:
        try:
            res = compute_raw(case).result
        except NoEstimateError:
            continue
        usable = [row for row in res["levels"] if row["usable"] or row.get("below_loq")]
        if usable and res["estimate"]:
            assert res["method"] != "population", (name, res["method"], res["methods_unavailable"])
            assert "levels-unused" not in {w["code"] for w in res["warnings"]}
        assert res.get("method_reason")
