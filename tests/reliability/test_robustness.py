"""Numerical robustness at the valid extremes, and optimisers that say when they fail.

Valid extremes (the issue's ranges): Cockcroft-Gault CrCl about 5 to 200
mL/min, weight 35 to 250 kg, 60 doses, levels at the assay limits. Each
course is invented; its levels follow the drug's textbook population
relations (vancomycin ke = 0.00083 CrCl + 0.0044 /h, V = 0.7 L/kg;
aminoglycosides ke = 0.00293 CrCl + 0.014 /h, V = 0.26 L/kg; pk-sources.md
3.3 and 4.2) so every method has something consistent to fit. Every result
must be finite, parameters and doses positive, and figures bounded by
physiology (common practice: adult Vd between 0.05 and 5 L/kg, half-life
under 1,000 h; a steady-state peak of a proposed regimen under the drug's
implausible-level limit of the library). The physiological bounds apply to
the estimate used; every estimate shown beside it must be finite and positive.
"""

from __future__ import annotations

import math
from datetime import datetime, timedelta
from typing import Any

import numpy as np
import pytest

from relhelpers import check_result
from tdmtui.core.compute import compute_raw
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.library import Rules

T0 = datetime(2026, 4, 1, 8, 0)
POP = {"vancomycin": (0.00083, 0.0044, 0.7), "gentamicin": (0.00293, 0.014, 0.26)}


def _t(h: float) -> str:
    return (T0 + timedelta(hours=h)).strftime("%Y-%m-%dT%H:%M")


def course(drug: str, weight: float, height: float, age: float, scr: float, n: int, tau: float,
           dose: float, tinf: float, crcl: float, censor: str | None = None) -> dict[str, Any]:
    """A regular course with a trough before and a peak after the last dose, from the population relations."""
    slope, intercept, v_kg = POP[drug]
    ke, v = slope * crcl + intercept, v_kg * weight

    def conc(t: float) -> float:
        c = 0.0
        for i in range(n):
            u = t - i * tau
            if u > 0:
                c += dose / tinf / (ke * v) * (1 - math.exp(-ke * min(u, tinf))) * math.exp(-ke * max(u - tinf, 0.0))
        return c

    last = (n - 1) * tau
    tr, pk = last - 0.25, last + tinf + 1.5
    levels: list[dict[str, Any]] = [{"time": _t(tr), "conc": f"{conc(tr):.3f} mg/L"},
                                    {"time": _t(pk), "conc": f"{conc(pk):.3f} mg/L"}]
    if censor == "below":  # the trough reported at the assay's lower limit
        levels[0] = {"time": _t(tr), "conc": "2.0 mg/L" if drug == "vancomycin" else "0.3 mg/L", "below_loq": True}
    elif censor == "above":  # the peak reported at the assay's upper limit
        levels[1] = {"time": _t(pk), "conc": "20.0 mg/L" if drug != "vancomycin" else "80.0 mg/L", "above_uloq": True}
    return {
        "format": "tdmtui.case/1", "label": "robustness", "drug": drug, "as_of": _t(last + tau - 0.5),
        "patient": {"age": f"{age:g} yr", "sex": "male", "weight": f"{weight:g} kg", "height": f"{height:g} cm",
                    "scr": f"{scr:.3f} mg/dL"},
        "doses": [{"start": _t(i * tau), "amount": f"{dose:g} mg", "duration": f"{tinf * 60:g} min"} for i in range(n)],
        "levels": levels,
        "schedule": {"interval": f"{tau:g} h", "dose": f"{dose:g} mg", "duration": f"{tinf * 60:g} min"},
    }


def _regimen_for(drug: str, weight: float, crcl: float) -> tuple[float, float, float]:
    """A plausible running order: dose mg, interval h, infusion h (invented, common practice shapes)."""
    if drug == "vancomycin":
        tau = 48.0 if crcl < 20 else 24.0 if crcl < 50 else 12.0
        return min(2500.0, round(15 * weight / 250) * 250), tau, 2.0 if weight > 120 else 1.0
    tau = 48.0 if crcl < 20 else 24.0
    return round(5 * min(weight, 120) / 10) * 10, tau, 0.5


def _check(raw: dict[str, Any]) -> dict[str, Any]:
    try:
        result = compute_raw(raw).result
    except NoEstimateError as exc:  # allowed: says why (exit 3); never a guess
        assert exc.why.strip()
        return {}
    problems = check_result(result)
    assert not problems, problems
    rules = Rules(raw["drug"])
    est = result.get("estimate")
    if est:  # the estimate used; the methods beside it are checked finite and positive by check_result
        assert 0.05 <= est["vd_l_per_kg"] <= 5.0, (est["method"], est["vd_l_per_kg"])
        assert est["half_life_h"] < 1000.0, (est["method"], est["half_life_h"])
    reg = result.get("regimen")
    if reg:
        limit = float(rules.value("plausible.level_mg_l")[1])
        assert reg["dose_mg"] > 0 and reg["interval_h"] > 0
        assert reg["predicted"]["peak_mg_per_l"] < limit
    return result


def _scr_for(crcl: float, age: float, weight: float) -> float:
    """SCr (mg/dL) giving about this Cockcroft-Gault CrCl for a man: (140 - age) x weight / (72 x SCr)."""
    return (140 - age) * weight / (72 * crcl)


