"""Extended-interval aminoglycosides use the level: the chart where it applies, the estimate beside it.

References: pk-sources.md 4.3 (Hartford q24h line 7.6 mg/L at 6 h and 2.0 mg/L at 14 h after the
start, confirmed-secondary; straight on a linear axis it reads 5.5 mg/L at 9 h, derived there) and
worked example W6 (560 mg over 1 h, 4.2 mg/L at 9 h: below the line, q24h).
"""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest

from tdmtui.core.compute import compute_raw

ROOT = Path(__file__).resolve().parents[2]


def _raw(conc: str, method: str = "auto") -> dict:
    raw = json.loads((ROOT / "sample_cases" / "gent-extended.json").read_text())
    raw = copy.deepcopy(raw)
    raw["method"] = method
    raw["levels"][0]["conc"] = conc
    return raw


def test_auto_reads_the_chart_on_an_extended_course_and_shows_the_estimate():
    # W6: 4.2 mg/L at 9 h is under the q24h line (5.5 mg/L there): q24h, the standing order continues
    res = compute_raw(_raw("4.2 mg/L")).result
    assert res["method"] not in ("population", "nomogram")  # the individualised estimate is the method
    assert res["estimate"]["levels_used"] == ["levels[0]"]
    reg = res["regimen"]
    assert reg["nomogram"]["zone"] == "q24h" and reg["interval_h"] == 24.0
    assert "nomogram-auto" in {w["code"] for w in res["warnings"]}


@pytest.mark.parametrize("conc", ["6.5 mg/L", "8.0 mg/L", "12.0 mg/L"])
def test_a_level_above_the_q24h_line_is_never_answered_with_q24h(conc):
    # above 5.5 mg/L at 9 h (pk-sources.md 4.3): the estimate sets an interval longer than 24 h
    for method in ("auto", "nomogram"):
        res = compute_raw(_raw(conc, method)).result
        reg = res.get("regimen")
        if reg is None:  # a stop (above a protocol's top line) is also not a q24h dose
            assert res["status"] == "stop"
            continue
        assert reg["nomogram"]["zone"] != "q24h"
        assert reg["interval_h"] > 24.0
        for alt in reg.get("alternatives", []):
            assert alt["interval_h"] > 24.0
