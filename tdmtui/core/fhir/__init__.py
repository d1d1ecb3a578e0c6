"""FHIR R4 import: an EHR export (Bundle or array of resources) to a case.

Stdlib only, so importing is fast and needs nothing beyond the project's own
dependencies; the optional structure check (:mod:`.structure`) uses the
``fhir.resources`` models when the ``tdmtui[fhir]`` extra is installed.
Nothing here is on the compute or app start-up path.

    imported = import_export(data, "bundle.json", drug=None, as_of=None, protocol=None)
    imported.raw      # the case dict (missing parts are "")
    imported.report   # every resource: used, not used (with the reason), notes
    check_case(imported)  # parse the case as compute would; errors name the resource
"""

from __future__ import annotations

import hashlib
import re
from typing import TYPE_CHECKING, Any

from tdmtui.core.errors import InputError
from tdmtui.core.fhir.build import Imported, build_case
from tdmtui.core.fhir.codes import CodeBook
from tdmtui.core.fhir.read import decode, read_export
from tdmtui.core.input.case import looks_like_fhir

if TYPE_CHECKING:
    from tdmtui.core.library import Protocol

__all__ = ["Imported", "check_case", "import_export", "looks_like_fhir"]


def import_export(data: bytes, name: str, *, drug: str | None = None, as_of: str | None = None,
                  protocol: Protocol | None = None) -> Imported:
    """Read an export's bytes and build the case and its report.

    Args:
        data: the file's bytes. name: shown in the report and kept in the
        case's ``imported.from``. drug, as_of: the ``--drug``/``--as-of``
        choices. protocol: a loaded protocol whose ``local_codes`` apply.

    Raises:
        InputError: not JSON, not FHIR, two Patients, or an unusable choice.
    """
    from tdmtui.core.library import DRUGS

    export = read_export(decode(data, name))
    book = CodeBook(dict(protocol.local_codes) if protocol is not None else {})
    imported = build_case(export, book, tuple(DRUGS), drug=drug, as_of=as_of, source=name,
                          sha256=hashlib.sha256(data).hexdigest())
    if book.local and protocol is not None:
        imported.report.protocol = protocol.name
    return imported


def resource_for(raw: dict[str, Any], field: str) -> str:
    """The resource a case field came from (``doses[2].start`` -> ``MedicationAdministration/ma-3``)."""
    m = re.match(r"(patient\.scr|doses|levels)\[(\d+)\]", field)
    values = raw.get("imported", {}).get("values", [])
    if m:
        rows = raw["patient"]["scr"] if m.group(1) == "patient.scr" else raw[m.group(1)]
        row = rows[int(m.group(2))] if int(m.group(2)) < len(rows) else None
        hits = [v["resource"] for v in values if v["field"] == m.group(1) and v["value"] == row]
    else:
        hits = [v["resource"] for v in values if field == v["field"] or field.startswith(v["field"] + ".")]
    return hits[0] if hits else ""


def check_case(imported: Imported) -> None:
    """Parse the built case exactly as ``compute`` will.

    Raises:
        InputError: the first missing part, or the case's own error with the
            resource it came from named first.
    """
    from tdmtui.core.input.case import parse_case

    if imported.report.missing:
        part, why = imported.report.missing[0]
        others = len(imported.report.missing) - 1
        raise InputError(part, f"missing from the export: {why}" + (f" (and {others} more missing)" if others else ""))
    try:
        parse_case(imported.raw)
    except InputError as exc:
        source = resource_for(imported.raw, exc.field)
        raise InputError(exc.field, f"{exc.message} (from {source})" if source else exc.message) from None
