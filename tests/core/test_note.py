"""The chart note: golden files, printed numbers against the result, layout and the CLI.

Sources of the expected values:
- golden files: tests/golden/*.txt, written by tests/golden/regenerate.py and
  read by a person before commit (a change in them must be intended);
- printed figures: the result dict, with the note's documented rounding rule
  (tdmtui/core/text/notefmt.py) restated here as a number of decimals per figure;
- level timing: clock arithmetic on the case times, worked by hand below;
- steady-state share: the accumulation factor 1 - e^(-n ke tau) of a constant
  regimen (pk-sources.md 2.3, standard one-compartment equations);
- digests: hashlib.sha256 over the case bytes.
"""

from __future__ import annotations

import difflib
import hashlib
import json
import math
import os
import re
import subprocess
import sys
from functools import lru_cache
from pathlib import Path
from types import SimpleNamespace

import pytest

from casedata import ROOT, SAMPLES, base_case
from tdmtui.cli import main
from tdmtui.core.text import notefmt
from tdmtui.core.input.case import load_case
from tdmtui.core.compute import compute, compute_raw
from tdmtui.core.models import PKParams
from tdmtui.core.text.note import render_note
from tdmtui.core.text.safety import NOTE_LINE

GOLDEN = ROOT / "tests" / "golden"
GOLDEN_CASES = ("vanc-steady-state", "gent-peak-trough", "vanc-loading-early")
ALL_SAMPLES = sorted(SAMPLES.glob("*.json"))


@lru_cache(maxsize=None)
def outcome_of(name: str):
    return compute(load_case(SAMPLES / f"{name}.json"))


@lru_cache(maxsize=None)
def note_of(name: str) -> str:
    return render_note(outcome_of(name))


@lru_cache(maxsize=None)
def full_note_of(name: str) -> str:
    return render_note(outcome_of(name), full=True)


def flat(text: str) -> str:
    """Whitespace-normalised text (the note wraps sentences at 80 columns)."""
    return " ".join(text.split())


def close_to_printed(printed: str, value: float) -> bool:
    """True when ``printed`` is ``value`` rounded to the printed number of decimals."""
    decimals = len(printed.split(".")[1]) if "." in printed else 0
    return abs(float(printed) - value) <= 0.5 * 10.0 ** -decimals + 1e-9 * abs(value)


def decimals(printed: str) -> int:
    return len(printed.split(".")[1]) if "." in printed else 0


def significant(printed: str) -> int:
    return len(printed.replace(".", "").lstrip("0"))


# --- golden files ----------------------------------------------------------------

@pytest.mark.parametrize("name", GOLDEN_CASES)
def test_note_matches_golden_file(name):
    expected = (GOLDEN / f"{name}.txt").read_text(encoding="utf-8")
    got = note_of(name)
    diff = "\n".join(difflib.unified_diff(expected.splitlines(), got.splitlines(), "golden", "now", lineterm=""))
    assert got == expected, (f"note of {name} differs from tests/golden/{name}.txt; if the change is intended, "
                             f"run tests/golden/regenerate.py and review the diff:\n{diff}")


# --- every printed estimate figure is the engine's, rounded as documented ----------

def table_rows(note: str) -> list[list[str]]:
    """The methods table of the full note, in order: [ke, t1/2, Vd, CL, AUC24] as printed."""
    lines = note.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("Method ") and "ke /h" in line)
    rows: list[list[str]] = []
    for line in lines[start + 1:]:
        if line.startswith("AUC24 in mg*h/L"):
            break
        if len(line) < 40 or not line[-40:].strip():
            continue
        rows.append(line[-40:].split())
    return rows


