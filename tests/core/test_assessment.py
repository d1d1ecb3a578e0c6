"""The assessment compute() returns is one frozen object: views render it and cannot change it."""

from __future__ import annotations

import dataclasses

import pytest

from casedata import SAMPLES
from tdmtui.core.input.case import load_case
from tdmtui.core.compute import Outcome, compute
from tdmtui.core.course.history import CurrentRegimen
from tdmtui.core.regimen import types


@pytest.fixture(scope="module")
def outcome() -> Outcome:
    return compute(load_case(SAMPLES / "vanc-steady-state.json"))


def test_outcome_is_frozen(outcome):
    with pytest.raises(dataclasses.FrozenInstanceError):
        outcome.plot_data = object()  # type: ignore[attr-defined]
    with pytest.raises(dataclasses.FrozenInstanceError):
        outcome.result = {}  # type: ignore[misc]
    assert isinstance(outcome.alerts, tuple) and isinstance(outcome.working, tuple)


def test_typed_fields_are_the_result_objects_source(outcome):
    res = outcome.result
    assert outcome.method_used == res["method"]
    assert outcome.regimen_plan is not None and outcome.regimen_plan.regimen == res["regimen"]
    assert [a.to_dict() for a in outcome.alerts] == res["warnings"]
    assert [w.to_dict() for w in outcome.working] == res["working"]
    assert outcome.params is outcome.estimates[outcome.method_used].params


def test_with_result_leaves_the_assessment_alone(outcome):
    before = outcome.result["input_saved"]
    saved = outcome.with_result(input_saved=not before)
    assert saved.result["input_saved"] is (not before) and outcome.result["input_saved"] is before
    assert saved.params is outcome.params and saved.case is outcome.case


def test_one_standing_order_type():
    assert types.CurrentRegimen is CurrentRegimen
    assert CurrentRegimen(1000.0, 12.0, 1.0).source == ""
