"""Every warning code fires where it should and stays quiet on a clean case (one table).

Each row builds two invented cases: a clean one the code must not appear on, and the same
scenario with the one thing that should raise it. Where the clinical line comes from outside
the project the row names it; the rest are the case contract's checks (case-format.md
"warnings"). The completeness test below lists the codes of the modules the table covers.
"""

from __future__ import annotations

import copy
import json
from typing import Any, Callable

import pytest

from casedata import SAMPLES, base_case

from tdmtui.core.patient import checks
from tdmtui.core.course import history as course
from tdmtui.core.regimen import exposure
from tdmtui.core.compute import compute_raw
from tdmtui.core.errors import InputError

Raw = dict[str, Any]


def sample(name: str) -> Callable[[], Raw]:
    return lambda: json.loads((SAMPLES / name).read_text("utf-8"))


def base() -> Raw:
    return base_case()


def edit(make: Callable[[], Raw], change: Callable[[Raw], None]) -> Callable[[], Raw]:
    def build() -> Raw:
        raw = copy.deepcopy(make())
        change(raw)
        return raw
    return build


def put(path: str, value: Any) -> Callable[[Raw], None]:
    keys = [int(k) if k.isdigit() else k for k in path.split(".")]

    def change(raw: Raw) -> None:
        node = raw
        for k in keys[:-1]:
            node = node[k]
        node[keys[-1]] = value
    return change


def both(*changes: Callable[[Raw], None]) -> Callable[[Raw], None]:
    def change(raw: Raw) -> None:
        for c in changes:
            c(raw)
    return change


def _amikacin_once_daily(censored: bool) -> Callable[[Raw], None]:
    def change(raw: Raw) -> None:
        raw["drug"] = "amikacin"
        raw["doses"][0]["amount"] = raw["schedule"]["dose"] = "1200 mg"
        if censored:
            raw["levels"][0].update(below_loq=True, conc="1 mg/L")
    return change


def _append(name: str, row: Any) -> Callable[[Raw], None]:
    return lambda raw: raw[name].append(copy.deepcopy(row) if not isinstance(row, int) else copy.deepcopy(raw[name][row]))


ELDERLY_CLEAN = edit(sample("vanc-elderly-low-scr.json"), both(put("patient.age", "60 yr"), put("patient.conditions", [])))