@pytest.mark.parametrize("name", [p.stem for p in ALL_SAMPLES])
def test_printed_estimates_equal_result_rounded(name):
    res = outcome_of(name).result
    if not res.get("estimate"):
        pytest.skip(f"{name}: no estimate (status {res['status']})")
    rows = table_rows(full_note_of(name))
    # the table lists the estimate used, then every other method in the result's order
    estimates = [res["estimate"], *res["methods"].values()]
    assert len(rows) == len(estimates)
    for cells, e in zip(rows, estimates):
        label = e.get("method")
        ke, t_half, vd, cl, auc24 = cells
        # rounding rule (notefmt docstring): ke 3 significant figures, t1/2 and Vd 1 decimal,
        # CL 2 decimals, AUC24 whole number
        assert significant(ke) == 3, label
        assert (decimals(t_half), decimals(vd), decimals(cl), decimals(auc24)) == (1, 1, 2, 0), label
        for printed, value in ((ke, e["ke_per_h"]), (t_half, e["half_life_h"]), (vd, e["vd_l"]),
                               (cl, e["cl_l_per_h"])):
            assert close_to_printed(printed, value), (label, printed, value)
        cur = (e.get("current") or {}).get("auc24_mg_h_per_l")
        if cur is None:
            assert auc24 == "-"
        else:
            assert close_to_printed(auc24, cur), (label, auc24, cur)


PREDICTED = re.compile(r"predicted at steady state peak ([\d.]+), trough ([\d.]+) mg/L, "
                       r"AUC24 ([\d.]+) mg\*h/L")


@pytest.mark.parametrize("name", GOLDEN_CASES)
def test_printed_regimen_predictions_equal_result(name):
    res = outcome_of(name).result
    found = PREDICTED.findall(flat(note_of(name)))
    expected = [res["estimate"]["current"]]
    if "regimen" in res:
        expected.append(res["regimen"]["predicted"])
    assert len(found) == len(expected)
    for (peak, trough, auc24), pred in zip(found, expected):
        assert close_to_printed(peak, pred["peak_mg_per_l"])
        assert close_to_printed(trough, pred["trough_mg_per_l"])
        assert close_to_printed(auc24, pred["auc24_mg_h_per_l"])


def test_bayesian_intervals_printed_from_result():
    res = outcome_of("vanc-trough-only").result
    iv = (res.get("estimate") or {}).get("interval90")
    if not iv:
        pytest.skip("vanc-trough-only has no Bayesian interval in its result")
    m = re.search(r"90 % intervals \(\d+ draws, seed \d+\): ke ([\d.]+)-([\d.]+) /h, Vd ([\d.]+)-([\d.]+) L, "
                  r"CL ([\d.]+)-([\d.]+) L/h, AUC24 ([\d.]+)-([\d.]+) mg\*h/L", flat(full_note_of("vanc-trough-only")))
    assert m, "interval line missing"
    values = [*iv["ke_per_h"], *iv["vd_l"], *iv["cl_l_per_h"], *iv["auc24_mg_h_per_l"]]
    for printed, value in zip(m.groups(), values):
        assert close_to_printed(printed, value), (printed, value)
    assert f"seed {res['estimate']['model']['seed']}" in flat(full_note_of("vanc-trough-only"))
    # the standard note gives the CL and AUC24 intervals of the estimate used
    m = re.search(r"90 % interval: CL ([\d.]+)-([\d.]+) L/h, AUC24 now ([\d.]+)-([\d.]+) mg\*h/L",
                  flat(note_of("vanc-trough-only")))
    assert m, "standard interval line missing"
    for printed, value in zip(m.groups(), [*iv["cl_l_per_h"], *iv["auc24_mg_h_per_l"]]):
        assert close_to_printed(printed, value), (printed, value)


# --- layout and the standing elements, for every sample case -------------------------

@pytest.mark.parametrize("path", ALL_SAMPLES, ids=lambda p: p.name)
def test_cli_note_for_every_sample(path, capsys):
    assert main(["note", str(path)]) == 0
    text = capsys.readouterr().out
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= 80
    assert "\x1b" not in text and "\t" not in text
    assert flat(NOTE_LINE) in flat(text)
    for label in ("Pharmacist:", "Date/time:", "Prescriber contacted:"):
        assert any(re.fullmatch(rf"{re.escape(label)}\s*_{{20,}}", line) for line in lines), label
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    assert f"Case sha256 {digest}" in lines


