"""The protocol's [local_codes] section: what a site may write, and the errors for what it may not."""

from __future__ import annotations

import pytest
from fhirdata import SITE_CODES

from tdmtui.core.errors import InputError
from tdmtui.core.library import load_protocol


def proto(tmp_path, body: str):  # noqa: ANN001, ANN201
    p = tmp_path / "p.toml"
    p.write_text('name = "t"\n' + body, encoding="utf-8")
    return load_protocol(p)


def test_the_sample_site_file_reads():
    codes = load_protocol(SITE_CODES).local_codes
    assert codes["http://lab.example.org/codes|AMIK"].kind == "level"
    assert codes["http://lab.example.org/codes|AMIK"].what == "amikacin"
    assert codes["http://loinc.org|14682-9"].what == "scr"


def test_a_unit_for_values_without_a_ucum_code(tmp_path):
    p = proto(tmp_path, '[local_codes."urn:oid:1.2.3|CREA"]\nanalyte = "scr"\nunit = "umol/L"\nsource = "lab"\n')
    assert p.local_codes["urn:oid:1.2.3|CREA"].unit == "umol/L"


@pytest.mark.parametrize("body, field, words", [
    ('[local_codes."NOBAR"]\nlevel = "vancomycin"\nsource = "x"\n', 'protocol.local_codes."NOBAR"', "system|code"),
    ('[local_codes."s|c"]\nlevel = "teicoplanin"\nsource = "x"\n', 'protocol.local_codes."s|c".level', "not one of"),
    ('[local_codes."s|c"]\nanalyte = "potassium"\nsource = "x"\n', 'protocol.local_codes."s|c".analyte', "not one of"),
    ('[local_codes."s|c"]\nlevel = "vancomycin"\n', 'protocol.local_codes."s|c".source', "who checked"),
    ('[local_codes."s|c"]\nlevel = "vancomycin"\nanalyte = "scr"\nsource = "x"\n', 'protocol.local_codes."s|c"',
     "exactly one"),
    ('[local_codes."s|c"]\nlevel = "vancomycin"\ntiming = "trough"\nsource = "x"\n',
     'protocol.local_codes."s|c".timing', "unknown key"),
    ('[local_codes."s|c"]\nanalyte = "weight"\nunit = "stone"\nsource = "x"\n', 'protocol.local_codes."s|c".unit',
     "not one of"),
    ('local_codes = 3\n', "protocol.local_codes", "expected a table"),
])
def test_mistakes_name_the_key(tmp_path, body, field, words):
    with pytest.raises(InputError) as err:
        proto(tmp_path, body)
    assert err.value.field == field and words in err.value.message


def test_local_codes_change_no_dosing_value(tmp_path):
    p = proto(tmp_path, '[local_codes."s|c"]\nlevel = "vancomycin"\nsource = "x"\n')
    assert p.overrides == {}
