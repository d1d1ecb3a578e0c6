"""Two-level and Sawchuk-Zaske estimates against pk-sources.md worked examples W3, W5, W6b.

Expected values are typed in from the worked-example sheet (pk-sources.md section 5,
"constructed teaching cases following the textbook methods", arithmetic re-checked there).
"""

from __future__ import annotations

import math

import pytest

from tdmtui.core.case import Dose, Level
from tdmtui.core.errors import NoEstimateError
from tdmtui.core.models import DoseArrays
from tdmtui.core.twolevel import sawchuk_zaske, two_level


def _arrays(doses):
    return DoseArrays.from_lists([d.start for d in doses], [d.duration for d in doses], [d.amount for d in doses])


def test_w3_sawchuk_zaske_steady_state():
    # W3: gentamicin 120 mg q8h over 0.5 h at steady state; peak 6.0 at 1.0 h, trough 2.2 at 7.5 h
    # sheet: ke 0.1544 /h, t1/2 4.49 h, V 25.1 L, CL 3.88 L/h
    doses = [Dose(i, 8.0 * i, 0.5, 120.0) for i in range(10)]
    levels = [Level(0, 72 + 1.0, 6.0), Level(1, 72 + 7.5, 2.2)]
    r = sawchuk_zaske(doses, levels, 8.0)
    assert r.params.ke == pytest.approx(0.1544, abs=5e-5)
    assert r.params.half_life == pytest.approx(4.49, abs=5e-3)
    assert r.params.v1 == pytest.approx(25.1, abs=0.05)
    assert r.params.cl == pytest.approx(3.88, abs=5e-3)
    assert "steady state" in r.assumption


def test_w3_two_level_whole_history_agrees_at_steady_state():
    # W3 again: after 9 identical doses the whole-history fit must give the sheet's ke and V
    doses = [Dose(i, 8.0 * i, 0.5, 120.0) for i in range(10)]
    r = two_level(_arrays(doses), [Level(0, 73.0, 6.0), Level(1, 79.5, 2.2)])
    assert r.params.ke == pytest.approx(0.1544, abs=5e-5)
    assert r.params.v1 == pytest.approx(25.1, abs=0.05)


def test_w5_vancomycin_two_levels():
    # W5: vancomycin 1,500 mg q12h over 1.5 h at steady state; 40.0 mg/L at 2.5 h, 19.0 mg/L at 11.5 h
    # sheet: ke 0.0827, t1/2 8.38 h, Cmax 43.45, Cmin 18.23, V 51.6 L, CL 4.27 L/h, AUC24 703 (exact route)
    doses = [Dose(i, 12.0 * i, 1.5, 1500.0) for i in range(8)]
    levels = [Level(0, 84 + 2.5, 40.0), Level(1, 84 + 11.5, 19.0)]
    for r in (sawchuk_zaske(doses, levels, 12.0), two_level(_arrays(doses), levels)):
        assert r.params.ke == pytest.approx(0.0827, abs=5e-5)
        assert r.params.half_life == pytest.approx(8.38, abs=5e-3)
        assert r.params.v1 == pytest.approx(51.6, abs=0.05)
        assert r.params.cl == pytest.approx(4.27, abs=5e-3)
        assert 3000 / r.params.cl == pytest.approx(703, abs=1.0)


def test_w6b_predose_level_versus_steady_state_assumption():
    # W6b: gentamicin 100 mg q8h over 0.5 h; pre-dose level before dose 2 = 1.1 mg/L;
    # 6.1 mg/L at 1.0 h and 2.0 mg/L at 6.5 h after the start of dose 2.
    # sheet: ke 0.203 /h (t1/2 3.42 h); Cmax 6.75; V 16.5 L with Cpredose (correct), 17.6 L assuming steady state (+6 %); CL 3.35 L/h
    doses = [Dose(0, 0.0, 0.5, 100.0), Dose(1, 8.0, 0.5, 100.0)]
    pre = Level(0, 7.95, 1.1)
    peak, trough = Level(1, 9.0, 6.1), Level(2, 14.5, 2.0)
    measured = sawchuk_zaske(doses, [pre, peak, trough], 8.0)
    assumed = sawchuk_zaske(doses, [peak, trough], 8.0)
    assert measured.params.ke == pytest.approx(0.203, abs=5e-4)
    assert measured.params.half_life == pytest.approx(3.42, abs=5e-3)
    assert measured.params.v1 == pytest.approx(16.5, abs=0.05)
    assert measured.params.cl == pytest.approx(3.35, abs=0.01)
    assert assumed.params.v1 == pytest.approx(17.6, abs=0.05)
    assert assumed.params.v1 / measured.params.v1 - 1 == pytest.approx(0.06, abs=0.01)
    # the whole-history two-level fit uses dose 1 itself, so it differs from the steady-state assumption
    whole = two_level(_arrays(doses), [peak, trough])
    assert abs(whole.params.v1 - assumed.params.v1) / assumed.params.v1 > 0.03


def test_trough_before_peak_after_uses_steady_state():
    # W5 rearranged: trough 19.0 mg/L drawn 0.5 h before a dose equals the trough 0.5 h before the next
    # at steady state; peak 40.0 mg/L 1 h after the end of that dose -> the sheet's ke 0.0827 /h
    doses = [Dose(i, 12.0 * i, 1.5, 1500.0) for i in range(8)]
    levels = [Level(0, 84 - 0.5, 19.0), Level(1, 84 + 2.5, 40.0)]
    r = sawchuk_zaske(doses, levels, 12.0)
    assert r.params.ke == pytest.approx(0.0827, abs=5e-5)
    assert r.params.v1 == pytest.approx(51.6, abs=0.1)


def test_too_few_levels_and_no_root():
    doses = [Dose(0, 0.0, 1.0, 1000.0)]
    with pytest.raises(NoEstimateError):
        two_level(_arrays(doses), [Level(0, 5.0, 20.0)])
    # a rise after a single dose's end cannot be fitted by any positive ke
    with pytest.raises(NoEstimateError):
        two_level(_arrays(doses), [Level(0, 3.0, 10.0), Level(1, 8.0, 12.0)])


def test_ke_identity_log_linear_after_one_dose():
    # after a single dose the exact fit reduces to ke = ln(C1/C2)/(t2 - t1) (pk-sources.md 2.4 step 2)
    doses = [Dose(0, 0.0, 1.0, 560.0)]
    r = two_level(_arrays(doses), [Level(0, 1.5, 18.0), Level(1, 9.0, 4.2)])
    assert r.params.ke == pytest.approx(math.log(18 / 4.2) / 7.5, rel=1e-9)
    # W6 (first-dose extended-interval gentamicin): ke 0.194, V 25.7 L
    assert r.params.ke == pytest.approx(0.194, abs=5e-4)
    assert r.params.v1 == pytest.approx(25.7, abs=0.1)
