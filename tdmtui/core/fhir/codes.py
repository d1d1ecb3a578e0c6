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

from tdmtui.core.library.localcodes import (  # noqa: F401 - the protocol's section reader, re-exported
    ANALYTES, KINDS, UNITS, CodeMeaning, parse_local_codes)

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

ANALYTE_NAMES = {"scr": "serum creatinine", "weight": "body weight", "height": "body height"}

#: UCUM rate codes -> mg per hour per unit (only mass rates give an infusion time from a dose).
MASS_RATE_MG_PER_H = {"mg/h": 1.0}


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


def our_unit(ucum: str, kind: str) -> str | None:
    """Our unit string for a UCUM code in a given kind, or None (UCUM codes are case-sensitive)."""
    return UNITS[kind].get(ucum)