def test_stop_case_says_no_regimen_and_why():
    res = outcome_of("vanc-stop-dialysis").result
    assert res["status"] == "stop"
    text = flat(note_of("vanc-stop-dialysis"))
    assert "No regimen proposed: a stop-level warning stands" in text
    assert "STOP: renal replacement" in text
    assert "intermittent haemodialysis" in text
    assert "(entered 601 umol/L)" in text  # SCr shown as entered beside mg/dL


def test_note_out_file_mode_0600(tmp_path):
    out = tmp_path / "note.txt"
    assert main(["note", str(SAMPLES / "vanc-steady-state.json"), "--out", str(out)]) == 0
    assert os.stat(out).st_mode & 0o777 == 0o600
    assert out.read_text(encoding="utf-8") == note_of("vanc-steady-state")


def test_note_command_in_a_fresh_process():
    r = subprocess.run([sys.executable, "-m", "tdmtui", "note", str(SAMPLES / "gent-peak-trough.json")],
                       capture_output=True, text=True, timeout=300, cwd=ROOT)
    assert r.returncode == 0, r.stderr
    assert r.stdout.startswith("GENTAMICIN PHARMACOKINETIC CONSULT")


def test_unsaved_case_is_marked_and_digested_canonically():
    raw = base_case()
    text = render_note(compute_raw(raw))
    canonical = (json.dumps(raw, ensure_ascii=False, indent=2) + "\n").encode("utf-8")
    assert f"UNSAVED sha256 {hashlib.sha256(canonical).hexdigest()}" in text.splitlines()


# --- level timing and steady state ------------------------------------------------------

def test_level_times_relative_to_doses():
    # base_case: dose 2 20:00-21:30 on 03-02, dose 3 08:00-09:30 on 03-03; levels 07:35 and 11:00
    # 07:35 - 21:30 = 10 h 05 min; 08:00 - 07:35 = 25 min; 11:00 - 09:30 = 1 h 30 min (worked by hand)
    out = compute_raw(base_case())
    text = flat(render_note(out, full=True))
    assert "14.2 mg/L: 10 h 05 min after the end of the infusion of dose 2; 25 min before dose 3" in text
    assert "31.2 mg/L: 1 h 30 min after the end of the infusion of dose 3" in text
    # the standard note names the nearer dose event only
    short = flat(render_note(out))
    assert "14.2 mg/L: 25 min before dose 3." in short
    assert "31.2 mg/L: 1 h 30 min after the end of dose 3." in short


def test_level_during_infusion_and_set_aside():
    raw = base_case()
    raw["levels"].append({"time": "2026-03-03T09:05", "conc": "48.0 mg/L", "use": False,
                          "reason": "drawn from the infusion line"})
    text = flat(render_note(compute_raw(raw), full=True))
    # 09:05 - 08:00 = 1 h 05 min into the 90 min infusion of dose 3 (by hand)
    assert "48.0 mg/L: during the infusion of dose 3, 1 h 05 min after its start" in text
    assert "SET ASIDE: drawn from the infusion line" in text


@pytest.mark.parametrize("n", [1, 3, 6])
def test_steady_state_share_is_the_accumulation_factor(n):
    # constant regimen from t = 0, level 4 h after the n-th start (after the 1 h infusion):
    # C_n / C_ss = 1 - exp(-n ke tau) (pk-sources.md 2.3, one-compartment accumulation)
    ke, v, tau = 0.1, 50.0, 12.0
    doses = [SimpleNamespace(start=k * tau, duration=1.0, amount=1000.0, end=k * tau + 1.0) for k in range(n)]
    share = notefmt.steady_state_share(PKParams.one_compartment(ke, v), doses, (n - 1) * tau + 4.0,
                                       {"dose_mg": 1000.0, "interval_h": tau, "infusion_h": 1.0})
    assert share == pytest.approx(1.0 - math.exp(-n * ke * tau), rel=1e-9)


