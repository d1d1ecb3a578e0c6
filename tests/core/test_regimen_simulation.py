"""Every recommended regimen simulated over the real history, checked two ways.

References: the shared closed-form superposition (pk-sources.md 2.2) and, independently,
a numerical solution of the model ODE with scipy.integrate.solve_ivp (written here; it
uses none of the project's model code). Checks: the predicted steady-state peak, trough
and AUC24 equal the simulated last interval after 10+ doses; hold_until is where the
simulated curve crosses the hold threshold; next_dose_at is not before as_of; the
forecast AUCs equal the integral of the simulated curve.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from tdmtui.core.input.casetypes import Target
from tdmtui.core.models import DoseArrays, PKParams, auc, concentration
from tdmtui.core.regimen import CurrentRegimen, design
from tdmtui.core.regimen.steadystate import terminal_rate

from regimen_cases import CLOCK, T0, inp, rules


def ode(params: PKParams, doses: DoseArrays, times: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Concentration and running AUC (from the first dose) at ``times`` by solve_ivp.

    dA1/dt = R(t) - (k10 + k12) A1 + k21 A2; dA2/dt = k12 A1 - k21 A2; dAUC/dt = A1/V1.
    """
    v1 = params.v1
    k10 = params.cl / v1
    two = params.q > 0 and params.v2 > 0
    k12 = params.q / v1 if two else 0.0
    k21 = params.q / params.v2 if two else 0.0
    s, d, a = doses.start, doses.duration, doses.amount
    times = np.asarray(times, float)
    edges = np.unique(np.concatenate([s, s + d, [times.max()]]))
    out_c, out_auc = np.zeros_like(times), np.zeros_like(times)
    y = np.zeros(3)
    for lo, hi in zip(edges[:-1], edges[1:]):
        y[0] += a[(d == 0) & (s == lo)].sum()
        running = (s <= lo) & (s + d > lo) & (d > 0)
        rate = float(np.sum(a[running] / d[running]))

        def f(_t: float, z: np.ndarray, rate: float = rate) -> list[float]:
            return [rate - (k10 + k12) * z[0] + k21 * z[1], k12 * z[0] - k21 * z[1], z[0] / v1]

        sol = solve_ivp(f, (lo, hi), y, method="LSODA", rtol=1e-11, atol=1e-12, dense_output=True)
        inside = (times > lo) & (times <= hi)
        if inside.any():
            z = sol.sol(times[inside])
            out_c[inside], out_auc[inside] = z[0] / v1, z[2]
        y = sol.y[:, -1].copy()
    return out_c, out_auc


def parse(text: str) -> float:
    return CLOCK.parse(text, "test")


VANC = PKParams.one_compartment(0.0827, 51.6)  # W5 patient (pk-sources.md 5)
VANC2 = PKParams(cl=4.0, v1=30.0, q=7.0, v2=40.0)  # two-compartment, invented values of the usual size
GENT = PKParams.one_compartment(0.1544, 25.1)  # W3 patient (pk-sources.md 5)


def _scenarios() -> dict[str, object]:
    w5_hist = DoseArrays.regimen(T0, 1500.0, 12.0, 1.5, 8)
    low_hist = DoseArrays.regimen(T0, 500.0, 12.0, 1.0, 3)
    gent_hist = DoseArrays.regimen(T0, 120.0, 8.0, 0.5, 6)
    high_hist = DoseArrays.regimen(T0, 2250.0, 12.0, 2.5, 8)
    return {
        "vanc-over-hold": inp("vancomycin", VANC, high_hist, as_of=float(high_hist.start[-1]) + 11.0,
                              current=CurrentRegimen(2250.0, 12.0, 2.5), method="two-level"),
        "vanc-change-hold": inp("vancomycin", VANC, w5_hist, as_of=float(w5_hist.start[-1]) + 11.0,
                                current=CurrentRegimen(1500.0, 12.0, 1.5), method="two-level"),
        "vanc-topup": inp("vancomycin", VANC, low_hist, as_of=float(low_hist.start[-1]) + 6.0,
                          current=CurrentRegimen(500.0, 12.0, 1.0), method="bayesian"),
        "vanc-2cpt-new-start": inp("vancomycin", VANC2, as_of=T0 + 0.25),
        "vanc-continuous": inp("vancomycin", VANC, as_of=T0, target=Target(css=(20.0, 25.0))),
        "gent-peak-trough": inp("gentamicin", GENT, gent_hist, as_of=float(gent_hist.start[-1]) + 7.0,
                                current=CurrentRegimen(120.0, 8.0, 0.5), target=Target(peak=(6.0, 10.0), trough=(0.5, 2.0))),
        "gent-extended": inp("gentamicin", PKParams.one_compartment(0.2, 22.0), as_of=T0),
        "amikacin-extended-admin-times": inp(
            "amikacin", PKParams.one_compartment(0.15, 20.0), DoseArrays.regimen(T0, 1000.0, 24.0, 0.5, 2),
            as_of=T0 + 30.0, current=CurrentRegimen(1000.0, 24.0, 0.5),
            r=rules("amikacin", regimen__admin_times={"24": ["10:00"], "36": ["10:00", "22:00"], "48": ["10:00"]})),
    }


