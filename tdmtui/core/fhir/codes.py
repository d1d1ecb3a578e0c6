"""What a FHIR code or UCUM unit means to a case, and how sure we are of it.

Built-in codes are only those our FHIR reference marks *confirmed* (seen in
two or more independent public laboratory catalogues): the drug-level LOINC
codes. Codes the reference gives only "from memory" (creatinine, body weight,
body height) are known here by name so the report can say what they look
like, but they are NOT used until a site confirms them in its protocol's
``[local_codes]`` section (see docs/protocol-example.toml). A peak code the
reference marks "not confirmed" is absent altogether.

The timing word in a LOINC name (trough, peak, random) is a hint only: the
draw time against the doses decides what a level is, so every drug-level
code maps to the drug alone.
"""

from __future__ import annotations

from dataclasses import dataclass

from tdmtui.core.errors import InputError

LOINC = "http://loinc.org"
UCUM = "http://unitsofmeasure.org"

#: Confirmed drug-level LOINC codes (serum or plasma, mass/volume) -> drug.
#: Source: the project's FHIR reference, table "LOINC codes for drug levels", [confirmed] entries.
LEVEL_CODES: dict[str, str] = {
    "4092-3": "vancomycin", "4090-7": "vancomycin", "20578-1": "vancomycin",
    "3665-7": "gentamicin", "35668-3": "gentamicin",
    "4059-2": "tobramycin", "4057-6": "tobramycin", "35670-9": "tobramycin",
    "3321-7": "amikacin", "35669-1": "amikacin",
}

#: LOINC codes the reference gives from memory only: named in the report, never used unconfirmed.
FROM_MEMORY: dict[str, str] = {
    "2160-0": "scr", "14682-9": "scr", "29463-7": "weight", "8302-2": "height",
}

ANALYTES = ("scr", "weight", "height")
ANALYTE_NAMES = {"scr": "serum creatinine", "weight": "body weight", "height": "body height"}
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

#: UCUM rate codes -> mg per hour per unit (only mass rates give an infusion time from a dose).
MASS_RATE_MG_PER_H = {"mg/h": 1.0}


@dataclass(frozen=True)
class CodeMeaning:
    """What one ``system|code`` pair stands for, and which table said so."""

    kind: str          # level | analyte | medication
    what: str          # drug id for level/medication; scr/weight/height for analyte
    mapping: str       # for the report, e.g. "LOINC 4092-3 (built-in, confirmed)"
    unit: str | None = None  # our unit for values that carry no UCUM code (local codes only)


@dataclass(frozen=True)
class CodeBook:
    """Built-in codes plus a site's local codes (these win, and the report says so)."""

    local: dict[str, CodeMeaning]

    def meaning(self, system: str, code: str) -> CodeMeaning | None:
        """The meaning of one coding, or None when neither table knows it."""
        key = f"{system}|{code}"
        if key in self.local:
            return self.local[key]
        if system == LOINC and code in LEVEL_CODES:
            return CodeMeaning("level", LEVEL_CODES[code], f"LOINC {code} (built-in, confirmed)")
        return None


def unconfirmed_hint(system: str, code: str) -> str | None:
    """A report reason for a from-memory code, or None when the code is not one."""
    if system == LOINC and code in FROM_MEMORY:
        return (f"LOINC {code} looks like {ANALYTE_NAMES[FROM_MEMORY[code]]} but that code is not confirmed in our reference; "
                f"a site confirms it in its protocol's [local_codes] section")
    return None


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


def our_unit(ucum: str, kind: str) -> str | None:
    """Our unit string for a UCUM code in a given kind, or None (UCUM codes are case-sensitive)."""
    return UNITS[kind].get(ucum)
