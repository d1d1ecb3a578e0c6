"""Hartford extended-interval nomogram (Nicolau et al., AAC 1995;39:650-655; pk-sources.md 4.3).

Published values used: 7 mg/kg dose; one level 6-14 h after the start; initial interval
by CrCl >= 60 q24h, 40-59 q36h, 20-39 q48h (confirmed); the q24h line ~7.6 mg/L at 6 h and
~2.0 mg/L at 14 h (Lovering et al. letter, confirmed-secondary). Lines q36h/q48h come only
from a local protocol: the ones below are EXAMPLE values for the test, not the chart's.
"""

from __future__ import annotations

import pytest

from tdmtui.core.input.casetypes import Dose, Level
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen import design

from regimen_cases import T0, inp, rules

WEIGHT = 80.0  # kg dosing weight
DOSE = 7.0 * WEIGHT  # 560 mg = 7 mg/kg (Nicolau 1995)


def _case(conc: float, hours: float, amount: float = DOSE, drug: str = "gentamicin", r=None, **kw):  # noqa: ANN001
    doses = (Dose(0, T0, 1.0, amount),)
    levels = (Level(0, T0 + hours, conc),)
    hist = DoseArrays.from_lists([T0], [1.0], [amount])
    kw.setdefault("params", PKParams.one_compartment(0.194, 25.7))  # W6 patient (pk-sources.md 5)
    params = kw.pop("params")
    return inp(drug, params, hist, as_of=T0 + hours + 0.5, option="nomogram", doses=doses, levels=levels,
               dosing_weight_kg=WEIGHT, r=r, **kw)


def _codes(plan) -> list[tuple[str, str, str]]:  # noqa: ANN001
    return [(a.code, a.severity, a.field) for a in plan.alerts]


@pytest.mark.parametrize("hours,below,above", [(6.0, 7.2, 8.0), (14.0, 1.8, 2.3)])
def test_each_side_of_the_q24_line(hours: float, below: float, above: float) -> None:
    """q24h line 7.6 mg/L at 6 h, 2.0 mg/L at 14 h (pk-sources.md 4.3, confirmed-secondary)."""
    plan = design(_case(below, hours))
    assert plan.regimen["interval_h"] == 24.0  # below the line: q24h (Nicolau 1995)
    assert plan.regimen["nomogram"]["zone"] == "q24h"
    assert plan.regimen["dose_mg"] == DOSE
    plan = design(_case(above, hours))
    assert plan.regimen["nomogram"]["zone"] == "above-known-lines"  # above the line: not q24h
    codes = [a.code for a in plan.alerts]
    assert "nomogram-no-line" in codes and "nomogram-individualised" in codes
    assert plan.sources["nomogram_lines"] == {"q24h": "library"}


def test_w6_level_reads_q24() -> None:
    """W6 (pk-sources.md 5): 4.2 mg/L at 9 h < ~5.5 mg/L on the (straight) q24h line -> q24h."""
    plan = design(_case(4.2, 9.0))
    assert plan.regimen["interval_h"] == 24.0
    assert not plan.regimen["nomogram"]["borderline"]


def test_protocol_lines_and_their_sources() -> None:
    """Lines above q24h come from the local protocol; the reading says where each came from."""
    r = rules("gentamicin", nomogram__q36_line=[[6.0, 10.0], [14.0, 3.5]],  # EXAMPLE values only
              nomogram__q48_line=[[6.0, 12.5], [14.0, 5.0]])
    plan = design(_case(8.5, 6.0, r=r))
    assert plan.regimen["interval_h"] == 36.0
    assert plan.sources["nomogram_lines"] == {"q24h": "library", "q36h": "protocol", "q48h": "protocol"}
    plan = design(_case(11.0, 6.0, r=r))
    assert plan.regimen["interval_h"] == 48.0
    plan = design(_case(13.0, 6.0, r=r))
    assert plan.regimen is None
    assert ("nomogram-above-q48", "stop", "levels[0]") in _codes(plan)


