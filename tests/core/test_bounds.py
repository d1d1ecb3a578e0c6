"""Resource bounds and silent reinterpretation: each is an input error naming the file or the field.

The limits are the project's own design choices (tdmtui.core.bounds); the
behaviours follow case-format.md "Exit status" (one line naming the field).
Python's integer-string limit (4,300 digits, CPython 3.11 docs, from memory)
is why a long number would otherwise end in an internal error.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

from casedata import ROOT, base_case
from tdmtui.core import bounds
from tdmtui.core.input.case import load_case, parse_case
from tdmtui.core.errors import InputError


def rejected(path_or_raw) -> InputError:
    with pytest.raises(InputError) as info:
        if isinstance(path_or_raw, dict):
            parse_case(path_or_raw)
        else:
            load_case(path_or_raw)
    return info.value


def write(tmp_path, name: str, text: str):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_a_duplicated_key_names_its_path(tmp_path):
    text = json.dumps(base_case()).replace('"weight": "92 kg"', '"weight": "92 kg", "weight": "9 kg"')
    exc = rejected(write(tmp_path, "dup.json", text))
    assert exc.field == "patient.weight" and "twice" in exc.message
    text = json.dumps(base_case()).replace('"conc": "14.2 mg/L"', '"conc": "14.2 mg/L", "conc": "41.2 mg/L"')
    assert rejected(write(tmp_path, "dup2.json", text)).field == "levels[0].conc"
    text = json.dumps(base_case())[:-1] + ', "drug": "gentamicin"}'
    assert rejected(write(tmp_path, "dup3.json", text)).field == "drug"


def test_deep_nesting_long_numbers_and_long_text_are_refused(tmp_path):
    exc = rejected(write(tmp_path, "deep.json", "[" * 100_000 + "]" * 100_000))
    assert exc.field == "(file)" and "nested" in exc.message
    raw = base_case()
    raw["label"] = [[[[[[[[[[[[[[[[[["x"]]]]]]]]]]]]]]]]]]
    assert "nested" in rejected(raw).message
    exc = rejected(write(tmp_path, "num.json", json.dumps(base_case()).replace('"test case"', "1" + "0" * 5000)))
    assert exc.field == "(file)" and "5,001 characters" in exc.message
    exc = rejected(write(tmp_path, "inf.json", json.dumps(base_case()).replace('"test case"', "1e999")))
    assert "too large" in exc.message
    raw = base_case()
    raw["patient"]["comedications"] = ["x" * (bounds.MAX_TEXT + 1)]
    assert rejected(raw).field == "patient.comedications[0]"


def test_counts_span_and_years_are_bounded():
    raw = base_case()
    raw["levels"] = raw["levels"] * 101  # 202 levels
    exc = rejected(raw)
    assert exc.field == "levels" and "at most 200" in exc.message
    raw = base_case()
    raw["doses"] = [raw["doses"][0]] * 10_001  # one over the dose limit (the bound is checked before parsing)
    exc = rejected(raw)
    assert exc.field == "doses" and "at most 10,000" in exc.message
    raw = base_case()
    raw["as_of"] = "2526-03-03T21:00"  # 500 years after the doses
    assert rejected(raw).field == "as_of"
    raw["as_of"] = "2034-09-03T21:00"  # inside the years, past the 3,000-day span
    exc = rejected(raw)
    assert exc.field == "as_of" and "3000 days" in exc.message
    for year in ("9999", "0001"):
        raw = base_case()
        raw["as_of"] = f"{year}-03-03T21:00"
        exc = rejected(raw)
        assert exc.field == "as_of" and "1900" in exc.message


def test_a_device_a_fifo_a_folder_and_an_oversized_file_are_refused(tmp_path):
    assert "regular file" in rejected("/dev/zero").message
    fifo = tmp_path / "case.fifo"
    os.mkfifo(fifo)
    assert "regular file" in rejected(fifo).message  # returns at once: no writer is waited for
    assert "regular file" in rejected(tmp_path).message
    big = tmp_path / "big.json"
    big.write_bytes(b" " * (bounds.MAX_FILE_BYTES + 1))
    assert "at most" in rejected(big).message


def test_command_line_gives_one_line_for_each_bound(tmp_path):
    fifo = tmp_path / "f"
    os.mkfifo(fifo)
    deep = write(tmp_path, "deep.json", "[" * 100_000 + "]" * 100_000)
    for case in ("/dev/zero", str(fifo), str(deep)):
        p = subprocess.run([sys.executable, "-m", "tdmtui", "compute", case], capture_output=True, text=True,
                           cwd=ROOT, timeout=60)
        assert p.returncode == 2 and p.stderr.count("\n") == 1 and p.stderr.startswith("(file): "), p.stderr
