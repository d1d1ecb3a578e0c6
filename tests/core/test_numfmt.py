"""The rounding table (tdmtui/core/text/numfmt.py) printed as its docstring says.

Expected strings are worked by hand from the rule (common practice for
clinical display: ke to 3 significant figures, half-life 1 decimal, and so on).
"""

from __future__ import annotations

import pytest

from tdmtui.core.text import numfmt


@pytest.mark.parametrize("value, quantity, text", [
    (0.082724, "ke", "0.0827"), (0.1, "ke", "0.100"), (0.18134, "ke_per_h", "0.181"), (1.234, "ke", "1.23"),
    (8.3794, "half_life", "8.4"), (51.649, "volume", "51.6"), (0.698, "volume_kg", "0.70"),
    (4.2733, "clearance", "4.27"), (702.6, "auc", "703"), (18.24, "conc", "18.2"), (0.164, "conc", "0.16"),
    (0.004, "conc", "<0.01"), (0.0, "conc", "0"), (93.75, "rate", "93.8"), (1250.0, "dose", "1250"),
    (82.5, "dose", "82.5"), (12.0, "interval", "12"), (1.5, "infusion", "1.5"), (0.25, "infusion", "0.25"),
    (91.6, "crcl", "92"), (70.54, "weight", "70.5"), (0.90, "scr", "0.9"), (1.25, "scr", "1.25"),
    (0.634, "probability", "63"), (0.004, "probability", "<1"), (0.996, "probability", ">99"),
    (0.0, "probability", "0"), (1.0, "probability", "100"), (0.996, "share", "100"),
])
def test_rule(value, quantity, text):
    assert numfmt.num(value, quantity) == text


@pytest.mark.parametrize("value", [None, "12", True, float("nan"), float("inf")])
def test_absent_is_a_dash(value):
    assert numfmt.num(value, "conc") == "-" and numfmt.qty(value, "conc") == "-"


def test_units_and_intervals():
    assert numfmt.qty(0.0827, "ke") == "0.0827 /h"
    assert numfmt.qty(0.63, "probability") == "63 %"
    assert numfmt.qty(88.2, "egfr") == "88 mL/min/1.73 m2"
    assert numfmt.interval([312.4, 498.6], "auc24_mg_h_per_l") == "[312-499]"
    assert numfmt.interval(None, "auc") == ""


def test_every_result_key_names_a_rule():
    assert set(numfmt.KEYS.values()) <= set(numfmt.TABLE)


def test_docstring_table_lists_every_rule():
    doc_rows = {line.split()[0] for line in numfmt.__doc__.splitlines() if line.startswith("    ") and line.split()}
    assert set(numfmt.TABLE) <= doc_rows
