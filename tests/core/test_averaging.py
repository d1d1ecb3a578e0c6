"""Model averaging: each model's evidence and the weights, against brute-force grid integration.

Reference: the evidence p(levels | model) = integral of exp(-OFV/2) over eta, with the
normal prior's constants (pk-sources.md 2.7 objective), integrated on a dense grid by the
trapezoid rule here. The one-compartment integrand is written independently of the engine
(test_bayes.grid_ofv: superposed infusions of pk-sources.md 2.2); the two-compartment one
uses the engine's closed forms, themselves checked against scipy's solve_ivp in test_bayes.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from test_bayes import BUELGA, BUELGA_PATIENT, COURSE, grid_ofv

from tdmtui.core.estimation import averaging
from tdmtui.core.estimation.bayes import map_fit
from tdmtui.core.estimation.posterior import Observations
from tdmtui.core.models import DoseArrays
from tdmtui.core.estimation.popmodels import Covariates, _build, get_model

LN2PI = math.log(2 * math.pi)


def _grid_log_evidence_1c(model, cov, doses, obs, n=601, width=7.0):
    sd = np.sqrt(np.diag(model.omega))
    a, b = np.linspace(-width, width, n) * sd[0], np.linspace(-width, width, n) * sd[1]
    ec, ev = np.meshgrid(a, b, indexing="ij")
    ofv = grid_ofv(model, cov, doses, obs, ec, ev)
    n_q = int(np.sum(obs.quantified))
    log_f = -0.5 * (ofv + n_q * LN2PI + np.linalg.slogdet(model.omega)[1] + 2 * LN2PI)
    top = log_f.max()
    integral = np.trapezoid(np.trapezoid(np.exp(log_f - top), b, axis=1), a)
    return top + math.log(integral)


def _variant(theta_cl: float, theta_v: float):
    """A second one-compartment model in the library's file shape (different typical values)."""
    return _build({
        "id": "test-variant", "drug": "vancomycin", "name": "variant", "citation": "test", "compartments": 1,
        "verification": {"status": "secondary", "caution": "test model"},
        "covariates": {"crcl_formula": "cockcroft-gault", "crcl_weight": "tbw"},
        "parameters": {"cl": {"theta": theta_cl}, "v1": {"theta": theta_v}},
        "iiv": {"convention": "cv2", "cl": 0.35, "v1": 0.30},
        "residual": {"additive_sd": 2.0, "proportional_sd": 0.1},
        "population": {"renal_replacement": ["none"]},
    })


OBS = {
    "one-trough": Observations.from_lists([35.5], [12.0]),
    "peak-trough": Observations.from_lists([3.0, 35.5], [38.0, 16.0]),
    "below-loq": Observations.from_lists([3.0, 47.5], [30.0, 5.0], below_loq=[False, True]),
}


@pytest.mark.parametrize("case", list(OBS))
def test_evidence_and_weights_match_grid_integration_one_compartment(case):
    obs = OBS[case]
    models = [BUELGA, _variant(2.2, 70.0)]
    ours, grid = [], []
    for m in models:
        fit = map_fit(m, BUELGA_PATIENT, COURSE, obs)
        ours.append(averaging.log_evidence(fit))
        grid.append(_grid_log_evidence_1c(m, BUELGA_PATIENT, COURSE, obs))
    # importance sampling with 2,000 draws: within 0.03 in ln p (3 % in the evidence)
    assert ours == pytest.approx(grid, abs=0.03)
    assert averaging.weights(ours) == pytest.approx(averaging.weights(grid), abs=0.01)
    # the two models really are told apart by these levels (the check is not trivial)
    assert abs(grid[0] - grid[1]) > 0.2


def test_evidence_matches_grid_integration_two_compartment():
    # Thomson 2009 (four random effects) with one trough: the integrand on a 4-D grid over
    # +-6 SD (25 points a side, trapezoid rule), concentrations by the engine's closed form.
    from tdmtui.core.estimation.posterior import Posterior

    model = get_model("vancomycin-thomson-2009")
    cov = Covariates(age=60.0, sex="male", weight=80.0, height=175.0, scr=1.0)
    doses = DoseArrays.regimen(0.0, 1250.0, 12.0, 1.5, 3)
    obs = Observations.from_lists([35.5], [14.0])
    fit = map_fit(model, cov, doses, obs)
    post = Posterior(model, model.typical(cov), doses, obs)
    sd = np.sqrt(np.diag(model.omega))
    axes = [np.linspace(-6, 6, 25) * s for s in sd]
    mesh = np.stack([g.reshape(-1) for g in np.meshgrid(*axes, indexing="ij")], 1)
    log_f = -0.5 * (post(mesh) + LN2PI + np.linalg.slogdet(model.omega)[1] + 4 * LN2PI)
    top = log_f.max()
    f = np.exp(log_f - top).reshape([25] * 4)
    for ax in reversed(axes):
        f = np.trapezoid(f, ax, axis=-1)
    assert averaging.log_evidence(fit) == pytest.approx(top + math.log(float(f)), abs=0.03)


