"""A proposal a ward can carry out: holds named by clock time, times on the grid, sensible candidates.

Outside references beside each check: the 2020 vancomycin consensus guideline's AUC24 band
(Rybak 2020, 400-600 mg*h/L), the hold limit's source (pk-sources.md 3.2), first-order decay worked
by hand (pk-sources.md 2.1), a numerical ODE solution (scipy solve_ivp, in test_regimen_simulation),
ISO 8601 clock arithmetic, and "common practice" where that is the truth (grid, ward hours).
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from tdmtui.core.input.case import load_case
from tdmtui.core.input.casetypes import Target
from tdmtui.core.input.clock import Clock
from tdmtui.core.compute import compute
from tdmtui.core.library import Rules
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.text.note import render_note
from tdmtui.core.regimen import CurrentRegimen, design
from tdmtui.core.regimen import wardclock

from casedata import SAMPLES
from regimen_cases import CLOCK, T0, inp, rules
from test_regimen_simulation import ode


def result(name: str, protocol=None) -> dict:  # noqa: ANN001
    return compute(load_case(SAMPLES / f"{name}.json"), protocol).result


def flat(text: str) -> str:
    return " ".join(text.split())


def minutes(text: str) -> str:
    return text[14:16]


# ---------------------------------------------------------------- item 2: holds a pharmacist would write

def test_hold_names_the_skipped_doses_by_clock_time() -> None:
    """sample_cases/vanc-hold-two-doses.json: 1500 mg q8h written for q12h; trough 43.3 mg/L at 05:30.

    By hand (first-order decay, pk-sources.md 2.1): ke = ln(57.5/43.3) / 4.5 h = 0.0630 /h; the level
    falls from 43.3 to the hold limit 20 mg/L (library, pk-sources.md 3.2: AKI odds rise above 20 mg/L)
    in ln(43.3/20) / 0.0630 = 12.3 h, i.e. at about 17:45; on the half-hour grid (common practice) the
    hold ends at 18:00, so the 06:00 and 14:00 doses are held.
    """
    ke = math.log(57.5 / 43.3) / 4.5
    t_fall = 5.5 + math.log(43.3 / 20.0) / ke  # hours after midnight on 17 September
    assert 17.5 < t_fall < 18.0
    res = result("vanc-hold-two-doses")
    reg = res["regimen"]
    assert reg["action"] == "hold-then-change"
    assert reg["hold_until"] == "2026-09-17T18:00" == reg["next_dose_at"]
    assert reg["skipped_doses"] == ["2026-09-17T06:00", "2026-09-17T14:00"]
    note = flat(render_note(compute(load_case(SAMPLES / "vanc-hold-two-doses.json"))))
    assert ("Hold the 06:00 and 14:00 doses on 2026-09-17 (level predicted above 20 mg/L until 18:00, the next dose "
            "if a level at 17:30 is below 20 mg/L)") in note  # the restart waits on a level (test_restart_check.py)
    # aims at the middle of 400-600 (Rybak 2020): 1000 mg q12h, not the bottom of the band (500 mg q8h, 426)
    assert 500.0 <= reg["predicted"]["auc24_mg_h_per_l"] <= 600.0


def test_a_dose_dropped_by_a_longer_interval_is_named_never_no_hold() -> None:
    """vanc-loading-early: 750 mg q12h with AUC24 616 becomes a q24h dose timed from the last dose,
    which drops the 08:00 dose: the note says so instead of "No hold"."""
    reg = result("vanc-loading-early")["regimen"]
    assert reg["hold_until"] is None and reg["skipped_doses"] == ["2026-02-10T08:00"]
    note = flat(render_note(compute(load_case(SAMPLES / "vanc-loading-early.json"))))
    assert "Do not give the current order's 08:00 dose on 2026-02-10; next dose 2026-02-10 20:00" in note
    assert "No hold" not in note


def test_slightly_high_auc_aims_at_the_middle_without_a_hold() -> None:
    """AUC24 616 for 400-600 (Rybak 2020): the choice lands within the middle half of the band
    (library regimen.keep_interval_within_rel 0.25: 450-550) and there is no hold (the level due,
    20.2 mg/L at 08:00 by first-order decay from 20.7 mg/L at 07:30 with ke 0.0536 /h, rounds to
    a hold under the library's 1 h minimum)."""
    assert 20.7 * math.exp(-0.0536 * 0.5) == pytest.approx(20.15, abs=0.01)
    res = result("vanc-loading-early")
    assert res["estimate"]["current"]["auc24_mg_h_per_l"] == pytest.approx(616.0, abs=1.0)
    reg = res["regimen"]
    assert 450.0 <= reg["predicted"]["auc24_mg_h_per_l"] <= 550.0
    assert reg["action"] == "change"


def test_the_hold_limit_is_library_data_with_its_source() -> None:
    for drug, value in (("vancomycin", 20.0), ("gentamicin", 2.0), ("tobramycin", 2.0), ("amikacin", 8.0)):
        r = Rules(drug)
        assert float(r.value("regimen.hold_above_mg_l")) == value
        assert "KDIGO" in r.citation("regimen.hold_above_mg_l") or "20 mg/L" in r.citation("regimen.hold_above_mg_l")


def test_an_aminoglycoside_hold_uses_the_lower_trough_ceiling() -> None:
    """Gentamicin 300 mg q8h, W3 patient (ke 0.154 /h, V 25.1 L, pk-sources.md W3): the level due is
    above the 2 mg/L trough ceiling (KDIGO 2012); the hold ends where the ODE curve is at or under it."""
    gent = PKParams.one_compartment(0.1544, 25.1)
    hist = DoseArrays.regimen(T0, 300.0, 8.0, 0.5, 6)
    case = inp("gentamicin", gent, hist, as_of=float(hist.start[-1]) + 7.0, current=CurrentRegimen(300.0, 8.0, 0.5),
               target=Target(peak=(6.0, 10.0), trough=(0.5, 2.0)))
    reg = design(case).regimen
    due = float(hist.start[-1]) + reg["interval_h"]
    assert ode(gent, hist, np.array([due]))[0][0] > 2.0
    assert reg["action"] == "hold-then-change" and reg["hold_level_mg_l"] == 2.0
    t = CLOCK.parse(reg["hold_until"], "t")
    before, at = ode(gent, hist, np.array([t - 0.5, t]))[0]
    assert before > 2.0 >= at
    assert reg["skipped_doses"] == [CLOCK.format(float(hist.start[-1]) + 8.0)]


# ---------------------------------------------------------------- item 3: clock times on the grid

def test_grid_rounds_on_the_wall_clock() -> None:
    """ISO 8601: 10:07+05:45 up to the half hour is 10:30+05:45 (not 10:15 local, which a UTC grid gives)."""
    clock = Clock("offset", out_offset="+05:45")
    r = Rules("vancomycin")
    t = clock.parse("2026-04-01T10:07+05:45", "t")
    assert clock.format(wardclock.to_grid(t, r, clock, "up")) == "2026-04-01T10:30+05:45"
    assert clock.format(wardclock.to_grid(t, r, clock, "down")) == "2026-04-01T10:00+05:45"
    assert clock.format(wardclock.to_grid(t, r, clock, "nearest")) == "2026-04-01T10:00+05:45"
    r15 = rules("vancomycin", regimen__time_grid_min=15.0)
    assert clock.format(wardclock.to_grid(t, r15, clock, "up")) == "2026-04-01T10:15+05:45"
    r0 = rules("vancomycin", regimen__time_grid_min=0.0)
    assert wardclock.to_grid(t, r0, clock, "up") == t


@pytest.mark.parametrize("name", ["vanc-steady-state", "vanc-hold-two-doses", "gent-peak-trough", "vanc-late-dose"])
def test_next_dose_hold_and_levels_fall_on_the_half_hour(name: str) -> None:
    """Library grid 30 min (common practice): every proposed time of the plan is on :00 or :30."""
    reg = result(name)["regimen"]
    times = [reg["next_dose_at"]] + ([reg["hold_until"]] if reg["hold_until"] else []) + \
        [x["at"] for x in reg["next_levels"]]
    assert all(minutes(t) in ("00", "30") for t in times), times


def test_the_steady_state_peak_is_not_booked_at_night() -> None:
    """vanc-steady-state (W5 patient): the tool booked a peak at 03:09; the peak and trough are now
    in ward hours (library 07:00-22:00, common practice), still around one dose at steady state."""
    reg = result("vanc-steady-state")["regimen"]
    for nl in reg["next_levels"]:
        hh = int(nl["at"][11:13]) + int(nl["at"][14:16]) / 60.0
        assert 7.0 <= hh <= 22.0, nl


def test_gentamicin_pair_moves_to_trough_before_and_peak_after_one_dose() -> None:
    """gent-peak-trough: q12h from 02:00 puts the 3rd-dose peak at 03:00; a trough before and a peak
    after dose 4 read the same steady-state interval (pk-sources.md 2.3) in ward hours."""
    reg = result("gent-peak-trough")["regimen"]
    kinds = [(nl["kind"], re.search(r"dose (\d+)", nl["dose"]).group(1)) for nl in reg["next_levels"]]
    assert kinds == [("trough", "4"), ("peak", "4")]
    assert [nl["at"][11:] for nl in reg["next_levels"]] == ["13:30", "15:00"]


def test_aligning_to_administration_times_warns_when_the_first_day_drops_below_target() -> None:
    """W5 patient (ke 0.0827 /h, V 51.6 L) on 2250 mg q12h, protocol administration time 09:00: the hold
    ends at 12:30 and alignment moves the first dose to 09:00 next day. The ODE reference (scipy solve_ivp)
    gives the AUC of the next 24 h under 400 (Rybak 2020 band) for the aligned start and above it for the
    nearer one; the warning names both and the regimen offers the nearer time."""
    vanc = PKParams.one_compartment(0.0827, 51.6)
    hist = DoseArrays.regimen(T0, 2250.0, 12.0, 2.5, 8)
    case = inp("vancomycin", vanc, hist, as_of=float(hist.start[-1]) + 11.0, current=CurrentRegimen(2250.0, 12.0, 2.5),
               method="two-level", r=rules("vancomycin", regimen__admin_times=["09:00"]))
    plan = design(case)
    reg = plan.regimen
    assert reg["next_dose_at"][11:] == "09:00"
    nearer = reg["nearer_start"]
    assert nearer["next_dose_at"] == reg["hold_until"]

    def day1(first: float) -> float:
        doses = hist.concat(DoseArrays.regimen(first, reg["dose_mg"], reg["interval_h"], reg["infusion_h"], 4))
        aucs = ode(vanc, doses, np.array([case.as_of, case.as_of + 24.0]))[1]
        return float(aucs[1] - aucs[0])

    aligned, near = day1(CLOCK.parse(reg["next_dose_at"], "t")), day1(CLOCK.parse(nearer["next_dose_at"], "t"))
    assert aligned < 400.0 < near
    assert reg["forecast_auc"]["day1_mg_h_per_l"] == pytest.approx(aligned, rel=1e-4)
    assert nearer["day1_mg_h_per_l"] == pytest.approx(near, rel=1e-4)
    gap = [a for a in plan.alerts if a.code == "alignment-gap"]
    assert len(gap) == 1 and f"{aligned:.0f} mg*h/L" in gap[0].message and nearer["next_dose_at"] in gap[0].message


def test_no_alignment_warning_without_administration_times() -> None:
    vanc = PKParams.one_compartment(0.0827, 51.6)
    hist = DoseArrays.regimen(T0, 2250.0, 12.0, 2.5, 8)
    case = inp("vancomycin", vanc, hist, as_of=float(hist.start[-1]) + 11.0, current=CurrentRegimen(2250.0, 12.0, 2.5))
    plan = design(case)
    assert "nearer_start" not in plan.regimen and not [a for a in plan.alerts if a.code == "alignment-gap"]


# ---------------------------------------------------------------- item 7: candidates a clinician would consider

@pytest.mark.parametrize("name", ["vanc-obese", "vanc-steady-state"])
def test_intervals_follow_the_half_life(name: str) -> None:
    """Half-life about 8 h: the tool offered 750 mg q6h and 3000 mg q24h (vanc-obese) or 500 mg q6h and
    2250 mg q24h (vanc-steady-state). Library rule (common practice, from memory): vancomycin every
    0.8-2 half-lives, i.e. q8h or q12h at 8 h; the current interval is always weighed."""
    res = result(name)
    half = res["estimate"]["half_life_h"]
    assert 7.5 < half < 9.0
    reg = res["regimen"]
    intervals = {reg["interval_h"]} | {a["interval_h"] for a in reg["alternatives"]}
    assert intervals <= {8.0, 12.0}, intervals


def test_extended_interval_options_keep_the_patients_infusion_time() -> None:
    """gent-extended: 560 mg over 1 h; the library's minimum is 30 min. Every option keeps 1 h
    (common practice; library extended.keep_infusion) unless the protocol says otherwise."""
    reg = result("gent-extended")["regimen"]
    assert reg["alternatives"] and all(a["infusion_h"] == 1.0 for a in [reg, *reg["alternatives"]])
    from tdmtui.core.library import Protocol

    proto = Protocol("test", "0" * 64, {"gentamicin": {"extended.keep_infusion": (False, "test protocol")}})
    reg2 = result("gent-extended", proto)["regimen"]
    assert all(a["infusion_h"] == 0.5 for a in reg2["alternatives"])


@pytest.mark.parametrize("name", ["vanc-late-dose", "amikacin"])
def test_continue_books_one_trough(name: str) -> None:
    """Continuing on target (library monitoring.levels '<mode>/continue', common practice): one trough,
    not a new peak and trough."""
    reg = result(name)["regimen"]
    assert reg["action"] == "continue"
    assert [nl["kind"] for nl in reg["next_levels"]] == ["trough"]


def test_a_change_still_books_the_methods_pair() -> None:
    """A changed regimen on a two-level estimate keeps the library's peak and trough (Rybak 2020)."""
    reg = result("vanc-steady-state")["regimen"]
    assert reg["action"] == "change" and sorted(nl["kind"] for nl in reg["next_levels"]) == ["peak", "trough"]
