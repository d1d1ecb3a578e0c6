"""Every library key the code asks for exists in each drug's library (or is listed as one the drug lacks).

The code reads library values by dotted key (``rules.value("regimen.rounding_mg")``). A key a
drug lacks would fail at run time or, with a fallback number in code, silently use a number
that is not in the library; so the code keeps no numeric fallback (checked here) and every
key it names is present for every drug, except the few below, which the code asks for only
after checking the drug's family or the key's presence (each with the reason).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from tdmtui.core.library import DRUGS, Rules

CORE = Path(__file__).resolve().parents[2] / "tdmtui" / "core"
AMINOGLYCOSIDES = ("gentamicin", "tobramycin", "amikacin")

_EXTENDED = "extended-interval dosing and its nomogram are for aminoglycosides only (choose_mode, regimen.extended)"
_VANC = "vancomycin only (read where the drug is vancomycin or after an `in rules` check)"
#: key -> (drugs that may lack it, why)
MAY_LACK: dict[str, tuple[tuple[str, ...], str]] = {
    **{k: (("vancomycin",), _EXTENDED) for k in (
        "extended.excluded_conditions", "extended.mg_per_kg", "extended.min_crcl_ml_min", "extended.min_interval_h",
        "nomogram.borderline_rel", "nomogram.dose_tolerance_rel", "nomogram.window_h",
        "regimen.extended_min_mg_per_kg", "loading.target_peak_mg_l", "dosing_weight.threshold")},
    "nomogram.q24_line": (("vancomycin", "amikacin"), "amikacin's chart comes from the local protocol; checked by `in rules`"),
    "nomogram.initial_interval": (("vancomycin", "amikacin"), "amikacin's chart comes from the local protocol"),
    **{k: (AMINOGLYCOSIDES, _VANC) for k in ("loading.max_mg", "loading.obese_bmi", "loading.obese_mg_per_kg",
                                             "monitoring.peak_after_end_h", "targets.mic_caution_mg_l",
                                             "loading.mg_per_kg")},
    "dosing_weight.adjusted_factor": (DRUGS, "optional: renal.adjusted_weight_factor when absent (patient.py)"),
    "targets.variants": (("vancomycin",), "optional indication variants; checked by `in rules`"),
    **{k: (AMINOGLYCOSIDES, _VANC) for k in ("exposure.auc24_toxic", "exposure.trough_high_mg_l",
                                             "regimen.obese_initial_max_daily_mg")},
    "dialysis.pre_dialysis_target_mg_l": (AMINOGLYCOSIDES, "no aminoglycoside pre-dialysis target in the library: "
                                          "an aminoglycoside on haemodialysis is a stop (regimen/dialysis.py)"),
    "dialysis.session_clearance_l_h": (DRUGS, "protocol only: no intradialytic clearance is confirmed in pk-sources.md; "
                                       "checked by rules.get, the fitted model carries the removal (dialysis.py)"),
    "extended.keep_infusion": (("vancomycin",), _EXTENDED),
}

_ASKED = re.compile(r'(?:\.value|\.get|\.source|\.citation)\(\s*"([a-z_]+\.[a-z0-9_.]+)"'
                    r'|"([a-z_]+\.[a-z0-9_.]+)" (?:not )?in (?:rules|r|inp\.rules|ctx\.rules|base\.rules)\b')
_NUMERIC_FALLBACK = re.compile(r'rules\.get\(\s*"[a-z_]+\.[a-z0-9_.]+",\s*(?:[-+]?[0-9.]+|math\.inf|float\("inf"\))')


def _sources() -> list[Path]:
    return [p for p in CORE.rglob("*.py") if "fhir" not in p.parts]


def asked_keys() -> set[str]:
    """Every dotted library key named in the core's code."""
    return {m.group(1) or m.group(2) for p in _sources() for m in _ASKED.finditer(p.read_text(encoding="utf-8"))}


def test_the_scan_finds_the_keys_the_code_reads():
    keys = asked_keys()
    assert {"regimen.rounding_mg", "levels.min_gap_h", "nomogram.borderline_rel", "mic.default_mg_l"} <= keys
    assert len(keys) > 50


@pytest.mark.parametrize("drug", DRUGS)
def test_every_key_the_code_asks_for_is_in_the_drugs_library(drug):
    rules = Rules(drug)
    missing = {k for k in asked_keys() if k not in rules and drug not in MAY_LACK.get(k, ((), ""))[0]}
    assert not missing, f"{drug}: {sorted(missing)}: add these to the library (value and source) or to MAY_LACK with the reason"


def test_each_listed_absence_is_real():
    for key, (drugs, _) in MAY_LACK.items():
        assert any(key not in Rules(d) for d in drugs), f"{key} is in every listed drug's library: drop it here"


def test_no_numeric_fallback_for_a_library_key_in_code():
    found = [f"{p.name}: {m.group(0)}" for p in _sources() for m in _NUMERIC_FALLBACK.finditer(p.read_text("utf-8"))]
    assert not found


def test_the_level_gap_and_amikacins_borderline_rule_come_from_the_library():
    for drug in DRUGS:
        rules = Rules(drug)
        assert rules.value("levels.min_gap_h") == pytest.approx(0.25)  # 15 min (common practice, design choice)
        assert rules.citation("levels.min_gap_h")
    amikacin = Rules("amikacin")
    assert amikacin.value("nomogram.borderline_rel") == pytest.approx(Rules("gentamicin").value("nomogram.borderline_rel"))
    assert "borderline" in amikacin.citation("nomogram.borderline_rel")
