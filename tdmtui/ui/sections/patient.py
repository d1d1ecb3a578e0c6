"""Patient: who, the drug, renal function; derived values update as you type."""

from __future__ import annotations

from typing import Any

from textual import on
from textual.app import ComposeResult
from textual.containers import Vertical, VerticalScroll
from textual.widgets import Input, Label

from tdmtui.core.input.casetypes import METHODS, RENAL_REPLACEMENT, SEXES
from tdmtui.core.errors import InputError
from tdmtui.core.library import DRUGS
from tdmtui.ui import formatting as fm
from tdmtui.ui.entry import (Entry, case_clock, parsed_time, quantity_entry, target_entry, target_text,
                             time_entry)
from tdmtui.ui.messages import CaseEdited
from tdmtui.ui.sections.scr import ScrRows
from tdmtui.ui.sections.sessions import PlannedRows, SessionRows
from tdmtui.ui.widgets.cycler import Cycler
from tdmtui.ui.widgets.form import FieldRow, FieldSpec

FIELDS = (
    FieldSpec("drug", "Drug", "choice", options=DRUGS),
    FieldSpec("label", "Label", "text", hint="pseudonymous, e.g. bed 12"),
    FieldSpec("age", "Age", "quantity:age", "yr"),
    FieldSpec("sex", "Sex", "choice", options=SEXES),
    FieldSpec("weight", "Weight", "quantity:weight", "kg"),
    FieldSpec("height", "Height", "quantity:height", "cm"),
    FieldSpec("rrt", "Dialysis", "choice", options=RENAL_REPLACEMENT),
    FieldSpec("conditions", "Conditions", "text", hint="e.g. burns, ecmo; F1: all"),
    FieldSpec("comeds", "Co-meds", "text", hint="e.g. furosemide, ibuprofen"),
    FieldSpec("indication", "Indication", "text", hint="e.g. MRSA bacteraemia"),
    FieldSpec("timezone", "Time zone", "text", hint="e.g. Europe/London"),
    FieldSpec("as_of", "Assess at", "time", hint="now (default: last event)"),
    FieldSpec("mic", "MIC", "quantity:conc", "mg/L"),
    FieldSpec("target", "Target", "target", hint="e.g. auc24 400-600"),
    FieldSpec("method", "Method", "choice", options=METHODS),
)
_PATHS = {"drug": ("drug",), "label": ("label",), "age": ("patient", "age"), "sex": ("patient", "sex"),
          "weight": ("patient", "weight"), "height": ("patient", "height"),
          "rrt": ("patient", "renal_replacement"), "as_of": ("as_of",), "mic": ("target", "mic"),
          "conditions": ("patient", "conditions"), "comeds": ("patient", "comedications"),
          "indication": ("target", "indication"), "timezone": ("timezone",),
          "method": ("method",)}
_KINDS = {"age": ("age", "yr"), "weight": ("weight", "kg"), "height": ("height", "cm"), "mic": ("conc", "mg/L")}
#: Fields holding a list in the case, typed with commas between.
_LISTS = ("conditions", "comeds")
#: The SCr history (a table of its own) comes after this field.
_SCR_AFTER = "height"
#: The dialysis sessions (tables of their own) come after this field.
_SESSIONS_AFTER = "rrt"
#: Free-text fields that take the whole line; a text longer than the field is also shown whole under it.
_LONG_TEXT = ("label", "indication")


def scr_entries(raw: dict[str, Any]) -> list[dict[str, str]]:
    """The SCr values as a list of {time, value}, latest last (a single string gives one, timeless)."""
    pat = raw.get("patient")
    scr = pat.get("scr", "") if isinstance(pat, dict) else ""
    if isinstance(scr, list):
        return [dict(s) for s in scr if isinstance(s, dict)]
    return [{"time": "", "value": scr}] if scr else []


def list_entry(text: str, key: str, drug: str) -> Entry:
    """Conditions or co-medications typed with commas between; conditions from the library's list.

    Stored as the case's list (None when empty); a condition the library does not
    document is kept as typed and named.
    """
    from tdmtui.core.library import DRUGS, Rules

    items = [x.strip() for x in text.split(",") if x.strip()]
    if not items:
        return Entry(None, "none recorded")
    if key == "conditions":
        items = [x.lower().replace(" ", "-") for x in items]
        known = tuple(Rules(drug).get("conditions", {}) or {}) if drug in DRUGS else ()
        unknown = [x for x in items if known and x not in known]
        if unknown:
            return Entry(items, "", f"{', '.join(unknown)}: not in the list ({', '.join(known)})")
    return Entry(items, f"{len(items)} recorded")


