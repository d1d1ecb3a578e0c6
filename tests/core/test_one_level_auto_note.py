"""Invented one-level cases of every drug: auto uses the level and the note says which method and why.

Rule checked (the 2020 vancomycin consensus guideline's usual case, a Bayesian estimate from one trough,
Rybak 2020, from memory; common practice for the aminoglycosides' one random level): when a usable level
exists, the method used is not the population estimate, the level is among those used, no
``levels-unused`` warning is raised, and the note's Method line carries the engine's one-sentence reason.
All cases are invented.
"""

from __future__ import annotations

import re

import pytest

from tdmtui.core.compute import compute_raw
from tdmtui.core.text.note import render_note


def _t(h: float) -> str:
    day, rem = divmod(8.0 + h, 24.0)
    return f"2026-03-{1 + int(day):02d}T{int(rem):02d}:{int(round((rem % 1) * 60)):02d}"


def _case(drug, patient, amount, every, duration, n, level_h, conc, **level):
    return {"format": "tdmtui.case/1", "drug": drug, "as_of": _t(level_h + 0.5), "timezone": "UTC",
            "patient": patient,
            "doses": [{"start": _t(every * i), "amount": amount, "duration": duration} for i in range(n)],
            "levels": [{"time": _t(level_h), "conc": conc, **level}],
            "schedule": {"interval": f"{every:g} h", "dose": amount, "duration": duration}, "method": "auto"}


ADULT = {"age": "58 yr", "sex": "male", "weight": "78 kg", "height": "176 cm", "scr": "1.0 mg/dL"}
WOMAN = {"age": "67 yr", "sex": "female", "weight": "64 kg", "height": "163 cm", "scr": "0.9 mg/dL"}
CASES = {
    "vancomycin trough before dose 4": _case("vancomycin", ADULT, "1250 mg", 12.0, "90 min", 3, 35.5, "13.8 mg/L"),
    "vancomycin after one dose": _case("vancomycin", WOMAN, "1500 mg", 12.0, "90 min", 1, 10.0, "11.2 mg/L"),
    "vancomycin below the limit": _case("vancomycin", ADULT, "1000 mg", 12.0, "60 min", 3, 35.5, "4.0 mg/L",
                                        below_loq=True),
    "gentamicin random level q24h": _case("gentamicin", WOMAN, "320 mg", 24.0, "30 min", 1, 10.0, "3.1 mg/L"),
    "gentamicin trough q8h": _case("gentamicin", ADULT, "120 mg", 8.0, "30 min", 4, 31.5, "1.4 mg/L"),
    "tobramycin random level q24h": _case("tobramycin", ADULT, "400 mg", 24.0, "30 min", 1, 9.0, "4.4 mg/L"),
    "amikacin random level q24h": _case("amikacin", WOMAN, "1000 mg", 24.0, "30 min", 1, 8.0, "9.5 mg/L"),
}


@pytest.mark.parametrize("name", list(CASES))
def test_auto_uses_the_one_level_and_the_note_says_why_in_one_sentence(name):
    out = compute_raw(CASES[name])
    res = out.result
    assert res["method"] != "population", (res["method"], res["methods_unavailable"])
    assert res["estimate"]["levels_used"] == ["levels[0]"]
    assert "levels-unused" not in {w["code"] for w in res["warnings"]}
    why = res["method_reason"]
    # one sentence: a single full stop, at the end (decimals like "0.5" are not sentence ends)
    assert why.endswith(".") and not re.search(r"\.\s", why[:-1]), why
    note = " ".join(render_note(out).split())
    method_line = re.search(r"Method: (.*?)(?= Estimate: )", note)
    assert method_line is not None, note
    assert " ".join(why.split())[:40] in method_line.group(1).replace("#1", "levels[0]") or \
        " ".join(why.split())[:40] in method_line.group(1)


def test_a_single_model_average_is_named_by_its_model():
    # gentamicin has one population model in the library (Staatz 2006): its "average" is that model alone,
    # so the note names the model, not "the model average", and one level is "it", not "them"
    out = compute_raw(CASES["gentamicin random level q24h"])
    res = out.result
    assert list(res["estimate"]["model"]["weights"]) == ["gentamicin-staatz-2006"]
    assert res["estimate"]["model"]["name"].startswith("Staatz 2006")
    assert "combines it with" in res["method_reason"] and "model average" not in res["method_reason"]
    assert "bayesian (Staatz 2006)" in render_note(out)


def test_a_level_below_the_limit_is_called_a_bound_in_the_reason():
    # a censored level enters the Bayesian likelihood as P(below the limit) (Beal M3, from memory): the
    # sentence must not call it a measured value
    res = compute_raw(CASES["vancomycin below the limit"]).result
    assert res["method"] == "bayesian"
    assert res["method_reason"].startswith("one level, reported beyond the assay limit and used as a bound")
