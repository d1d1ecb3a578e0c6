"""Two-compartment closed form checked against references outside the engine.

References: scipy.integrate.solve_ivp on the two-compartment ODE
(ode_reference.py), the macro-constant definitions and identities of
pk-sources.md 2.6, and the Goti 2018 typical values quoted there
(CL 4.5 L/h, V1 58.4 L, Q 6.5 L/h, V2 38.4 L; pk-sources.md 3.4.3).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from ode_reference import close, ode_reference
from test_models_onecomp import histories

from tdmtui.core import models
from tdmtui.core.models import DoseArrays, PKParams, twocomp

GOTI = (4.5, 58.4, 6.5, 38.4)  # pk-sources.md 3.4.3 typical values (70 kg, CrCl 120, no dialysis)

CL = st.floats(0.1, 20.0)
V1 = st.floats(5.0, 150.0)
Q = st.floats(0.5, 20.0)
V2 = st.floats(5.0, 300.0)


def _ref(p: tuple[float, float, float, float], doses: DoseArrays, times, auc_from=None):  # noqa: ANN001, ANN202
    return ode_reference(*p, doses.start, doses.duration, doses.amount, times, auc_from=auc_from)


def _window(doses: DoseArrays) -> tuple[float, float]:
    return float(doses.start[0]) - 5.0, float(np.max(doses.start + doses.duration)) + 96.0


def test_macro_constants_of_goti_typical_values() -> None:
    # pk-sources.md 2.6: alpha, beta roots of s^2 - (k10 + k12 + k21) s + k10 k21;
    # A' = (alpha - k21)/(alpha - beta), B' = (k21 - beta)/(alpha - beta). Typed in from the sheet.
    cl, v1, q, v2 = GOTI
    k10, k12, k21 = cl / v1, q / v1, q / v2
    total = k10 + k12 + k21
    disc = math.sqrt(total**2 - 4.0 * k10 * k21)
    alpha, beta = (total + disc) / 2.0, (total - disc) / 2.0
    got = twocomp.macro_constants(*GOTI)
    assert got == pytest.approx(
        (alpha, beta, (alpha - k21) / (alpha - beta), (k21 - beta) / (alpha - beta)), rel=1e-12
    )


def test_goti_typical_single_infusion_matches_ode() -> None:
    # pk-sources.md 2.6 (checked there against an ODE to 4 significant figures); here against
    # solve_ivp to 1e-6: 1000 mg over 1 h, typical Goti patient.
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 1)
    t = np.array([0.25, 1.0, 1.5, 3.0, 12.0, 48.0, 120.0])
    ref, area = _ref(GOTI, doses, t, auc_from=0.0)
    assert close(twocomp.concentration(*GOTI, doses, t), ref)
    assert twocomp.auc(*GOTI, doses, 0.0, 48.0) == pytest.approx(area[5], rel=1e-7)


@settings(max_examples=40, deadline=None)
@given(cl=CL, v1=V1, q=Q, v2=V2, doses=histories(), data=st.data())
def test_concentration_matches_ode(
    cl: float, v1: float, q: float, v2: float, doses: DoseArrays, data: st.DataObject
) -> None:
    # Reference: solve_ivp (LSODA, rtol 1e-10) integrated between dose events.
    lo, hi = _window(doses)
    times = np.array(data.draw(st.lists(st.floats(lo, hi), min_size=1, max_size=20)))
    times = np.concatenate([times, doses.start + 0.5 * doses.duration, doses.start + doses.duration])
    ref, _ = _ref((cl, v1, q, v2), doses, times)
    assert close(twocomp.concentration(cl, v1, q, v2, doses, times), ref)


@settings(max_examples=40, deadline=None)
@given(cl=CL, v1=V1, q=Q, v2=V2, doses=histories(), data=st.data())
def test_auc_matches_ode(cl: float, v1: float, q: float, v2: float, doses: DoseArrays, data: st.DataObject) -> None:
    # Reference: solve_ivp with an extra state dAUC/dt = A1/V1, reset to 0 at a.
    lo, hi = _window(doses)
    a = data.draw(st.floats(lo, hi - 0.01))
    b = data.draw(st.floats(a, hi))
    _, ref = _ref((cl, v1, q, v2), doses, [b], auc_from=a)
    assert close(twocomp.auc(cl, v1, q, v2, doses, a, b), ref[0])


@pytest.mark.parametrize("tinf", [0.0, 1.0, 2.0])
def test_auc_to_infinity_of_one_dose_is_dose_over_cl(tinf: float) -> None:
    # pk-sources.md 2.2/2.6: AUC(0-inf) of one dose = D / CL for any linear model.
    doses = DoseArrays.regimen(0.0, 1500.0, 12.0, tinf, 1)
    assert twocomp.auc(*GOTI, doses, 0.0, np.inf) == pytest.approx(1500.0 / GOTI[0], rel=1e-12)


@pytest.mark.parametrize(("dose", "tau", "tinf"), [(1000.0, 12.0, 1.0), (1500.0, 24.0, 2.0), (750.0, 8.0, 0.0)])
def test_steady_state_auc24_is_daily_dose_over_cl(dose: float, tau: float, tinf: float) -> None:
    # pk-sources.md 2.6: "AUC24,ss = daily dose / CL still holds".
    ss = twocomp.steady_state(*GOTI, dose, tau, tinf)
    assert ss.auc24 == pytest.approx(dose * 24.0 / tau / GOTI[0], rel=1e-10)


def test_steady_state_matches_ode_after_many_doses() -> None:
    # Reference: solve_ivp over 60 doses of 1000 mg q12h over 1 h (terminal half-life of the
    # typical Goti patient ~17 h, so 720 h is past 40 half-lives): peak at the end of the last
    # infusion, trough just before the next dose, and the last interval's AUC.
    ss = twocomp.steady_state(*GOTI, 1000.0, 12.0, 1.0)
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 60)
    last = 59 * 12.0
    ref, area = _ref(GOTI, doses, [last + 1.0, last + 12.0], auc_from=last)
    assert ss.peak == pytest.approx(ref[0], rel=1e-6)
    assert ss.trough == pytest.approx(ref[1], rel=1e-6)
    assert ss.auc24 == pytest.approx(area[1] * 2.0, rel=1e-6)


def test_peak_accumulates_per_exponent() -> None:
    # Superposition (pk-sources.md 2.6): after n doses each exponential term carries
    # (1 - e^(-n lam tau))/(1 - e^(-lam tau)); the solve_ivp peak after n doses must follow it
    # and tend to the steady-state peak.
    cl, v1, q, v2 = GOTI
    k10, k12, k21 = cl / v1, q / v1, q / v2
    total = k10 + k12 + k21
    disc = math.sqrt(total**2 - 4.0 * k10 * k21)
    alpha, beta = (total + disc) / 2.0, (total - disc) / 2.0
    wa, wb = (alpha - k21) / (alpha - beta), (k21 - beta) / (alpha - beta)
    dose, tau, tinf = 1000.0, 12.0, 1.0
    rate = dose / tinf

    def single_peak(lam: float, w: float) -> float:  # pk-sources.md 2.6, t = T
        return rate / v1 * w * (1.0 - math.exp(-lam * tinf)) / lam

    for n in (1, 2, 5):
        doses = DoseArrays.regimen(0.0, dose, tau, tinf, n)
        ref, _ = _ref(GOTI, doses, [(n - 1) * tau + tinf])
        expected = sum(
            single_peak(lam, w) * (1.0 - math.exp(-n * lam * tau)) / (1.0 - math.exp(-lam * tau))
            for lam, w in ((alpha, wa), (beta, wb))
        )
        assert ref[0] == pytest.approx(expected, rel=1e-7)
        assert twocomp.concentration(*GOTI, doses, (n - 1) * tau + tinf) == pytest.approx(ref[0], rel=1e-7)
    ss = twocomp.steady_state(*GOTI, dose, tau, tinf)
    assert ss.peak == pytest.approx(
        sum(single_peak(lam, w) / (1.0 - math.exp(-lam * tau)) for lam, w in ((alpha, wa), (beta, wb))), rel=1e-12
    )


@pytest.mark.parametrize(("cl", "v1", "q", "v2"), [
    (5.0, 50.0, 1e-3, 1e-2),  # k10 = k21 = 0.1, k12 tiny: alpha and beta nearly equal
    (5.0, 50.0, 1e-6, 1e-5),
    (5.0, 50.0, 1e-4, 50.0),  # tiny Q: practically one-compartment
    (0.1, 300.0, 20.0, 5.0),  # fast distribution, slow elimination
])
def test_near_degenerate_macro_constants_match_ode(cl: float, v1: float, q: float, v2: float) -> None:
    # Reference: solve_ivp. The naive A' = (alpha - k21)/(alpha - beta) loses all digits here.
    doses = DoseArrays.from_lists([0.0, 8.0, 20.0], [1.0, 0.0, 2.0], [1000.0, 500.0, 800.0])
    t = np.array([0.5, 1.0, 8.0, 8.5, 21.0, 30.0, 100.0])
    p = (cl, v1, q, v2)
    ref, area = _ref(p, doses, t, auc_from=0.0)
    c = twocomp.concentration(*p, doses, t)
    assert np.all(np.isfinite(c)) and close(c, ref)
    assert twocomp.auc(*p, doses, 0.0, 100.0) == pytest.approx(area[-1], rel=1e-7)
    alpha, beta, wa, wb = twocomp.macro_constants(*p)
    assert 0.0 <= wb <= 1.0 and 0.0 <= wa <= 1.0 and alpha >= beta > 0.0


@pytest.mark.parametrize("cl", [0.1, 20.0])
@pytest.mark.parametrize("v1", [5.0, 150.0])
@pytest.mark.parametrize("v2", [5.0, 300.0])
def test_extremes_stay_finite_and_non_negative(cl: float, v1: float, v2: float) -> None:
    # 60 doses at parameter extremes: no NaN, inf or negative values; spot-checked against solve_ivp.
    doses = DoseArrays.regimen(0.0, 3000.0, 8.0, 0.5, 60)
    t = np.concatenate([np.linspace(-10.0, 600.0, 2001), [1e4, 1e6, np.inf]])
    c = twocomp.concentration(cl, v1, 10.0, v2, doses, t)
    assert np.all(np.isfinite(c)) and np.all(c >= 0.0)
    sample = np.array([0.25, 100.0, 472.5, 600.0])
    ref, _ = _ref((cl, v1, 10.0, v2), doses, sample)
    assert close(twocomp.concentration(cl, v1, 10.0, v2, doses, sample), ref)


@settings(max_examples=25, deadline=None)
@given(cl=CL, v1=V1, q=Q, v2=V2, doses=histories(8), data=st.data())
def test_time_to_fall_matches_ode(
    cl: float, v1: float, q: float, v2: float, doses: DoseArrays, data: st.DataObject
) -> None:
    # Reference: solve_ivp. At the returned time C = level, and C > level on a grid before it.
    p = (cl, v1, q, v2)
    lo, hi = _window(doses)
    t0 = data.draw(st.floats(lo, hi))
    c0, _ = _ref(p, doses, [t0])
    level = float(c0[0]) * data.draw(st.floats(0.01, 0.99)) + 1e-3
    t = twocomp.time_to_fall(*p, doses, t0, level)
    assert t is not None and t >= t0
    grid = np.linspace(t0, t, 60)[:-1]
    ref, _ = _ref(p, doses, np.append(grid, t))
    if t > t0:
        assert ref[-1] == pytest.approx(level, rel=1e-6)
        assert np.all(ref[:-1] > level * (1.0 - 1e-6))
    else:
        assert ref[-1] <= level * (1.0 + 1e-6)


def test_time_to_fall_goti_hold_after_regimen() -> None:
    # Hold until below 10 mg/L after 5 doses of 1000 mg q12h over 1 h, asked mid-regimen:
    # the level stays above 10 until after the last dose; solve_ivp confirms the crossing.
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 5)
    t = models.time_to_fall(PKParams(*GOTI), doses, 30.0, 10.0)
    assert t is not None and t > 49.0
    ref, _ = _ref(GOTI, doses, [t - 0.01, t, t + 0.01])
    assert ref[1] == pytest.approx(10.0, rel=1e-6)
    assert ref[0] > 10.0 > ref[2]


def test_time_to_fall_finds_a_dip_inside_an_infusion() -> None:
    # A bolus followed by a long infusion: the central level falls (distribution), passes a
    # minimum and rises again during the infusion. The first crossing is on the way down.
    # Reference: solve_ivp on a grid locates the dip (~15.3 mg/L near 2 h).
    p = (5.0, 10.0, 20.0, 100.0)
    doses = DoseArrays.from_lists([0.0, 0.2], [0.0, 24.0], [1000.0, 4800.0])
    grid = np.linspace(0.2, 24.2, 241)
    ref, _ = _ref(p, doses, grid)
    assert ref.min() < 16.0 < ref[-1]  # the dip is real and the level recovers before the infusion ends
    t = twocomp.time_to_fall(*p, doses, 0.2, 16.0)
    assert t is not None and t < grid[ref.argmin()]
    at, _ = _ref(p, doses, [t])
    assert at[0] == pytest.approx(16.0, rel=1e-6)
    assert np.all(ref[grid < t] > 16.0)


def test_dispatcher_uses_two_compartment_model() -> None:
    # Through models.*: the same ODE reference and the pk-sources.md 2.6 AUC identity.
    p = PKParams(*GOTI)
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 3)
    t = np.array([1.0, 13.0, 30.0])
    ref, _ = _ref(GOTI, doses, t)
    assert close(models.concentration(p, doses, t), ref)
    assert models.auc(p, doses, -np.inf, np.inf) == pytest.approx(3000.0 / 4.5, rel=1e-12)
    assert models.steady_state(p, 1000.0, 12.0, 1.0).auc24 == pytest.approx(2000.0 / 4.5, rel=1e-10)


@pytest.mark.parametrize("bad", [(0.0, 58.4, 6.5, 38.4), (4.5, -1.0, 6.5, 38.4), (4.5, 58.4, math.nan, 38.4),
                                 (4.5, 58.4, 6.5, math.inf)])
def test_non_positive_parameters_raise(bad: tuple[float, float, float, float]) -> None:
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 2)
    with pytest.raises(ValueError):
        twocomp.concentration(*bad, doses, [1.0])
    with pytest.raises(ValueError):
        twocomp.auc(*bad, doses, 0.0, 1.0)
    with pytest.raises(ValueError):
        twocomp.steady_state(*bad, 1000.0, 12.0, 1.0)
    with pytest.raises(ValueError):
        twocomp.time_to_fall(*bad, doses, 0.0, 1.0)
    with pytest.raises(ValueError):
        twocomp.steady_state(*GOTI, 1000.0, 12.0, 13.0)  # infusion longer than the interval
