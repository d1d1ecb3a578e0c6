"""The drug library: every clinical value carries its source; protocols override and say so."""

from __future__ import annotations

import pytest

from tdmtui.core.errors import InputError
from tdmtui.core.library import DRUGS, Rules, load_protocol


@pytest.mark.parametrize("drug", DRUGS)
def test_every_value_has_a_source(drug):
    r = Rules(drug)
    missing = [k for k in r.keys() if not isinstance(r.get(k), dict) and not r.citation(k)
               and not k.startswith(("conditions.", "drug.", "nephrotoxins."))]
    assert not missing, missing


def test_guideline_numbers_in_library():
    # 2020 vancomycin consensus guideline: AUC24 400-600 at MIC 1 (pk-sources.md 3.1, confirmed)
    assert Rules("vancomycin").value("targets.auc24") == [400.0, 600.0]
    # loading maximum 3,000 mg (2020 guideline, confirmed-secondary); no faster than 1 g/h
    assert Rules("vancomycin").value("loading.max_mg") == 3000.0
    assert Rules("vancomycin").value("regimen.max_rate_mg_per_h") == 1000.0
    # KDIGO 2012: gentamicin peak 8 +- 2, amikacin peak 20 +- 5 (confirmed text)
    assert Rules("gentamicin").value("targets.peak") == [6.0, 10.0]
    assert Rules("amikacin").value("targets.peak") == [15.0, 25.0]
    # common practice: post-distribution windows 1 h vancomycin, 0.5 h aminoglycosides
    assert Rules("vancomycin").value("windows.post_distribution_h") == 1.0
    assert Rules("tobramycin").value("windows.post_distribution_h") == 0.5


def test_protocol_overrides_and_is_named(tmp_path):
    p = tmp_path / "protocol.toml"
    p.write_text('name = "Ward 7 test protocol"\n[vancomycin.targets.auc24]\nvalue = [400.0, 550.0]\n'
                 'source = "local committee 2026"\n[common.renal.scr_floor_mg_dl]\nvalue = 0.8\nsource = "local"\n',
                 encoding="utf-8")
    proto = load_protocol(p)
    r = Rules("vancomycin", proto)
    assert r.value("targets.auc24") == [400.0, 550.0]
    assert r.source("targets.auc24") == "protocol"
    assert r.value("renal.scr_floor_mg_dl") == 0.8
    assert r.source("regimen.rounding_mg") == "library"
    assert proto.name == "Ward 7 test protocol" and len(proto.sha256) == 64


def test_bad_protocol_names_itself(tmp_path):
    p = tmp_path / "protocol.toml"
    p.write_text("[nonsense.x]\nvalue = 1\n", encoding="utf-8")
    with pytest.raises(InputError) as exc:
        load_protocol(p)
    assert exc.value.field == "protocol.nonsense"


def test_model_files_are_named_by_id_and_drug_so_one_drug_parses_only_its_own():
    # Convention (DEVELOPERS.md): models/<id>.toml with id = "<drug>-...": a case reads only its drug's files.
    from importlib import resources

    import tdmtui.core.library as lib

    root = resources.files(lib.__name__).joinpath("models")
    names = sorted(p.name for p in root.iterdir() if p.name.endswith(".toml"))
    for data in lib.model_files():
        assert f"{data['id']}.toml" in names
        assert data["id"].startswith(f"{data['drug']}-")
    assert {d["id"] for d in lib.model_files("vancomycin")} == {n[:-5] for n in names if n.startswith("vancomycin-")}
    gent = lib.model_files("gentamicin")
    assert gent and all(d["drug"] == "gentamicin" for d in gent)
