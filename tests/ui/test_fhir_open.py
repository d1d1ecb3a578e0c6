"""`tdmtui BUNDLE.json`: the app imports an export into a new, unsaved case and lists the report among the warnings."""

from __future__ import annotations

import shutil

from textual.widgets import Static
from uihelpers import SAMPLES, settle

from tdmtui.ui.app import TdmApp

FHIR = SAMPLES / "fhir"


async def test_an_export_opens_as_an_unsaved_case_with_its_report(tmp_path, state):
    path = tmp_path / "gent-rate.bundle.json"
    shutil.copy(FHIR / "gent-rate.bundle.json", path)
    before = path.read_bytes()
    app = TdmApp(str(path), str(FHIR / "site-codes.toml"), state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.doc.path is None and app.doc.dirty  # new and unsaved: saving asks for a name
        assert app.doc.raw["patient"]["weight"] == "85 kg"
        assert len(app.doc.raw["doses"]) == 7
        status = str(app.screen.query_one("#status", Static).content)
        assert status.startswith("Computed"), status
        codes = [a["code"] for a in app.alerts]
        assert "import-not-used" in codes and "import-review" in codes
        assert any(a["field"] == "OperationOutcome/search-note-3" for a in app.alerts)
        header = str(app.screen.query_one("#header", Static).content)
        assert "UNSAVED" in header
        assert "MedicationAdministration/gent-dose-1" in app.note  # the note marks imported values
    assert path.read_bytes() == before  # the export is never written to


async def test_an_export_missing_a_part_opens_with_it_left_to_type(tmp_path, state):
    path = tmp_path / "export.json"
    shutil.copy(FHIR / "amikacin-umol-lb.bundle.json", path)
    app = TdmApp(str(path), None, state=state)  # no local codes: weight, height, creatinine not confirmed
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.doc.raw["patient"]["weight"] == ""
        assert len(app.doc.raw["doses"]) == 5
        missing = [a for a in app.alerts if a["code"] == "import-missing"]
        assert [a["field"] for a in missing] == ["patient.weight", "patient.height", "patient.scr"]
        status = str(app.screen.query_one("#status", Static).content)
        assert "patient.weight" in status


async def test_an_export_with_two_patients_starts_a_new_case_and_says_why(tmp_path, state):
    path = tmp_path / "export.json"
    path.write_text('[{"resourceType": "Patient", "id": "a"}, {"resourceType": "Patient", "id": "b"}]', encoding="utf-8")
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert "2 Patient resources" in app.open_error
        assert app.doc.path is None and app.doc.raw["doses"] == []
