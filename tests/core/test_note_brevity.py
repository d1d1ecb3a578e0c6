"""The chart note says each fact once: warnings of one cause as one caution, a shared UTC offset once.

Sources of the expected values:
- the note's limits: its contract (tdmtui/core/text/note.py docstring): at most 80 columns, a standard
  note at most 60 lines (tests/core/test_note.py), the longer renal-change and dialysis cases bounded here;
- the figures a merged caution gives: the result object (the engine's numbers), with the note's rounding
  (tdmtui/core/text/notefmt.py) restated as decimals;
- percentages and times: worked by hand from the sample case files, beside each check;
- the warning codes: the result keeps every code it raised (tests/core/test_warning_codes.py); only the
  note merges them.
"""

from __future__ import annotations

import copy
import json
import re
from functools import lru_cache

import pytest

from casedata import SAMPLES
from tdmtui.core.compute import compute, compute_raw
from tdmtui.core.input.case import load_case
from tdmtui.core.text.note import render_note

ALL = sorted(p.stem for p in SAMPLES.glob("*.json"))
#: Renal function changing, or doses around haemodialysis: more to say, a looser bound (lines). The cases
#: with doses held for high exposure also name the level their restart waits on.
LONGER = {"vanc-haemodialysis": 70, "vanc-rising-scr": 75, "vanc-aki-levels-after": 82, "gent-high-trough": 62}


@lru_cache(maxsize=None)
def outcome_of(name: str, method: str | None = None):
    return compute(load_case(SAMPLES / f"{name}.json"), method=method)


def flat(text: str) -> str:
    return " ".join(text.split())


def cautions(note: str) -> list[str]:
    """The bullets of the note's Warnings section, each as one line of text."""
    section = note.split("\nWARNINGS\n", 1)[1].split("\n\n", 1)[0]
    return [flat(b) for b in re.split(r"\n(?=- )", section) if b.startswith("- ")]


def codes(name: str) -> list[str]:
    return [w["code"] for w in outcome_of(name).result["warnings"]]


@pytest.mark.parametrize("name", sorted(LONGER))
def test_renal_change_and_dialysis_notes_stay_within_their_bound(name):
    lines = render_note(outcome_of(name)).splitlines()
    assert len(lines) <= LONGER[name], f"{name}: {len(lines)} lines"
    assert max(map(len, lines)) <= 80


@pytest.mark.parametrize("name", ["vanc-obese", "vanc-loading-early"])
def test_shape_and_disagreement_are_one_caution_that_does_not_contradict_the_plan(name):
    out = outcome_of(name)
    assert {"methods-disagree-bayesian", "ke-vs-terminal-rate"} <= set(codes(name))  # the result keeps both
    assert out.result["estimate"]["method"] == "two-level"  # the proposal shown rests on two-level
    note = render_note(out)
    about = [c for c in cautions(note) if "Bayesian" in c and "two-compartment" in c]
    assert len(about) == 1, about
    text = about[0]
    assert "base the regimen on the Bayesian estimate" not in flat(note)
    assert text.endswith("for a proposal on it choose method bayesian")
    # the figures are the Bayesian estimate's for the current regimen at steady state (3 significant
    # figures for the trough as the engine words it, AUC24 whole)
    bay = out.result["methods"]["bayesian"]["current"]
    m = re.search(r"the Bayesian estimate puts the current regimen at trough ([\d.]+) mg/L, AUC24 (\d+)", text)
    assert m, text
    assert float(m.group(1)) == pytest.approx(bay["trough_mg_per_l"], rel=5e-3)
    assert int(m.group(2)) == round(bay["auc24_mg_h_per_l"])
    # on method bayesian the same caution says the proposal rests on it
    again = [c for c in cautions(render_note(outcome_of(name, "bayesian"))) if "two-compartment" in c]
    assert len(again) == 1 and again[0].endswith("the proposal shown rests on it")
    # the full note keeps the rates behind it and the model average's weights
    full = flat(render_note(out, full=True))
    assert f"two-level ke {out.result['estimate']['ke_per_h']:.4f} /h" in full
    assert re.search(r"model average: Thomson 2009 \d+ %, Goti 2018 \d+ %", full)


def test_no_note_tells_the_reader_to_base_the_regimen_on_a_method_it_does_not_show():
    for name in ALL:
        out = outcome_of(name)
        if not str((out.result.get("estimate") or {}).get("method", "")).startswith("bayesian"):
            assert "base the regimen on the Bayesian estimate" not in flat(render_note(out)), name