def test_mixture_draws_follow_the_weights():
    # 30 % / 70 %: the mixture holds that share of each model's draws (definition of a mixture)
    obs = OBS["peak-trough"]
    from tdmtui.core.estimation.draws import importance_samples

    members = []
    for m in (BUELGA, _variant(2.2, 70.0)):
        fit = map_fit(m, BUELGA_PATIENT, COURSE, obs)
        members.append(averaging.Member(m.id, m.name, fit, importance_samples(fit, 2000, resample=True), 0.0))
    mix = averaging.mixture(members, [0.3, 0.7], 2000, 1)
    first = set(np.round(members[0].samples.cl, 12))
    share = np.mean([round(x, 12) in first for x in mix.cl])
    assert share == pytest.approx(0.3, abs=0.002)


def test_structure_cautions_name_the_model_and_the_parameter(monkeypatch):
    # A trough reported below 2 mg/L and a peak of 41.7 mg/L on 1250 mg q12h: Thomson 2009's very
    # variable V2 (130 % CV, omega^2 1.30, pk-sources.md 3.4.2) is moved about 1.6 SD, and Thomson and
    # Goti differ on AUC24 by about a third. Weights forced equal so both models count (the rule's
    # thresholds are the library's methods.large_iiv_* and methods.models_disagree_rel).
    import copy

    from tdmtui.core.compute import compute_raw
    from tdmtui.core.library import Rules

    monkeypatch.setattr(averaging, "weights", lambda lev: [1.0 / len(lev)] * len(lev))
    t = lambda h: f"2026-04-{1 + int((8 + h) // 24):02d}T{int((8 + h) % 24):02d}:{int(round((h % 1) * 60)):02d}"  # noqa: E731
    raw = {"format": "tdmtui.case/1", "drug": "vancomycin", "as_of": t(95.5), "timezone": "UTC",
           "patient": {"age": "55 yr", "sex": "male", "weight": "80 kg", "height": "178 cm", "scr": "1.575 mg/dL"},
           "doses": [{"start": t(12.0 * i), "amount": "1250 mg", "duration": "60 min"} for i in range(8)],
           "levels": [{"time": t(83.75), "conc": "2.0 mg/L", "below_loq": True},
                      {"time": t(86.5), "conc": "41.661 mg/L"}],
           "schedule": {"interval": "12 h", "dose": "1250 mg", "duration": "60 min"}}
    res = compute_raw(copy.deepcopy(raw)).result
    codes = {w["code"]: w["message"] for w in res["warnings"]}
    assert res["method"] == "bayesian"
    assert "bayes-large-variability-moved" in codes and "Thomson 2009" in codes["bayes-large-variability-moved"]
    assert "V2" in codes["bayes-large-variability-moved"]
    aucs = [e["current"]["auc24_mg_h_per_l"] for k, e in res["methods"].items() if k.startswith("bayesian:")
            and e.get("weight")]
    limit = float(Rules("vancomycin").value("methods.models_disagree_rel"))
    assert (max(aucs) - min(aucs)) / max(aucs) > limit and "models-disagree" in codes


def test_mixed_structure_draws_give_each_structure_its_own_steady_state():
    # A model average mixes one- and two-compartment draws. One-compartment rows must follow the
    # steady-state infusion formula Cmax = Dose / (tinf CL) (1 - e^(-k tinf)) / (1 - e^(-k tau)),
    # Cmin = Cmax e^(-k (tau - tinf)) (pk-sources.md 2.3); two-compartment rows must be what they are
    # alone (a former defect gave NaN peaks and troughs for the one-compartment rows of a mixed batch).
    from tdmtui.core.models.batch import batch_steady_state

    cl, v1 = np.array([4.0, 4.0, 5.0]), np.array([50.0, 50.0, 60.0])
    q, v2 = np.array([0.0, 2.0, 0.0]), np.array([0.0, 30.0, 0.0])
    mixed = batch_steady_state(cl, v1, q, v2, 1000.0, 12.0, 1.0)
    for i in (0, 2):
        k = cl[i] / v1[i]
        cmax = 1000.0 / (1.0 * cl[i]) * (1 - math.exp(-k)) / (1 - math.exp(-k * 12.0))
        assert mixed["peak"][i] == pytest.approx(cmax, rel=1e-9)
        assert mixed["trough"][i] == pytest.approx(cmax * math.exp(-k * 11.0), rel=1e-9)
    alone = batch_steady_state(cl[1:2], v1[1:2], q[1:2], v2[1:2], 1000.0, 12.0, 1.0)
    assert mixed["trough"][1] == pytest.approx(alone["trough"][0], rel=1e-12)
    assert mixed["auc24"] == pytest.approx(2000.0 / cl, rel=1e-12)  # AUC24 = daily dose / CL


