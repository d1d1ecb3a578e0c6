"""Estimate: every method side by side, the working, and the plot."""

from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.widgets import ContentSwitcher, DataTable, Label, Static

from tdmtui.ui import estcolumns
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


def cell(est: dict[str, Any], key: str, disp: str, with_interval: bool = True) -> str:
    """One table cell: the rounded value, with its 90 % interval where the method gives one."""
    if key.startswith("current."):
        value = (est.get("current") or {}).get(key.split(".", 1)[1])
        key = key.split(".", 1)[1]
    else:
        value = est.get(key)
    text = fm.num(value, disp)
    iv = fm.interval((est.get("interval90") or {}).get(key), disp) if with_interval else ""
    return f"{text} {iv}" if iv else text


class EstimateSection(Vertical):
    """Views: t table, w working, g graph, m models (the model average's weights)."""

    BINDINGS = [
        Binding("t", "view('est-table')", "Table", id="estimate.table"),
        Binding("w", "view('est-working')", "Working", id="estimate.working"),
        Binding("g", "view('est-graph')", "Graph", id="estimate.graph"),
        Binding("m", "view('est-models')", "Models", id="estimate.models"),
        Binding("right_square_bracket", "page(1)", "More methods", show=False, id="estimate.next"),
        Binding("left_square_bracket", "page(-1)", "Back", show=False, id="estimate.previous"),
    ]

    cols: list[tuple[str, dict[str, Any]]] = []
    page = 0
    n_pages = 1
    used_marked = False

    def compose(self) -> ComposeResult:
        yield Label("No estimate yet.", id="est-title", classes="section-title", markup=False)
        with ContentSwitcher(initial="est-table", id="est-views"):
            yield DataTable(cursor_type="cell", id="est-table", zebra_stripes=True, fixed_columns=1, header_height=2)
            with VerticalScroll(id="est-working"):
                yield Static("", id="est-working-text", markup=False)
            yield ConcPlot(id="est-graph")
            with VerticalScroll(id="est-models"):
                yield Static("", id="est-models-text", markup=False)
        yield Label(caution_line(), classes="caution", markup=False)

    def action_view(self, view: str) -> None:
        """Switch between table, working and graph (the title names a page only over the table)."""
        self.query_one(ContentSwitcher).current = view
        self.query_one(f"#{view}").focus()
        self.query_one("#est-title", Label).update(self.title_text(self.n_pages))

    def show(self, outcome: Any) -> None:
        """Fill the views from an Outcome (None: clear them); the graph builds its curves when it is drawn."""
        result = outcome.result if outcome is not None else {}
        self.cols = estcolumns.columns(result)
        self.used_marked = bool(result.get("estimate"))
        self.page = 0
        self.fill_table()
        self.query_one("#est-working-text", Static).update(working_text(outcome))
        self.query_one(ConcPlot).show_outcome(outcome)
        self.query_one("#est-models-text", Static).update(weights_text(result) if self.cols else "No estimate yet.")

    def action_page(self, step: int) -> None:
        """The next or previous page of methods (the row labels and the method used stay); the table's keys."""
        if self.query_one("#est-views", ContentSwitcher).current != "est-table":
            return
        self.page += step
        self.fill_table()

    def on_resize(self) -> None:
        self.fill_table()

    def table_pages(self) -> tuple[list[str], list[list[int]]]:
        """Every column's cells (labels first), and the pages of the other methods that fit the width."""
        # the 90 % interval beside the method used (the others': the note's full detail, f in the note)
        texts = [[cell(est, key, disp, with_interval=(i == 0 and self.used_marked)) for _, key, disp in ROWS]
                 + [levels_cell(est)] for i, (_, est) in enumerate(self.cols)]
        widths = [max([len(t) for t in col] + [len(x) for x in estcolumns.header(name, i == 0).splitlines()])
                  for i, ((name, _), col) in enumerate(zip(self.cols, texts))]
        fixed = max(len(r[0]) for r in ROWS) + estcolumns.PAD
        keep = 1 if self.used_marked else 0
        fixed += sum(w + estcolumns.PAD for w in widths[:keep])
        room = (self.size.width or 80) - 1
        return texts, [[i + keep for i in pg] for pg in estcolumns.pages(widths[keep:], fixed, room)]

    def fill_table(self) -> None:
        """The label column, the method used, and this page of the others; the title says which page."""
        table = self.query_one("#est-table", DataTable)
        table.clear(columns=True)
        texts, pages = self.table_pages()
        self.page = max(0, min(self.page, len(pages) - 1))
        self.n_pages = len(pages)
        shown = ([0] if self.used_marked else []) + [i for i in pages[self.page] if i < len(self.cols)]
        table.add_column("\n", key="label")
        for i in shown:
            table.add_column(estcolumns.header(self.cols[i][0], self.used_marked and i == 0), key=f"m{i}")
        labels = [r[0] for r in ROWS] + ["levels used"] if self.cols else []
        for r, label in enumerate(labels):
            table.add_row(label, *[Text(texts[i][r], justify="right") for i in shown])
        self.query_one("#est-title", Label).update(self.title_text(len(pages)))

    def title_text(self, n_pages: int) -> str:
        """What the table shows: the method used, its chance of target, which page of the others."""
        if not self.cols:
            return "No estimate: see the message below and the warnings."
        on_table = self.query_one("#est-views", ContentSwitcher).current == "est-table"
        more = f"  Page {self.page + 1}/{n_pages}: ] next, [ back" if n_pages > 1 and on_table else ""
        if not self.used_marked:
            return "No estimate used (a STOP stands); for reference only." + more
        name, used = self.cols[0]
        extra = ""
        if used.get("target_probability") is not None:
            extra = f"; P(target) {fm.qty(used['target_probability'], 'probability')}"
        return f"* used: {name}{extra}{more}"


def levels_cell(est: dict[str, Any]) -> str:
    """The levels an estimate used, numbered as the levels table shows them."""
    return ", ".join("#" + str(int(x.strip("levels[]")) + 1) for x in est.get("levels_used", [])) or "none"


def working_text(outcome: Any) -> str:
    """The working of the note (to check by hand), then the engine's own steps with their numbers."""
    if outcome is None or not outcome.result.get("estimate"):
        return "No working to show."
    from tdmtui.core.text.note import chosen_of
    from tdmtui.core.text.noteplan import working_block

    lines = working_block(outcome, chosen_of(outcome)[0]) + ["", "How the engine solved it:"]
    for i, w in enumerate(outcome.working, 1):
        lines.append(f"{i}. {w.title}" + (f"  [{w.method}]" if w.method else ""))
        lines.append(f"   {w.equation}")
        if w.substituted:
            lines.append(f"   = {w.substituted}")
        if w.value:
            lines.append(f"   -> {w.value}")
    return "\n".join(lines)
