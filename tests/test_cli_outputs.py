"""Output places and character sets: a clear one-line error, never "internal error".

Exit 2 with the option named for an output that cannot be written (as
case-format.md's one-line input errors); exit 1 with a plain sentence when
the terminal's character set cannot show the text (PYTHONIOENCODING stands
in for a legacy locale: Python docs, from memory).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

from casedata import ROOT, SAMPLES, base_case


def run(*args: str, env: dict[str, str] | None = None) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "tdmtui", *args], capture_output=True, text=True, cwd=ROOT,
                          timeout=120, env={**os.environ, **(env or {})}, errors="replace")


def one_line(p: subprocess.CompletedProcess[str]) -> str:
    assert p.stderr.count("\n") == 1 and "internal error" not in p.stderr and "Traceback" not in p.stderr, p.stderr
    return p.stderr


def test_an_unwritable_note_file_is_an_error_naming_the_option(tmp_path):
    case = str(SAMPLES / "vanc-steady-state.json")
    for target in (tmp_path / "missing-folder" / "note.txt", "/dev/null/note.txt"):
        p = run("note", case, "--out", str(target))
        assert p.returncode == 2 and one_line(p).startswith("--out: cannot write")


def test_an_unwritable_record_folder_is_an_error_naming_the_option(tmp_path):
    case = tmp_path / "case.json"
    case.write_text(json.dumps(base_case()), encoding="utf-8")
    (tmp_path / "case.result.json").mkdir()  # the record's place is taken by a folder
    p = run("compute", str(case), "--record")
    assert p.returncode == 2 and one_line(p).startswith("--record: cannot write")


def test_a_legacy_character_set_gives_one_clear_line(tmp_path):
    raw = base_case()
    raw["label"] = "Mme Müller ≥ 日本"
    case = tmp_path / "case.json"
    case.write_text(json.dumps(raw, ensure_ascii=False), encoding="utf-8")
    for enc in ("ascii", "latin-1"):
        p = run("note", str(case), env={"PYTHONIOENCODING": enc})
        assert p.returncode == 1 and "UTF-8 locale" in one_line(p) and p.stdout == ""
    p = run("note", str(case), "--out", str(tmp_path / "n.txt"), env={"PYTHONIOENCODING": "ascii"})
    assert p.returncode == 0 and "Müller" in (tmp_path / "n.txt").read_text(encoding="utf-8")
    p = run("compute", str(SAMPLES / "vanc-steady-state.json"), env={"PYTHONIOENCODING": "ascii"})
    assert p.returncode == 0  # ASCII output is shown in any character set
