"""Recomputation: a cheap check on the UI thread, the engine in a thread worker.

A mixin of :class:`tdmtui.ui.app.TdmApp`. The worker calls the engine and
posts EstimateReady or EstimateFailed (past-tense facts); only the handlers
here touch widgets. scipy is imported inside the worker, never on the path
to the first paint. Results of an older edit are dropped (generation count).
"""

from __future__ import annotations

import copy
import re
import time
from typing import Any

from textual import work

from tdmtui.ui.messages import EstimateFailed, EstimateReady
from tdmtui.ui.sections.doses import DosesSection
from tdmtui.ui.sections.estimate import EstimateSection
from tdmtui.ui.sections.levels import LevelsSection
from tdmtui.ui.sections.note import NoteSection
from tdmtui.ui.sections.plan import PlanSection
from tdmtui.ui.widgets.form import FieldRow

DEBOUNCE_S = 0.5
SPINNER_AFTER_S = 0.1


class ComputeMixin:
    """Debounced recompute, the worker, and the result handlers."""

    doc: Any
    protocol_path: str | None
    generation: int
    computing: bool
    compute_pending: bool
    outcome: Any
    chosen: dict[str, Any] | None

    def request_compute(self, now: bool = False) -> None:
        """Recompute after a short pause in typing (at once when ``now``)."""
        if self._debounce is not None:
            self._debounce.stop()
        self.compute_pending = True
        if now:
            self.start_compute()
        else:
            self._debounce = self.set_timer(DEBOUNCE_S, self.start_compute)

    def start_compute(self) -> None:
        """Check the case here (cheap, no scipy); only a case that reads goes to the worker.

        The engine holds the interpreter for seconds on a busy machine, so it is
        not started while the case is still half typed.
        """
        from tdmtui.core.input.case import parse_case
        from tdmtui.core.errors import InputError

        self.compute_pending = False
        self.generation += 1
        try:  # parsed once: the worker computes this Case (a deep copy of the raw case, so later edits
            case = parse_case(copy.deepcopy(self.doc.raw), self.saved_bytes())  # never reach it)
        except InputError as exc:
            self.post_message(EstimateFailed(self.generation, "input", exc.field, exc.message))
            return
        except Exception as exc:  # noqa: BLE001 - shown, never a crash
            self.post_message(EstimateFailed(self.generation, "error", "", f"{type(exc).__name__}: {exc}"))
            return
        self.computing = True
        if self._spinner is not None:
            self._spinner.stop()
        self._spinner = self.set_timer(SPINNER_AFTER_S, self._show_spinner)
        self.compute_case(self.generation, case)

    def saved_bytes(self) -> bytes | None:
        """The case file's bytes when the case is unchanged since it was opened or saved (its digest is the file's)."""
        import json
        from pathlib import Path

        if self.doc.dirty or not self.doc.path or self.doc.opened is None:
            return None
        try:
            data = Path(self.doc.path).read_bytes()
            return data if json.loads(data.decode("utf-8")) == self.doc.raw else None
        except (OSError, ValueError):
            return None

    def _show_spinner(self) -> None:
        if self.computing:
            self.set_status("Computing... (the result updates when it is done)")

    @work(thread=True, exclusive=True, exit_on_error=False, group="compute")
    def compute_case(self, generation: int, case: Any) -> None:
        """Worker thread: run the engine on the parsed Case and post what happened (never touches widgets)."""
        t0 = time.perf_counter()
        try:
            from tdmtui.core.compute import compute
            from tdmtui.core.errors import InputError, NoEstimateError

            outcome = compute(case, protocol=self.protocol)
            self.post_message(EstimateReady(generation, outcome, time.perf_counter() - t0))
        except InputError as exc:
            self.post_message(EstimateFailed(generation, "input", exc.field, exc.message))
        except NoEstimateError as exc:
            self.post_message(EstimateFailed(generation, "no-estimate", "", f"{exc.method}: {exc.why}"))
        except Exception as exc:  # noqa: BLE001 - shown, never a crash
            self.post_message(EstimateFailed(generation, "error", "", f"{type(exc).__name__}: {exc}"))

    def on_estimate_ready(self, event: EstimateReady) -> None:
        """Show a computed case in every section (only the latest edit's result)."""
        if event.generation != self.generation:
            return
        self.computing = False
        self.mark_field("", "")
        self.outcome = event.outcome
        result = event.outcome.result
        self.update_header()
        self.query_one(EstimateSection).show(event.outcome)
        plan = self.query_one(PlanSection)
        plan.show(event.outcome)
        self.chosen = plan.options[plan.chosen] if plan.chosen is not None else None
        if self.doc.raw.get("chosen_regimen") and self.chosen is None:
            self.notify("The chosen regimen is no longer offered after this change: choose again in Plan.",
                        severity="warning", timeout=6)
        self.refresh_note()
        self.query_one(LevelsSection).show_relations(result)
        self.show_warnings(result.get("warnings", []))
        self.last_seconds = event.seconds
        if result.get("status") == "stop":
            self.set_status(f"Computed as of {result.get('as_of')}: STOP stands, no regimen (F8 says why).", error=True)
        else:
            from tdmtui.core.text.noteplan import method_label

            label = method_label(result.get("method") or "", result.get("estimate") or {})
            self.set_status(f"Computed as of {result.get('as_of')}: method {label}, status ok.")

    def on_estimate_failed(self, event: EstimateFailed) -> None:
        """Say why the case does not compute, on the status line and on the field."""
        if event.generation != self.generation:
            return
        self.computing = False
        self.outcome = None
        self.query_one(EstimateSection).show(None)
        self.query_one(PlanSection).show(None)
        from tdmtui.ui.fieldmap import rows_in_words

        from tdmtui.ui.fieldmap import session_row_words

        where = f"{rows_in_words(event.field)}{session_row_words(event.field)}: " if event.field else ""
        if event.kind == "input" and self.field_is_empty(event.field):
            event.message = "still to fill in"
        label = {"input": "INPUT", "no-estimate": "NO ESTIMATE", "error": "ERROR"}[event.kind]
        self.set_status(f"{label} {where}{rows_in_words(event.message)}", error=True)
        self.mark_field(event.field, event.message)
        self.show_warnings([])
        self.query_one(NoteSection).show("No note: the case does not compute yet.\n" + f"{label} {where}{event.message}")

    def mark_field(self, field: str, message: str) -> None:
        """Show the engine's reason on the field it names, when that field is on a form."""
        from tdmtui.ui.fieldmap import widget_id_for

        if self._marked is not None:
            self._marked.unmark()
            self._marked = None
        from tdmtui.ui.sections.scr import ScrRows

        from tdmtui.ui.sections.sessions import PlannedRows, SessionRows

        sessions = {"sessions": self.query_one(SessionRows).current, "planned": self.query_one(PlannedRows).current}
        target = widget_id_for(field, self.query_one(DosesSection).current, self.query_one(LevelsSection).current,
                               self.query_one(ScrRows).current, sessions)
        if target and field and message:
            try:
                row = self.query_one(f"#{target}", FieldRow)
            except Exception:  # noqa: BLE001 - not on a form: the status line says it
                return
            row.show("", message)
            self._marked = row

    def field_is_empty(self, field: str) -> bool:
        """True when the case path the engine named holds nothing yet ("" or missing)."""
        path: list[Any] = [int(p) if p.isdigit() else p for p in re.split(r"[.\[\]]+", field) if p]
        value = self.doc.get(tuple(path), None)
        return value == ""
