"""The note merges cautions of one cause from each warning's facts, never from its wording.

Facts (docs/estimates.md) are the figures and advice the engine's message words; here every message
is replaced by other words and the merged cautions must come out the same (common practice for the
chart note: one caution per cause, the figures as computed).
"""

from __future__ import annotations

import copy
from pathlib import Path

import pytest

from tdmtui.core.compute import compute
from tdmtui.core.input.case import load_case
from tdmtui.core.text import notewarn

SAMPLES = Path(__file__).resolve().parents[2] / "sample_cases"


def _reworded(result: dict) -> dict:
    out = copy.deepcopy(result)
    for w in out["warnings"]:
        if w.get("facts"):
            w["message"] = "worded otherwise: " + w["message"].upper()
    return out


@pytest.mark.parametrize(("name", "method", "merged"), [
    ("vanc-high-auc", None, "and trough"),  # auc-toxic with trough-high: one caution, both findings
    ("vanc-rising-scr", None, "SCr rose from"),  # an SCr rise, its figures from the facts
    ("vanc-rising-scr", None, "piperacillin-tazobactam and furosemide with vancomycin"),  # two nephrotoxins
    ("vanc-obese", None, "these levels lie where the two-compartment curve still bends"),
])
def test_merged_cautions_do_not_depend_on_the_wording(name: str, method: str | None, merged: str) -> None:
    result = compute(load_case(SAMPLES / f"{name}.json"), method=method).result
    shown = [w for w in result["warnings"] if w["severity"] != "info"]
    before = notewarn.cautions(result, shown)
    texts = [t for _, t in before if merged in t]
    assert texts, before
    again = _reworded(result)
    after = notewarn.cautions(again, [w for w in again["warnings"] if w["severity"] != "info"])
    assert [t for _, t in after if merged in t] == texts
    assert len(after) == len(before)


def test_a_hold_is_read_from_the_facts() -> None:
    from tdmtui.core.alerts import Alert
    from tdmtui.core.regimen.exposure import calls_for_hold

    hold = Alert("trough-high", "caution", "", "any words", {"advice": "hold", "limit": "20"})
    correct = Alert("trough-high", "caution", "", "hold the next dose (these words do not decide)",
                    {"advice": "correct", "limit": "20"})
    assert calls_for_hold([hold]) and not calls_for_hold([correct])


def test_a_warning_without_facts_is_given_as_raised() -> None:
    result = compute(load_case(SAMPLES / "vanc-rising-scr.json")).result
    bare = copy.deepcopy(result)
    for w in bare["warnings"]:
        w.pop("facts", None)
    shown = [w for w in bare["warnings"] if w["severity"] != "info"]
    texts = [t for _, t in notewarn.cautions(bare, shown)]
    assert sum("added nephrotoxic risk" in t for t in texts) == 2  # nothing merged, nothing lost
    assert any(t.startswith("AUC24 921 mg*h/L predicted at steady state") for t in texts)
    assert any(t.startswith("measured trough 30.2 mg/L") for t in texts)
