"""A FHIR R4 export read into resources and a reference index (stdlib only).

Accepted: a Bundle of type ``collection`` or ``searchset``, or a plain JSON
array of resources. Anything else (not JSON, not FHIR, another Bundle type,
two Patients) is an :class:`InputError` naming ``(bundle)`` or the entry.
References resolve by ``Type/id`` and by an entry's ``fullUrl``
(``urn:uuid:...`` or an absolute URL ending in ``Type/id``).
"""

from __future__ import annotations

import json
from decimal import Decimal
from dataclasses import dataclass, field
from typing import Any

from tdmtui.core.errors import InputError, one_line

BUNDLE_TYPES = ("collection", "searchset")
#: Resource types the import reads; any other is listed in the report as not read.
READ_TYPES = ("Patient", "Observation", "MedicationAdministration", "MedicationRequest", "Medication")
#: A bundle larger than this is refused (an export for one patient's course is far smaller).
MAX_BYTES = 64 * 1024 * 1024


@dataclass
class Entry:
    """One resource, where it stands in the file, and its name for the report."""

    index: int
    resource: dict[str, Any]
    full_url: str = ""

    @property
    def type(self) -> str:
        return str(self.resource.get("resourceType", ""))

    @property
    def name(self) -> str:
        rid = self.resource.get("id")
        if isinstance(rid, str) and rid:
            return one_line(f"{self.type}/{rid}")
        return one_line(self.full_url) if self.full_url else f"{self.type or 'entry'} #{self.index}"


@dataclass
class Export:
    """The resources of one export and how to resolve references among them."""

    entries: list[Entry]
    bundle_type: str                  # collection | searchset | array
    bundle_id: str = ""
    timestamp: str | None = None
    by_ref: dict[str, Entry] = field(default_factory=dict)

    def resolve(self, ref: object) -> Entry | None:
        """The entry a ``{"reference": ...}`` points to, or None."""
        if not isinstance(ref, dict) or not isinstance(ref.get("reference"), str):
            return None
        text = ref["reference"]
        if text in self.by_ref:
            return self.by_ref[text]
        parts = text.rstrip("/").split("/")
        return self.by_ref.get("/".join(parts[-2:])) if len(parts) >= 2 else None

    def of_type(self, kind: str) -> list[Entry]:
        return [e for e in self.entries if e.type == kind]


def _no_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k, v in pairs:
        if k in out:
            raise InputError("(bundle)", f"key {one_line(k)!r} appears twice in one object (which one is meant?)")
        out[k] = v
    return out


def decode(data: bytes, name: str) -> Any:
    """JSON text to objects, refusing duplicate keys and oversize files.

    Decimal numbers stay :class:`~decimal.Decimal`, so a value is written into
    the case exactly as the export gave it (no binary rounding).
    """
    if len(data) > MAX_BYTES:
        raise InputError("(bundle)", f"{name} is larger than {MAX_BYTES // (1024 * 1024)} MB; export one patient's course")
    try:
        return json.loads(data.decode("utf-8"), object_pairs_hook=_no_duplicates, parse_float=Decimal)
    except UnicodeDecodeError as exc:
        raise InputError("(bundle)", f"{name} is not UTF-8 text") from exc
    except json.JSONDecodeError as exc:
        raise InputError("(bundle)", f"{name} is not JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})") from exc
    except RecursionError as exc:
        raise InputError("(bundle)", f"{name} is nested too deeply to be a FHIR export") from exc


def read_export(raw: object) -> Export:
    """Check the outer shape and index the resources.

    Raises:
        InputError: not FHIR, a Bundle of another type, an entry without a
            resource, or two Patients (an export must be one patient's).
    """
    if isinstance(raw, list):
        export = Export([_entry(i, item, "") for i, item in enumerate(raw)], "array")
    elif isinstance(raw, dict) and raw.get("resourceType") == "Bundle":
        btype = raw.get("type")
        if btype not in BUNDLE_TYPES:
            raise InputError("(bundle).type", f"a Bundle of type {one_line(str(btype))!r} is not read; "
                                              f"export a {' or '.join(BUNDLE_TYPES)}")
        items = raw.get("entry", [])
        if not isinstance(items, list):
            raise InputError("(bundle).entry", "expected a list of entries")
        entries = []
        for i, item in enumerate(items):
            if not isinstance(item, dict) or "resource" not in item:
                raise InputError(f"(bundle).entry[{i}]", "an entry without a resource")
            url = item.get("fullUrl", "")
            entries.append(_entry(i, item["resource"], url if isinstance(url, str) else ""))
        stamp = raw.get("timestamp")
        export = Export(entries, str(btype), str(raw.get("id", "")), stamp if isinstance(stamp, str) else None)
    elif isinstance(raw, dict) and isinstance(raw.get("resourceType"), str):
        raise InputError("(bundle)", f"a single {one_line(raw['resourceType'])} is not an export; "
                                     "give a Bundle (collection or searchset) or a JSON array of resources")
    else:
        raise InputError("(bundle)", "not FHIR: expected a Bundle (resourceType \"Bundle\") or a JSON array of resources")
    _index(export)
    patients = export.of_type("Patient")
    if len(patients) > 1:
        names = ", ".join(p.name for p in patients[:3])
        raise InputError("(bundle)", f"{len(patients)} Patient resources ({names}): an export must hold one patient's data")
    return export


def _entry(i: int, resource: Any, url: str) -> Entry:
    if not isinstance(resource, dict) or not isinstance(resource.get("resourceType"), str):
        raise InputError(f"(bundle).entry[{i}]", "not a FHIR resource (no resourceType)")
    return Entry(i, resource, url)


def _index(export: Export) -> None:
    for e in export.entries:
        rid = e.resource.get("id")
        if isinstance(rid, str) and rid:
            export.by_ref.setdefault(f"{e.type}/{rid}", e)
        if e.full_url:
            export.by_ref.setdefault(e.full_url, e)