#: code -> (severity, field or None, clean case, case that raises it, why / source)
TABLE: dict[str, tuple[str, str | None, Callable[[], Raw], Callable[[], Raw], str]] = {
    # course checks (case-format.md "usable level" and the course rules)
    "level-in-infusion": ("caution", "levels[1].time", base, edit(base, put("levels.1.time", "2026-03-03T09:00")),
                          "drawn during the 08:00-09:30 infusion"),
    "level-in-distribution": ("caution", "levels[1].time", base, edit(base, put("levels.1.time", "2026-03-03T10:00")),
                              "30 min after the end: inside vancomycin's 1 h window (common practice)"),
    "level-zero": ("caution", "levels[1].conc", base, edit(base, put("levels.1.conc", "0 mg/L")), "a 0 result"),
    "level-implausible": ("stop", "levels[1].conc", base, edit(base, put("levels.1.conc", "31.2 mg/dL")),
                          "312 mg/L is above 150 mg/L (common practice)"),
    "level-set-aside": ("info", "levels[0].use", base,
                        edit(base, both(put("levels.0.use", False), put("levels.0.reason", "haemolysed"))), "use: false"),
    "level-censored": ("info", "levels[0].conc", base,
                       edit(base, both(put("levels.0.below_loq", True), put("levels.0.conc", "2 mg/L"))), "below LOQ"),
    "levels-rising": ("stop", "levels[2].conc", base,
                      edit(base, _append("levels", {"time": "2026-03-03T19:00", "conc": "40 mg/L"})),
                      "40 mg/L 8 h after 31.2 with no dose between"),
    "doses-overlap": ("caution", "doses[2].start", base, edit(base, put("doses.2.start", "2026-03-02T21:00")),
                      "starts before the 20:00-21:30 infusion ends"),
    "dose-implausible": ("stop", "doses[2].amount", base, edit(base, put("doses.2.amount", "12500 mg")),
                         "136 mg/kg: a tenfold slip"),
    "duplicate-dose": ("caution", "doses[3]", base, edit(base, _append("doses", 2)), "the same row twice"),
    "duplicate-level": ("caution", "levels[2]", base, edit(base, _append("levels", 1)), "the same row twice"),
    "after-as-of": ("caution", "levels[2].time", base,
                    edit(base, _append("levels", {"time": "2026-03-03T22:00", "conc": "20 mg/L"})), "after as_of"),
    "clock-change": ("caution", "timezone", sample("vanc-high-auc.json"),
                     edit(sample("vanc-high-auc.json"), lambda raw: raw.pop("timezone")),
                     "October course, no offsets or zone"),
    "no-current-regimen": ("caution", "schedule", base, edit(base, lambda raw: raw["doses"].pop(2)),
                           "one maintenance dose, no schedule"),
    "nonstandard-interval": ("info", "schedule.interval", base,
                             edit(base, put("schedule", {"interval": "10 h", "dose": "1250 mg", "duration": "90 min"})),
                             "10 h is not a standard interval"),
    "timing-not-actual": ("info", "levels[0].timing", base, edit(base, put("levels.0.timing", "uncertain")), "uncertain"),
    # patient checks
    "age-out-of-range": ("stop", "patient.age", base, edit(base, put("patient.age", "16 yr")),
                         "under 18 yr: out of the adult population (common practice)"),
    "renal-replacement": ("stop", "patient.renal_replacement", base,
                          edit(base, put("patient.renal_replacement", "ihd")), "haemodialysis"),
    "condition": ("caution", "patient.conditions[0]", base, edit(base, put("patient.conditions", ["pregnancy"])),
                  "a documented condition"),
    "nephrotoxin": ("caution", "patient.comedications[0]", base,
                    edit(base, put("patient.comedications", ["furosemide"])), "loop diuretic (common practice)"),
    "mic-high": ("caution", "target.mic", base, edit(base, put("target", {"mic": "2 mg/L"})),
                 "MIC 2 mg/L (case contract)"),
    "obesity-extreme": ("caution", "patient.weight", base, edit(base, put("patient.weight", "203 kg")),
                        "BMI 64 >= 40 (common practice)"),
    "scr-low": ("caution", "patient.scr[0].value", ELDERLY_CLEAN, edit(ELDERLY_CLEAN, put("patient.age", "86 yr")),
                "SCr 0.5 mg/dL at 86 yr: C-G overstates (pk-sources.md 1.1, 1.4)"),
    "ibw-short-height": ("caution", "patient.height", base, edit(base, put("patient.height", "147 cm")),
                         "below 60 in: Devine IBW undefined (pk-sources.md 1.2)"),
    "scr-unstable": ("caution", "patient.scr[1].value", base, edit(base, put("patient.scr.1.value", "2.1 mg/dL")),
                     "1.1 -> 2.1 mg/dL in 48 h (KDIGO 2012 AKI)"),
    # high exposure (exposure.py)
    "auc-toxic": ("caution", "", base,
                  edit(base, both(put("levels.0.conc", "40 mg/L"), put("levels.1.conc", "55 mg/L"))),
                  "AUC24 above 800 (Zasowski 2017)"),
    "trough-high": ("caution", "levels[0].conc", base,
                    edit(base, both(put("levels.0.conc", "40 mg/L"), put("levels.1.conc", "55 mg/L"))),
                    "trough 40 mg/L above 20 (pk-sources.md 3.2)"),
    # method comparisons (methods.py, shapecheck.py, reconcile.py)
    "ke-vs-terminal-rate": ("caution", "levels", sample("vanc-steady-state.json"), sample("vanc-loading-early.json"),
                            "W5's peak and trough span the interval; day-2 levels do not"),
    "methods-disagree-bayesian": ("caution", "levels", sample("vanc-steady-state.json"),
                                  sample("vanc-continuous-levels.json"), "16 % apart on AUC24 (over 10 %)"),
    "methods-disagree-one-level": ("caution", "levels", sample("gent-peak-trough.json"), sample("gent-extended.json"),
                                   "one level and the population volume"),
    "levels-unused": ("caution", "method", edit(sample("gent-extended.json"), _amikacin_once_daily(False)),
                      edit(sample("gent-extended.json"), _amikacin_once_daily(True)),
                      "a censored level and no model to take it as a bound"),
    "nomogram-read": ("info", "levels[0]", sample("gent-peak-trough.json"), sample("gent-extended.json"),
                      "W6: 4.2 mg/L at 9 h reads q24h (Hartford, Nicolau 1995)"),
}

#: codes of the modules above whose fire-and-quiet pair lives in another test file
ELSEWHERE = {
    "auc-high": "tests/core/test_exposure.py::test_vancomycin_auc_703_is_high_not_toxic_and_settled_by_the_proposal",
    "peak-high": "tests/core/test_exposure.py::test_measured_peak_far_above_target_is_named",
    "level-before-first-dose": "now an input error: tests/core/test_input_plausibility.py",
}


@pytest.mark.parametrize("code", sorted(TABLE))
def test_code_fires_and_stays_quiet_on_the_clean_case(code):
    severity, fld, clean, fired, _why = TABLE[code]
    quiet = compute_raw(clean())
    assert code not in [a.code for a in quiet.alerts], [a.message for a in quiet.alerts if a.code == code]
    hits = [a for a in compute_raw(fired()).alerts if a.code == code]
    assert hits, code
    assert any(a.severity == severity and (fld is None or a.field == fld) for a in hits), \
        [(a.severity, a.field) for a in hits]


def test_every_code_of_the_covered_modules_has_a_row():
    codes = set(course.CODES) | set(checks.CODES) | set(exposure.CODES) | {"scr-unstable", "ibw-short-height"}
    missing = sorted(codes - set(TABLE) - set(ELSEWHERE))
    assert missing == []


def test_level_before_first_dose_is_an_input_error_not_a_caution():
    raw = base()
    raw["levels"][1]["time"] = "2025-03-03T11:00"
    with pytest.raises(InputError):
        compute_raw(raw)


def test_levels_unused_and_nomogram_read_never_contradict():
    from tdmtui.core.alerts import Alert
    from tdmtui.core.reconcile import settle

    unused = Alert("levels-unused", "caution", "method", "1 usable level(s) on record but the estimate used is the "
                   "population one, which ignores them: no method could use them here (see the methods not available)")
    read = Alert("nomogram-read", "info", "levels[0]", "1 mg/L at 9.0 h after the start of doses[0] reads q24h.")
    out = settle([unused, read])
    (u,) = [a for a in out if a.code == "levels-unused"]
    assert "no method could use" not in u.message and "read on the nomogram from levels[0]" in u.message
    assert settle([unused]) == [unused]
