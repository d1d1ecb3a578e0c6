"""The method registry: every list of methods reads it, and the method used is the record's.

Sources: the lists themselves (case validation, the CLI parser, the app's
method field, the note's text) compared with the registry; ``auto``'s order as
case-format.md states it (two-level, then a Bayesian estimate on a model
verified against its paper, then the population estimate).
"""

from __future__ import annotations

import json

import pytest

from casedata import SAMPLES
from tdmtui.cli import _sub_parser
from tdmtui.core.input import case as case_mod
from tdmtui.core.input import casetypes
from tdmtui.core import registry
from tdmtui.core.text import noteplan
from tdmtui.core.input.case import load_case
from tdmtui.core.compute import compute
from tdmtui.core.errors import InputError
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.models import PKParams
from tdmtui.core.registry import Method, MethodRun


def test_every_entry_point_resolves_to_a_function():
    for m in registry.METHODS:
        for name in (m.estimate, m.refit, m.alerts):
            if name is not None:
                assert callable(registry.entry(name)), f"{m.id}: {name}"


def test_every_list_of_methods_is_the_registry():
    choices = registry.CHOICES
    assert choices[0] == "auto"
    assert set(choices) >= {"auto", "two-level", "sawchuk-zaske", "least-squares", "bayesian", "population",
                            "one-level", "nomogram"}
    assert casetypes.METHODS == choices
    action = next(a for a in _sub_parser("compute")._actions if "--method" in a.option_strings)
    assert tuple(action.choices) == choices
    assert set(noteplan.METHOD_TEXT) == set(choices) - {"auto"}
    from tdmtui.ui.sections.patient import FIELDS

    spec = next(f for f in FIELDS if f.key == "method")
    assert tuple(spec.options) == choices


def test_nomogram_is_a_regimen_option_not_a_method():
    assert registry.get("nomogram") is None
    assert registry.option("nomogram") is not None
    assert registry.split_choice("nomogram") == ("auto", "nomogram")
    assert registry.split_choice("bayesian") == ("bayesian", None)


def test_old_case_with_nomogram_loads_and_the_estimate_beside_it_is_autos():
    raw = json.loads((SAMPLES / "gent-extended.json").read_text())
    raw["method"] = "nomogram"
    case = case_mod.parse_case(raw)
    assert case.method == "nomogram"
    chart = compute(case).result
    auto = compute(case, method="auto").result
    assert chart["method"] == "nomogram"
    assert chart["estimate"]["method"] == auto["method"]
    assert chart["regimen"]["nomogram"]  # the chart reading is in the regimen
    assert auto["method"] != "nomogram"  # auto names the estimation method, even where it reads the chart


def test_unknown_method_names_the_field():
    raw = json.loads((SAMPLES / "vanc-steady-state.json").read_text())
    raw["method"] = "guess"
    with pytest.raises(InputError) as exc:
        case_mod.parse_case(raw)
    assert "method" in str(exc.value)


def test_auto_order_is_the_documented_one():
    """case-format.md: two-level, else Bayesian, else a one-level method, population last."""
    order = [m.id for m in registry.auto_order()]
    assert order[:2] == ["two-level", "bayesian"] and order[-1] == "population"
    assert set(order[2:-1]) <= {"continuous-steady-state", "one-level"}


def _fixed_estimate(ctx):
    return MethodRun({"fixed-test": Estimate("fixed-test", PKParams.one_compartment(0.1, 50.0), [], [], "test")})


def test_a_new_method_is_one_record(monkeypatch):
    """A record added to the table runs beside the others, can be auto's first choice, and is refitted by nobody."""
    rec = Method("fixed-test", "a fixed estimate for the test", estimate=f"{__name__}:_fixed_estimate", auto_rank=0)
    monkeypatch.setattr(registry, "METHODS", registry.METHODS + (rec,))
    monkeypatch.setitem(registry._BY_ID, rec.id, rec)
    case = load_case(SAMPLES / "vanc-steady-state.json")
    out = compute(case).result
    assert out["method"] == "fixed-test"
    assert out["estimate"]["ke_per_h"] == pytest.approx(0.1)
    assert out["timing_sensitivity"] == []
    assert "two-level" in out["methods"]


def test_renal_replacement_refusal_comes_from_the_record():
    case = load_case(SAMPLES / "vanc-stop-dialysis.json")
    out = compute(case).result
    for m in registry.METHODS:
        if not m.with_renal_replacement and m.min_levels == 0 and m.when is None:
            assert out["methods_unavailable"][m.id] == registry.RRT_REFUSAL
