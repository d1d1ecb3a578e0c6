"""The app opens a FHIR export: imported into a new, unsaved case, the report among the warnings.

``tdmtui BUNDLE.json`` comes here when the file is a FHIR resource or an
array of them (a case file has ``format`` and no ``resourceType``). Whatever
the export lacks is left empty to type, and said in the warnings; nothing is
saved until the pharmacist saves it under a name. The import itself is the
command line's (tdmtui.core.fhir); no engine is loaded here.
"""

from __future__ import annotations

import json
from pathlib import Path
from tdmtui.ui.document import CaseDocument, new_case_raw


def is_export(path: str) -> bool:
    """True when the file holds FHIR rather than a case (unreadable files are left to the case opener)."""
    from tdmtui.core.fhir import looks_like_fhir

    try:
        return looks_like_fhir(json.loads(Path(path).read_bytes().decode("utf-8")))
    except (OSError, ValueError, RecursionError):
        return False


def open_export(path: str, protocol_path: str | None) -> tuple[CaseDocument, list[dict[str, str]], str]:
    """``(document, import warnings, error)``: the imported case unsaved, or a new case and why not."""
    from tdmtui.core.errors import InputError
    from tdmtui.core.fhir import import_export
    from tdmtui.core.library import protocol_or_default

    try:
        imported = import_export(Path(path).read_bytes(), Path(path).name, protocol=protocol_or_default(protocol_path))
    except OSError as exc:
        return CaseDocument(new_case_raw()), [], f"Could not read {path}: {exc.strerror}. Started a new case instead."
    except InputError as exc:
        hint = " (tdmtui import --drug D chooses one)" if exc.field == "--drug" else ""
        return (CaseDocument(new_case_raw()), [],
                f"Could not import {Path(path).name}: {exc}{hint}. Started a new case instead.")
    return CaseDocument(imported.raw, None, dirty=True), imported.report.alerts(), ""