def zone_entry(text: str) -> Entry:
    """An IANA time zone name (``Europe/London``), or empty for none."""
    name = text.strip()
    if not name:
        return Entry(None, "none: times carry offsets or use clock arithmetic")
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError, OSError):  # "Europe" alone names a folder
        return Entry(name, "", f"{name!r} is not a time zone name (e.g. Europe/London, America/Chicago)")
    return Entry(name, "times without an offset are read in this zone")


def derived_text(raw: dict[str, Any], protocol: Any = None) -> tuple[str, str, float | None]:
    """Two lines of derived values and the CrCl (mL/min), from the raw patient. Never raises.

    ``protocol``: the local protocol the engine uses too (its SCr floor and weight rules), so the
    CrCl here is the engine's.
    """
    from tdmtui.core.library import Rules
    from tdmtui.core.patient.checks import body_plausibility
    from tdmtui.core.patient.renal import renal_summary
    from tdmtui.core.input.units import parse_quantity

    p = raw.get("patient") if isinstance(raw.get("patient"), dict) else {}
    missing = [k for k in ("age", "sex", "weight", "height", "scr") if not p.get(k)]
    if missing:
        return "Derived values (IBW, AdjBW, BMI, CrCl, eGFR) appear as you type.", f"Still to fill in: {', '.join(missing)}.", None
    try:
        age = parse_quantity(p.get("age"), "age", "patient.age")
        weight = parse_quantity(p.get("weight"), "weight", "patient.weight")
        height = parse_quantity(p.get("height"), "height", "patient.height")
        clock = case_clock(raw)
        series = []
        for i, s in enumerate(scr_entries(raw)):
            series.append((parsed_time(clock, s.get("time")) if s.get("time") else None,
                           parse_quantity(s.get("value"), "scr", f"patient.scr[{i}].value"), i))
        if not series:
            raise InputError("patient.scr", "needed")
        if len(series) > 1 and any(t is None for t, _, _ in series):
            series = [(None, series[-1][1], series[-1][2])]
        rules = Rules(str(raw.get("drug")), protocol)
        body_plausibility(weight, height, [(v, f"patient.scr[{i}].value") for _, v, i in series], rules)
        summary = renal_summary(age, str(p.get("sex")), weight, height, series, rules, clock=clock)
    except (InputError, ValueError, KeyError) as exc:
        why = exc.message if isinstance(exc, InputError) else str(exc)
        return "Derived values appear when age, sex, weight, height and SCr read.", f"({why})", None
    s = summary
    line1 = (f"IBW {fm.qty(s.ibw, 'weight')}  AdjBW {fm.qty(s.adjbw, 'weight')}  BMI {fm.num(s.bmi, 'bmi')}  "
             f"dosing wt {fm.qty(s.dosing_weight_kg, 'weight')}")
    line2 = (f"CrCl {fm.qty(s.crcl_ml_min, 'crcl_ml_min')} (C-G, {fm.qty(s.crcl_weight_kg, 'weight')})  "
             f"eGFR {fm.qty(s.egfr_ckd_epi, 'egfr')} (CKD-EPI 2021)")
    return line1, line2, s.crcl_ml_min