SCEN = _scenarios()


def _full_course(case, reg) -> tuple[DoseArrays, float, float, float, int]:  # noqa: ANN001
    """History + loading + N maintenance doses; returns the doses and the last interval."""
    tau, tinf, dose = reg["interval_h"], reg["infusion_h"], reg["dose_mg"]
    first = parse(reg["next_dose_at"])
    n = max(10, math.ceil(30.0 / (terminal_rate(case.params) * tau)) + 1)  # e^-30: steady state
    plan = DoseArrays.regimen(first, dose, tau, tinf, n)
    ld = reg["loading_dose"]
    if ld:
        plan = plan.concat(DoseArrays.from_lists([parse(ld["at"])], [ld["infusion_h"]], [ld["dose_mg"]]))
    every = case.history.concat(plan) if len(case.history) else plan
    return every, first + (n - 1) * tau, tau, tinf, n


@pytest.mark.parametrize("name", sorted(SCEN))
def test_predicted_steady_state_equals_simulation(name: str) -> None:
    case = SCEN[name]
    reg = design(case).regimen
    every, last, tau, tinf, n = _full_course(case, reg)
    assert n >= 10
    pred = reg["predicted"]
    times = np.array([last, last + tinf, last + tau])
    c_ode, a_ode = ode(case.params, every, times)
    c_model = concentration(case.params, every, times)
    for c, src in ((c_ode, "solve_ivp"), (c_model, "shared superposition")):
        assert c[1] == pytest.approx(pred["peak_mg_per_l"], rel=1e-5), src
        assert c[2] == pytest.approx(pred["trough_mg_per_l"], rel=1e-5), src
    assert (a_ode[2] - a_ode[0]) * 24.0 / tau == pytest.approx(pred["auc24_mg_h_per_l"], rel=1e-6)
    assert auc(case.params, every, last, last + tau) * 24.0 / tau == pytest.approx(pred["auc24_mg_h_per_l"], rel=1e-6)
    if "peak_at_reference_mg_per_l" in pred:
        ref_t = last + pred["peak_reference_h_after_start"]
        assert ode(case.params, every, np.array([ref_t]))[0][0] == pytest.approx(pred["peak_at_reference_mg_per_l"], rel=1e-5)


@pytest.mark.parametrize("name", sorted(SCEN))
def test_next_dose_not_before_as_of_and_forecast_auc(name: str) -> None:
    case = SCEN[name]
    plan = design(case)
    reg = plan.regimen
    assert parse(reg["next_dose_at"]) >= case.as_of - 1.0 / 120.0
    for alt in reg["alternatives"]:
        assert parse(alt["next_dose_at"]) >= case.as_of - 1.0 / 120.0
    every = case.history.concat(plan.doses) if len(case.history) else plan.doses
    _, a = ode(case.params, every, np.array([case.as_of, case.as_of + 24.0, case.as_of + 48.0]))
    assert reg["forecast_auc"]["day1_mg_h_per_l"] == pytest.approx(a[1] - a[0], rel=1e-6)
    assert reg["forecast_auc"]["day2_mg_h_per_l"] == pytest.approx(a[2] - a[1], rel=1e-6)
    t, c = plan.forecast
    assert t[-1] == pytest.approx(case.as_of + 72.0)
    idx = np.linspace(0, len(t) - 1, 7).astype(int)
    assert c[idx] == pytest.approx(ode(case.params, every, t[idx])[0], rel=1e-6, abs=1e-9)


