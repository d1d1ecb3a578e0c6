"""`tdmtui import` as a user runs it, and the sample exports against their hand-written cases.

The outside reference for the equivalence test is the hand-written case for
the same invented scenario (sample_cases/fhir/*.case.json, typed by hand from
the scenario, not produced by the importer): `compute --json` of the import
must equal `compute --json` of that case, apart from the digest of the file.
"""

from __future__ import annotations

import json
import os
import stat

import pytest
from fhirdata import FHIR_SAMPLES, SITE_CODES, bundle, data, resources

from tdmtui.cli import main

SCENARIOS = [
    ("vanc-below-loq.bundle.json", "vanc-below-loq.case.json", []),
    ("gent-rate.bundle.json", "gent-rate.case.json", []),
    ("tobra-not-done.resources.json", "tobra-not-done.case.json", ["--as-of", "2026-01-28T14:00:00-06:00"]),
    ("amikacin-umol-lb.bundle.json", "amikacin-umol-lb.case.json", []),
]


def result_of(path, capsys) -> dict:  # noqa: ANN001
    assert main(["compute", str(path), "--json"]) == 0
    res = json.loads(capsys.readouterr().out)
    res.pop("input_sha256")
    return res


@pytest.mark.parametrize("export, case, extra", SCENARIOS, ids=[s[0] for s in SCENARIOS])
def test_import_then_compute_equals_the_hand_written_case(export, case, extra, tmp_path, capsys):
    out = tmp_path / "imported.json"
    assert main(["import", str(FHIR_SAMPLES / export), "--protocol", str(SITE_CODES), "--out", str(out), *extra]) == 0
    err = capsys.readouterr().err
    assert "Used (" in err and f"case written to {out}" in err
    assert stat.S_IMODE(os.stat(out).st_mode) == 0o600
    imported, typed = result_of(out, capsys), result_of(FHIR_SAMPLES / case, capsys)
    assert imported == typed
    assert imported["estimate"]["ke_per_h"] > 0


def test_each_sample_shows_its_feature(capsys, tmp_path):
    for export, _, extra in SCENARIOS:
        main(["import", str(FHIR_SAMPLES / export), "--protocol", str(SITE_CODES), *extra])
    out = capsys.readouterr()
    assert '"below_loq": true' in out.out
    assert '"duration": "30 min"' in out.out  # gentamicin 120 mg at 240 mg/h
    assert "status 'not-done' (patient off the ward for imaging)" in out.err
    assert '"weight": "159 lb"' in out.out and '"value": "88 umol/L"' in out.out


def test_a_missing_part_exits_2_naming_it_and_writes_nothing(tmp_path, capsys):
    src = tmp_path / "export.json"
    src.write_bytes(data(bundle([r for r in resources() if r.get("id") != "ht-1"])))
    out = tmp_path / "case.json"
    assert main(["import", str(src), "--protocol", str(SITE_CODES), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.strip().splitlines()[-1].startswith("patient.height: missing from the export")
    assert not out.exists()


def test_never_over_an_existing_case_without_force(tmp_path, capsys):
    src = tmp_path / "export.json"
    src.write_bytes(data(bundle()))
    out = tmp_path / "case.json"
    out.write_text("my typed case", encoding="utf-8")
    assert main(["import", str(src), "--protocol", str(SITE_CODES), "--out", str(out)]) == 2
    assert "exists; nothing was written" in capsys.readouterr().err
    assert out.read_text(encoding="utf-8") == "my typed case"
    assert main(["import", str(src), "--protocol", str(SITE_CODES), "--out", str(out), "--force"]) == 0
    assert json.loads(out.read_text(encoding="utf-8"))["drug"] == "vancomycin"


@pytest.mark.parametrize("blob, words", [
    (b"\xff\xfe not text", "not UTF-8"),
    (b"[1, 2", "is not JSON"),
    (b'{"hello": "world"}', "not FHIR"),
])
def test_bad_files_exit_2_with_one_line(blob, words, tmp_path, capsys):
    src = tmp_path / "export.json"
    src.write_bytes(blob)
    assert main(["import", str(src)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and words in err


def test_two_patients_exit_2(tmp_path, capsys):
    src = tmp_path / "export.json"
    src.write_bytes(data(bundle(resources() + [{"resourceType": "Patient", "id": "pt-2", "gender": "male"}])))
    assert main(["import", str(src)]) == 2
    assert "2 Patient resources" in capsys.readouterr().err


def test_the_imported_note_names_each_resource(tmp_path, capsys):
    out = tmp_path / "case.json"
    main(["import", str(FHIR_SAMPLES / "gent-rate.bundle.json"), "--protocol", str(SITE_CODES), "--out", str(out)])
    raw = json.loads(out.read_text(encoding="utf-8"))
    raw["patient"]["weight"] = "84 kg"  # the pharmacist corrects one value
    out.write_text(json.dumps(raw), encoding="utf-8")
    capsys.readouterr()
    assert main(["note", str(out)]) == 0
    note = capsys.readouterr().out
    section = note[note.index("IMPORTED VALUES"):]
    assert "- dose 2026-01-19 14:00Z 120 mg: MedicationAdministration/gent-dose-1" in section
    assert "- level 2026-01-21 21:30Z 2.2 mg/L: Observation/gent-lvl-2" in section
    changed = section[section.index("Changed or removed"):]
    assert "- weight 85 kg: Observation/wt-3" in changed
    assert "weight 85 kg" not in section[:section.index("Changed or removed")]
    assert max(len(line) for line in note.splitlines()) <= 80
