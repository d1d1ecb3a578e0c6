"""Bayesian (MAP) estimation and its uncertainty, against references outside the engine.

References: scipy.integrate.solve_ivp on the model ODE (ode_reference.py) for
every predicted concentration; the worked example W3 of pk-sources.md (values
typed in from the sheet); the published typical values of pk-sources.md 3.4;
scipy.stats.norm for censored likelihoods and log-normal probabilities; and a
brute-force grid of the posterior written here from pk-sources.md 2.2 and 2.7.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from ode_reference import ode_reference
from scipy import stats

from tdmtui.core.estimation.bayes import map_fit, population_fit
from tdmtui.core.estimation.draws import (
    effective_sample_size,
    importance_samples,
    intervals,
    regimen_intervals,
    sample_posterior,
)
from tdmtui.core.estimation.posterior import NO_LEVELS, Observations
from tdmtui.core.models.batch import Design, batch_concentration, batch_steady_state
from tdmtui.core.regimen.candidates import target_probability
from tdmtui.core.regimen.targets import Targets
from tdmtui.core.errors import ConvergenceError
from tdmtui.core.estimation.lsq import least_squares_fit
from tdmtui.core.models import DoseArrays
from tdmtui.core.estimation.popmodels import Covariates, PopModel, _build, get_model

# C-G 90 mL/min with 65 kg (pk-sources.md 3.4.1 typical-patient check): 50 y, SCr 65/72 mg/dL.
BUELGA_PATIENT = Covariates(age=50.0, sex="male", weight=65.0, height=170.0, scr=65.0 / 72.0)
ADULT = Covariates(age=60.0, sex="male", weight=80.0, height=175.0, scr=1.0)


def flat_prior_model(omega2: float = 1e4, add: float = 1.0, prop: float = 0.0) -> PopModel:
    """A one-compartment model in the library's file shape with a vanishing prior (omega^2 huge)."""
    return _build({
        "id": "test-flat", "drug": "vancomycin", "name": "flat prior", "citation": "test", "compartments": 1,
        "verification": {"status": "secondary", "caution": "test model with a vanishing prior, not a clinical model"},
        "covariates": {"crcl_formula": "cockcroft-gault", "crcl_weight": "tbw"},
        "parameters": {"cl": {"theta": 4.0}, "v1": {"theta": 30.0}},
        "iiv": {"convention": "variance", "cl": omega2, "v1": omega2},
        "residual": {"additive_sd": add, "proportional_sd": prop},
        "population": {"renal_replacement": ["none"]},
    })


def w3_course() -> tuple[DoseArrays, Observations]:
    """pk-sources.md W3: gentamicin 120 mg q8h over 0.5 h at steady state; peak 6.0 mg/L 1.0 h and
    trough 2.2 mg/L 7.5 h after the start of a dose. 40 doses reach steady state; at steady state the
    level 0.5 h before that dose equals the trough 0.5 h before the next one (2.2 mg/L)."""
    doses = DoseArrays.regimen(0.0, 120.0, 8.0, 0.5, 41)
    s = 8.0 * 39
    return doses, Observations.from_lists([s - 0.5, s + 1.0, s + 7.5], [2.2, 6.0, 2.2])


# --- the batch closed forms against solve_ivp --------------------------------


@pytest.mark.parametrize("params", [(4.0, 60.0, 0.0, 0.0), (3.5, 30.0, 6.0, 45.0), (9.0, 12.0, 0.8, 80.0)])
def test_batch_concentration_matches_ode(params):
    # Reference: scipy.integrate.solve_ivp on the 1- or 2-compartment ODE (ode_reference.py).
    starts, durs, amts = [0.0, 8.0, 12.0, 20.0, 30.0], [1.0, 0.0, 2.0, 0.5, 1.5], [1000.0, 250.0, 800.0, 400.0, 900.0]
    t = np.array([-1.0, 0.5, 1.0, 7.9, 8.0, 8.2, 13.0, 20.25, 31.0, 40.0, 80.0])
    ref, _ = ode_reference(*params, starts, durs, amts, t)
    got = batch_concentration(*([p] for p in params), Design.build(DoseArrays.from_lists(starts, durs, amts), t))[0]
    np.testing.assert_allclose(got, ref, rtol=1e-7, atol=1e-9)


