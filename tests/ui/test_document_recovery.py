"""Case document (edits, undo, guarded save), recovery files and field completion."""

from __future__ import annotations

import json
import os
import stat

import pytest

from tdmtui.ui.document import CaseDocument, ChangedOnDisk, FileGone, new_case_raw
from tdmtui.ui.fields import check_quantity, complete_quantity
from tdmtui.ui.recovery import find_recovery, read_recovery, recovery_path, remove_recovery, write_recovery


def test_set_get_and_undo_of_row_changes():
    doc = CaseDocument(new_case_raw())
    doc.set(("patient", "weight"), "92 kg")
    assert doc.get(("patient", "weight")) == "92 kg" and doc.dirty
    doc.insert_rows("doses", 0, [{"start": "2026-03-02T08:00", "amount": "1 g", "duration": "1 h"}])
    doc.delete_row("doses", 0)
    assert doc.rows("doses") == []
    assert doc.undo().startswith("delete")
    assert doc.rows("doses")[0]["amount"] == "1 g"
    assert doc.undo().startswith("add")
    assert doc.rows("doses") == [] and doc.undo() == ""
    assert doc.get(("patient", "weight")) == "92 kg"  # typing is not undone by row undo


def test_save_is_0600_and_refuses_a_file_changed_by_someone_else(tmp_path):
    path = tmp_path / "case.json"
    path.write_text(json.dumps(new_case_raw()))
    doc = CaseDocument.open(str(path))
    doc.set(("label",), "bed 3 demo")
    doc.save()
    assert stat.S_IMODE(os.stat(path).st_mode) == 0o600
    assert json.loads(path.read_text())["label"] == "bed 3 demo" and not doc.dirty
    # a second session saves the same file
    other = CaseDocument.open(str(path))
    other.set(("label",), "other session")
    other.save()
    doc.set(("label",), "mine")
    with pytest.raises(ChangedOnDisk):
        doc.save()
    assert json.loads(path.read_text())["label"] == "other session"
    target = tmp_path / "mine.json"
    doc.save(str(target))
    assert json.loads(target.read_text())["label"] == "mine" and doc.path == str(target)


def test_a_deleted_file_is_written_again_only_when_asked(tmp_path):
    path = tmp_path / "case.json"
    path.write_text(json.dumps(new_case_raw()), encoding="utf-8")
    doc = CaseDocument.open(str(path))
    doc.set(("patient", "age"), "70 yr")
    path.unlink()
    with pytest.raises(FileGone):
        doc.save()
    assert not path.exists() and doc.dirty
    doc.save(recreate=True)
    assert json.loads(path.read_text(encoding="utf-8"))["patient"]["age"] == "70 yr" and not doc.dirty
    # recreate writes only where nothing is: a file put back by someone else is still refused
    path.unlink()
    path.write_text("{}", encoding="utf-8")
    doc.set(("patient", "age"), "71 yr")
    with pytest.raises(ChangedOnDisk) as caught:
        doc.save(recreate=True)
    assert not isinstance(caught.value, FileGone) and path.read_text(encoding="utf-8") == "{}"


def test_save_as_onto_an_existing_file_needs_force(tmp_path):
    (tmp_path / "there.json").write_text("{}")
    doc = CaseDocument(new_case_raw())
    with pytest.raises(FileExistsError):
        doc.save(str(tmp_path / "there.json"))
    doc.save(str(tmp_path / "there.json"), force=True)
    assert json.loads((tmp_path / "there.json").read_text())["drug"] == "vancomycin"


def test_recovery_round_trip_in_the_state_folder_and_for_unsaved(tmp_path):
    state = tmp_path / "state"
    case = tmp_path / "c.json"
    case.write_text("{}")
    rp = recovery_path(str(case), state)
    assert rp.parent == state and rp.name.startswith("c.json.") and rp.name.endswith(".recovery")
    raw = new_case_raw()
    raw["patient"]["weight"] = "92 kgg"  # even invalid text is kept
    write_recovery(rp, str(case), raw)
    assert stat.S_IMODE(os.stat(rp).st_mode) == 0o600
    rec = find_recovery(str(case), state, current={})
    assert rec is not None and rec.raw["patient"]["weight"] == "92 kgg"
    assert find_recovery(str(case), state, current=raw) is None  # nothing new to offer
    remove_recovery(rp)
    assert read_recovery(rp) is None
    up = recovery_path(None, state)
    write_recovery(up, None, raw)
    assert up.parent == state and read_recovery(up).case_path is None


def test_garbage_recovery_file_is_ignored(tmp_path):
    p = tmp_path / "x.recovery"
    p.write_text("{not json")
    assert read_recovery(p) is None


@pytest.mark.parametrize("typed, unit, stored", [
    ("92", "kg", "92 kg"), ("1.25g", "mg", "1.25 g"), (" 97  umol/L ", "mg/dL", "97 umol/L"),
    ("180 lb", "kg", "180 lb"), ("abc", "kg", "abc"), ("", "kg", ""),
])
def test_complete_quantity(typed, unit, stored):
    assert complete_quantity(typed, unit) == stored


def test_check_quantity_converts_and_reports():
    # 180 lb x 0.45359237 kg/lb = 81.65 kg (definition of the pound)
    stored, value, err = check_quantity("180 lb", "weight", "patient.weight", "kg")
    assert err == "" and value == pytest.approx(81.647, abs=1e-3)
    # 97 umol/L / 88.40 = 1.097 mg/dL (creatinine 113.12 g/mol)
    assert check_quantity("97 umol/L", "scr", "patient.scr", "mg/dL")[1] == pytest.approx(1.0973, abs=1e-3)
    stored, value, err = check_quantity("92 stone", "weight", "patient.weight", "kg")
    assert value is None and "unknown unit" in err and stored == "92 stone"


def test_target_entry_reads_bands_and_names_mistakes():
    from tdmtui.ui.entry import target_entry, target_text

    e = target_entry("auc24 400-600")
    assert e.stored == {"auc24": ["400 mg*h/L", "600 mg*h/L"]} and not e.error
    e = target_entry("peak 8-10; trough 0.5-1 mg/L")
    assert e.stored == {"peak": ["8 mg/L", "10 mg/L"], "trough": ["0.5 mg/L", "1 mg/L"]}
    assert target_text(e.stored) == "peak 8-10 mg/L; trough 0.5-1 mg/L"
    assert target_entry("").stored is None
    assert "low end" in target_entry("auc24 600-400").error
    assert target_entry("auc 400 to 600").error.startswith("'auc 400 to 600'")