def test_one_level_disagreements_are_one_caution():
    out = outcome_of("gent-extended")
    assert codes("gent-extended").count("methods-disagree-one-level") == 2
    about = [c for c in cautions(render_note(out)) if "differ from Bayesian" in c]
    assert len(about) == 1
    assert about[0].startswith("- CAUTION: one-level and one-level-steady-state each differ from Bayesian on AUC24")
    # the gap, from the result: |AUC24 one-level - AUC24 Bayesian| / the larger (estimation/methods.py);
    # the Bayesian estimate is the one used here (the nomogram gives the interval beside it)
    res = out.result["methods"]
    assert out.result["estimate"]["method"] == "bayesian"
    bay = out.result["estimate"]["current"]["auc24_mg_h_per_l"]
    gaps = {round(100 * abs(res[n]["current"]["auc24_mg_h_per_l"] - bay)
                  / max(res[n]["current"]["auc24_mg_h_per_l"], bay)) for n in ("one-level", "one-level-steady-state")}
    assert gaps == {int(g) for g in re.findall(r"(\d+)% (?:respectively )?\(over", about[0])}


@pytest.mark.parametrize("name, level", [("vanc-high-auc", 1), ("vanc-hold-two-doses", 2)])
def test_high_exposure_is_one_caution_with_both_findings(name, level):
    out = outcome_of(name)
    assert {"auc-toxic", "trough-high"} <= set(codes(name))
    about = [c for c in cautions(render_note(out)) if "hold the next dose" in c]
    assert len(about) == 1
    text = about[0]
    cur = out.result["estimate"]["current"]
    assert f"AUC24 {round(cur['auc24_mg_h_per_l'])} mg*h/L (above 800" in text
    assert f"trough {cur['trough_mg_per_l']:.1f} mg/L predicted for the current regimen" in text
    measured = out.case.levels[level - 1].conc
    assert f"measured trough {measured:.1f} mg/L (level {level})" in text


def test_rises_of_scr_from_one_baseline_are_one_caution():
    assert codes("vanc-aki-levels-after").count("scr-unstable") == 2
    about = [c for c in cautions(render_note(outcome_of("vanc-aki-levels-after"))) if "SCr rose" in c]
    assert len(about) == 1
    # sample case: 0.8 mg/dL on 05-11, 1.2 on 05-13 (+50 % in 48 h), 1.6 on 05-14 (+100 % in 72 h), by hand
    assert "SCr rose from 0.8 to 1.2 mg/dL (+50 %) in 48 h" in about[0]
    assert "and to 1.6 mg/dL (+100 %) in 72 h" in about[0]


def test_nephrotoxins_are_named_in_one_caution():
    assert codes("vanc-rising-scr").count("nephrotoxin") == 2
    about = [c for c in cautions(render_note(outcome_of("vanc-rising-scr"))) if "nephrotoxic" in c]
    assert about == ["- CAUTION: piperacillin-tazobactam and furosemide with vancomycin: added nephrotoxic "
                     "risk; monitor SCr closely"]


def test_frailty_is_said_by_the_low_scr_caution():
    assert {"condition", "scr-low"} <= set(codes("vanc-elderly-low-scr"))
    shown = cautions(render_note(outcome_of("vanc-elderly-low-scr")))
    assert not any(c.startswith("- CAUTION: frailty:") for c in shown)
    low = [c for c in shown if "low muscle mass" in c]
    assert len(low) == 1 and "with age 86 yr and frailty" in low[0]
    assert "scr_floor_mg_dl" not in low[0] and "crcl_cap_ml_min" not in low[0]  # protocol settings stay there


def test_a_shared_utc_offset_is_said_once():
    note = render_note(outcome_of("tobra-us-units"))
    assert "Assessed as of 2026-01-28 14:00 (times UTC-06:00)." in note
    assert note.count("-06:00") == 1
    # the sample's doses start 2026-01-26T06:00-06:00 every 8 h: the run written in local time
    assert "2026-01-26 06:00 to 01-28 06:00" in note