def test_duration_wording():
    # the note's clock wording: minutes below an hour, zero-padded minutes after hours
    assert [notefmt.duration(h) for h in (35 / 60, 65 / 60, 12.0, 9.75)] == ["35 min", "1 h 05 min", "12 h",
                                                                            "9 h 45 min"]


def test_chosen_regimen_in_the_case_is_the_regimen_of_the_note(tmp_path, capsys):
    # the case's chosen_regimen names an alternative: the note gives it with its own timing
    raw = json.loads((SAMPLES / "vanc-steady-state.json").read_text(encoding="utf-8"))
    res = outcome_of("vanc-steady-state").result
    alt = res["regimen"]["alternatives"][0]
    raw["chosen_regimen"] = {"dose": f"{alt['dose_mg']:g} mg", "interval": f"{alt['interval_h']:g} h",
                             "duration": f"{alt['infusion_h'] * 60:g} min"}
    path = tmp_path / "chosen.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    assert main(["note", str(path)]) == 0
    text = flat(capsys.readouterr().out)
    m = re.search(r"Chosen in review: [a-z ,]+ ([\d.]+) mg every ([\d.]+) h over .*?AUC24 ([\d.]+) mg\*h/L", text)
    assert m, text
    assert float(m.group(1)) == pytest.approx(alt["dose_mg"]) and float(m.group(2)) == alt["interval_h"]
    assert close_to_printed(m.group(3), alt["predicted"]["auc24_mg_h_per_l"])
    assert "Proposed:" not in text and "(The tool proposed 1000 mg every 12 h over 1 h.)" in text
    # its hold, next dose and levels, not the proposal's
    assert re.search(r"next dose (at )?" + re.escape(alt["next_dose_at"].replace("T", " ")), text)
    for nl in alt["next_levels"]:
        assert f"{nl['kind']} at {nl['at'].replace('T', ' ')}" in text
    for nl in res["regimen"]["next_levels"]:
        assert nl["at"].replace("T", " ") not in text
    # the working's new-dose step follows the chosen regimen
    assert f"given as {alt['dose_mg']:g} mg" in text


def test_a_choice_no_longer_offered_says_so_and_keeps_the_proposal():
    raw = json.loads((SAMPLES / "vanc-steady-state.json").read_text(encoding="utf-8"))
    raw["chosen_regimen"] = {"dose": "3000 mg", "interval": "6 h", "duration": "2 h"}
    text = flat(render_note(compute_raw(raw)))
    assert "Proposed: change to 1000 mg every 12 h over 1 h" in text
    assert "The regimen chosen in review (3000 mg every 6 h over 2 h) is no longer offered" in text


@pytest.mark.parametrize("value, field", [({"dose": "750", "interval": "8 h", "duration": "1 h"}, "chosen_regimen.dose"),
                                          ({"dose": "750 mg", "duration": "1 h"}, "chosen_regimen.interval"),
                                          ("750 mg q8h", "chosen_regimen")])
def test_a_mistyped_choice_is_an_input_error_naming_it(tmp_path, capsys, value, field):
    raw = json.loads((SAMPLES / "vanc-steady-state.json").read_text(encoding="utf-8"))
    raw["chosen_regimen"] = value
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    assert main(["note", str(path)]) == 2
    assert capsys.readouterr().err.startswith(field + ":")


# --- written for clinicians, short, complete ----------------------------------------------

#: Remarks about how a source was checked, and program internals, that must not reach the chart.
DEVELOPER_TEXT = ("from memory", "confirmed", "re-typed", "verify against", "year not", "secondary",
                  "[library]", "pk-sources", "doses[", "levels[", "rule tbw", "crcl_cg", "eta =",
                  "auto does not", "(used)")