@pytest.mark.parametrize("params", [(4.0, 60.0, 0.0, 0.0), (3.5, 30.0, 6.0, 45.0)])
def test_batch_steady_state_matches_ode(params):
    # Reference: a 60-dose course integrated by solve_ivp; peak at the end of the last infusion (and
    # 0.5 h later), trough just before the next dose, AUC24 = daily dose / CL (pk-sources.md 2.6).
    dose, tau, tinf = 1000.0, 12.0, 1.5
    last = 59 * tau
    t = np.array([last + tinf, last + tinf + 0.5, last + tau])
    ref, _ = ode_reference(*params, tau * np.arange(60), [tinf] * 60, [dose] * 60, t)
    ss = batch_steady_state(*([p] for p in params), dose, tau, tinf)
    late = batch_steady_state(*([p] for p in params), dose, tau, tinf, peak_delay_h=0.5)
    assert ss["peak"][0] == pytest.approx(ref[0], rel=1e-6)
    assert late["peak"][0] == pytest.approx(ref[1], rel=1e-6)
    assert ss["trough"][0] == pytest.approx(ref[2], rel=1e-6)
    assert ss["auc24"][0] == pytest.approx(2 * dose / params[0], rel=1e-12)


# --- point estimates ---------------------------------------------------------


def test_no_levels_gives_the_population_value():
    # pk-sources.md 3.4.1 [derived]: CrCl 90, TBW 65 -> CL 5.83 L/h, V 63.7 L; Omega from CV^2.
    m = get_model("vancomycin-buelga-2005")
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 3)
    for fit in (map_fit(m, BUELGA_PATIENT, doses, NO_LEVELS), population_fit(m, BUELGA_PATIENT, doses)):
        assert fit.params.cl == pytest.approx(5.83, abs=0.005)
        assert fit.params.v1 == pytest.approx(63.7, abs=0.05)
        assert fit.eta == pytest.approx([0.0, 0.0], abs=1e-9)
        assert fit.cov_eta[0, 0] == pytest.approx(0.2816 ** 2, rel=1e-4)
        assert fit.cov_eta[1, 1] == pytest.approx(0.3715 ** 2, rel=1e-4)


def test_vanishing_prior_reproduces_w3_and_least_squares():
    # pk-sources.md W3: ke 0.1544 /h, V 25.1 L from these levels (three consistent levels: exact fit).
    doses, obs = w3_course()
    fit = map_fit(flat_prior_model(), ADULT, doses, obs)
    assert fit.params.ke == pytest.approx(0.1544, abs=0.0005)
    assert fit.params.v1 == pytest.approx(25.1, abs=0.1)
    ke, v = least_squares_fit(doses, obs)
    assert ke == pytest.approx(0.1544, abs=0.0005) and v == pytest.approx(25.1, abs=0.1)


def test_vanishing_prior_matches_unweighted_least_squares_on_noisy_levels():
    # With omega^2 = 1e4 the prior adds < 1e-4 to an OFV of order n: MAP with additive error must land
    # on the ordinary least-squares answer (issue 3 check); noise is seeded.
    rng = np.random.default_rng(7)
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 6)
    t = np.array([2.0, 5.0, 11.5, 26.0, 40.0, 59.5, 62.0, 66.0, 71.5])
    truth, _ = ode_reference(4.2, 55.0, 0.0, 0.0, doses.start, doses.duration, doses.amount, t)
    obs = Observations.from_lists(t, truth + rng.normal(0.0, 1.5, t.size))
    fit = map_fit(flat_prior_model(add=1.5), ADULT, doses, obs)
    ke, v = least_squares_fit(doses, obs, weighting="uniform")
    assert fit.params.ke == pytest.approx(ke, rel=1e-4)
    assert fit.params.v1 == pytest.approx(v, rel=1e-4)