class PatientSection(VerticalScroll):
    """The patient form and the derived values under it."""

    def __init__(self, doc: Any, *, id: str | None = None) -> None:  # noqa: A002
        super().__init__(id=id)
        self.doc = doc

    def compose(self) -> ComposeResult:
        for spec in FIELDS:
            yield FieldRow(spec, prefix="pt")
            if spec.key in _LONG_TEXT:
                yield Label("", id=f"pt-{spec.key}-whole", classes="field-whole", markup=False)
            if spec.key == _SCR_AFTER:
                yield Label("SCr history (a add, x delete, u undo, Enter edit, Esc table):", classes="form-title")
                yield ScrRows(self.doc, id="scr")
            if spec.key == _SESSIONS_AFTER:
                with Vertical(id="pt-dialysis"):
                    yield Label("Dialysis sessions done (a add, x delete, u undo, Enter edit, Esc table):",
                                classes="form-title")
                    yield SessionRows(self.doc, id="sessions")
                    yield Label("Dialysis sessions planned (the proposal doses after them):", classes="form-title")
                    yield PlannedRows(self.doc, id="planned")
        yield Label("", id="derived-1", classes="derived", markup=False)
        yield Label("", id="derived-2", classes="derived", markup=False)

    def on_mount(self) -> None:
        self.reload()

    def value_of(self, key: str) -> Any:
        """The raw value a patient field shows."""
        raw = self.doc.raw
        if key == "target":
            return target_text(raw.get("target"))
        value = self.doc.get(_PATHS[key], "")
        if key in _LISTS:
            return ", ".join(str(v) for v in value) if isinstance(value, list) else value
        return value

    def reload(self) -> None:
        """Show the case's values in the form."""
        for spec in FIELDS:
            value = self.value_of(spec.key)
            if spec.key == "rrt" and not value:
                value = "none"
            if spec.key == "method" and not value:
                value = "auto"
            self.query_one(f"#pt-{spec.key}", FieldRow).load(value)
        self.query_one(ScrRows).reload()
        self.query_one(SessionRows).reload()
        self.query_one(PlannedRows).reload()
        self.show_sessions()
        self.update_derived()
        self.call_after_refresh(self.show_whole)

    def show_sessions(self) -> None:
        """The session tables on intermittent haemodialysis, and whenever the case holds sessions."""
        held = bool(self.query_one(SessionRows).rows() or self.query_one(PlannedRows).rows())
        self.query_one("#pt-dialysis").display = held or self.doc.get(_PATHS["rrt"], "") == "ihd"

    def on_resize(self) -> None:
        self.call_after_refresh(self.show_whole)

    def show_whole(self) -> None:
        """Under a long free-text field, its whole text (wrapped) when the field cannot show it at once."""
        from rich.cells import cell_len

        for key in _LONG_TEXT:
            text = self.query_one(f"#pt-{key}", FieldRow).text
            room = self.query_one(f"#pt-{key}-input", Input).content_region.width
            whole = self.query_one(f"#pt-{key}-whole", Label)
            whole.display = bool(room) and cell_len(text) > room
            whole.update(text if whole.display else "")

    def update_derived(self) -> float | None:
        """Recompute IBW, AdjBW, BMI, CrCl, eGFR from what reads now."""
        line1, line2, crcl = derived_text(self.doc.raw, getattr(self.app, "protocol", None))
        self.query_one("#derived-1", Label).update(line1)
        self.query_one("#derived-2", Label).update(line2)
        return crcl

    def entry(self, key: str, text: str) -> Entry:
        """Evaluate a patient field's text."""
        if key in _KINDS:
            kind, unit = _KINDS[key]
            path = ".".join(_PATHS[key])
            if key == "mic" and not text.strip():
                return Entry(None)
            return quantity_entry(text, kind, unit, path)
        if key == "as_of":
            if not text.strip():
                return Entry(None, "default: the last event")
            return time_entry(text, None, case_clock(self.doc.raw), key)
        if key == "target":
            return target_entry(text)
        if key in _LISTS:
            return list_entry(text, key, str(self.doc.raw.get("drug")))
        if key == "timezone":
            return zone_entry(text)
        if key == "indication":
            return Entry(text.strip() or None)
        return Entry(text)

    @on(Input.Changed)
    @on(Cycler.Changed)
    def _changed(self, event: Input.Changed | Cycler.Changed) -> None:
        wid = event.control.id or ""
        if not wid.startswith("pt-"):
            return
        event.stop()
        key = wid[3:].removesuffix("-input")
        e = self.entry(key, event.control.value)  # the field as it is now (a queued event may be stale)
        shown = target_text(e.stored) if key == "target" and isinstance(e.stored, dict) else e.stored
        if key in _LISTS and isinstance(e.stored, list):
            shown = ", ".join(e.stored)
        if shown == self.value_of(key) or (e.stored is None and not self.value_of(key)):
            self.query_one(f"#pt-{key}", FieldRow).show(e.note, e.error)
            return
        if key == "target":
            target = self.doc.raw.get("target") if isinstance(self.doc.raw.get("target"), dict) else {}
            for name in ("auc24", "peak", "trough", "css"):
                target.pop(name, None)
            if isinstance(e.stored, dict):
                target.update(e.stored)
            elif e.stored:
                target["auc24"] = e.stored  # as typed, so the engine names it and nothing is lost
            if target:
                self.doc.raw["target"] = target
            else:
                self.doc.raw.pop("target", None)
            self.doc.dirty = True
        else:
            self.doc.set(_PATHS[key], e.stored)
        self.query_one(f"#pt-{key}", FieldRow).show(e.note, e.error)
        self.update_derived()
        if key in _LONG_TEXT:
            self.call_after_refresh(self.show_whole)
        if key == "rrt":
            self.show_sessions()
        self.post_message(CaseEdited(f"patient.{key}"))
