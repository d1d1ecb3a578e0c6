"""UCUM codes -> the case's unit strings, each factor checked against pint (an outside reference).

UCUM meanings (from memory of the UCUM tables, and the project's FHIR
reference): [lb_av] avoirdupois pound, [in_i] international inch, ug
microgram, d day. The pint spelling beside each code says which pint unit
stands for it. Creatinine umol/L uses the contract's molar mass, 113.12 g/mol.
"""

from __future__ import annotations

import pint
import pytest

from tdmtui.core.fhir.codes import UNITS
from tdmtui.core.input.units import CREATININE_MOLAR_MASS, canonical_unit, parse_quantity

UREG = pint.UnitRegistry()

#: (kind, UCUM code) -> pint spelling of the UCUM unit
PINT = {
    ("conc", "mg/L"): "mg/L", ("conc", "ug/mL"): "microgram/mL", ("conc", "mg/dL"): "mg/dL",
    ("scr", "mg/dL"): "mg/dL", ("scr", "umol/L"): "micromol/L",
    ("weight", "kg"): "kg", ("weight", "g"): "g", ("weight", "[lb_av]"): "avoirdupois_pound",
    ("height", "cm"): "cm", ("height", "m"): "m", ("height", "[in_i]"): "inch",
    ("dose", "mg"): "mg", ("dose", "g"): "g", ("dose", "ug"): "microgram",
    ("time", "min"): "minute", ("time", "h"): "hour", ("time", "d"): "day",
}
CANONICAL_PINT = {"mg/L": "mg/L", "mg/dL": "mg/dL", "kg": "kg", "cm": "cm", "mg": "mg", "h": "hour"}


def test_every_mapped_code_has_a_pint_check():
    assert set(PINT) == {(k, c) for k, table in UNITS.items() for c in table}


@pytest.mark.parametrize("kind, code", sorted(PINT))
def test_ucum_code_converts_as_pint_says(kind, code):
    ours = UNITS[kind][code]
    got = parse_quantity(f"7.5 {ours}", kind, "test")
    q = 7.5 * UREG(PINT[(kind, code)])
    target = UREG(CANONICAL_PINT[canonical_unit(kind)])
    if kind == "scr" and code == "umol/L":
        q = q * (CREATININE_MOLAR_MASS * UREG("g/mol"))
    assert got == pytest.approx(q.to(target).magnitude, rel=1e-12)


def test_ucum_is_case_sensitive():
    from tdmtui.core.fhir.codes import our_unit

    assert our_unit("mg/dL", "scr") == "mg/dL"
    assert our_unit("MG/DL", "scr") is None
    assert our_unit("[LB_AV]", "weight") is None