def two_comp_additive_model() -> PopModel:
    """Goti 2018's structure, typical values and IIV (pk-sources.md 3.4.3) with an additive residual error.

    With noise-free data a prediction-dependent error is a biased target by design: at y = C the
    ln Var term of pk-sources.md 2.7 still pulls C down, so this check uses additive error.
    """
    return _build({
        "id": "test-goti-additive", "drug": "vancomycin", "name": "Goti structure, additive error", "citation": "test",
        "compartments": 2, "verification": {"status": "secondary", "caution": "test model, not a clinical model"},
        "covariates": {"crcl_formula": "cockcroft-gault", "crcl_weight": "tbw"},
        "parameters": {"cl": {"theta": 4.5}, "v1": {"theta": 58.4}, "q": {"theta": 6.5}, "v2": {"theta": 38.4}},
        "iiv": {"convention": "cv2", "cl": 0.398, "v1": 0.816, "v2": 0.571},
        "residual": {"additive_sd": 3.4, "proportional_sd": 0.0},
        "population": {"renal_replacement": ["none"]},
    })


@pytest.mark.parametrize("model", [get_model("vancomycin-buelga-2005"), two_comp_additive_model()],
                         ids=["1cpt", "2cpt"])
def test_dense_noise_free_data_recover_the_truth(model):
    # issue 3: dense noise-free data -> truth within 1 %. Data from solve_ivp (ode_reference.py), not from
    # our closed form; the truth is far from the typical values (eta 0.35, -0.4, 0.3).
    typ = model.typical(ADULT).params
    if model.compartments == 1:
        truth = (typ.cl * math.exp(0.35), typ.v1 * math.exp(-0.4), 0.0, 0.0)
    else:
        truth = (typ.cl * math.exp(0.35), typ.v1 * math.exp(-0.4), typ.q, typ.v2 * math.exp(0.3))
    doses = DoseArrays.regimen(0.0, 1250.0, 12.0, 1.5, 8)
    t = np.linspace(0.25, 180.0, 600)  # through the course and 84 h of washout
    conc, _ = ode_reference(*truth, doses.start, doses.duration, doses.amount, t)
    fit = map_fit(model, ADULT, doses, Observations.from_lists(t, conc))
    np.testing.assert_allclose((fit.params.cl, fit.params.v1, fit.params.q, fit.params.v2), truth, rtol=0.01)


# --- a brute-force grid of the posterior, written here from pk-sources.md 2.2 and 2.7 ---------


def grid_ofv(model: PopModel, cov: Covariates, doses: DoseArrays, obs: Observations, eta_cl, eta_v):
    """-2 log posterior on a grid for a one-compartment model: superposed infusions (pk-sources.md 2.2),
    OFV of pk-sources.md 2.7, censored terms by scipy.stats.norm (Beal M3). Independent of the engine."""
    typ = model.typical(cov).params
    cl, v = typ.cl * np.exp(eta_cl), typ.v1 * np.exp(eta_v)
    ke = cl / v
    ofv = np.zeros(np.broadcast(eta_cl, eta_v).shape)
    for t, y, below, above in zip(obs.time, obs.conc, obs.below_loq, obs.above_uloq):
        c = np.zeros_like(ofv)
        for s, dur, amt in zip(doses.start, doses.duration, doses.amount):
            u = t - s
            if u <= 0:
                continue
            rate = amt / dur
            if u <= dur:
                c = c + rate / (ke * v) * (1 - np.exp(-ke * u))
            else:
                c = c + rate / (ke * v) * (1 - np.exp(-ke * dur)) * np.exp(-ke * (u - dur))
        var = model.additive_sd ** 2 + (model.proportional_sd * c) ** 2
        sd = np.sqrt(var)
        if below:
            ofv = ofv - 2 * stats.norm.logcdf((y - c) / sd)
        elif above:
            ofv = ofv - 2 * stats.norm.logsf((y - c) / sd)
        else:
            ofv = ofv + (y - c) ** 2 / var + np.log(var)
    eta = np.stack(np.broadcast_arrays(eta_cl, eta_v), -1)
    return ofv + np.einsum("...i,ij,...j->...", eta, np.linalg.inv(model.omega), eta)


