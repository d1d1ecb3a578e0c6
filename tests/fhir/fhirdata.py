"""Invented FHIR resources for the import tests (no real patient, no real site)."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[2]
FHIR_SAMPLES = ROOT / "sample_cases" / "fhir"
SITE_CODES = FHIR_SAMPLES / "site-codes.toml"
LOINC = "http://loinc.org"
UCUM = "http://unitsofmeasure.org"
PATIENT = "Patient/pt-1"


def qty(value: Any, code: str, comparator: str | None = None) -> dict[str, Any]:
    q: dict[str, Any] = {"value": value, "system": UCUM, "code": code}
    if comparator:
        q["comparator"] = comparator
    return q


def obs(rid: str, code: str, time: str, value: Any, unit: str, *, system: str = LOINC, status: str = "final",
        comparator: str | None = None, subject: str = PATIENT) -> dict[str, Any]:
    return {"resourceType": "Observation", "id": rid, "status": status,
            "code": {"coding": [{"system": system, "code": code}]}, "subject": {"reference": subject},
            "effectiveDateTime": time, "valueQuantity": qty(value, unit, comparator)}


def dose(rid: str, start: str, end: str | None = None, *, amount: Any = 1000, status: str = "completed",
         med: str = "Vancomycin 1 g", rate: dict[str, Any] | None = None) -> dict[str, Any]:
    r: dict[str, Any] = {"resourceType": "MedicationAdministration", "id": rid, "status": status,
                         "medicationCodeableConcept": {"text": med}, "subject": {"reference": PATIENT},
                         "dosage": {"route": {"text": "Intravenous"}, "dose": qty(amount, "mg")}}
    if end is not None:
        r["effectivePeriod"] = {"start": start, "end": end}
    else:
        r["effectiveDateTime"] = start
    if rate is not None:
        r["dosage"]["rateQuantity"] = rate
    return r


def resources() -> list[dict[str, Any]]:
    """A small vancomycin export: patient, weight, height, two SCr, two doses, two levels."""
    return [
        {"resourceType": "Patient", "id": "pt-1", "name": [{"text": "Invented Testperson"}],
         "identifier": [{"value": "INVENTED-0001"}], "gender": "female", "birthDate": "1960-05-20"},
        obs("wt-1", "29463-7", "2026-03-01T08:00:00+00:00", 68, "kg"),
        obs("ht-1", "8302-2", "2026-03-01T08:00:00+00:00", 165, "cm"),
        obs("scr-1", "2160-0", "2026-03-01T06:00:00+00:00", 0.9, "mg/dL"),
        obs("scr-2", "2160-0", "2026-03-02T06:00:00+00:00", 1.0, "mg/dL"),
        dose("d-1", "2026-03-01T09:00:00+00:00", "2026-03-01T10:00:00+00:00"),
        dose("d-2", "2026-03-01T21:00:00+00:00", "2026-03-01T22:00:00+00:00"),
        obs("lv-1", "20578-1", "2026-03-02T00:00:00+00:00", 21.5, "mg/L"),
        obs("lv-2", "4092-3", "2026-03-02T08:30:00+00:00", 9.8, "mg/L"),
    ]


def bundle(items: list[dict[str, Any]] | None = None, *, kind: str = "collection",
           timestamp: str | None = "2026-03-02T09:00:00+00:00") -> dict[str, Any]:
    items = resources() if items is None else items
    b: dict[str, Any] = {"resourceType": "Bundle", "id": "b-1", "type": kind,
                         "entry": [{"fullUrl": f"https://ehr.example.org/fhir/{r['resourceType']}/{r.get('id')}",
                                    "resource": copy.deepcopy(r)} for r in items]}
    if timestamp:
        b["timestamp"] = timestamp
    return b


def data(obj: Any) -> bytes:
    return json.dumps(obj).encode("utf-8")


def site_protocol():  # noqa: ANN201 - Protocol
    from tdmtui.core.library import load_protocol

    return load_protocol(SITE_CODES)