#: Two-level and one-level cases of the usual kind: the standard note fits in 60 lines. The cases whose
#: renal function changes (vanc-rising-scr, vanc-aki-levels-after, gent-high-trough: SCr +60 % in a day,
#: doses held and a restart that waits on a level) or that dose around haemodialysis (vanc-haemodialysis)
#: carry more: tests/core/test_note_brevity.py bounds them (62 to 80 lines).
STANDARD = ("vanc-steady-state", "vanc-trough-only", "gent-peak-trough", "amikacin", "vanc-late-dose",
            "vanc-continuous", "vanc-continuous-levels", "gent-new-start", "vanc-stop-dialysis",
            "tobra-us-units", "vanc-obese", "gent-extended", "vanc-elderly-low-scr", "vanc-high-auc",
            "vanc-hold-two-doses", "vanc-below-loq", "vanc-loading-early")


@pytest.mark.parametrize("name", [p.stem for p in ALL_SAMPLES])
def test_note_speaks_to_clinicians_within_80_columns(name):
    for text in (note_of(name), full_note_of(name)):
        assert max(len(line) for line in text.splitlines()) <= 80
        low = text.lower()
        found = [w for w in DEVELOPER_TEXT if w.lower() in low and not (w == "(used)" and text is full_note_of(name))]
        assert not found, f"{name}: developer-facing text {found}"
        assert not re.search(r"\bpatient\.[a-z]", text), f"{name}: a case path"
        assert not re.search(r":\s*\.|\(\s*\)", text), f"{name}: an empty source"
    lines = note_of(name).splitlines()
    if name in STANDARD:
        assert len(lines) <= 60, f"{name}: {len(lines)} lines"
    assert "REFERENCES" not in note_of(name) and "EVERY METHOD" not in note_of(name)


@pytest.mark.parametrize("name", [p.stem for p in ALL_SAMPLES])
def test_full_note_lists_each_reference_once(name):
    text = full_note_of(name)
    if "REFERENCES" not in text:
        return
    refs = text.split("REFERENCES\n", 1)[1].split("\n\n", 1)[0]
    items = [flat(x) for x in re.split(r"\n(?=\d+\. )", refs)]
    assert len(items) == len(set(items))
    # a reference is listed, not repeated in the text above it
    for item in items:
        body = item.split(". ", 1)[1][:40]
        assert flat(text.split("REFERENCES")[0]).count(body) == 0, body


def test_unverified_model_gets_one_plain_sentence():
    text = flat(note_of("vanc-trough-only"))
    assert text.count("not checked against the published paper") == 1
    assert "Thomson 2009 and Goti 2018: values not checked against the published papers" in text


def test_model_inputs_in_words_with_the_reason_they_differ():
    # Cockcroft-Gault by hand with total body weight (pk-sources.md 1.1): (140 - 48) x 88 / (72 x 1.1) = 102.2
    text = flat(note_of("vanc-trough-only"))
    assert ("Model inputs: CrCl 102 mL/min (the model's Cockcroft-Gault on total body weight; the CrCl above "
            "uses ideal body weight 75.0 kg), weight 88 kg") in text
    # with ideal body weight 75.0 kg: (140 - 48) x 75 / (72 x 1.1) = 87.1 mL/min, the headline figure
    assert "CrCl 87 mL/min (Cockcroft-Gault, ideal body weight, SCr 1.1 mg/dL)" in text


def test_chance_of_target_of_the_proposal_is_in_the_note():
    res = outcome_of("vanc-trough-only").result
    p = res["regimen"]["predicted"]["target_probability"]
    m = re.search(r"Proposed: .*?chance of meeting the target (\d+) %", flat(note_of("vanc-trough-only")))
    assert m and int(m.group(1)) == round(100 * p)


