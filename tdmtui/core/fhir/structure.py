"""Optional check of an export against the FHIR structure, by the ``fhir.resources`` models.

``fhir.resources`` (with pydantic) is an optional extra, ``pip install
'tdmtui[fhir]'``: it costs about 27 MB and a quarter of a second to load, so
the importer's own reading (stdlib) is what maps values, and this check runs
only when asked (``tdmtui import --check-structure``) and in the tests. The
R4B models are used: for the resources read here (Bundle, Patient,
Observation, MedicationAdministration, MedicationRequest, Medication) R4B
has the R4 structure (from memory). The models check datatypes, required
elements, choice elements and dateTime formats; code bindings (a status
outside its value set) are the importer's own concern.
"""

from __future__ import annotations

import json
from typing import Any

from tdmtui.core.errors import InputError, one_line

MISSING = "the structure check needs the optional FHIR models: pip install 'tdmtui[fhir]' (fhir.resources)"


def _models() -> Any:
    try:
        from fhir.resources.R4B import get_fhir_model_class
    except ImportError:
        raise InputError("--check-structure", MISSING) from None
    return get_fhir_model_class


def structure_errors(raw: object) -> list[str]:
    """Every structure error of an export (a Bundle, or each resource of an array), as one-line texts."""
    get = _models()
    from pydantic import ValidationError

    items = raw if isinstance(raw, list) else [raw]
    out = []
    for i, res in enumerate(items):
        kind = res.get("resourceType") if isinstance(res, dict) else None
        where = f"[{i}] " if isinstance(raw, list) else ""
        try:
            model = get(str(kind))
        except (KeyError, ValueError):
            out.append(one_line(f"{where}resourceType {kind!r} is not a FHIR resource"))
            continue
        try:
            model.model_validate(res)
        except ValidationError as exc:
            out += [one_line(f"{where}{'.'.join(map(str, e['loc']))}: {e['msg']}") for e in exc.errors()]
        except Exception as exc:  # noqa: BLE001 - the models' own errors, shown as text
            out.append(one_line(f"{where}{type(exc).__name__}: {exc}"))
    return out


def check_structure(data: bytes) -> None:
    """Raise when the export does not have the FHIR structure.

    Raises:
        InputError: naming ``(bundle)`` with the first errors, or the missing extra.
    """
    _models()
    try:
        raw = json.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError("(bundle)", f"not JSON: {exc}") from None
    errors = structure_errors(raw)
    if errors:
        more = f" (and {len(errors) - 3} more)" if len(errors) > 3 else ""
        raise InputError("(bundle)", "not FHIR R4 structure: " + "; ".join(errors[:3]) + more)