EXTREMES = [(drug, w, target) for drug in POP for w in (35.0, 70.0, 150.0, 250.0) for target in (5.0, 30.0, 100.0, 200.0)]


def test_valid_extremes_of_weight_and_renal_function_give_bounded_results():
    seen_crcl = []
    for drug, weight, target in EXTREMES:
        height = 150.0 if weight < 50 else 178.0 if weight < 200 else 190.0
        age = 30.0 if target > 150 else 60.0
        scr = min(max(_scr_for(target, age, min(weight, 90.0)), 0.15), 15.0)
        dose, tau, tinf = _regimen_for(drug, weight, target)
        raw = course(drug, weight, height, age, scr, 6, tau, dose, tinf, target)
        result = _check(raw)
        if result:
            seen_crcl.append(result["patient"]["crcl_ml_min"])
    assert len(seen_crcl) >= len(EXTREMES) // 2
    # the grid really reached both ends of the CrCl range
    assert min(seen_crcl) <= 10.0 and max(seen_crcl) >= 150.0, (min(seen_crcl), max(seen_crcl))


@pytest.mark.parametrize("drug", sorted(POP))
def test_sixty_doses_compute(drug):
    dose, tau, tinf = _regimen_for(drug, 80.0, 80.0)
    raw = course(drug, 80.0, 178.0, 55.0, _scr_for(80.0, 55.0, 80.0), 60, tau, dose, tinf, 80.0)
    assert len(raw["doses"]) == 60
    result = _check(raw)
    assert result and result["estimate"]["levels_used"]


@pytest.mark.parametrize("drug", sorted(POP))
@pytest.mark.parametrize("censor", ["below", "above"])
def test_levels_at_the_assay_limit_compute(drug, censor):
    dose, tau, tinf = _regimen_for(drug, 80.0, 60.0)
    raw = course(drug, 80.0, 178.0, 55.0, _scr_for(60.0, 55.0, 80.0), 8, tau, dose, tinf, 60.0, censor=censor)
    result = _check(raw)
    if result:
        codes = {w["code"] for w in result["warnings"]}
        assert "level-censored" in codes


# --------------------------------------------------------------------------- optimisers report failure


def _map_problem():  # noqa: ANN202
    from tdmtui.core.estimation import bayes
    from tdmtui.core.models import DoseArrays
    from tdmtui.core.estimation.popmodels import Covariates, get_model

    model = get_model("vancomycin-goti-2018")
    cov = Covariates(age=64.0, sex="female", weight=78.0, height=168.0, scr=1.1)
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 20)
    from tdmtui.core.estimation.posterior import Observations

    obs = Observations.from_lists(np.array([227.5, 230.5]), np.array([12.0, 30.0]))
    return bayes, model, cov, doses, obs


def _failing_minimize(x_on_bound: bool):  # noqa: ANN202
    from scipy.optimize import OptimizeResult

    def fake(fun, x0, *args, bounds=None, **kwargs):  # noqa: ANN001, ANN002, ANN003, ANN202
        if x_on_bound:
            x = np.array([b[1] for b in bounds])
            return OptimizeResult(x=x, success=True, message="converged on the box", nit=12, fun=0.0)
        return OptimizeResult(x=np.asarray(x0), success=False, message="iteration limit reached", nit=500, fun=0.0)
    return fake


@pytest.mark.parametrize("on_bound", [False, True], ids=["no-convergence", "estimate-on-the-bound"])
def test_map_fit_raises_instead_of_returning_a_guess(monkeypatch, on_bound):
    bayes, model, cov, doses, obs = _map_problem()
    bayes.map_fit(model, cov, doses, obs)  # the problem itself is fine
    monkeypatch.setattr(bayes, "_newton", lambda *a, **k: None)  # first start fails
    import scipy.optimize

    monkeypatch.setattr(scipy.optimize, "minimize", _failing_minimize(on_bound))
    with pytest.raises(ConvergenceError):
        bayes.map_fit(model, cov, doses, obs)


def test_requested_bayesian_method_exits_3_when_the_fit_does_not_converge(monkeypatch):
    from tdmtui.core.estimation import bayes

    raw = course("vancomycin", 80.0, 178.0, 55.0, _scr_for(80.0, 55.0, 80.0), 4, 12.0, 1250.0, 1.5, 80.0)
    raw["levels"] = raw["levels"][:1]  # one trough: the Bayesian method is the one asked for
    raw["method"] = "bayesian"
    assert compute_raw(raw).result["method"] == "bayesian"
    import scipy.optimize

    monkeypatch.setattr(bayes, "_newton", lambda *a, **k: None)
    monkeypatch.setattr(scipy.optimize, "minimize", _failing_minimize(False))
    with pytest.raises(NoEstimateError) as err:
        compute_raw(raw)
    assert err.value.why.strip()


def test_two_level_with_no_root_says_so():
    from tdmtui.core.estimation import twolevel
    from tdmtui.core.input.casetypes import Level
    from tdmtui.core.models import DoseArrays

    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 4)
    # a fall from 30 to 0.0001 mg/L within 1 h needs ke near 12.6 /h, beyond any person's
    with pytest.raises(NoEstimateError) as err:
        twolevel.two_level(doses, [Level(0, 38.0, 30.0), Level(1, 39.0, 0.0001)])
    assert "elimination" in err.value.why
