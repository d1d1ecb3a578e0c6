"""Property tests: rounding, caps and rate limits hold for every recommendation.

Over random invented patients (hypothesis, modest max_examples), for each drug the
recommended regimen, its alternatives and any loading dose keep to the library's
rules: dose on the rounding grid, single and daily caps, loading cap (2020 vancomycin
guideline 3,000 mg, pk-sources.md 3.1), infusion no faster than the rate limit
(vancomycin 1 g/h, pk-sources.md 3.1) and no shorter than the minimum, and the next
dose never before as_of.
"""

from __future__ import annotations

import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tdmtui.core.input.casetypes import Target
from tdmtui.core.library import Rules
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen import CurrentRegimen, design

from regimen_cases import CLOCK, T0, inp

DRUGS = ("vancomycin", "gentamicin", "tobramycin", "amikacin")


def _check(rules: Rules, reg: dict, as_of: float) -> None:
    step = rules.value("regimen.rounding_mg")
    rate = rules.get("regimen.max_rate_mg_per_h", 0.0)
    tmin = rules.value("regimen.min_infusion_h")
    single, daily = rules.value("regimen.max_single_dose_mg"), rules.value("regimen.max_daily_dose_mg")
    shapes = [reg] + list(reg["alternatives"])
    for r in shapes:
        if r["action"] == "continue":
            continue
        dose = r["dose_mg"]
        assert abs(dose / step - round(dose / step)) < 1e-9, ("rounding", dose)
        assert dose * 24.0 / r["interval_h"] <= daily + 1e-6, ("daily cap", dose, r["interval_h"])
        if r["mode"] != "continuous":
            assert dose <= single + 1e-6, ("single cap", dose)
            assert r["infusion_h"] >= tmin - 1e-9
            if rate:
                assert dose / r["infusion_h"] <= rate + 1e-6, ("rate", dose, r["infusion_h"])
        assert CLOCK.parse(r["next_dose_at"], "t") >= as_of - 1.0 / 120.0
    ld = reg["loading_dose"]
    if ld:
        cap = rules.get("loading.max_mg", single)
        assert ld["dose_mg"] <= cap + 1e-6
        assert abs(ld["dose_mg"] / step - round(ld["dose_mg"] / step)) < 1e-9
        assert ld["infusion_h"] >= tmin - 1e-9
        if rate:
            assert ld["dose_mg"] / ld["infusion_h"] <= rate + 1e-6
        assert CLOCK.parse(ld["at"], "t") >= as_of - 1.0 / 120.0


patients = st.fixed_dictionaries({
    "drug": st.sampled_from(DRUGS),
    "ke": st.floats(0.01, 0.6),
    "v_per_kg": st.floats(0.2, 1.0),
    "weight": st.floats(45.0, 180.0),
    "crcl": st.floats(10.0, 150.0),
    "n_hist": st.integers(0, 6),
    "hist_dose_rel": st.floats(0.3, 2.0),
    "hist_tau": st.sampled_from([8.0, 12.0, 24.0]),
    "since_last": st.floats(0.0, 30.0),
    "two_cpt": st.booleans(),
    "continuous": st.booleans(),
})


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(patients)
def test_every_recommendation_keeps_to_the_rules(p: dict) -> None:
    drug = p["drug"]
    rules = Rules(drug)
    v = p["v_per_kg"] * p["weight"]
    params = (PKParams(cl=p["ke"] * v, v1=0.4 * v, q=0.8 * p["ke"] * v + 1.0, v2=0.6 * v) if p["two_cpt"]
              else PKParams.one_compartment(p["ke"], v))
    usual = {"vancomycin": 15.0, "gentamicin": 2.0, "tobramycin": 2.0, "amikacin": 7.5}[drug]  # mg/kg (pk-sources 3.1, 4.1)
    amount = round(usual * p["weight"] * p["hist_dose_rel"], -1)
    tau = p["hist_tau"]
    n = p["n_hist"]
    hist = DoseArrays.regimen(T0, amount, tau, 1.0, n) if n else DoseArrays.from_lists([], [], [])
    as_of = (T0 + (n - 1) * tau + p["since_last"]) if n else T0
    current = CurrentRegimen(amount, tau, 1.0) if n >= 2 else None
    target = Target(css=(20.0, 25.0)) if drug == "vancomycin" and p["continuous"] else None
    case = inp(drug, params, hist, as_of=as_of, current=current, target=target, dosing_weight_kg=p["weight"],
               tbw_kg=p["weight"], bmi=p["weight"] / 1.75 ** 2, crcl_ml_min=p["crcl"])
    plan = design(case)
    if plan.regimen is None:
        assert plan.alerts  # nothing recommended only with a reason given
        return
    _check(rules, plan.regimen, as_of)
    assert all(math.isfinite(c["auc24_mg_h_per_l"]) for c in plan.candidates)