def _haem_case(conditions):
    t = lambda h: f"2026-04-{1 + int((8 + h) // 24):02d}T{int((8 + h) % 24):02d}:{int(round((h % 1) * 60)):02d}"  # noqa: E731
    return {"format": "tdmtui.case/1", "drug": "vancomycin", "as_of": t(36.0), "timezone": "UTC",
            "patient": {"age": "52 yr", "sex": "female", "weight": "66 kg", "height": "165 cm", "scr": "0.8 mg/dL",
                        "conditions": conditions},
            "doses": [{"start": t(12.0 * i), "amount": "1000 mg", "duration": "60 min"} for i in range(3)],
            "levels": [{"time": t(35.5), "conc": "9.5 mg/L"}],
            "schedule": {"interval": "12 h", "dose": "1000 mg", "duration": "60 min"}}


def test_a_model_built_on_one_condition_weighs_only_for_patients_with_it():
    # Buelga 2005 was built only on haematological malignancy (pk-sources.md 3.4.1): weight 0 and a reason
    # for a patient without it; a share of the average (with the two-compartment models) for one with it,
    # and the mixed-structure average then gives finite intervals for every figure.
    from tdmtui.core.compute import compute_raw

    plain = compute_raw(_haem_case([])).result
    b = plain["methods"]["bayesian:vancomycin-buelga-2005"]
    assert b["weight"] == 0.0 and "condition" in b["weight_note"]
    assert set(plain["estimate"]["model"]["weights"]) == {"vancomycin-thomson-2009", "vancomycin-goti-2018"}
    haem = compute_raw(_haem_case(["haematological-malignancy"])).result
    w = haem["estimate"]["model"]["weights"]
    assert set(w) == {"vancomycin-thomson-2009", "vancomycin-goti-2018", "vancomycin-buelga-2005"}
    assert sum(w.values()) == pytest.approx(1.0, abs=1e-12) and w["vancomycin-buelga-2005"] > 0.05
    for key, (lo, hi) in haem["estimate"]["interval90"].items():
        assert math.isfinite(lo) and math.isfinite(hi) and lo < hi, key


def _grid_posterior_1c(model, obs, n=401, width=7.0):
    """Grid over (eta_CL, eta_V): log of the un-normalised joint density (with the prior's constants) and CL."""
    sd = np.sqrt(np.diag(model.omega))
    a, b = np.linspace(-width, width, n) * sd[0], np.linspace(-width, width, n) * sd[1]
    ec, ev = np.meshgrid(a, b, indexing="ij")
    ofv = grid_ofv(model, BUELGA_PATIENT, COURSE, obs, ec, ev)
    n_q = int(np.sum(obs.quantified))
    log_f = -0.5 * (ofv + n_q * LN2PI + np.linalg.slogdet(model.omega)[1] + 2 * LN2PI)
    cell = (a[1] - a[0]) * (b[1] - b[0])
    return log_f.reshape(-1) + math.log(cell), (model.typical(BUELGA_PATIENT).params.cl * np.exp(ec)).reshape(-1)


@pytest.mark.parametrize("case", ["one-trough", "peak-trough"])
def test_mixture_interval_matches_the_grid_mixture_of_posteriors(case):
    # Reference: each model's posterior on a dense grid (integrand independent of the engine, test_bayes.grid_ofv),
    # the models weighted by their grid evidence; the mixture's AUC24 = 24 x dose / tau / CL (steady state,
    # pk-sources.md 2.5) has CDF F(x) = sum_m w_m F_m(x): its 5 % and 95 % points against the engine's
    # interval from the mixture of 2,000 importance-resampled draws (sampling error of a 5 % point with
    # 2,000 draws: about 2 %).
    from tdmtui.core.estimation.draws import importance_samples, regimen_intervals

    obs = OBS[case]
    models = [BUELGA, _variant(2.2, 70.0)]
    members, logf, auc = [], [], []
    for m in models:
        fit = map_fit(m, BUELGA_PATIENT, COURSE, obs)
        members.append(averaging.Member(m.id, m.name, fit, importance_samples(fit, 2000, resample=True),
                                        averaging.log_evidence(fit)))
        lf, cl = _grid_posterior_1c(m, obs)
        logf.append(lf)
        auc.append(24.0 * 1000.0 / 12.0 / cl)
    lf, x = np.concatenate(logf), np.concatenate(auc)
    p = np.exp(lf - lf.max())
    order = np.argsort(x)
    cdf = np.cumsum(p[order]) / p.sum()
    ref = np.interp([0.05, 0.95], cdf, x[order])
    w = averaging.weights([mb.log_evidence for mb in members])
    mix = averaging.mixture(members, w, 2000, 1)
    lo, hi = regimen_intervals(mix, 1000.0, 12.0, 1.0)["auc24"]
    assert lo == pytest.approx(ref[0], rel=0.03) and hi == pytest.approx(ref[1], rel=0.03)
    # the mixture is wider than either model's own interval when the models disagree (not a single model's)
    own = [regimen_intervals(mb.samples, 1000.0, 12.0, 1.0)["auc24"] for mb in members]
    assert hi - lo > min(h - low for low, h in own)
