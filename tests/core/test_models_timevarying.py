"""Parameters that change during the course, checked against scipy's solve_ivp.

Reference: ode_reference_tv.py integrates the one- or two-compartment ODE with the
parameters switched at each change time (scipy.integrate.solve_ivp, LSODA, rtol 1e-10).
The courses are invented: clearance changes twice, with infusions running across both
changes, and a haemodialysis course where each session adds clearance while it runs.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from ode_reference import close, ode_reference
from ode_reference_tv import ode_reference_tv

from tdmtui.core import models
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.models.timevarying import ParamSchedule, batch_tv_concentration, tv_auc, tv_concentration

# Doses every 12 h over 1.5 h; the changes at 30 h and 53.25 h fall inside the 3rd and 5th infusions.
DOSES = DoseArrays.regimen(0.0, 1250.0, 12.0, 1.5, 8)
CHANGES = (24.75, 48.5)
TIMES = np.concatenate([np.linspace(0.1, 110.0, 137), [24.0, 24.75, 25.0, 48.5, 49.0, 36.0, 37.5]])


def _pieces_one() -> list[PKParams]:
    # CrCl falling: CL 4.8 -> 3.0 -> 1.9 L/h, V 60 L (invented)
    return [PKParams(4.8, 60.0), PKParams(3.0, 60.0), PKParams(1.9, 60.0)]


def _pieces_two() -> list[PKParams]:
    # Goti-like magnitudes (invented patient): CL changes, V1, Q, V2 fixed
    return [PKParams(4.5, 55.0, 6.5, 36.0), PKParams(2.7, 55.0, 6.5, 36.0), PKParams(1.6, 55.0, 6.5, 36.0)]


def _ref(pieces, doses, times, auc_from=None):  # noqa: ANN001, ANN202
    return ode_reference_tv(CHANGES, [(p.cl, p.v1, p.q, p.v2) for p in pieces], doses.start, doses.duration,
                            doses.amount, times, auc_from)


@pytest.mark.parametrize("pieces", [_pieces_one(), _pieces_two()], ids=["one-compartment", "two-compartment"])
def test_clearance_changing_twice_matches_ode(pieces: list[PKParams]) -> None:
    # Reference: solve_ivp with the parameters switched at 24.75 h and 48.5 h (infusions span both).
    sched = ParamSchedule(CHANGES, tuple(pieces))
    ref, _ = _ref(pieces, DOSES, TIMES)
    got = tv_concentration(sched, DOSES, TIMES)
    assert close(got, ref, rel=1e-6, floor=1e-6)
    # and the change matters: the fixed-parameter closed form with the first set differs by far more
    assert np.max(np.abs(models.concentration(pieces[0], DOSES, TIMES) - ref)) > 1.0


@pytest.mark.parametrize("pieces", [_pieces_one(), _pieces_two()], ids=["one-compartment", "two-compartment"])
def test_exact_auc_across_changes_matches_ode(pieces: list[PKParams]) -> None:
    # Reference: solve_ivp with dAUC/dt = C, reset at the window start (inside an infusion).
    sched = ParamSchedule(CHANGES, tuple(pieces))
    for a, b in ((0.0, 110.0), (24.2, 50.0), (25.0, 26.0), (60.3, 84.3)):
        _, area = _ref(pieces, DOSES, np.array([b]), auc_from=a)
        assert tv_auc(sched, DOSES, a, b) == pytest.approx(float(area[0]), rel=1e-7, abs=1e-6)


def test_one_set_equals_the_fixed_closed_form_and_ode() -> None:
    # Reference: the fixed-parameter ODE (ode_reference.py); a schedule with no change is that model.
    p = PKParams(3.2, 48.0, 5.0, 30.0)
    ref, _ = ode_reference(p.cl, p.v1, p.q, p.v2, DOSES.start, DOSES.duration, DOSES.amount, TIMES)
    assert close(tv_concentration(ParamSchedule.fixed(p), DOSES, TIMES), ref)


def test_volume_change_keeps_the_amount() -> None:
    # Reference: solve_ivp on amounts; at a change of V the amount carries over, the concentration jumps.
    pieces = [PKParams(3.0, 50.0), PKParams(3.0, 40.0), PKParams(3.0, 40.0)]
    sched = ParamSchedule(CHANGES, tuple(pieces))
    t = np.array([24.7, 24.8, 30.0, 70.0])
    ref, _ = _ref(pieces, DOSES, t)
    assert close(tv_concentration(sched, DOSES, t), ref)


def test_bolus_at_a_change_time_is_given_with_the_new_parameters() -> None:
    # Reference: solve_ivp; a bolus given exactly when the parameters change (level at that time is before it).
    doses = DoseArrays.from_lists([0.0, 24.75], [1.0, 0.0], [1000.0, 500.0])
    pieces = _pieces_two()
    t = np.array([24.75, 24.76, 30.0, 50.0, 80.0])
    ref, _ = _ref(pieces, doses, t)
    assert close(tv_concentration(ParamSchedule(CHANGES, tuple(pieces)), doses, t), ref)


def test_batch_matches_single_schedules() -> None:
    # Reference: solve_ivp per parameter set; the batch form evaluates many schedules at once.
    sets = [_pieces_two(), [PKParams(p.cl * 1.3, p.v1 * 0.8, p.q, p.v2 * 1.1) for p in _pieces_two()]]
    arrays = [np.array([[getattr(p, f) for p in s] for s in sets]) for f in ("cl", "v1", "q", "v2")]
    got = batch_tv_concentration(CHANGES, *arrays, DOSES, TIMES)
    for row, pieces in zip(got, sets):
        ref, _ = _ref(pieces, DOSES, TIMES)
        assert close(row, ref)


@settings(max_examples=25, deadline=None, derandomize=True, database=None)
@given(cls=st.lists(st.floats(0.3, 8.0), min_size=3, max_size=3), two=st.booleans(),
       shift=st.floats(-3.0, 3.0))
def test_random_changes_match_ode(cls: list[float], two: bool, shift: float) -> None:
    # Reference: solve_ivp; random clearances, change times moved across dose starts and ends.
    changes = (CHANGES[0] + shift, CHANGES[1] + shift)
    pieces = [PKParams(c, 45.0, 4.0 if two else 0.0, 30.0 if two else 0.0) for c in cls]
    ref, _ = ode_reference_tv(changes, [(p.cl, p.v1, p.q, p.v2) for p in pieces], DOSES.start, DOSES.duration,
                              DOSES.amount, TIMES)
    assert close(tv_concentration(ParamSchedule(changes, tuple(pieces)), DOSES, TIMES), ref)


def test_bad_schedules_are_refused() -> None:
    with pytest.raises(ValueError):
        ParamSchedule((10.0, 5.0), tuple(_pieces_one()))
    with pytest.raises(ValueError):
        ParamSchedule((10.0,), tuple(_pieces_one()))
    with pytest.raises(ValueError):
        ParamSchedule((10.0,), (PKParams(3.0, 50.0), PKParams(3.0, 50.0, 2.0, 20.0)))