def test_a_time_entered_at_another_offset_is_converted_and_the_header_says_so():
    raw = json.loads((SAMPLES / "tobra-us-units.json").read_text("utf-8"))
    changed = copy.deepcopy(raw)
    # 2026-01-25T06:00-05:00 is 11:00 UTC, the same instant as 05:00-06:00 (by hand)
    changed["patient"]["scr"][0]["time"] = "2026-01-25T06:00-05:00"
    note = render_note(compute_raw(changed))
    assert "(times UTC-06:00; those entered at another offset converted to it)" in flat(note)
    assert "1 on 2026-01-25 05:00" in note and "-05:00" not in note
    assert render_note(compute_raw(raw)).count("converted") == 0


def test_a_loading_dose_basis_names_its_source_and_the_full_note_cites_it_once():
    out = outcome_of("vanc-elderly-low-scr")
    note, full = flat(render_note(out)), render_note(out, full=True)
    assert "loading dose 1250 mg over 1 h 30 min at 2026-04-14 10:00: 25 mg/kg x 48 kg actual body weight" in note
    assert "Health-Syst Pharm" not in note  # the journal reference: the full note's references
    refs = full.split("REFERENCES\n", 1)[1]
    assert flat(refs).count("2020;77:835-864") == 1


@pytest.mark.parametrize("name", ALL)
def test_no_caution_is_given_twice(name):
    shown = cautions(render_note(outcome_of(name)))
    assert len(shown) == len(set(shown)), name


def _warning(code: str, message: str) -> dict[str, str]:
    return {"code": code, "severity": "caution", "field": "levels", "message": message}


def test_advice_to_follow_the_bayesian_estimate_says_how_to_get_a_proposal_on_it():
    from types import SimpleNamespace

    from tdmtui.core.estimation.shapecheck import disagreement_advice
    from tdmtui.core.text.notewarn import cautions as note_cautions

    # the engine's methods-disagree-bayesian when a level's time is not exact (estimation/shapecheck.py)
    ctx = SimpleNamespace(case=SimpleNamespace(levels=[SimpleNamespace(index=0, timing="actual"),
                                                       SimpleNamespace(index=1, timing="uncertain")]))
    two_level = SimpleNamespace(levels_used=[0, 1])
    for used, tail in (("two-level", "; for a proposal on it choose method bayesian"),
                       ("bayesian", "; the proposal shown rests on it")):
        advice = disagreement_advice(ctx, two_level, used, shape=False)  # type: ignore[arg-type]
        raised = [_warning("methods-disagree-bayesian", "two-level and Bayesian (Thomson 2009) differ on AUC24 by "
                           f"15% (over 10%): {advice}")]
        [(_, text)] = note_cautions({"estimate": {"method": used}, "warnings": raised}, raised)
        assert "rests on level 2 whose time is not exact: follow the Bayesian estimate" in text
        assert text.endswith(tail) and text.count("choose method bayesian") <= 1


def test_warnings_a_merge_does_not_recognise_are_given_as_raised():
    from tdmtui.core.text.notewarn import cautions as note_cautions

    raised = [_warning("nephrotoxin", "furosemide with vancomycin: added nephrotoxic risk; monitor SCr closely"),
              _warning("nephrotoxin", "contrast with vancomycin: a different wording")]
    shown = [text for _, text in note_cautions({"warnings": raised}, raised)]
    assert shown == [w["message"] for w in raised]


@pytest.mark.parametrize("name", ["amikacin", "gent-extended", "vanc-obese", "vanc-late-dose"])
def test_a_continued_regimen_is_predicted_once_and_keeps_its_reference_level_and_chance(name):
    res = outcome_of(name).result
    reg, cur = res["regimen"], res["estimate"]["current"]
    assert reg["action"] == "continue"
    for key, digits in (("peak_mg_per_l", 1), ("trough_mg_per_l", 1), ("auc24_mg_h_per_l", 0)):
        assert round(reg["predicted"][key], digits) == round(cur[key], digits), key  # so "as the current" holds
    text = flat(render_note(outcome_of(name)))
    m = re.search(r"Proposed: continue [^(]+\(predicted as the current([^)]*)\)", text)
    assert m, text
    extra = m.group(1)
    ref = reg["predicted"].get("peak_at_reference_mg_per_l")
    if ref is None:
        assert "after the start" not in extra
    else:
        assert f"{ref:.1f} mg/L at 1 h after the start" in extra
    prob = reg["predicted"].get("target_probability")
    if prob is not None:
        shown = re.search(r"chance of meeting the target (<?\d+) %", extra).group(1)
        assert shown == ("<1" if prob < 0.005 else str(round(100 * prob)))
    assert text.count("predicted at steady state") == 1  # the current regimen's, once
