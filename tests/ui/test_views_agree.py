"""The app, the chart note and ``tdmtui compute`` print the same figure the same way.

Each figure is read off each view (the app's tables at 80x24, the note's text,
the command-line summary) and compared as printed; the expected strings follow
the rounding table of tdmtui/core/text/numfmt.py (ke 3 significant figures,
half-life 1 decimal, CL 2 decimals, AUC24 whole, probability whole percent).
"""

from __future__ import annotations

import json
import re
import subprocess
import sys

from textual.widgets import DataTable, Label

from tdmtui.ui.app import TdmApp
from uihelpers import settle


def cli(*args: str) -> str:
    return subprocess.run([sys.executable, "-m", "tdmtui", *args], capture_output=True, text=True,
                          check=True).stdout


def app_column(table: DataTable, label: str) -> str:
    """The used method's cell (first method column) of the row called ``label``, number only."""
    for i in range(table.row_count):
        row = table.get_row_at(i)
        if str(row[0]) == label:
            return str(row[1]).split(" [")[0].strip()
    raise AssertionError(f"no row {label!r}")


async def test_ke_half_life_and_cl_read_the_same_in_app_note_and_cli(state, sample_copy):
    path = sample_copy("vanc-steady-state.json")
    note = " ".join(cli("note", str(path)).split())
    summary = cli("compute", str(path)).splitlines()
    row = next(line for line in summary if line.startswith("two-level")).split()
    m = re.search(r"Estimate: ke (\S+) /h, t1/2 (\S+) h, Vd (\S+) L \((\S+) L/kg\), CL (\S+) L/h", note)
    assert m, "the note states the estimate"
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f5")
        table = app.screen.query_one("#est-table", DataTable)
        shown = [app_column(table, label) for label in ("ke (1/h)", "half-life (h)", "Vd (L)", "Vd (L/kg)",
                                                         "CL (L/h)")]
        auc_app = app_column(table, "AUC24 (mg*h/L)")
    assert shown == list(m.groups()) == row[1:6]
    # by hand from the two levels (40.0 and 19.0 mg/L, 9 h apart): ke = ln(40/19)/9 = 0.08272 /h,
    # printed to 3 significant figures; t1/2 = ln 2 / ke = 8.38 h, printed to 1 decimal
    assert shown[0] == "0.0827" and shown[1] == "8.4"
    assert auc_app == row[6]


async def test_probability_of_target_reads_the_same_in_estimate_plan_note_and_cli(state, sample_copy):
    path = sample_copy("tobra-us-units.json")
    raw = json.loads(path.read_text(encoding="utf-8"))
    raw["method"] = "bayesian"
    path.write_text(json.dumps(raw), encoding="utf-8")
    result = json.loads(cli("compute", str(path), "--json"))
    note = " ".join(cli("note", str(path)).split())
    summary = cli("compute", str(path))
    proposal = result["regimen"]["predicted"]["target_probability"]
    current = result["estimate"]["target_probability"]
    m = re.search(r"chance of meeting the target (\S+ %)", note)
    assert m
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f5")
        title = str(app.screen.query_one("#est-title", Label).content)
        await pilot.press("f6")
        plan = app.screen.query_one("#plan-table", DataTable)
        first = [str(c) for c in plan.get_row_at(0)]
    # whole percent of the engine's fraction (numfmt's table)
    assert f"P(target) {round(100 * current)} %" in title
    assert first[-1] == m.group(1) == f"{round(100 * proposal)} %"
    assert f"chance of target {round(100 * proposal)} %" in " ".join(summary.split())
