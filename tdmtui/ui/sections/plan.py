"""Plan: the proposed regimen and its candidates; choose one with Enter."""

from __future__ import annotations

from typing import Any

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.containers import Vertical, VerticalScroll
from textual.message import Message
from textual.widgets import DataTable, Label, Static

from tdmtui.core.input.chosen import offered, parse_chosen, restart_level, same
from tdmtui.ui import formatting as fm
from tdmtui.ui.safety import caution_line

COLUMNS = ("", "Action", "Dose", "Every", "Over", "AUC24", "Peak", "Trough", "Prob")


#: Proposals that are not one dose every interval (a dose after each dialysis session; hold and redraw).
WORDED_MODES = ("dialysis", "redose-by-level")


def candidates(result: dict[str, Any]) -> list[dict[str, Any]]:
    """The regimens to choose from: the proposal first, then the alternatives (none for a worded proposal)."""
    if (result.get("regimen") or {}).get("mode") in WORDED_MODES:
        return []
    return offered(result)


def chosen_in(raw: dict[str, Any]) -> dict[str, Any] | None:
    """The case's ``chosen_regimen``, or None (absent or not readable: the engine names it)."""
    from tdmtui.core.errors import InputError

    try:
        return parse_chosen(raw)
    except InputError:
        return None


def probability_text(c: dict[str, Any]) -> str:
    """Probability of target attainment from posterior draws, as a percentage ("-" without draws)."""
    p = c.get("target_probability", (c.get("predicted") or {}).get("target_probability"))
    return fm.qty(p, "probability")


def summary_lines(result: dict[str, Any]) -> str:
    """Action, next dose, hold-until, loading dose and next levels, in words."""
    reg = result.get("regimen")
    if not reg:
        if result.get("status") == "stop":
            return "No regimen: a STOP warning stands (see the warnings)."
        return "No regimen proposed yet."
    if reg.get("mode") in WORDED_MODES:
        from tdmtui.core.regimen.renalplan import plan_words

        nl = reg.get("next_levels") or []
        return "\n".join(plan_words(reg) + ["Next levels: " + "; ".join(f"{x.get('kind')} {x.get('at')}" for x in nl)]
                         + session_lines(result))
    lines = [f"Proposal: {reg.get('action', '?').upper()}  {fm.qty(reg.get('dose_mg'), 'dose_mg')} every "
             f"{fm.qty(reg.get('interval_h'), 'interval_h')} over {fm.qty(reg.get('infusion_h'), 'infusion_h')}"]
    lines.append(f"Next dose: {reg.get('next_dose_at') or '-'}   Hold until: {reg.get('hold_until') or 'no hold'}")
    wait = restart_level(reg)
    if wait:
        lines.append(f"Give it only if a level drawn at {wait.get('at')} is below {wait['give_below_mg_l']:g} mg/L")
    if reg.get("skipped_doses"):
        lines.append(("Hold" if reg.get("hold_until") else "Not given") + " (standing order): "
                     + ", ".join(str(x) for x in reg["skipped_doses"]))
    ld = reg.get("loading_dose")
    lines.append("Loading dose: " + (f"{fm.qty(ld.get('dose_mg'), 'dose_mg')} over {fm.qty(ld.get('infusion_h'), 'infusion_h')}"
                                     f" at {ld.get('at', '-')}" if ld else "none"))
    nl = reg.get("next_levels") or []
    lines.append("Next levels: " + ("; ".join(f"{x.get('kind')} {x.get('at')}" for x in nl) if nl else "none proposed"))
    return "\n".join(lines)


def session_lines(result: dict[str, Any]) -> list[str]:
    """The dialysis sessions recorded and planned, one line each kind (edited in the patient section)."""
    d = result.get("dialysis")
    if not d:
        return []
    span = lambda s: f"{fm.short_time(s['start'])}-{s['end'][11:16]}"  # noqa: E731
    done = ", ".join(span(s) for s in d.get("sessions", [])) or "none"
    plan = ", ".join(span(s) for s in d.get("plan_sessions", [])) or "none"
    return [f"Sessions done: {done}.", f"Sessions to come{' (repeated from last week)' if d.get('plan_sessions_projected') else ''}: {plan}."]


