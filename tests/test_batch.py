"""`tdmtui batch`: each case's result equals `tdmtui compute CASE --json`, a damaged file is one error row,
JSON lines on stdin, hostile text kept out of the terminal and the CSV."""

from __future__ import annotations

import csv
import io
import json
import shutil
from pathlib import Path

import pytest

from casedata import SAMPLES, base_case
from tdmtui import cli
from tdmtui.batchcmd import collect, compute_all
from tdmtui.batchrow import result_text

CASES = sorted(SAMPLES.glob("*.json"))


def _compute_json(path: Path, capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    capsys.readouterr()
    code = cli.main(["compute", str(path), "--json"])
    return code, capsys.readouterr().out


def test_batch_rows_equal_compute_json_case_by_case(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "rows.jsonl"
    assert cli.main(["batch", *map(str, CASES), "--out", str(out), "--jobs", "2"]) == 0
    summary = capsys.readouterr().out
    rows = [json.loads(line) for line in out.read_text(encoding="utf-8").splitlines()]
    assert [r["case"] for r in rows] == [str(p) for p in CASES]
    for row, path in zip(rows, CASES):
        code, text = _compute_json(path, capsys)
        if code == 0:
            assert row["status"] == json.loads(text)["status"]
            assert result_text(row["result"]) == text, path.name  # byte for byte
            assert row["drug"] == row["result"]["drug"] and row["ke_per_h"] == row["result"]["estimate"]["ke_per_h"]
        else:
            assert row["result"] is None and row["status"] in ("input-error", "no-estimate")
    assert f"{len(CASES)} case(s)" in summary and "status" in summary and "method used" in summary


def test_the_row_text_is_what_a_worker_process_wrote(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """The pool's rows (forked workers) carry the same text as compute --json, in input order."""
    items = collect([str(p) for p in CASES[:4]])
    rows = list(compute_all(items, None, None, 2))
    for row, path in zip(rows, CASES[:4]):
        assert row.values["case"] == str(path)
        assert row.text == _compute_json(path, capsys)[1]


def test_a_damaged_file_is_one_error_row(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    folder = tmp_path / "cases"
    folder.mkdir()
    for p in CASES[:3]:
        shutil.copy(p, folder / p.name)
    (folder / "zz-damaged.json").write_bytes(json.dumps(base_case()).encode()[:150])  # cut off mid-file
    (folder / "old.result.json").write_text("{}")  # an audit record is not a case
    out = tmp_path / "rows.csv"
    assert cli.main(["batch", str(folder), "--out", str(out)]) == 0
    summary = capsys.readouterr().out
    rows = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8"))))
    assert len(rows) == 4
    bad = [r for r in rows if r["status"] not in ("ok", "stop")]
    assert len(bad) == 1 and bad[0]["case"].endswith("zz-damaged.json")
    assert bad[0]["status"] == "input-error" and "not valid JSON" in bad[0]["error"]
    assert "input-error" in summary and "zz-damaged.json" in summary
    assert out.stat().st_mode & 0o777 == 0o600


def test_a_fhir_export_in_a_folder_is_a_row_that_says_to_import_it(tmp_path: Path,
                                                                    capsys: pytest.CaptureFixture[str]) -> None:
    folder = tmp_path / "cases"
    folder.mkdir()
    shutil.copy(CASES[0], folder / CASES[0].name)
    bundle = SAMPLES / "fhir" / "gent-rate.bundle.json"
    shutil.copy(bundle, folder / bundle.name)
    out = tmp_path / "rows.jsonl"
    assert cli.main(["batch", str(folder), "--out", str(out)]) == 0
    capsys.readouterr()
    rows = [json.loads(line) for line in out.read_text(encoding="utf-8").splitlines()]
    fhir = [r for r in rows if r["case"].endswith(bundle.name)]
    assert len(rows) == 2 and fhir[0]["status"] == "input-error"
    assert "FHIR export, not a case" in fhir[0]["error"] and "tdmtui import" in fhir[0]["error"]


def test_json_lines_on_stdin_each_line_its_own_case() -> None:
    good = json.dumps(base_case())
    stream = io.BytesIO(f"{good}\n\n{{\"format\": \"tdmtui.case/1\"\n{good}\n".encode())
    items = collect(["-"], stdin=stream)
    assert [it.name for it in items] == ["stdin:1", "stdin:3", "stdin:4"]
    rows = list(compute_all(items, None, None, 1))
    assert [r.values["status"] for r in rows][1] == "input-error"
    assert rows[0].values["status"] in ("ok", "stop") and rows[0].text == rows[2].text
    # the input digest is that of the line's bytes, as for a file holding that line
    import hashlib

    assert json.loads(rows[0].text)["input_sha256"] == hashlib.sha256(good.encode()).hexdigest()


def test_hostile_names_and_formulas_are_neutralised(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    folder = tmp_path / "x"
    folder.mkdir()
    (folder / "=cmd\x1b[31m.json").write_text("{}")
    out = tmp_path / "rows.csv"
    assert cli.main(["batch", str(folder / "=cmd\x1b[31m.json"), "--out", str(out)]) == 0
    printed = capsys.readouterr()
    assert "\x1b" not in printed.out + printed.err and "\\x1b" in printed.out
    text = out.read_text(encoding="utf-8")
    assert "\x1b" not in text and "\\x1b" in text
    stdin_rows = list(compute_all(collect(["-"], stdin=io.BytesIO(b"[]\n")), None, None, 1))
    assert stdin_rows[0].values["status"] == "input-error"
    from tdmtui.batchout import _cell

    assert _cell("=HYPERLINK(1)") == "'=HYPERLINK(1)" and _cell("-2+3") == "'-2+3" and _cell(-2.5) == "-2.5"


def test_out_must_be_csv_or_jsonl(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["batch", str(CASES[0]), "--out", str(tmp_path / "rows.txt")]) == 2
    assert "--out" in capsys.readouterr().err
    assert not (tmp_path / "rows.txt").exists()
