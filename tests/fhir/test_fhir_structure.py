"""The sample exports have the FHIR structure, checked by an outside reference: the fhir.resources models.

fhir.resources (R4B models, pydantic) is an outside library; the importer does
not use it to map values. A broken resource must fail the same check, so the
check is shown to be able to fail.
"""

from __future__ import annotations

import copy
import json

import pytest
from fhirdata import FHIR_SAMPLES, bundle, data

from tdmtui.core.errors import InputError
from tdmtui.core.fhir.structure import check_structure, structure_errors

EXPORTS = sorted(p for p in FHIR_SAMPLES.glob("*.json") if not p.name.endswith(".case.json"))


def test_there_is_an_export_for_each_drug():
    names = " ".join(p.name for p in EXPORTS)
    for drug in ("vanc", "gent", "tobra", "amikacin"):
        assert drug in names


@pytest.mark.parametrize("path", EXPORTS, ids=lambda p: p.name)
def test_sample_export_has_the_fhir_structure(path):
    assert structure_errors(json.loads(path.read_text(encoding="utf-8"))) == []
    check_structure(path.read_bytes())


def test_the_test_bundle_has_the_fhir_structure():
    assert structure_errors(bundle()) == []


def test_a_broken_resource_fails_the_structure_check():
    b = copy.deepcopy(bundle())
    b["entry"][5]["resource"]["effectivePeriod"]["start"] = "yesterday"
    del b["entry"][6]["resource"]["subject"]
    errors = structure_errors(b)
    assert any("effectivePeriod.start" in e for e in errors)
    assert any("subject" in e for e in errors)
    with pytest.raises(InputError) as err:
        check_structure(data(b))
    assert "not FHIR R4 structure" in err.value.message


def test_a_missing_extra_is_a_clear_message(monkeypatch):
    import builtins

    real = builtins.__import__

    def no_fhir(name, *args, **kw):  # noqa: ANN001, ANN202
        if name.startswith("fhir.resources"):
            raise ImportError(name)
        return real(name, *args, **kw)

    monkeypatch.setattr(builtins, "__import__", no_fhir)
    with pytest.raises(InputError) as err:
        check_structure(data(bundle()))
    assert "pip install 'tdmtui[fhir]'" in err.value.message
