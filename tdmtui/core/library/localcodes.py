"""A local protocol's ``[local_codes]`` section: a site's own codes for levels, analytes and medications.

The protocol is read by the library, so the section's reader lives here (the
FHIR import, :mod:`tdmtui.core.fhir.codes`, uses what it gives and re-exports
these names). See docs/protocol-example.toml.
"""

from __future__ import annotations

from dataclasses import dataclass

from tdmtui.core.errors import InputError

ANALYTES = ("scr", "weight", "height")
KINDS = ("level", "analyte", "medication")

#: UCUM code -> our unit string, per case kind. Every pair is checked against pint in the tests.
#: Drug levels in umol/L are deliberately absent: the molar mass the reference gives is from memory.
UNITS: dict[str, dict[str, str]] = {
    "conc": {"mg/L": "mg/L", "ug/mL": "ug/mL", "mg/dL": "mg/dL"},
    "scr": {"mg/dL": "mg/dL", "umol/L": "umol/L"},
    "weight": {"kg": "kg", "g": "g", "[lb_av]": "lb"},
    "height": {"cm": "cm", "m": "m", "[in_i]": "in"},
    "dose": {"mg": "mg", "g": "g", "ug": "ug"},
    "time": {"min": "min", "h": "h", "d": "day"},
}

@dataclass(frozen=True)
class CodeMeaning:
    """What one ``system|code`` pair stands for, and which table said so."""

    kind: str          # level | analyte | medication
    what: str          # drug id for level/medication; scr/weight/height for analyte
    mapping: str       # for the report, e.g. "LOINC 4092-3 (built-in, confirmed)"
    unit: str | None = None  # our unit for values that carry no UCUM code (local codes only)


def parse_local_codes(body: object, drugs: tuple[str, ...]) -> dict[str, CodeMeaning]:
    """Read a protocol's ``[local_codes]`` table.

    Shape: ``[local_codes."SYSTEM|CODE"]`` with exactly one of ``level = DRUG``,
    ``analyte = "scr" | "weight" | "height"`` or ``medication = DRUG``, a
    ``source`` saying who checked it, and optionally ``unit`` (one of our unit
    strings) for values that arrive without a UCUM code.

    Raises:
        InputError: naming ``protocol.local_codes."SYSTEM|CODE"`` and the bad key.
    """
    if not isinstance(body, dict):
        raise InputError("protocol.local_codes", "expected a table of \"system|code\" entries")
    out: dict[str, CodeMeaning] = {}
    for key, entry in body.items():
        field = f'protocol.local_codes."{key}"'
        system, bar, code = str(key).rpartition("|")
        if not bar or not system or not code:
            raise InputError(field, "the key must be \"system|code\", e.g. \"http://lab.example.org|VANC\"")
        if not isinstance(entry, dict):
            raise InputError(field, "expected a table with level, analyte or medication, and source")
        out[f"{system}|{code}"] = _local_entry(entry, field, drugs, key)
    return out


def _local_entry(entry: dict, field: str, drugs: tuple[str, ...], key: str) -> CodeMeaning:
    for k in entry:
        if k not in (*KINDS, "unit", "source"):
            raise InputError(f"{field}.{k}", "unknown key (expected level, analyte, medication, unit, source)")
    kinds = [k for k in KINDS if k in entry]
    if len(kinds) != 1:
        raise InputError(field, "give exactly one of level, analyte or medication")
    kind = kinds[0]
    what = entry[kind]
    allowed = ANALYTES if kind == "analyte" else drugs
    if what not in allowed:
        raise InputError(f"{field}.{kind}", f"{what!r} is not one of {', '.join(allowed)}")
    source = entry.get("source")
    if not isinstance(source, str) or not source.strip():
        raise InputError(f"{field}.source", "say who checked this code and against what (source = \"...\")")
    unit = entry.get("unit")
    if unit is not None:
        unit = _check_unit(unit, "conc" if kind == "level" else what, f"{field}.unit")
    if kind == "medication" and unit is not None:
        raise InputError(f"{field}.unit", "a medication code takes no unit")
    return CodeMeaning(kind, str(what), f"local code {key}, protocol", unit)


def _check_unit(unit: object, kind: str, field: str) -> str:
    ours = set(UNITS[kind].values())
    if unit not in ours:
        raise InputError(field, f"{unit!r} is not one of {', '.join(sorted(ours))}")
    return str(unit)
