"""The local protocol is checked key by key, and no protocol can raise the never-exceed limits.

Limits come from pk-sources.md 3.1 (vancomycin: 3,000 mg loading maximum,
confirmed-secondary; 1 g/h, confirmed-secondary; 60 mg/kg/day continuous,
from memory) and design choices for the aminoglycosides, as the library file
says beside each value.
"""

from __future__ import annotations

import copy
import sys

import pytest

from casedata import ROOT, base_case
from tdmtui.core.input.case import parse_case
from tdmtui.core.compute import compute
from tdmtui.core.errors import InputError
from tdmtui.core.library import DRUGS, _drug_flat, load_protocol, never_exceed, protocol_from_tree
from tdmtui.core.library.protocolcheck import check_value
from tdmtui.core.library.schema import SCHEMA

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib


def refused(tree: dict) -> InputError:
    with pytest.raises(InputError) as info:
        protocol_from_tree(tree, "0" * 64)
    return info.value


def leaf(value, **extra) -> dict:
    return {"value": value, "source": "test", **extra}


def test_every_library_value_is_in_the_schema_and_passes_it():
    """Adding a library key a protocol may set needs its one-line schema entry (DEVELOPERS.md)."""
    for drug in DRUGS:
        for key, (value, _src) in _drug_flat(drug).items():
            if key.startswith(("drug.", "never_exceed", "conditions.")) or (isinstance(value, dict) and key not in SCHEMA):
                continue  # the library's own identity, its limits, and tables that only group keys
            assert key in SCHEMA, f"{drug}: library key {key} has no schema entry"
            check_value(value, SCHEMA[key], key)


def test_slips_are_errors_naming_the_key():
    cases = [
        ({"vancomycin": {"regimen": {"intervals_h": leaf(["2"])}}}, "protocol.vancomycin.regimen.intervals_h[0]", "number"),
        ({"vancomycin": {"regimen": {"rounding_mg": leaf("250")}}}, "protocol.vancomycin.regimen.rounding_mg", "number"),
        ({"vancomycin": {"regimen": {"rounding_mg": leaf(2500.0)}}}, "protocol.vancomycin.regimen.rounding_mg", "outside"),
        ({"vancomycin": {"regimen": {"roundng_mg": leaf(250.0)}}}, "protocol.vancomycin.regimen.roundng_mg", "unknown"),
        ({"vancomycin": {"loading": {"max_mg": leaf(23000.0)}}}, "protocol.vancomycin.loading.max_mg", "outside"),
        ({"vancomycin": {"loading": {"max_mg": leaf(3000.0, unit="g")}}}, "protocol.vancomycin.loading.max_mg.unit", "mg"),
        ({"vancomycin": {"targets": {"auc24": leaf([600.0, 400.0])}}}, "protocol.vancomycin.targets.auc24", "low below"),
        ({"vancomycin": {"extended": {"mg_per_kg": leaf(7.0)}}}, "protocol.vancomycin.extended.mg_per_kg", "not used"),
        ({"vancomycin": {"never_exceed": {"single_dose_mg": leaf(1e5)}}},
         "protocol.vancomycin.never_exceed.single_dose_mg", "cannot be set"),
        ({"vancomycin": {"regimen": {"max_rate_mg_per_h": leaf(float("nan"))}}},
         "protocol.vancomycin.regimen.max_rate_mg_per_h", "number"),
        ({"vancomycin": {"regimen": {"admin_times": leaf({"x": ["08:00"]})}}},
         "protocol.vancomycin.regimen.admin_times.x", "interval"),
        ({"vancomycin": {"regimen": {"admin_times": leaf(["8 am"])}}}, "protocol.vancomycin.regimen.admin_times", "HH:MM"),
        ({"gentamicin": {"targets": {"variants": leaf({"uti": {"peek": [4.0, 6.0]}})}}},
         "protocol.gentamicin.targets.variants.uti.peek", "unknown"),
        ({"vancomycn": {}}, "protocol.vancomycn", "drug id"),
    ]
    for tree, field, words in cases:
        exc = refused(tree)
        assert exc.field == field and words in exc.message, (field, exc.field, exc.message)


def test_a_protocol_cannot_raise_the_limits_and_a_proposal_beyond_them_is_a_stop():
    """Every cap raised to the schema's edge and a target band far up: the guard withdraws the proposal."""
    tree = {"vancomycin": {
        "targets": {"auc24": leaf([1300.0, 1500.0])},
        "regimen": {"max_single_dose_mg": leaf(9000.0), "max_daily_dose_mg": leaf(20000.0),
                    "max_rate_mg_per_h": leaf(9000.0), "min_infusion_h": leaf(0.0)},
        "loading": {"max_mg": leaf(5000.0), "mg_per_kg": leaf(50.0)},
    }}
    raw = base_case()
    out = compute(parse_case(raw), protocol_from_tree(tree, "0" * 64))
    codes = {w["code"]: w for w in out.result["warnings"]}
    assert out.result["status"] == "stop" and "regimen" not in out.result
    assert "never-exceed" in codes and "3,000 mg" in codes["never-exceed"]["message"]
    assert never_exceed("vancomycin")["single_dose_mg"][0] == 3000.0  # the library's, whatever the protocol said
    # the same case without the protocol is proposed normally
    assert compute(parse_case(copy.deepcopy(raw))).result.get("regimen")


def test_the_library_limits_cover_every_drug_with_a_source():
    keys = {"single_dose_mg", "loading_dose_mg", "single_dose_mg_per_kg", "daily_dose_mg", "daily_dose_mg_per_kg",
            "rate_mg_per_h"}
    for drug in DRUGS:
        limits = never_exceed(drug)
        assert set(limits) == keys, drug
        assert all(v > 0 and len(src) > 20 for v, src in limits.values())
        # every library cap a protocol starts from lies within the limits
        flat = _drug_flat(drug)
        assert flat["regimen.max_single_dose_mg"][0] <= limits["single_dose_mg"][0]


def test_example_protocol_loads():
    proto = load_protocol(ROOT / "docs" / "protocol-example.toml")
    tree = tomllib.loads((ROOT / "docs" / "protocol-example.toml").read_text("utf-8"))
    assert set(proto.overrides) == {k for k in tree if k in DRUGS or k == "common"}
