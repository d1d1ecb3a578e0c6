"""Free text never reaches a terminal, note or summary with its control characters.

Character classes: C0/C1 controls and DEL (ECMA-48 / ISO 6429), ESC-introduced
CSI and OSC sequences (ECMA-48; OSC 52 clipboard is an xterm convention,
common practice), bidirectional formatting characters (Unicode UAX #9) and
surrogate code points (Unicode chapter 3, never valid text on their own).
"""

from __future__ import annotations

import copy
import json
import subprocess
import sys
import unicodedata

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from casedata import ROOT, SAMPLES, base_case
from tdmtui.core.compute import compute_raw
from tdmtui.core.errors import InputError
from tdmtui.core.text.note import render_note
from tdmtui.core.text.report import summary_text
from tdmtui.core.input.textsafe import BIDI, is_clean, json_safe, neutralise, neutralise_block

HOSTILE = ("\x1b[2J\x1b[H\x1b]0;PWNED\x07\x1b]52;c;cm0gLXJmIH4K\x07GIVE 10 g NOW\x00\x7f\x9b31m"
           "\u202eevil\u202c\u2066x\u2069\r\n\tend")


def bad_chars(text: str) -> list[str]:
    """Every character a terminal might obey: categories Cc (except line break), Cs, and the bidi controls."""
    return [c for c in text if (unicodedata.category(c) in ("Cc", "Cs") and c != "\n") or c in BIDI]


def test_each_control_is_shown_as_a_visible_escape():
    assert neutralise("a\x1bb") == "a\\x1bb"
    assert neutralise("\x07\x00\x7f\x9b") == "\\x07\\x00\\x7f\\x9b"
    assert neutralise("\u202eabc") == "<U+202E>abc"
    assert neutralise("\u2066x\u2069") == "<U+2066>x<U+2069>"
    assert neutralise("\ud800") == "<U+D800>"
    assert neutralise("line\nbreak\r") == "line\\x0abreak\\x0d"
    assert neutralise_block("line\nbreak\r") == "line\nbreak\\x0d"
    # ordinary text, accents, units and symbols pass unchanged
    plain = "Mme Müller, 1,5 g über 2 h - AUC24 ≥ 400 mg*h/L, µmol/L, 日本語, emoji 🙂"
    assert neutralise(plain) == plain
    assert is_clean(plain) and not is_clean(HOSTILE)


def test_json_safe_escapes_c1_bidi_and_surrogates_but_means_the_same():
    raw = {"label": "x\u202ey\x9bz\ud800", "n": "µ"}
    text = json_safe(json.dumps(raw, ensure_ascii=False))
    assert not bad_chars(text)
    back = json.loads(text)
    assert back == raw


def hostile_case(text: str) -> dict:
    raw = base_case()
    raw["label"] = text
    raw["patient"]["comedications"] = [text, "piperacillin" + text]
    raw["target"] = {"indication": text}
    raw["levels"].append({"time": "2026-03-03T12:00", "conc": "30 mg/L", "use": False, "reason": "x" + text})
    return raw


def test_hostile_free_text_reaches_note_and_summary_only_as_escapes():
    outcome = compute_raw(hostile_case(HOSTILE))
    for out in (render_note(outcome), summary_text(outcome.result)):
        assert not bad_chars(out), bad_chars(out)
        assert "\x1b" not in out and "PWNED\x07" not in out
    note = render_note(outcome)
    assert "\\x1b]52;c;" in note and "<U+202E>evil" in note  # shown, not obeyed
    assert all(len(line) <= 80 for line in note.splitlines())


def test_a_lone_surrogate_is_an_input_error_naming_the_field():
    raw = hostile_case("ok")
    raw["levels"][-1]["reason"] = "bad \ud800 text"
    try:
        compute_raw(raw)
    except InputError as exc:
        assert exc.field == "levels[2].reason" and "surrogate" in exc.message
    else:
        raise AssertionError("a lone surrogate was accepted")


_FREE = st.text(alphabet=st.characters(codec=None, categories=None), max_size=40) | st.sampled_from(
    [HOSTILE, "\x1b]52;c;cm0gLXJmIH4K\x07", "\x9b2J", "\u202e\u2067", "\ud83d", "[bold red]GIVE[/]"])
_BASE = compute_raw(base_case())


@settings(max_examples=300, derandomize=True, deadline=None, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(label=_FREE, comed=_FREE, indication=_FREE, reason=_FREE)
def test_fuzz_free_text_through_note_and_summary_lets_no_control_byte_out(label, comed, indication, reason):
    """Hypothesis: any text in the four free-text fields; no control character in note or summary."""
    raw = copy.deepcopy(_BASE.case.raw)
    raw["label"], raw["patient"]["comedications"] = label, [comed]
    raw["target"] = {"indication": indication}
    raw["levels"].append({"time": "2026-03-03T12:00", "conc": "30 mg/L", "use": False, "reason": reason + "."})
    texts = {"label": label, "patient.comedications[0]": comed, "target.indication": indication,
             "levels[2].reason": reason}
    broken = [k for k, v in texts.items() if any("\ud800" <= c <= "\udfff" for c in v)]
    try:
        outcome = compute_raw(raw)
    except InputError as exc:
        assert broken and exc.field in broken, (exc.field, exc.message)
        return
    assert not broken
    note, summary = render_note(outcome), summary_text(outcome.result)
    assert not bad_chars(note) and not bad_chars(summary)
    note.encode("utf-8"), summary.encode("utf-8")  # no lone surrogate: always writable


def test_command_line_outputs_and_errors_carry_no_control_character(tmp_path):
    case = tmp_path / "hostile.json"
    case.write_text(json.dumps(hostile_case(HOSTILE), ensure_ascii=False), encoding="utf-8", errors="surrogatepass")
    bad_key = tmp_path / "badkey.json"
    raw = base_case()
    raw["target"] = {"\x1b]0;PWNED\x07": 1}
    bad_key.write_text(json.dumps(raw), encoding="utf-8")
    runs = [["compute", str(case)], ["compute", str(case), "--json"], ["note", str(case)], ["note", str(bad_key)]]
    for args in runs:
        p = subprocess.run([sys.executable, "-m", "tdmtui", *args], capture_output=True, cwd=ROOT, timeout=120)
        out = (p.stdout + p.stderr).decode("utf-8")
        assert p.returncode in (0, 2), out
        assert not bad_chars(out), (args, bad_chars(out))
    p = subprocess.run([sys.executable, "-m", "tdmtui", "compute", str(case), "--json"], capture_output=True, cwd=ROOT,
                       timeout=120)
    assert json.loads(p.stdout)["format"] == "tdmtui.result/1"
    assert SAMPLES.is_dir()
