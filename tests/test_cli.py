"""`tdmtui compute` as a user runs it: exit status, one-line errors, the result contract."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from pathlib import Path

SAMPLES = Path(__file__).resolve().parent.parent / "sample_cases"


def run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "tdmtui", *args], capture_output=True, text=True, timeout=120)


@pytest.mark.parametrize("path", sorted(SAMPLES.glob("*.json")), ids=lambda p: p.name)
def test_every_sample_case_computes(path):
    r = run("compute", str(path), "--json")
    assert r.returncode == 0, r.stderr
    res = json.loads(r.stdout)
    assert res["format"] == "tdmtui.result/1"
    assert res["status"] in ("ok", "stop")
    assert res["method"] != "auto"
    assert len(res["input_sha256"]) == 64
    for w in res["warnings"]:
        assert set(w) - {"facts"} == {"code", "severity", "field", "message"}
        facts = w.get("facts", {})  # docs/estimates.md: the message's figures and advice, as it writes them
        assert isinstance(facts, dict) and all(isinstance(v, str) and v for v in facts.values())
        assert all(v in w["message"] for k, v in facts.items() if k != "advice" and k != "cause"), w
        assert w["severity"] in ("info", "caution", "stop")
    if res["status"] == "stop":
        assert "regimen" not in res
    if res["estimate"]:
        e = res["estimate"]
        for k in ("ke_per_h", "half_life_h", "vd_l", "cl_l_per_h"):
            assert e[k] > 0
        assert e["cl_l_per_h"] == pytest.approx(e["ke_per_h"] * e["vd_l"], rel=1e-9)


def test_input_error_exits_2_with_field(write_case, case_dict):
    case_dict["doses"][2]["amount"] = "1250"
    r = run("compute", str(write_case(case_dict)))
    assert r.returncode == 2
    assert r.stderr.strip().splitlines() == [r.stderr.strip()]
    assert r.stderr.startswith("doses[2].amount:")
    assert "Traceback" not in r.stderr


def test_requested_method_impossible_exits_3(write_case, case_dict):
    case_dict["levels"] = case_dict["levels"][:1]
    case_dict["method"] = "two-level"
    r = run("compute", str(write_case(case_dict)), "--json")
    assert r.returncode == 3
    assert "two-level" in r.stderr and "usable level" in r.stderr


def test_summary_is_plain_and_narrow():
    r = run("compute", str(SAMPLES / "vanc-steady-state.json"))
    assert r.returncode == 0
    assert "\x1b[" not in r.stdout
    assert max(len(line) for line in r.stdout.splitlines()) <= 80


def test_record_writes_private_audit_file(tmp_path, case_dict, write_case):
    import os
    import stat

    p = write_case(case_dict)
    r = run("compute", str(p), "--record")
    assert r.returncode == 0, r.stderr
    rec = p.with_suffix(".result.json")
    assert stat.S_IMODE(os.stat(rec).st_mode) == 0o600
    assert json.loads(rec.read_text())["input_sha256"]


def test_same_case_gives_byte_identical_json():
    a = run("compute", str(SAMPLES / "vanc-loading-early.json"), "--json")
    b = run("compute", str(SAMPLES / "vanc-loading-early.json"), "--json")
    assert a.returncode == 0 and a.stdout == b.stdout


def test_help_prints_usage_and_opens_nothing():
    r = run("help")
    assert r.returncode == 0
    assert r.stdout.startswith("usage: tdmtui")
    assert "tdmtui note CASE" in r.stdout


def test_unknown_command_prints_usage_not_a_new_case(tmp_path):
    r = subprocess.run([sys.executable, "-m", "tdmtui", "comptue"], capture_output=True, text=True, timeout=60,
                       cwd=tmp_path)
    assert r.returncode == 2
    assert "unknown command 'comptue'" in r.stderr and "usage: tdmtui" in r.stderr
    assert list(tmp_path.iterdir()) == []  # no case file started


def test_a_missing_case_file_is_named(tmp_path):
    missing = tmp_path / "no-such-case.json"
    r = run("note", str(missing))
    assert r.returncode == 2
    assert str(missing) in r.stderr and "No such file" in r.stderr and r.stderr.count("\n") == 1
