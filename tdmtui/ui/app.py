"""The workspace: one case, six sections, each one key away.

Keys (all have ids, so a site can remap them): F1/? help; F2-F7 or 1-6
(outside text fields) patient, doses, levels, estimate, plan, note; F8 all
warnings; ctrl+s save; ctrl+q quit (asks when unsaved). Every edit updates
the raw case, autosaves a recovery file and recomputes in a thread worker;
only message handlers touch widgets. scipy stays off the path to the first
paint: the engine is imported inside the worker.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

from rich.text import Text
from textual import events, on
from textual.app import App, ComposeResult
from textual.binding import Binding
from textual.screen import ModalScreen
from textual.widgets import ContentSwitcher, DataTable, Footer, Input, Static

from tdmtui.ui import formatting as fm
from tdmtui.ui.charset import ascii_frames, css_variables, restore_scrollbars, use_scrollbars
from tdmtui.ui.dialogs import HelpScreen
from tdmtui.ui.computing import ComputeMixin
from tdmtui.ui.document import CaseDocument, new_case_raw
from tdmtui.ui.filing import FilingMixin
from tdmtui.ui.importing import is_export, open_export
from tdmtui.ui.messages import CaseEdited
from tdmtui.ui.safety import first_run, short_text
from tdmtui.ui.recovery import RecoveryRefused, recovery_path, state_dir, write_recovery
from tdmtui.ui.sections.doses import DosesSection
from tdmtui.ui.sections.estimate import EstimateSection
from tdmtui.ui.sections.levels import LevelsSection
from tdmtui.ui.sections.note import NoteSection
from tdmtui.ui.sections.patient import PatientSection, derived_text
from tdmtui.ui.sections.plan import PlanSection
from tdmtui.ui.textguard import install as guard_terminal

SECTIONS = (("patient", "Patient"), ("doses", "Doses"), ("levels", "Levels"),
            ("estimate", "Estimate"), ("plan", "Plan"), ("note", "Note"))


def _section_bindings() -> list[Binding]:
    out = []
    for i, (name, title) in enumerate(SECTIONS):
        # priority: handled before the next key is routed, so typing straight on lands in the new section
        out.append(Binding(f"f{i + 2}", f"section('{name}')", title, key_display=f"F{i + 2}", id=f"go.{name}",
                           show=False, priority=True))
        out.append(Binding(str(i + 1), f"section_digit('{name}')", title, show=False, id=f"go.{name}.digit",
                           priority=True))
    return out


class TdmApp(ComputeMixin, FilingMixin, App[int]):
    """The tdmtui workspace for one case."""

    CSS_PATH = "app.tcss"
    TITLE = "tdmtui"
    ENABLE_COMMAND_PALETTE = False
    BINDINGS = [
        Binding("f1", "help", "Help", id="app.help"),
        Binding("question_mark", "help", "Help", show=False, id="app.help.q"),
        *_section_bindings(),
        Binding("f8", "warnings", "Warnings", id="app.warnings"),
        # priority: focus moves before the next key is routed, so fast typing lands in the next field
        Binding("tab", "focus_next", "Next field", show=False, priority=True, id="app.next"),
        Binding("shift+tab", "focus_previous", "Previous field", show=False, priority=True, id="app.previous"),
        Binding("ctrl+s", "save", "Save", id="app.save"),
        Binding("ctrl+q", "quit_app", "Quit", priority=True, id="app.quit"),
    ]

    def __init__(self, path: str | None = None, protocol_path: str | None = None, *,
                 state: Path | None = None, first_run_notice: bool = False, ascii_only: bool | None = None) -> None:
        # before the stylesheet is built (App.__init__): the frames' border styles are CSS variables
        self.ascii_only = ascii_frames() if ascii_only is None else ascii_only
        super().__init__()
        guard_terminal()  # no control character in any free text reaches the terminal
        self.first_run_notice = first_run_notice
        self.case_path = path
        self.protocol_path = protocol_path
        self.state = state or state_dir()
        self.doc = CaseDocument(new_case_raw())
        self.open_error = ""
        self.import_alerts: list[dict[str, str]] = []
        if path and is_export(path):  # a FHIR export: imported into a new, unsaved case
            self.doc, self.import_alerts, self.open_error = open_export(path, protocol_path)
            self.case_path = None
        elif path:
            try:
                self.doc = CaseDocument.open(path) if Path(path).exists() else CaseDocument(new_case_raw(), path)
            except (OSError, ValueError) as exc:
                self.open_error = f"Could not open {path}: {exc}. Started a new case instead."
                self.case_path = None
        self.outcome: Any = None
        self.protocol: Any = None
        self.protocol_note = ""
        self.load_protocol()
        self.chosen: dict[str, Any] | None = None
        self.note = ""
        self.note_full = False
        self.generation = 0
        self.computing = False
        self.compute_pending = False
        self.alerts: list[dict[str, str]] = []
        self.crcl: float | None = None
        self._debounce: Any = None
        self._spinner: Any = None
        self._small = False
        self._marked: Any = None
        self._scrollbars: Any = None

    def get_css_variables(self) -> dict[str, str]:
        """The theme's variables and the border style of each frame (ASCII under a non-UTF-8 locale)."""
        return {**super().get_css_variables(), **css_variables(self.ascii_only)}

    # ---------------------------------------------------------------- layout
    def compose(self) -> ComposeResult:
        yield Static("", id="header", markup=False)
        yield Static("", id="tabs")
        with ContentSwitcher(initial="patient", id="sections"):
            yield PatientSection(self.doc, id="patient")
            yield DosesSection(self.doc, id="doses")
            yield LevelsSection(self.doc, id="levels")
            yield EstimateSection(id="estimate")
            yield PlanSection(id="plan")
            yield NoteSection(id="note")
        yield Static("", id="warnings", markup=False)
        yield Static("", id="status", markup=False)
        yield Footer(compact=True)

    def load_protocol(self) -> None:
        """The local protocol, as the command line takes it: ``--protocol``, else the default file if present."""
        from tdmtui.core.errors import InputError
        from tdmtui.core.library import default_protocol_path, load_protocol

        path = self.protocol_path or (str(default_protocol_path()) if default_protocol_path().is_file() else None)
        if not path:
            return
        try:
            self.protocol = load_protocol(path)
        except (InputError, OSError) as exc:
            why = f"{exc.field}: {exc.message}" if isinstance(exc, InputError) else str(exc)
            self.protocol_note = f"Local protocol {path} NOT used ({why}): library values apply."

    def on_mount(self) -> None:
        self._scrollbars = use_scrollbars(self.ascii_only)
        if self.protocol_note:
            self.notify(self.protocol_note, severity="error", markup=False, timeout=10)
        self.update_header()
        self.update_tabs()
        self.show_warnings([])
        if self.open_error:
            self.notify(self.open_error, severity="error", markup=False, timeout=8)
        if self.first_run_notice and first_run(self.state):
            from tdmtui.ui.dialogs import NoticeDialog

            self.push_screen(NoticeDialog("Before you start (shown once)", " ".join(short_text().split()),
                                          "[Enter] or [Esc] continue   (F1 shows this again)"))
        self.offer_recovery()  # over the notice: a case's unsaved edits are answered first
        self.request_compute(now=True)
        self.call_after_refresh(self.focus_section)

    def on_unmount(self) -> None:
        if self._scrollbars is not None:
            restore_scrollbars(self._scrollbars)

    def on_resize(self, event: events.Resize) -> None:
        """Say so when the window is below 80x24 (text is cut, nothing is lost)."""
        small = event.size.width < 80 or event.size.height < 24
        if small and not self._small:
            self.notify(f"The window is {event.size.width}x{event.size.height}; 80x24 or larger shows everything.",
                        severity="warning", timeout=6)
        self._small = small

    # ---------------------------------------------------------------- header, tabs, warnings
    def update_header(self) -> None:
        """Drug, patient summary (age, sex, weight, CrCl), file name and saved/unsaved state."""
        raw = self.doc.raw
        p = raw.get("patient", {}) if isinstance(raw.get("patient"), dict) else {}
        _, _, self.crcl = derived_text(raw, self.protocol)
        if self.outcome is not None and self.outcome.case.raw == raw:  # the engine's own figure for this case
            self.crcl = self.outcome.result["patient"]["crcl_ml_min"]
        crcl = fm.qty(self.crcl, "crcl_ml_min") if self.crcl is not None else "?"
        sex = {"male": "M", "female": "F"}.get(p.get("sex", ""), "?")
        who = f"{p.get('age') or '? yr'} {sex} {p.get('weight') or '? kg'} CrCl {crcl}"
        name = Path(self.doc.path).name if self.doc.path else "new case"
        state = "saved" if self.matches_file() else "UNSAVED"
        text = f" {raw.get('drug', '?')} | {who} | {name} [{state}]"
        header = self.query_one("#header", Static)
        header.update(text)
        header.set_class(state == "UNSAVED", "-unsaved")

    def matches_file(self) -> bool:
        """True only when the case file exists and holds exactly the case on screen."""
        import json

        if not self.doc.path:
            return False
        try:
            return json.loads(Path(self.doc.path).read_bytes().decode("utf-8")) == self.doc.raw
        except (OSError, ValueError):
            return False

    def current_section(self) -> str:
        """The id of the section on screen."""
        return self.query_one("#sections", ContentSwitcher).current or "patient"

    def update_tabs(self) -> None:
        """The section bar, the current one in brackets and reverse."""
        current = self.current_section()
        text = Text()
        for i, (name, title) in enumerate(SECTIONS):
            label = f"{i + 1} {title}"
            if name == current:
                text.append(f"[{label}]", "bold reverse")
            else:
                text.append(f" {label} ")
        text.append("  (or F2-F7)  F1 help")
        self.query_one("#tabs", Static).update(text)

    def show_warnings(self, alerts: list[dict[str, str]]) -> None:
        """The warnings strip: severity in words, stops first; F8 lists all."""
        self.alerts = fm.sort_alerts(list(alerts) + self.import_alerts)
        strip = self.query_one("#warnings", Static)
        if not self.alerts:
            strip.update("No warnings." if self.outcome is not None else "Warnings appear here once the case computes.")
            strip.set_class(False, "-stop")
            return
        lines = [fm.alert_line(a) for a in self.alerts[:2]]
        if len(self.alerts) > 2:
            lines.append(f"... and {len(self.alerts) - 2} more: F8 lists every warning")
        strip.update("\n".join(line if len(line) <= 80 else line[:72] + "... (F8)" for line in lines))
        strip.set_class(any(a.get("severity") == "stop" for a in self.alerts), "-stop")

    def set_status(self, text: str, error: bool = False) -> None:
        """The status line (errors bold, reverse without colour)."""
        status = self.query_one("#status", Static)
        status.update(text)
        status.set_class(error, "-error")

    # ---------------------------------------------------------------- navigation
    def action_section(self, name: str) -> None:
        """Show a section and focus its table or first field."""
        self.query_one("#sections", ContentSwitcher).current = name
        self.update_tabs()
        self.focus_section()

    async def on_event(self, event: events.Event) -> None:
        """A key with nothing focused (e.g. after the terminal reported losing focus) goes to the section."""
        if isinstance(event, events.Key) and not isinstance(self.screen, ModalScreen) and self.screen.focused is None:
            self.focus_section()
        await super().on_event(event)

    def action_section_digit(self, name: str) -> None:
        """A digit outside text fields: show that section."""
        self.action_section(name)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """Digits switch sections only outside text fields (there they are typed)."""
        if action == "section_digit":
            return not isinstance(self.focused, Input)
        return True

    def focus_section(self) -> None:
        """Focus the section's table, else its first focusable widget."""
        section = self.query_one(f"#{self.current_section()}")
        # the patient form starts at its first field (its SCr table is one of its fields)
        tables = [t for t in section.query(DataTable) if t.focusable] if section.id != "patient" else []
        for widget in tables or section.query("*"):
            if widget.focusable:
                section.screen.set_focus(widget)  # at once, on the workspace screen (not a dialog)
                return

    def action_help(self) -> None:
        """Every key and the short safety text."""
        from tdmtui.ui.helptext import help_text

        self.push_screen(HelpScreen(help_text(self)))

    def action_warnings(self) -> None:
        """Every warning in full."""
        body = "\n\n".join(fm.alert_line(a) for a in self.alerts) or "No warnings."
        self.push_screen(HelpScreen("Every warning (severity in words; STOP means no regimen is given):\n\n" + body))

    # ---------------------------------------------------------------- edits, autosave, compute
    @on(CaseEdited)
    def case_edited(self, event: CaseEdited) -> None:
        """After any edit: header, recovery file, recompute (an undo back to the file is not unsaved)."""
        self.doc.dirty = not self.matches_file()
        self.update_header()
        self.query_one(PatientSection).update_derived()
        self.autosave()
        self.request_compute()

    def autosave(self) -> None:
        """Write the recovery file (atomic, 0600)."""
        try:
            write_recovery(recovery_path(self.doc.path, self.state), self.doc.path, self.doc.raw)
        except (OSError, RecoveryRefused) as exc:
            self.set_status(f"Could not write the recovery file: {exc}", error=True)

    def reload_sections(self) -> None:
        """Show the case again in the entry sections (after a restore)."""
        self.query_one(PatientSection).reload()
        self.query_one(DosesSection).reload()
        self.query_one(LevelsSection).reload()

    @on(PlanSection.RegimenChosen)
    def regimen_chosen(self, event: PlanSection.RegimenChosen) -> None:
        """Save the choice in the case (``chosen_regimen``): the note gives it as the regimen."""
        from tdmtui.core.input.chosen import KEY, chosen_raw

        self.chosen = event.regimen
        self.doc.snapshot("choose a regimen")
        self.doc.raw[KEY] = chosen_raw(event.regimen)
        # the note follows at once (given the choice; the assessment is never changed); the recompute
        # brings the record up to date
        self.post_message(CaseEdited(KEY))
        self.refresh_note()
        self.notify("Regimen chosen: the note gives it as the regimen; ctrl+s saves it with the case.", timeout=4)

    def refresh_note(self) -> None:
        """Rebuild the note from the latest result and the case's choice."""
        from tdmtui.ui.notetext import note_text

        if self.outcome is None:
            return
        saved = self.doc.opened.sha256 if self.doc.opened is not None and not self.doc.dirty else None
        self.note = note_text(self.outcome, chosen=self.chosen, full=self.note_full, saved_digest=saved)
        self.query_one(NoteSection).show(self.note)

    def action_note_full(self) -> None:
        """Note: show or hide the full section (every method, every model, references)."""
        self.note_full = not self.note_full
        self.refresh_note()
        self.notify("Note: full detail shown (f hides it)." if self.note_full else "Note: standard length.",
                    timeout=3)


def run_app(path: str | None, protocol_path: str | None, mouse: bool = False, ascii_only: bool = False) -> int:
    """Run the workspace; returns the exit status for the command line (``ascii_only``: ASCII frames even
    in a UTF-8 locale)."""
    app = TdmApp(path, protocol_path, first_run_notice=True, ascii_only=ascii_frames(ascii_only))
    result = app.run(mouse=mouse)
    return int(result or 0)


def main(argv: list[str] | None = None) -> int:
    """``python -m tdmtui.ui.app [CASE]`` (the CLI's ``tdmtui [CASE]`` calls :func:`run_app`)."""
    args = sys.argv[1:] if argv is None else argv
    return run_app(args[0] if args else None, None)


if __name__ == "__main__":
    raise SystemExit(main())