def test_borderline_near_a_line_of_unconfirmed_shape() -> None:
    """At 10 h a straight q24h line reads 4.8 mg/L, a log-linear one 3.9 (sqrt(7.6 x 2.0)) [derived]."""
    plan = design(_case(4.3, 10.0))
    assert "nomogram-borderline" in [a.code for a in plan.alerts]
    assert "borderline: read your local chart" in next(a.message for a in plan.alerts if a.code == "nomogram-borderline")
    plan = design(_case(2.0, 10.0))
    assert "nomogram-borderline" not in [a.code for a in plan.alerts]


@pytest.mark.parametrize("change,field,words", [
    ({"amount": 5.0 * WEIGHT}, "doses[0].amount", "mg/kg"),               # dose is not 7 mg/kg
    ({"hours": 4.0}, "levels[0].time", "6-14 h"),                          # level outside 6-14 h
    ({"hours": 16.0}, "levels[0].time", "6-14 h"),
    ({"crcl_ml_min": 15.0}, "patient.scr", "CrCl"),                        # CrCl < 20 mL/min
    ({"renal_replacement": "ihd"}, "patient.renal_replacement", "renal replacement"),
    ({"conditions": ("pregnancy",)}, "patient.conditions", "pregnancy"),    # excluded condition
    ({"conditions": ("endocarditis",)}, "patient.conditions", "endocarditis"),
    ({"drug": "amikacin"}, "drug", "no nomogram"),                          # no chart in the library
])
def test_each_entry_check_refuses(change: dict, field: str, words: str) -> None:
    """Entry checks (Nicolau 1995; usual exclusions pk-sources.md 4.3): a stop naming the failed check."""
    kw = dict(change)
    amount = kw.pop("amount", DOSE)
    hours = kw.pop("hours", 9.0)
    drug = kw.pop("drug", "gentamicin")
    plan = design(_case(3.0, hours, amount=amount, drug=drug, **kw))
    assert plan.regimen is None
    stops = [a for a in plan.alerts if a.severity == "stop"]
    assert any(a.code == "nomogram-entry" and a.field == field and words in a.message for a in stops), stops


@pytest.mark.parametrize("crcl,interval", [(95.0, 24.0), (60.0, 24.0), (59.0, 36.0), (40.0, 36.0),
                                           (39.0, 48.0), (20.0, 48.0)])
def test_initial_interval_by_crcl(crcl: float, interval: float) -> None:
    """Hartford initial interval: >= 60 q24h, 40-59 q36h, 20-39 q48h (Nicolau 1995, confirmed)."""
    case = inp("gentamicin", PKParams.one_compartment(0.1, 25.0), option="nomogram", dosing_weight_kg=WEIGHT,
               crcl_ml_min=crcl)
    plan = design(case)
    assert plan.regimen["interval_h"] == interval
    assert plan.regimen["dose_mg"] == DOSE


def test_vancomycin_has_no_nomogram() -> None:
    plan = design(inp("vancomycin", PKParams.one_compartment(0.08, 50.0), option="nomogram"))
    assert plan.regimen is None
    assert ("nomogram-entry", "stop", "method") in _codes(plan)


def test_new_start_below_20_is_refused() -> None:
    case = inp("gentamicin", PKParams.one_compartment(0.05, 25.0), option="nomogram", dosing_weight_kg=WEIGHT,
               crcl_ml_min=18.0)
    plan = design(case)
    assert plan.regimen is None
    assert ("nomogram-entry", "stop", "patient.scr") in _codes(plan)


def test_nomogram_without_an_estimate_still_reads() -> None:
    """The chart needs no kinetic estimate: the interval and dose stand, predictions are empty."""
    plan = design(_case(1.5, 12.0, params=None))
    assert plan.regimen["interval_h"] == 24.0
    assert plan.regimen["predicted"] == {}


def test_standing_order_on_the_read_interval_continues() -> None:
    """7 mg/kg q24h and a level under the q24h line: carry on with the order as written."""
    from tdmtui.core.regimen import CurrentRegimen

    plan = design(_case(4.2, 9.0, current=CurrentRegimen(DOSE, 24.0, 1.0)))
    reg = plan.regimen
    assert reg["action"] == "continue"
    assert (reg["dose_mg"], reg["interval_h"], reg["infusion_h"]) == (DOSE, 24.0, 1.0)
    assert reg["next_dose_at"] == "2026-03-02T08:00"