BUELGA = get_model("vancomycin-buelga-2005")
COURSE = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 4)
CASES = {
    "two-levels": Observations.from_lists([3.0, 35.5], [38.0, 16.0]),
    "below-loq": Observations.from_lists([3.0, 47.5], [30.0, 5.0], below_loq=[False, True]),
    "above-uloq": Observations.from_lists([1.5, 35.5], [50.0, 14.0], above_uloq=[True, False]),
}


def _grid(obs: Observations, n: int = 801):
    sd = np.sqrt(np.diag(BUELGA.omega))
    ec, ev = np.meshgrid(np.linspace(-4, 4, n) * sd[0], np.linspace(-4, 4, n) * sd[1], indexing="ij")
    return ec, ev, grid_ofv(BUELGA, BUELGA_PATIENT, COURSE, obs, ec, ev)


@pytest.mark.parametrize("case", list(CASES))
def test_map_matches_a_brute_force_grid(case):
    obs = CASES[case]
    ec, ev, ofv = _grid(obs)
    i, j = np.unravel_index(np.argmin(ofv), ofv.shape)
    fit = map_fit(BUELGA, BUELGA_PATIENT, COURSE, obs)
    step = (ec[1, 0] - ec[0, 0], ev[0, 1] - ev[0, 0])
    assert abs(fit.eta[0] - ec[i, j]) <= step[0] and abs(fit.eta[1] - ev[i, j]) <= step[1]
    # the MAP is at least as good as the best grid point under the grid's own OFV
    assert grid_ofv(BUELGA, BUELGA_PATIENT, COURSE, obs, fit.eta[0], fit.eta[1]) <= ofv[i, j] + 1e-9
    assert np.all(np.isfinite(fit.cov_eta))


def test_below_loq_is_a_likelihood_not_the_limit():
    # Extended-interval gentamicin (pk-sources.md 4.3 practice): 490 mg over 0.5 h, 20 mg/L at 1.5 h and a
    # trough "< 0.5 mg/L" at 23.5 h, on Staatz 2006 (additive 0.13 mg/L + 24 %, pk-sources.md 4.4.1).
    # Substituting 0.5 mg/L as a measurement moves the estimate measurably (CL, and the predicted
    # trough that sets the interval); Beal M3 (checked on the grid above) keeps the trough below the limit.
    m = get_model("gentamicin-staatz-2006")
    pt = Covariates(age=55.0, sex="female", weight=70.0, height=165.0, scr=0.8)
    doses = DoseArrays.regimen(0.0, 490.0, 24.0, 0.5, 2)
    obs = Observations.from_lists([1.5, 23.5], [20.0, 0.5], below_loq=[False, True])
    m3 = map_fit(m, pt, doses, obs)
    subst = map_fit(m, pt, doses, Observations.from_lists(obs.time, obs.conc))
    assert abs(subst.params.cl / m3.params.cl - 1) > 0.04
    assert m3.predict([23.5])[0] < 0.5 * 0.8
    assert subst.predict([23.5])[0] > 0.5 * 0.95
    assert abs(subst.predict([23.5])[0] / m3.predict([23.5])[0] - 1) > 0.25
    assert m3.residuals()[1]["kind"] == "below-loq"


def test_laplace_and_importance_sampling_agree_with_the_exact_posterior():
    # 90 % interval of AUC24 (1000 mg q12h; AUC24 = 2000 / CL): exact from the grid's marginal posterior
    # of eta_CL, against the Laplace draws and the importance-weighted draws (issue 3: within ~10 %).
    obs = CASES["two-levels"]
    ec, _, ofv = _grid(obs)
    post = np.exp(-(ofv - ofv.min()) / 2).sum(1)
    cdf = np.cumsum(post) / post.sum()
    cl = BUELGA.typical(BUELGA_PATIENT).params.cl * np.exp(ec[:, 0])
    exact = sorted(2000.0 / cl[np.searchsorted(cdf, [0.05, 0.95])])
    fit = map_fit(BUELGA, BUELGA_PATIENT, COURSE, obs)
    auc24 = lambda s: s.steady_state(1000.0, 12.0, 1.0)["auc24"]  # noqa: E731
    laplace = intervals(sample_posterior(fit, 20000), auc24)
    weighted = importance_samples(fit, 20000)
    assert effective_sample_size(weighted) > 5000
    imp = intervals(weighted, auc24)
    np.testing.assert_allclose(laplace, imp, rtol=0.10)
    np.testing.assert_allclose(imp, exact, rtol=0.02)
    resampled = importance_samples(fit, 20000, resample=True)
    assert resampled.weights is None
    np.testing.assert_allclose(intervals(resampled, auc24), exact, rtol=0.03)


