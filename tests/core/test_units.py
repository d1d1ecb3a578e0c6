"""Quantity grammar and conversions, checked against pint's own unit definitions."""

from __future__ import annotations

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from tdmtui.core.errors import InputError
from tdmtui.core.input.units import KINDS, UMOL_PER_MG_DL, parse_quantity

UREG = pint.UnitRegistry()
# pint spellings for our unit strings (outside reference for every factor)
PINT = {"mg": "mg", "g": "g", "kg": "kg", "lb": "lb", "mcg": "microgram", "ug": "microgram", "µg": "microgram",
        "cm": "cm", "m": "m", "in": "inch", "ft": "foot", "min": "minute", "h": "hour", "hr": "hour",
        "day": "day", "mg/L": "mg/L", "mcg/mL": "microgram/mL", "ug/mL": "microgram/mL", "µg/mL": "microgram/mL",
        "mg/dL": "mg/dL", "mg*h/L": "mg*hour/L"}


@pytest.mark.parametrize("kind", ["dose", "weight", "height", "time", "conc", "exposure"])
def test_every_factor_matches_pint(kind):
    canonical, table = KINDS[kind]
    for unit, factor in table.items():
        expected = UREG.Quantity(1.0, PINT[unit]).to(PINT[canonical]).magnitude
        assert factor == pytest.approx(expected, rel=1e-12), unit


def test_creatinine_molar_mass_conversion():
    # 1 mg/dL creatinine = 88.4 umol/L (pk-sources.md 1.4: molar mass 113.12 g/mol; 10 mg/L / 113.12 = 0.0884 mmol/L)
    mmol_per_l = UREG.Quantity(1.0, "mg/dL").to("mg/L").magnitude / 113.12
    assert UMOL_PER_MG_DL == pytest.approx(mmol_per_l * 1000, rel=1e-12)
    assert parse_quantity("97.2 umol/L", "scr", "x") == pytest.approx(1.0996, abs=1e-4)  # W1: 1.1 mg/dL = 97.2 umol/L
    assert parse_quantity("88.4 µmol/L", "scr", "x") == pytest.approx(1.0, abs=1e-3)


def test_both_micro_signs_accepted():
    assert parse_quantity("500 \u00b5g", "dose", "x") == pytest.approx(0.5)
    assert parse_quantity("500 \u03bcg", "dose", "x") == pytest.approx(0.5)


def test_age_units():
    assert parse_quantity("18 month", "age", "x") == pytest.approx(1.5)
    assert parse_quantity("67 year", "age", "x") == 67.0


@pytest.mark.parametrize("text,why", [
    ("1250", "not 'number unit'"), ("1250mg", "not 'number unit'"), ("2*500 mg", "not a plain decimal"),
    ("1,250 mg", "not a plain decimal"), ("1250  mg", "not 'number unit'"), ("-5 mg", "not a plain decimal"),
    ("1e3 mg", "not a plain decimal"), ("1250 mgs", "unknown unit"), ("5 kg", "wrong kind"), ("nan mg", "not a plain"),
])
def test_rejections_name_the_field(text, why):
    with pytest.raises(InputError) as exc:
        parse_quantity(text, "dose" if why != "wrong kind" else "conc", "doses[2].amount")
    assert exc.value.field == "doses[2].amount"
    assert why in exc.value.message


def test_bare_number_rejected():
    with pytest.raises(InputError, match="bare number"):
        parse_quantity(1250, "dose", "doses[0].amount")


@given(st.text(max_size=12))
def test_never_crashes_on_any_text(text):
    try:
        v = parse_quantity(text, "conc", "levels[0].conc")
    except InputError as exc:
        assert exc.field == "levels[0].conc"
    else:
        assert v >= 0