def test_no_hold_when_the_level_due_is_under_the_library_limit() -> None:
    """W5 patient cut from 1500 to 1000 mg q12h: the level due (18.2 mg/L by the scipy ODE reference)
    is under vancomycin's hold limit of 20 mg/L (library regimen.hold_above_mg_l: AKI odds rise above
    20 mg/L, pk-sources.md 3.2), so the new dose is given when due: no hold, nothing skipped."""
    case = SCEN["vanc-change-hold"]
    reg = design(case).regimen
    due = float(case.history.start[-1]) + 12.0
    assert 15.0 < ode(case.params, case.history, np.array([due]))[0][0] < 20.0  # W5 trough 19.0 mg/L before the dose
    assert reg["action"] == "change" and reg["hold_until"] is None and reg["skipped_doses"] == []
    assert parse(reg["next_dose_at"]) == pytest.approx(due, abs=1e-6)


def test_hold_until_is_where_the_curve_falls_to_the_limit() -> None:
    """W5 patient on 2250 mg q12h: the level due is above 20 mg/L (scipy ODE reference); the hold ends on
    the first half hour (library grid, common practice) at which the curve is at or under 20 mg/L, and the
    dose it skips is named by its time."""
    case = SCEN["vanc-over-hold"]
    reg = design(case).regimen
    due = float(case.history.start[-1]) + 12.0
    assert ode(case.params, case.history, np.array([due]))[0][0] > 20.0
    assert reg["action"] == "hold-then-change" and reg["hold_level_mg_l"] == 20.0
    t_hold = parse(reg["hold_until"])
    assert reg["hold_until"][14:] in ("00", "30")
    before, at = ode(case.params, case.history, np.array([t_hold - 0.5, t_hold]))[0]
    assert before > 20.0 >= at
    assert parse(reg["next_dose_at"]) >= t_hold - 1.0 / 120.0
    assert reg["skipped_doses"] == [CLOCK.format(due)]


def test_admin_times_respected() -> None:
    """Next doses fall on the protocol's standard administration times."""
    reg = design(SCEN["amikacin-extended-admin-times"]).regimen
    assert reg["next_dose_at"][11:] in ("10:00", "22:00")
    assert parse(reg["next_dose_at"]) >= SCEN["amikacin-extended-admin-times"].as_of


def test_top_up_reaches_the_new_steady_state_peak() -> None:
    """Drug on board and far below target: the top-up lifts the simulated curve to the new peak."""
    case = SCEN["vanc-topup"]
    reg = design(case).regimen
    ld = reg["loading_dose"]
    assert ld is not None and "top-up" in ld["basis"]
    t0 = parse(ld["at"])
    exact = case.history.concat(DoseArrays.from_lists([t0], [ld["infusion_h"]], [ld["exact_mg"]]))
    c_end = ode(case.params, exact, np.array([t0 + ld["infusion_h"]]))[0][0]
    assert c_end == pytest.approx(reg["predicted"]["peak_mg_per_l"], rel=1e-6)
    # and the rounded top-up is within half a rounding step of it (250 mg for vancomycin, library)
    assert abs(ld["dose_mg"] - ld["exact_mg"]) <= 125.0 + 1e-9


def test_continuous_rate_gives_the_css() -> None:
    """Css = R / CL (pk-sources.md 2.5): the simulated plateau equals the predicted Css."""
    reg = design(SCEN["vanc-continuous"]).regimen
    assert reg["rate_mg_per_h"] == pytest.approx(reg["daily_dose_mg"] / 24.0)
    assert reg["css_mg_per_l"] == pytest.approx(reg["rate_mg_per_h"] / VANC.cl, rel=1e-9)
    assert 20.0 <= reg["css_mg_per_l"] <= 25.0
    assert reg["predicted"]["auc24_mg_h_per_l"] == pytest.approx(24.0 * reg["css_mg_per_l"], rel=1e-9)
    long = DoseArrays.from_lists([0.0], [2000.0], [reg["rate_mg_per_h"] * 2000.0])
    assert ode(VANC, long, np.array([1999.0]))[0][0] == pytest.approx(reg["css_mg_per_l"], rel=1e-6)