def test_laplace_and_importance_sampling_agree_two_compartment():
    # Four levels on Goti 2018. Measured here: the Laplace limits run 8-11 % (AUC24) and 8-13 % (trough)
    # below the importance-weighted (exact) ones, as sparse levels leave the 2-compartment posterior
    # skewed; bounds 12 % and 15 %. A wrong Hessian or weight would break these by far more.
    m = get_model("vancomycin-goti-2018")
    doses = DoseArrays.regimen(0.0, 1250.0, 12.0, 1.5, 4)
    fit = map_fit(m, ADULT, doses, Observations.from_lists([4.0, 11.5, 28.0, 35.5], [11.3, 7.7, 23.3, 17.9]))
    auc24 = lambda s: s.steady_state(1250.0, 12.0, 1.5)["auc24"]  # noqa: E731
    trough = lambda s: s.steady_state(1250.0, 12.0, 1.5)["trough"]  # noqa: E731
    lap, imp = sample_posterior(fit, 20000), importance_samples(fit, 20000)
    np.testing.assert_allclose(intervals(lap, auc24), intervals(imp, auc24), rtol=0.12)
    np.testing.assert_allclose(intervals(lap, trough), intervals(imp, trough), rtol=0.15)


def test_population_intervals_and_target_probability_are_log_normal():
    # A priori, CL ~ logN(ln 5.83, 0.2816^2) (pk-sources.md 3.4.1, CV^2 convention), so AUC24 = 2000/CL
    # for 1000 mg q12h; probabilities and quantiles from scipy.stats.norm.
    fit = population_fit(BUELGA, BUELGA_PATIENT)
    draws = sample_posterior(fit, 200000, seed=11)
    w = 0.2816
    cl = BUELGA.typical(BUELGA_PATIENT).params.cl
    z = stats.norm.ppf(0.95)
    iv = regimen_intervals(draws, 1000.0, 12.0, 1.0)
    assert iv["auc24"] == pytest.approx((2000 / (cl * math.exp(z * w)), 2000 / (cl * math.exp(-z * w))), rel=0.01)
    sd_ke = math.sqrt(BUELGA.omega[0, 0] + BUELGA.omega[1, 1] - 2 * BUELGA.omega[0, 1])
    ke = cl / BUELGA.typical(BUELGA_PATIENT).params.v1
    assert iv["ke"] == pytest.approx((ke * math.exp(-z * sd_ke), ke * math.exp(z * sd_ke)), rel=0.01)
    expected = stats.norm.cdf(math.log(2000 / 400 / cl) / w) - stats.norm.cdf(math.log(2000 / 600 / cl) / w)
    got = target_probability(draws, Targets("auc", auc24=(400.0, 600.0)), 1000.0, 12.0, 1.0)
    assert got == pytest.approx(expected, abs=0.005)
    assert draws.seed == 11 and fit.seed == 20260301


def test_levels_far_from_the_model_raise_not_return_a_bound():
    # 900 mg/L a day after 1,000 mg is impossible for a 64 L volume: no estimate may be returned.
    with pytest.raises(ConvergenceError, match="no MAP estimate"):
        map_fit(BUELGA, BUELGA_PATIENT, COURSE, Observations.from_lists([30.0, 40.0], [900.0, 880.0]))


def test_proportional_error_with_a_zero_prediction_stays_finite():
    # Conil 2011 has proportional error only (pk-sources.md 4.4.2); a level before any dose predicts 0.
    m = get_model("tobramycin-conil-2011")
    doses = DoseArrays.regimen(0.0, 400.0, 24.0, 0.5, 2)
    obs = Observations.from_lists([-1.0, 1.5, 20.0], [0.0, 18.0, 1.2])
    fit = map_fit(m, ADULT, doses, obs)
    assert np.all(np.isfinite(fit.eta)) and math.isfinite(fit.objective)


