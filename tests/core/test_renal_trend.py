"""The ``scr-unstable`` rule against the KDIGO 2012 acute kidney injury definition.

KDIGO Clinical Practice Guideline for Acute Kidney Injury, Kidney Int Suppl
2012;2:1-138 (pk-sources.md 6.1, definition from memory): AKI is a rise in
SCr of >= 0.3 mg/dL within 48 h, or to >= 1.5 x baseline within the prior 7 days.
"""

from __future__ import annotations

import pytest

from tdmtui.core.library import Rules, protocol_from_tree
from tdmtui.core.patient.renal import renal_summary


def _unstable(series, rules=None):
    s = renal_summary(68.0, "female", 92.0, 165.0, series, rules or Rules("vancomycin"))
    return [a for a in s.alerts if a.code == "scr-unstable"]


def test_slow_climb_over_six_days_is_warned():
    # 0.9 -> 1.1 -> 1.3 -> 1.5 mg/dL, one value every 48 h: no step reaches 0.3 mg/dL in 48 h, but
    # 1.5 >= 1.5 x 0.9 = 1.35 within 7 days (KDIGO 2012 AKI, second arm)
    alerts = _unstable([(0.0, 0.9, 0), (48.0, 1.1, 1), (96.0, 1.3, 2), (144.0, 1.5, 3)])
    assert [a.field for a in alerts] == ["patient.scr[3].value"]
    msg = alerts[0].message
    assert "0.9 mg/dL" in msg and "1.5 mg/dL" in msg and "+67 %" in msg and "144 h" in msg
    assert "1.5 x the lowest" in msg and "7 days" in msg


def test_rise_just_under_one_and_a_half_times_in_seven_days_is_quiet():
    # 1.0 -> 1.1 -> 1.2 -> 1.29 over 6 days: 1.29 < 1.5 x 1.0, and each 48 h step < 0.3 (KDIGO 2012)
    assert _unstable([(0.0, 1.0, 0), (48.0, 1.1, 1), (96.0, 1.2, 2), (144.0, 1.29, 3)]) == []


def test_rise_to_one_and_a_half_times_after_seven_days_is_quiet():
    # 0.9 -> 1.4 over 8 days (192 h): beyond the 7-day window and the 48 h window (KDIGO 2012)
    assert _unstable([(0.0, 0.9, 0), (192.0, 1.4, 1)]) == []


def test_baseline_is_the_lowest_value_in_the_window():
    # 1.2, 0.8 (a dip), 1.25 four days later: 1.25 >= 1.5 x 0.8 = 1.2 (KDIGO: baseline = lowest value)
    (a,) = [x for x in _unstable([(0.0, 1.2, 0), (24.0, 0.8, 1), (120.0, 1.25, 2)])
            if x.field == "patient.scr[2].value"]
    assert "from 0.8 mg/dL" in a.message


def test_rise_of_0_3_within_48_h_names_the_first_arm():
    # 1.0 -> 1.3 in 36 h (+30 %): the 0.3 mg/dL / 48 h arm (KDIGO 2012)
    (a,) = _unstable([(0.0, 1.0, 0), (36.0, 1.3, 1)])
    assert "0.3 mg/dL or more within 48 h" in a.message


def test_protocol_can_set_the_window():
    # a local protocol with a 3-day window: the 6-day climb above is no longer within it
    proto = protocol_from_tree({"common": {"renal": {"scr_change_rel_window_h": {"value": 72.0, "source": "local"}}}},
                               "x")
    series = [(0.0, 0.9, 0), (48.0, 1.1, 1), (96.0, 1.3, 2), (144.0, 1.5, 3)]
    assert _unstable(series, Rules("vancomycin", proto)) == []


@pytest.mark.parametrize("drug", ["vancomycin", "gentamicin", "tobramycin", "amikacin"])
def test_rule_values_come_from_the_library_with_kdigo_as_source(drug):
    r = Rules(drug)
    assert (r.value("renal.scr_change_abs_mg_dl"), r.value("renal.scr_change_window_h"),
            r.value("renal.scr_change_rel"), r.value("renal.scr_change_rel_window_h")) == (0.3, 48.0, 0.5, 168.0)
    for key in ("renal.scr_change_abs_mg_dl", "renal.scr_change_rel", "renal.scr_change_rel_window_h"):
        assert "KDIGO" in r.citation(key)
