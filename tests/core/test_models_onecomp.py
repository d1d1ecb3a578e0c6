"""One-compartment closed form checked against references outside the engine.

References: scipy.integrate.solve_ivp on the model ODE (ode_reference.py),
textbook identities (pk-sources.md 2.2/2.3) and the worked examples W2-W6 of
pk-sources.md with the expected values typed in from the sheet.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from ode_reference import close, ode_reference

from tdmtui.core import models
from tdmtui.core.models import DoseArrays, PKParams, onecomp

KE = st.floats(0.003, 2.0)
V = st.floats(5.0, 300.0)


@st.composite
def histories(draw, max_doses: int = 15) -> DoseArrays:
    """Random dose histories: 1-15 doses, random gaps (overlaps allowed), boluses and infusions."""
    n = draw(st.integers(1, max_doses))
    first = draw(st.floats(-10.0, 10.0))
    gaps = draw(st.lists(st.floats(0.0, 36.0), min_size=n, max_size=n))
    durations = draw(st.lists(st.one_of(st.just(0.0), st.floats(0.05, 4.0)), min_size=n, max_size=n))
    amounts = draw(st.lists(st.floats(1.0, 3000.0), min_size=n, max_size=n))
    starts = first + np.cumsum(gaps) - gaps[0]
    return DoseArrays.from_lists(starts, durations, amounts)


def _window(doses: DoseArrays) -> tuple[float, float]:
    return float(doses.start[0]) - 5.0, float(np.max(doses.start + doses.duration)) + 72.0


@settings(max_examples=40, deadline=None)
@given(ke=KE, v=V, doses=histories(), data=st.data())
def test_concentration_matches_ode(ke: float, v: float, doses: DoseArrays, data: st.DataObject) -> None:
    # Reference: solve_ivp (LSODA, rtol 1e-10) integrated between dose events.
    lo, hi = _window(doses)
    times = np.array(data.draw(st.lists(st.floats(lo, hi), min_size=1, max_size=20)))
    mid = doses.start + 0.5 * doses.duration  # inside each infusion
    times = np.concatenate([times, mid, doses.start + doses.duration])
    ref, _ = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, times)
    got = onecomp.concentration(ke, v, doses, times)
    assert close(got, ref)


@settings(max_examples=40, deadline=None)
@given(ke=KE, v=V, doses=histories(), data=st.data())
def test_auc_matches_ode(ke: float, v: float, doses: DoseArrays, data: st.DataObject) -> None:
    # Reference: solve_ivp with an extra state dAUC/dt = C, reset to 0 at a.
    lo, hi = _window(doses)
    a = data.draw(st.floats(lo, hi - 0.01))
    b = data.draw(st.floats(a, hi))
    _, ref = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, [b], auc_from=a)
    assert close(onecomp.auc(ke, v, doses, a, b), ref[0])


def test_auc_window_inside_one_infusion_and_after_all_doses() -> None:
    # Reference: solve_ivp; windows that start and end inside an infusion, and after every dose.
    doses = DoseArrays.from_lists([0.0, 12.0, 24.0], [2.0, 2.0, 2.0], [1000.0, 1000.0, 1000.0])
    ke, v = 0.08, 50.0
    for a, b in [(12.3, 13.1), (0.5, 12.7), (25.0, 40.0), (30.0, 31.0)]:
        _, ref = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, [b], auc_from=a)
        assert onecomp.auc(ke, v, doses, a, b) == pytest.approx(ref[0], rel=1e-7)


def test_zero_before_first_dose_and_at_its_start() -> None:
    # pk-sources.md 2.2: c_i(t) = 0 for t <= s_i.
    doses = DoseArrays.from_lists([5.0, 17.0], [0.0, 1.0], [500.0, 500.0])
    c = onecomp.concentration(0.1, 30.0, doses, [-100.0, 0.0, 4.999, 5.0])
    assert np.array_equal(c, np.zeros(4))


def test_bolus_is_dose_over_v_just_after_injection() -> None:
    # pk-sources.md 2.2: IV bolus c(t) = (D/V) e^(-ke (t - s)).
    doses = DoseArrays.from_lists([2.0], [0.0], [600.0])
    c = onecomp.concentration(0.2, 40.0, doses, [2.0 + 1e-9, 7.0])
    assert c == pytest.approx([15.0, 15.0 * math.exp(-0.2 * 5.0)], rel=1e-8)


@pytest.mark.parametrize("ke", [0.003, 2.0])
@pytest.mark.parametrize("v", [5.0, 300.0])
@pytest.mark.parametrize("tinf", [0.0, 0.25, 2.0])
def test_extremes_stay_finite_and_non_negative(ke: float, v: float, tinf: float) -> None:
    # Valid extremes (ke 0.003-2 /h, V 5-300 L, 60 doses): no NaN, inf or negative values;
    # checked against solve_ivp at a few times.
    doses = DoseArrays.regimen(0.0, 3000.0, 6.0, tinf, 60)
    t = np.concatenate([np.linspace(-10.0, 400.0, 2001), [1e4, 1e6, np.inf]])
    c = onecomp.concentration(ke, v, doses, t)
    assert np.all(np.isfinite(c)) and np.all(c >= 0.0)
    sample = np.array([1.0, 100.0, 359.9, 380.0])
    ref, _ = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, sample)
    assert close(onecomp.concentration(ke, v, doses, sample), ref)
    total = onecomp.auc(ke, v, doses, -np.inf, np.inf)
    assert total == pytest.approx(60 * 3000.0 / (ke * v), rel=1e-9)  # pk-sources.md 2.2: AUC(0-inf) = D/CL per dose


def test_many_times_are_evaluated_in_blocks_without_loss() -> None:
    # 40,000 times x 60 doses exceeds one evaluation block; spot values from every block
    # are checked against solve_ivp, and the output keeps the shape of t.
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 60)
    t = np.linspace(-1.0, 760.0, 40_000).reshape(200, 200)
    c = onecomp.concentration(0.1, 40.0, doses, t)
    assert c.shape == t.shape
    idx = np.array([5, 17_000, 17_500, 35_000, 39_999])
    ref, _ = ode_reference(4.0, 40.0, 0.0, 0.0, doses.start, doses.duration, doses.amount, t.reshape(-1)[idx])
    assert close(c.reshape(-1)[idx], ref)


def test_a_reused_layout_answers_only_for_its_own_history_and_times() -> None:
    # A small history's layout is built once and reused (superpose.Layout.build); every call must still
    # give solve_ivp's concentrations for its own doses and times: the same history again, the history
    # given as integers, one amount changed, one time changed, and mixed kinds of dose (bolus and infusions).
    times = np.array([11.5, 30.0])
    base = DoseArrays.from_lists([0.0, 12.0, 24.0], [1.0, 1.0, 1.0], [1000.0, 1000.0, 1000.0])
    variants = [base, base,
                DoseArrays(np.array([0, 12, 24]), np.array([1, 1, 1]), np.array([1000, 1000, 1000])),
                DoseArrays.from_lists([0.0, 12.0, 24.0], [1.0, 1.0, 1.0], [1000.0, 1500.0, 1000.0]),
                DoseArrays.from_lists([0.0, 12.0, 24.0], [0.0, 1.0, 2.0], [1000.0, 1000.0, 1000.0])]
    for doses in variants:
        for t in (times, times + [0.0, 0.25]):
            ref, _ = ode_reference(4.0, 40.0, 0.0, 0.0, doses.start, doses.duration, doses.amount, t)
            assert close(onecomp.concentration(0.1, 40.0, doses, t), ref)
    from tdmtui.core.models.superpose import Layout

    layout = Layout.build(base, times)
    assert Layout.build(base, times) is layout and not layout.delta.flags.writeable


def test_concentration_as_a_function_of_ke_matches_the_ode() -> None:
    # The one-level root search's C(t; ke) at one time, for ke from slow to fast, against solve_ivp.
    doses = DoseArrays.from_lists([0.0, 12.0, 24.0, 36.0], [1.0, 1.0, 1.5, 0.0], [1000.0, 1000.0, 1250.0, 500.0])
    at = onecomp.concentration_in_ke(45.0, doses, 47.5)
    for ke in (0.005, 0.05, 0.1, 0.4, 2.0):
        ref, _ = ode_reference(ke * 45.0, 45.0, 0.0, 0.0, doses.start, doses.duration, doses.amount, [47.5])
        assert close(np.array([at(ke)]), ref)
    with pytest.raises(ValueError, match="ke must be"):
        at(0.0)


@pytest.mark.parametrize("tinf", [0.0, 0.5, 1.0, 3.0])
def test_auc_to_infinity_of_one_dose_is_dose_over_cl(tinf: float) -> None:
    # pk-sources.md 2.2: AUC(0-inf) for one dose = D / CL.
    ke, v, dose = 0.12, 35.0, 800.0
    doses = DoseArrays.regimen(3.0, dose, 12.0, tinf, 1)
    assert onecomp.auc(ke, v, doses, 0.0, np.inf) == pytest.approx(dose / (ke * v), rel=1e-12)


@pytest.mark.parametrize(("ke", "v", "dose", "tau", "tinf"), [
    (0.0827, 51.6, 1000.0, 12.0, 1.5), (0.299, 18.2, 150.0, 8.0, 1.0), (0.003, 300.0, 500.0, 48.0, 0.0),
    (2.0, 5.0, 80.0, 24.0, 0.5), (0.05, 60.0, 2000.0, 24.0, 24.0),
])
def test_steady_state_auc24_is_daily_dose_over_cl(ke: float, v: float, dose: float, tau: float, tinf: float) -> None:
    # pk-sources.md 2.3: AUC(0-tau),ss = D/CL, so AUC24 = daily dose / CL.
    ss = onecomp.steady_state(ke, v, dose, tau, tinf)
    assert ss.auc24 == pytest.approx(dose * 24.0 / tau / (ke * v), rel=1e-10)


def test_accumulation_factor_and_convergence_to_steady_state() -> None:
    # pk-sources.md 2.2/2.3: single-dose end-of-infusion level k0 (1 - e^(-ke t'))/(ke V);
    # at steady state it is multiplied by the accumulation factor 1/(1 - e^(-ke tau)).
    ke, v, dose, tau, tinf = 0.1, 40.0, 1000.0, 12.0, 1.0
    single_peak = dose / tinf * (1.0 - math.exp(-ke * tinf)) / (ke * v)
    ss = onecomp.steady_state(ke, v, dose, tau, tinf)
    assert ss.peak == pytest.approx(single_peak / (1.0 - math.exp(-ke * tau)), rel=1e-12)
    assert ss.trough == pytest.approx(ss.peak * math.exp(-ke * (tau - tinf)), rel=1e-12)
    # Peak after n doses (solve_ivp) = single peak x (1 - e^(-n ke tau))/(1 - e^(-ke tau)) -> peak_ss.
    for n in (1, 3, 30):
        doses = DoseArrays.regimen(0.0, dose, tau, tinf, n)
        t_peak = (n - 1) * tau + tinf
        ref, _ = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, [t_peak])
        expected = single_peak * (1.0 - math.exp(-n * ke * tau)) / (1.0 - math.exp(-ke * tau))
        assert ref[0] == pytest.approx(expected, rel=1e-7)
        assert onecomp.concentration(ke, v, doses, t_peak) == pytest.approx(ref[0], rel=1e-7)
    assert ref[0] == pytest.approx(ss.peak, rel=1e-7)


def test_w5_vancomycin_1000_q12h() -> None:
    # pk-sources.md W5 step 5: ke 0.0827, V 51.6 L, 1000 mg q12h over 1.5 h
    # -> AUC24 469, Cmax 29.0, Cmin 12.2 (sheet's rounding).
    ss = onecomp.steady_state(0.0827, 51.6, 1000.0, 12.0, 1.5)
    assert ss.auc24 == pytest.approx(469.0, abs=0.5)
    assert ss.peak == pytest.approx(29.0, abs=0.05)
    assert ss.trough == pytest.approx(12.2, abs=0.05)


def test_w5_via_dispatcher() -> None:
    # pk-sources.md W5 step 5, 1250 mg q12h -> AUC24 586, Cmax 36.2, Cmin 15.2.
    ss = models.steady_state(PKParams.one_compartment(0.0827, 51.6), 1250.0, 12.0, 1.5)
    assert ss.auc24 == pytest.approx(586.0, abs=0.5)
    assert ss.peak == pytest.approx(36.2, abs=0.05)
    assert ss.trough == pytest.approx(15.2, abs=0.05)


def _w3_ke_v() -> tuple[float, float]:
    """ke and V of pk-sources.md W3 steps 1-3 (Sawchuk-Zaske, 2.4) at full precision.

    The sheet carries unrounded values into steps 6-7 (ke 0.1544 and V 25.1 are displays).
    """
    ke = math.log(6.0 / 2.2) / (7.5 - 1.0)
    cmax = 6.0 * math.exp(ke * 0.5)
    cmin = 2.2 * math.exp(-ke * 0.5)
    v = (120.0 / 0.5) * (1.0 - math.exp(-ke * 0.5)) / (ke * (cmax - cmin * math.exp(-ke * 0.5)))
    return ke, v


def test_w3_redesigned_gentamicin_regimen() -> None:
    # pk-sources.md W3 step 6: ke 0.1544, V 25.1 L, 180 mg over 0.5 h q12h -> Cmax 8.18, Cmin 1.39,
    # level 0.5 h after the end of infusion 7.57 mg/L.
    ke, v = _w3_ke_v()
    assert (round(ke, 4), round(v, 1)) == (0.1544, 25.1)  # the sheet's displayed step-1/3 values
    ss = onecomp.steady_state(ke, v, 180.0, 12.0, 0.5)
    assert ss.peak == pytest.approx(8.18, abs=0.005)
    assert ss.trough == pytest.approx(1.39, abs=0.005)
    doses = DoseArrays.regimen(0.0, 180.0, 12.0, 0.5, 40)  # 40 doses: e^(-0.1544 x 480) ~ 0
    assert onecomp.concentration(ke, v, doses, 39 * 12.0 + 1.0) == pytest.approx(7.57, abs=0.005)
    # The sheet's rounded inputs (ke 0.1544, V 25.1) reproduce step 6 to the sheet's rounding too.
    ss_rounded = onecomp.steady_state(0.1544, 25.1, 180.0, 12.0, 0.5)
    assert (ss_rounded.peak, ss_rounded.trough) == pytest.approx((8.18, 1.39), abs=0.005)


def test_w3_level_when_new_regimen_starts() -> None:
    # pk-sources.md W3 step 7: old regimen 120 mg over 0.5 h q8h at steady state; 12 h after the
    # start of its last dose the level is 1.10 mg/L.
    ke, v = _w3_ke_v()
    doses = DoseArrays.regimen(0.0, 120.0, 8.0, 0.5, 40)
    assert onecomp.concentration(ke, v, doses, 39 * 8.0 + 12.0) == pytest.approx(1.10, abs=0.005)


def test_w2_aminoglycoside_check() -> None:
    # pk-sources.md W2 check: ke 0.299, V 18.2 L, 150 mg over 1 h q8h -> Cmax 7.84, Cmin 0.97.
    ss = onecomp.steady_state(0.299, 18.2, 150.0, 8.0, 1.0)
    assert ss.peak == pytest.approx(7.84, abs=0.005)
    assert ss.trough == pytest.approx(0.97, abs=0.005)


def test_w4_extended_interval_recheck() -> None:
    # pk-sources.md W4 re-check: ke 0.092, V 20.4 L, 400 mg over 1 h q36h -> Cmax 19.4, Cmin 0.78.
    ss = onecomp.steady_state(0.092, 20.4, 400.0, 36.0, 1.0)
    assert ss.peak == pytest.approx(19.4, abs=0.05)
    assert ss.trough == pytest.approx(0.78, abs=0.005)


def test_w6_first_dose_levels_auc_and_time_to_fall() -> None:
    # pk-sources.md W6: 560 mg over 1 h; levels 18.0 mg/L at 1.5 h and 4.2 mg/L at 9.0 h give
    # ke 0.194, V 25.7 L (first-dose Sawchuk-Zaske, 2.4, full precision as the sheet carries it)
    # -> Cmax 19.8, C(24 h) 0.23, AUC0-24 111, AUC0-inf 112, below 1 mg/L at 16.4 h and below
    # 0.5 mg/L at 20.0 h after start.
    ke = math.log(18.0 / 4.2) / 7.5
    cmax = 18.0 * math.exp(ke * 0.5)
    v = 560.0 * (1.0 - math.exp(-ke)) / (ke * cmax)
    assert (round(ke, 3), round(v, 1)) == (0.194, 25.7)  # the sheet's displayed values
    doses = DoseArrays.regimen(0.0, 560.0, 24.0, 1.0, 1)
    c = onecomp.concentration(ke, v, doses, [1.0, 1.5, 9.0, 24.0])
    assert c[0] == pytest.approx(19.8, abs=0.05)
    assert c[1:3] == pytest.approx([18.0, 4.2], rel=1e-9)  # passes through both measured levels
    assert c[3] == pytest.approx(0.23, abs=0.005)
    assert onecomp.auc(ke, v, doses, 0.0, 24.0) == pytest.approx(111.0, abs=0.5)
    assert onecomp.auc(ke, v, doses, 0.0, np.inf) == pytest.approx(112.0, abs=0.5)
    assert onecomp.time_to_fall(ke, v, doses, 1.0, 1.0) == pytest.approx(16.4, abs=0.05)
    assert onecomp.time_to_fall(ke, v, doses, 1.0, 0.5) == pytest.approx(20.0, abs=0.05)
    # Same figures from the sheet's rounded ke 0.194 and V 25.7 L, to its rounding.
    assert onecomp.time_to_fall(0.194, 25.7, doses, 1.0, 1.0) == pytest.approx(16.4, abs=0.05)
    assert onecomp.auc(0.194, 25.7, doses, 0.0, 24.0) == pytest.approx(111.0, abs=0.5)


def test_time_to_fall_waits_for_later_doses() -> None:
    # Level below every trough of the running regimen: the fall comes after the last dose, where
    # pk-sources.md 2.2 gives C = C_end e^(-ke (t - end)) -> t = end + ln(C_end / level) / ke;
    # C_end taken from solve_ivp.
    ke, v = 0.1, 40.0
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 5)
    end = 48.0 + 1.0
    ref, _ = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, [end])
    expected = end + math.log(ref[0] / 2.0) / ke
    assert onecomp.time_to_fall(ke, v, doses, 13.0, 2.0) == pytest.approx(expected, abs=1e-6)
    assert onecomp.time_to_fall(ke, v, doses, 13.0, 1e9) == 13.0  # already below: t0 itself
    assert onecomp.time_to_fall(ke, v, doses, 13.0, 0.0) is None  # never exactly 0


@settings(max_examples=30, deadline=None)
@given(ke=KE, v=V, doses=histories(8), data=st.data())
def test_time_to_fall_matches_ode(ke: float, v: float, doses: DoseArrays, data: st.DataObject) -> None:
    # Reference: solve_ivp. At the returned time C = level, and C > level on a grid before it.
    lo, hi = _window(doses)
    t0 = data.draw(st.floats(lo, hi))
    c0, _ = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, [t0])
    level = float(c0[0]) * data.draw(st.floats(0.01, 0.99)) + 1e-3
    t = onecomp.time_to_fall(ke, v, doses, t0, level)
    assert t is not None and t >= t0
    grid = np.linspace(t0, t, 60)[:-1]
    ref, _ = ode_reference(ke * v, v, 0.0, 0.0, doses.start, doses.duration, doses.amount, np.append(grid, t))
    if t > t0:
        assert ref[-1] == pytest.approx(level, rel=1e-6)
        assert np.all(ref[:-1] > level * (1.0 - 1e-6))
    else:
        assert ref[-1] <= level * (1.0 + 1e-6)


@pytest.mark.parametrize(("ke", "v"), [(0.0, 10.0), (-0.1, 10.0), (0.1, 0.0), (math.nan, 10.0), (0.1, math.inf)])
def test_non_positive_parameters_raise(ke: float, v: float) -> None:
    doses = DoseArrays.regimen(0.0, 100.0, 8.0, 1.0, 2)
    with pytest.raises(ValueError):
        onecomp.concentration(ke, v, doses, [1.0])
    with pytest.raises(ValueError):
        onecomp.auc(ke, v, doses, 0.0, 1.0)
    with pytest.raises(ValueError):
        onecomp.steady_state(ke, v, 100.0, 8.0, 1.0)
    with pytest.raises(ValueError):
        onecomp.time_to_fall(ke, v, doses, 0.0, 1.0)


def test_malformed_inputs_raise() -> None:
    good = DoseArrays.regimen(0.0, 100.0, 8.0, 1.0, 2)
    with pytest.raises(ValueError):
        onecomp.concentration(0.1, 10.0, DoseArrays.from_lists([0.0], [-1.0], [100.0]), [1.0])
    with pytest.raises(ValueError):
        onecomp.concentration(0.1, 10.0, DoseArrays.from_lists([0.0], [1.0], [-100.0]), [1.0])
    with pytest.raises(ValueError):
        onecomp.concentration(0.1, 10.0, good, [math.nan])
    with pytest.raises(ValueError):
        onecomp.auc(0.1, 10.0, good, 5.0, 1.0)
    with pytest.raises(ValueError):
        onecomp.steady_state(0.1, 10.0, 100.0, 8.0, 9.0)  # infusion longer than the interval
    with pytest.raises(ValueError):
        onecomp.steady_state(0.1, 10.0, 0.0, 8.0, 1.0)
    with pytest.raises(ValueError):
        onecomp.time_to_fall(0.1, 10.0, good, 0.0, -1.0)
    with pytest.raises(ValueError):
        models.concentration(PKParams(cl=1.0, v1=10.0, q=2.0, v2=0.0), good, [1.0])