def test_observations_reject_two_flags_and_bad_numbers():
    with pytest.raises(ValueError):
        Observations.from_lists([1.0], [5.0], below_loq=[True], above_uloq=[True])
    with pytest.raises(ValueError):
        Observations.from_lists([1.0, float("nan")], [5.0, 4.0])


def test_single_trough_on_proportional_error_converges():
    # A simulated patient (bench_bayes.py, Conil 2011) on which an earlier stopping rule failed: the
    # optimiser must converge, to the minimum scipy's Nelder-Mead finds on the same objective.
    from scipy.optimize import minimize

    m = get_model("tobramycin-conil-2011")
    cov = Covariates(age=52.5, sex="female", weight=52.7, height=184.9, scr=1.60)
    doses = DoseArrays.regimen(0.0, 400.0, 24.0, 0.5, 4)
    fit = map_fit(m, cov, doses, Observations.from_lists([71.5], [1.54]))
    ref = minimize(lambda e: float(fit.posterior(e[None, :])[0]), np.zeros(2), method="Nelder-Mead",
                   options={"xatol": 1e-8, "fatol": 1e-12, "maxiter": 4000})
    assert ref.success
    np.testing.assert_allclose(fit.eta, ref.x, atol=1e-5)


# --- simulation study (slow: run with -m slow; bench/bench_bayes.py prints the same figures) ----------


