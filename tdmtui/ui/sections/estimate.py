"""Estimate: every method side by side, the working, and the plot."""

from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.widgets import ContentSwitcher, DataTable, Label, Static

from tdmtui.ui import formatting as fm
from tdmtui.ui.safety import caution_line
from tdmtui.ui.sections.weights import weights_text
from tdmtui.ui.widgets.plot import ConcPlot

#: (row label, key in the estimate dict or in its "current" dict, display key)
ROWS = (
    ("ke (1/h)", "ke_per_h", "ke_per_h"),
    ("half-life (h)", "half_life_h", "half_life_h"),
    ("Vd (L)", "vd_l", "vd_l"),
    ("Vd (L/kg)", "vd_l_per_kg", "vd_l_per_kg"),
    ("CL (L/h)", "cl_l_per_h", "cl_l_per_h"),
    ("AUC24 (mg*h/L)", "current.auc24_mg_h_per_l", "auc24_mg_h_per_l"),
    ("ss peak (mg/L)", "current.peak_mg_per_l", "peak_mg_per_l"),
    ("ss trough (mg/L)", "current.trough_mg_per_l", "trough_mg_per_l"),
)


def cell(est: dict[str, Any], key: str, disp: str) -> str:
    """One table cell: the rounded value, with its 90 % interval where the method gives one."""
    if key.startswith("current."):
        value = (est.get("current") or {}).get(key.split(".", 1)[1])
        key = key.split(".", 1)[1]
    else:
        value = est.get(key)
    text = fm.num(value, disp)
    iv = fm.interval((est.get("interval90") or {}).get(key), disp)
    return f"{text} {iv}" if iv else text


def method_columns(result: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """(column title, estimate dict): the method used first, marked "*", then the others."""
    cols: list[tuple[str, dict[str, Any]]] = []
    if result.get("estimate"):
        used = result.get("method")
        if used == "bayesian" and (result["estimate"].get("model") or {}).get("id"):
            used = "bay:" + result["estimate"]["model"]["id"].split("-", 1)[-1]
        cols.append((f"{used}*", result["estimate"]))
    for name, est in (result.get("methods") or {}).items():
        if name == "bayesian" and (est.get("model") or {}).get("id"):
            name = f"bayesian:{est['model']['id']}"  # say which model the primary Bayesian estimate used
        if ":" in name:  # "population:vancomycin-some-model" -> "pop:some-model"
            family, model = name.split(":", 1)
            name = f"{family[:3]}:{model.split('-', 1)[-1]}"
        cols.append((name[:18], est))
    return cols


class EstimateSection(Vertical):
    """Views: t table, w working, g graph, m models (the model average's weights)."""

    BINDINGS = [
        Binding("t", "view('est-table')", "Table", id="estimate.table"),
        Binding("w", "view('est-working')", "Working", id="estimate.working"),
        Binding("g", "view('est-graph')", "Graph", id="estimate.graph"),
        Binding("m", "view('est-models')", "Models", id="estimate.models"),
    ]

    def compose(self) -> ComposeResult:
        yield Label("No estimate yet.", id="est-title", classes="section-title", markup=False)
        with ContentSwitcher(initial="est-table", id="est-views"):
            yield DataTable(cursor_type="cell", id="est-table", zebra_stripes=True, fixed_columns=1)
            with VerticalScroll(id="est-working"):
                yield Static("", id="est-working-text", markup=False)
            yield ConcPlot(id="est-graph")
            with VerticalScroll(id="est-models"):
                yield Static("", id="est-models-text", markup=False)
        yield Label(caution_line(), classes="caution", markup=False)

    def action_view(self, view: str) -> None:
        """Switch between table, working and graph."""
        self.query_one(ContentSwitcher).current = view
        self.query_one(f"#{view}").focus()

    def show(self, outcome: Any) -> None:
        """Fill the views from an Outcome (None: clear them); the graph builds its curves when it is drawn."""
        table = self.query_one("#est-table", DataTable)
        table.clear(columns=True)
        result = outcome.result if outcome is not None else {}
        cols = method_columns(result)
        title = self.query_one("#est-title", Label)
        if not cols:
            title.update("No estimate: see the message below and the warnings.")
        elif not result.get("estimate"):
            title.update("No estimate is used (a STOP stands): the methods below are for reference only.")
        else:
            used = result.get("estimate") or {}
            extra = ""
            if used.get("target_probability") is not None:
                extra = f"; P(target) {fm.qty(used['target_probability'], 'probability')}"
            title.update(f"Used: {result.get('method')} (*){extra}. Arrows scroll; t table w working g graph")
        table.add_column("", key="label")
        for name, _ in cols:
            table.add_column(name, key=name)
        for label, key, disp in ROWS:
            table.add_row(label, *[Text(cell(est, key, disp), justify="right") for _, est in cols])
        if cols:
            table.add_row("levels used", *[", ".join("#" + str(int(x.strip("levels[]")) + 1) for x in est.get("levels_used", [])) or "none"
                                           for _, est in cols])
        self.query_one("#est-working-text", Static).update(working_text(outcome))
        self.query_one(ConcPlot).show_outcome(outcome)
        self.query_one("#est-models-text", Static).update(weights_text(result) if cols else "No estimate yet.")


def working_text(outcome: Any) -> str:
    """The working of the note (to check by hand), then the engine's own steps with their numbers."""
    if outcome is None or not outcome.result.get("estimate"):
        return "No working to show."
    from tdmtui.core.note import chosen_of
    from tdmtui.core.noteplan import working_block

    lines = working_block(outcome, chosen_of(outcome)[0]) + ["", "How the engine solved it:"]
    for i, w in enumerate(outcome.working, 1):
        lines.append(f"{i}. {w.title}" + (f"  [{w.method}]" if w.method else ""))
        lines.append(f"   {w.equation}")
        if w.substituted:
            lines.append(f"   = {w.substituted}")
        if w.value:
            lines.append(f"   -> {w.value}")
    return "\n".join(lines)