CANDIDATES_TITLE = "Candidates (Enter chooses the one for the note; Prob = chance of target):"


def no_candidates_reason(result: dict[str, Any]) -> str:
    """One line saying why there is no table of candidates ("" when there are candidates, or when the
    proposal above already says why: a STOP, nothing computed yet)."""
    if candidates(result) or not result.get("regimen"):
        return ""
    mode = (result.get("regimen") or {}).get("mode")
    if mode == "dialysis":
        return "No candidates to choose: the proposal is the dose after each session, above."
    if mode == "redose-by-level":
        return "No candidates to choose: hold, draw a level and redose by it, as above."
    return "No candidates offered."


class PlanSection(Vertical):
    """The proposal and a table of candidates (Enter chooses one for the note)."""

    class RegimenChosen(Message):
        """The user chose a candidate regimen."""

        def __init__(self, regimen: dict[str, Any]) -> None:
            super().__init__()
            self.regimen = regimen

    def __init__(self, *, id: str | None = None) -> None:  # noqa: A002
        super().__init__(id=id)
        self.options: list[dict[str, Any]] = []
        self.chosen: int | None = None

    def compose(self) -> ComposeResult:
        # the proposal scrolls when it is long (a dialysis plan), so the caution under it is never pushed off
        with VerticalScroll(id="plan-summary-box"):
            yield Static("No regimen proposed yet.", id="plan-summary", markup=False)
        yield Label(CANDIDATES_TITLE, id="plan-candidates", classes="section-title", markup=False)
        yield DataTable(cursor_type="row", zebra_stripes=True, id="plan-table")
        yield Label(caution_line(), classes="caution", markup=False)

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        for col in COLUMNS:
            table.add_column(col, key=col or "mark")

    def show(self, outcome: Any) -> None:
        """Fill the proposal and candidates from an Outcome (None clears)."""
        result = outcome.result if outcome is not None else {}
        self.query_one("#plan-summary", Static).update(summary_lines(result))
        self.options = candidates(result)
        reason = no_candidates_reason(result)
        heading = self.query_one("#plan-candidates", Label)
        heading.update(reason or CANDIDATES_TITLE)
        heading.display = bool(self.options or reason)
        self.set_class(not self.options, "-no-candidates")
        self.chosen = None
        wanted = chosen_in(outcome.case.raw) if outcome is not None else None
        if wanted is not None:  # the case's choice, when it is still offered
            for i, c in enumerate(self.options):
                if same(c, wanted):
                    self.chosen = i
        self.fill()

    def fill(self) -> None:
        """Redraw the candidates table, marking proposed and chosen."""
        table = self.query_one(DataTable)
        table.clear()
        for i, c in enumerate(self.options):
            p = c.get("predicted") or {}
            mark = "CHOSEN" if i == self.chosen else ("proposed" if i == 0 else "")
            table.add_row(mark, c.get("action", ""), Text(fm.qty(c.get("dose_mg"), "dose_mg"), justify="right"),
                          fm.qty(c.get("interval_h"), "interval_h"), fm.qty(c.get("infusion_h"), "infusion_h"),
                          Text(fm.num(p.get("auc24_mg_h_per_l"), "auc24_mg_h_per_l"), justify="right"),
                          Text(fm.num(p.get("peak_mg_per_l"), "peak_mg_per_l"), justify="right"),
                          Text(fm.num(p.get("trough_mg_per_l"), "trough_mg_per_l"), justify="right"),
                          Text(probability_text(c), justify="right"), key=str(i))

    @on(DataTable.RowSelected, "#plan-table")
    def _chosen(self, event: DataTable.RowSelected) -> None:
        event.stop()
        i = event.cursor_row
        if 0 <= i < len(self.options):
            self.chosen = i
            self.fill()
            self.query_one(DataTable).move_cursor(row=i)
            self.post_message(self.RegimenChosen(self.options[i]))