def _bench():
    import importlib.util
    from pathlib import Path

    path = Path(__file__).resolve().parents[2] / "bench" / "bench_bayes.py"
    spec = importlib.util.spec_from_file_location("bench_bayes", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


STUDY_MODELS = ["vancomycin-buelga-2005", "vancomycin-thomson-2009", "vancomycin-goti-2018",
                "gentamicin-staatz-2006", "tobramycin-conil-2011"]


@pytest.mark.slow
@pytest.mark.parametrize("mid", STUDY_MODELS)
def test_coverage_of_90_percent_auc24_intervals(mid):
    # issue 3: over seeded simulated patients the 90 % AUC24 interval holds the truth in 85-95 % of them
    # (400 patients: standard error about 1.5 points). Peak + trough, 4 doses, the model's own IIV and error.
    bench, m = _bench(), get_model(mid)
    tau, tinf = bench.REGIMEN[m.drug][1], bench.REGIMEN[m.drug][2]
    cover, _, _, _, failed, cover_is = bench.study(m, m, 400, 1, np.array([2 * tau + tinf + 1.0, 3 * tau - 0.5]))
    assert 0.85 <= cover <= 0.95 and failed == 0
    assert 0.85 <= cover_is <= 0.95  # importance-resampled draws (exact posterior)


@pytest.mark.slow
@pytest.mark.parametrize("mid", [
    *STUDY_MODELS[:2],
    pytest.param("vancomycin-goti-2018", marks=pytest.mark.xfail(strict=True, reason=(
        "measured median absolute error 23 %: one trough cannot pin CL under Goti's wide IIV (Vc 82 % CV) "
        "and residual error (3.4 mg/L + 22.7 %)"))),
    *STUDY_MODELS[3:]])
def test_trough_only_auc24_bias_and_error(mid):
    # issue 3: trough-only Bayesian AUC24 vs truth: median bias within +-10 %, median absolute error < 20 %.
    bench, m = _bench(), get_model(mid)
    tau = bench.REGIMEN[m.drug][1]
    _, _, bias, mae, failed, _ = bench.study(m, m, 400, 2, np.array([3 * tau - 0.5]))
    assert abs(bias) < 0.10 and failed == 0
    assert mae < 0.20


def test_two_compartment_half_life_intervals():
    # pk-sources.md 2.6 macro-constants, written out here for the a priori Thomson 2009 draws: the
    # interval of ln 2 / beta must match the quantiles of the half-lives computed from the same draws.
    from tdmtui.core.estimation.draws import two_compartment_intervals

    draws = sample_posterior(population_fit(get_model("vancomycin-thomson-2009"), ADULT), 4000, seed=5)
    k10, k12, k21 = draws.cl / draws.v1, draws.q / draws.v1, draws.q / draws.v2
    total = k10 + k12 + k21
    beta = (total - np.sqrt(total ** 2 - 4 * k10 * k21)) / 2
    alpha = (total + np.sqrt(total ** 2 - 4 * k10 * k21)) / 2
    iv = two_compartment_intervals(draws)
    assert iv["beta_half_life"] == pytest.approx(tuple(np.quantile(np.log(2) / beta, [0.05, 0.95])), rel=1e-6)
    assert iv["alpha_half_life"] == pytest.approx(tuple(np.quantile(np.log(2) / alpha, [0.05, 0.95])), rel=1e-6)
    assert two_compartment_intervals(sample_posterior(population_fit(BUELGA, BUELGA_PATIENT), 100)) == {}


def test_second_start_reaches_the_grid_minimum(monkeypatch):
    # Force the first start to fail: L-BFGS-B (scipy) from the best +-2 SD grid point must land on the
    # brute-force grid minimum too.
    import tdmtui.core.estimation.bayes as bayes

    monkeypatch.setattr(bayes, "_newton", lambda *a, **k: None)
    obs = CASES["two-levels"]
    ec, ev, ofv = _grid(obs)
    i, j = np.unravel_index(np.argmin(ofv), ofv.shape)
    fit = bayes.map_fit(BUELGA, BUELGA_PATIENT, COURSE, obs)
    assert "L-BFGS-B" in fit.message
    assert abs(fit.eta[0] - ec[i, j]) <= ec[1, 0] - ec[0, 0] and abs(fit.eta[1] - ev[i, j]) <= ev[0, 1] - ev[0, 0]


def test_data_far_from_the_prior_move_the_estimate_not_break_it():
    # Levels simulated by solve_ivp with CL at half the typical value (eta -0.69, 2.5 SD of Buelga's
    # 28 % IIV): the fit converges, moves CL by more than 1.5 SD and predicts the levels better than the
    # population value does.
    typ = BUELGA.typical(BUELGA_PATIENT).params
    t = np.array([2.0, 11.5, 26.0, 35.5])
    conc, _ = ode_reference(typ.cl / 2, typ.v1, 0.0, 0.0, COURSE.start, COURSE.duration, COURSE.amount, t)
    fit = map_fit(BUELGA, BUELGA_PATIENT, COURSE, Observations.from_lists(t, conc))
    assert fit.movement()["cl"] < -1.5
    pop = population_fit(BUELGA, BUELGA_PATIENT, COURSE)
    assert np.sum((fit.predict(t) - conc) ** 2) < 0.2 * np.sum((pop.predict(t) - conc) ** 2)


@pytest.mark.parametrize("n", [3, 4, 10, 21, 101, 2000, 2001])
def test_equal_weight_interval_is_numpys_linear_percentile(n):
    # reference: numpy.percentile's default (linear) method, and the full sort the partial sort replaces
    from types import SimpleNamespace

    rng = np.random.default_rng(n)
    for level in (0.90, 0.5, 0.99):
        x = rng.lognormal(3.0, 0.4, n)
        lo, hi = intervals(SimpleNamespace(weights=None), lambda _s: x, level)
        ref = np.percentile(x, [50 * (1 - level), 50 * (1 + level)])
        assert (lo, hi) == pytest.approx(tuple(ref), rel=1e-12)
        xs = np.sort(x)
        full = np.interp([(1 - level) / 2, (1 + level) / 2], np.arange(n) / (n - 1), xs)
        assert (lo, hi) == (float(full[0]), float(full[1]))  # the same numbers to the bit


def test_equal_weight_interval_equals_the_full_sort_for_many_sizes_and_levels():
    from types import SimpleNamespace

    rng = np.random.default_rng(20261203)
    for _ in range(300):
        n = int(rng.integers(3, 5000))
        level = float(rng.uniform(0.01, 0.999))
        x = rng.normal(10.0, 3.0, n)
        got = intervals(SimpleNamespace(weights=None), lambda _s: x, level)
        full = np.interp([(1 - level) / 2, (1 + level) / 2], np.arange(n) / (n - 1), np.sort(x))
        assert got == (float(full[0]), float(full[1])), (n, level)