def test_working_is_the_textbook_calculation():
    # W5 (pk-sources.md worked example; sample_cases/README.md): ke = ln(40/19)/9 = 0.0827 /h,
    # Cmax = 40 e^(ke x 1 h), CL = ke x V, AUC24 = daily dose / CL
    text = flat(note_of("vanc-steady-state"))
    ke = math.log(40.0 / 19.0) / 9.0
    assert f"ke = ln(C1/C2) / (t2 - t1) = ln(40.0/19.0) / 9 h = {ke:.4f} /h" in text
    assert f"Cmax (end of infusion) = C1 e^(ke t) = 40.0 x e^({ke:.4f} x 1 h) = {40.0 * math.exp(ke):.1f} mg/L" in text
    est = outcome_of("vanc-steady-state").result["estimate"]
    assert f"AUC24 now = 3000 / {est['cl_l_per_h']:.2f} = {3000 / est['cl_l_per_h']:.0f} mg*h/L" in text
    # each "a / b = c" and "a x b = c" in the working, recomputed here, gives the printed c
    work = note_of("vanc-steady-state").split("Working (to check by hand):")[1].split("Other methods")[0]
    checked = 0
    for a, op, b, c in re.findall(r"(?<![\w.])(?<![x/] )([\d.]+) ([/x]) ([\d.]+) = ([\d.]+)(?![\d.]* x)", flat(work)):
        got = float(a) / float(b) if op == "/" else float(a) * float(b)
        assert abs(got - float(c)) <= 0.006 * abs(float(c)) + 0.05, (a, op, b, c)
        checked += 1
    assert checked >= 3, work


def test_two_compartment_working_states_vss():
    text = flat(note_of("vanc-trough-only"))
    two = outcome_of("vanc-trough-only").result["estimate"]["two_compartment"]
    m = re.search(r"V1 ([\d.]+) L, V2 ([\d.]+) L; Vss = V1 \+ V2 = ([\d.]+) L", text)
    assert m, "the two-compartment working line"
    assert (float(m.group(1)), float(m.group(2))) == (round(two["v1_l"], 1), round(two["v2_l"], 1))
    assert float(m.group(3)) == pytest.approx(float(m.group(1)) + float(m.group(2)), abs=0.11)


def test_protocol_floor_and_record(tmp_path, capsys):
    proto = tmp_path / "ward.toml"
    proto.write_text('name = "Demo ward"\n[common.renal.scr_floor_mg_dl]\nvalue = 1.0\n'
                     'source = "demo local rule"\n', encoding="utf-8")
    assert main(["note", str(SAMPLES / "vanc-loading-early.json"), "--protocol", str(proto)]) == 0
    text = capsys.readouterr().out
    # latest measured SCr 0.9 mg/dL is below the 1.0 floor (sample case file)
    assert "SCr floor 1 mg/dL (protocol: demo local rule); CrCl computed with the floor instead of the " \
           "measured 0.9 mg/dL." in flat(text)
    assert f"local protocol Demo ward (sha256 {hashlib.sha256(proto.read_bytes()).hexdigest()})" in flat(text)


def test_two_compartment_figures_printed_when_the_estimate_has_them():
    out = compute(load_case(SAMPLES / "vanc-steady-state.json"))
    two_comp = [e for e in out.result["methods"].values() if e.get("two_compartment")]
    if not two_comp:
        pytest.skip("no two-compartment estimate among the methods of vanc-steady-state")
    out.result["estimate"] = dict(two_comp[0])
    two = two_comp[0]["two_compartment"]
    m = re.search(r"V1 ([\d.]+) L, V2 ([\d.]+) L, Q ([\d.]+) L/h, alpha half-life ([\d.]+) h, "
                  r"terminal \(beta\) half-life ([\d.]+) h, ln 2 x Vss / CL ([\d.]+) h",
                  flat(render_note(out, full=True)))
    assert m, "two-compartment line missing"
    for printed, key in zip(m.groups(), ("v1_l", "v2_l", "q_l_per_h", "alpha_half_life_h", "beta_half_life_h",
                                         "vss_half_life_h")):
        assert close_to_printed(printed, two[key]), key
    # the one-compartment equivalent half-life is ln 2 x Vss / CL (pk-sources.md 2.1 with ke = CL / Vss)
    assert two["vss_half_life_h"] == pytest.approx(math.log(2) * two["vss_l"] / two["cl_l_per_h"], rel=1e-12)
    # case-format.md: the one-compartment equivalent Vd is Vss = V1 + V2
    assert two_comp[0]["vd_l"] == pytest.approx(two["v1_l"] + two["v2_l"], rel=1e-9)
