"""One entry line: label, field, and a note that gives the unit, the reading or the reason it fails."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from textual.app import ComposeResult
from textual.containers import Horizontal
from textual.widgets import Input, Label

from tdmtui.ui.widgets.cycler import Cycler


@dataclass(frozen=True)
class FieldSpec:
    """What one field edits.

    Attributes:
        key: a short id, unique in its section (also the widget id suffix).
        label: shown left of the field.
        kind: ``quantity:<unit kind>``, ``time``, ``infusion``, ``text`` or ``choice``.
        unit: the unit a bare number takes (quantities) or "" .
        options: the words of a ``choice`` field.
        hint: shown in the note while the field is empty.
    """

    key: str
    label: str
    kind: str
    unit: str = ""
    options: tuple[str, ...] = ()
    hint: str = ""


class FieldRow(Horizontal):
    """A label, an input (or a choice) and the note beside it."""

    DEFAULT_CSS = """
    FieldRow { height: 1; }
    FieldRow > .field-label { width: 12; }
    FieldRow > Input { width: 20; }
    FieldRow.-wide > Input { width: 40; }
    FieldRow.-time > Input { width: 25; }
    FieldRow > Cycler { width: 20; }
    FieldRow > .field-note { width: 1fr; color: $text-muted; }
    FieldRow.-bad { height: auto; max-height: 3; }
    FieldRow.-bad > .field-note { color: $text-error; text-style: bold; height: auto; }
    FieldRow.-bad > .field-note:nocolor { text-style: bold reverse; }
    """

    def __init__(self, spec: FieldSpec, value: Any = "", *, prefix: str = "f") -> None:
        wide = "-wide" if spec.kind in ("text", "target") else "-time" if spec.kind in ("time", "infusion") else ""
        super().__init__(id=f"{prefix}-{spec.key}", classes=wide)
        self.spec = spec
        self._value = "" if value is None else str(value)

    def compose(self) -> ComposeResult:
        yield Label(self.spec.label, classes="field-label")
        if self.spec.kind == "choice":
            yield Cycler(self.spec.options, self._value, id=f"{self.id}-input")
        else:
            # no placeholder: the unit stands in the note beside the field (a dimmed "mg/L" inside an empty
            # field reads as a value where there is no colour)
            yield Input(self._value, compact=True, id=f"{self.id}-input",
                        select_on_focus=True)
        yield Label(self._idle_note(), classes="field-note", markup=False)

    def _idle_note(self) -> str:
        if self.spec.unit:
            return self.spec.unit
        try:
            empty = not self.text
        except Exception:  # noqa: BLE001 - before mount
            empty = not self._value
        return self.spec.hint if empty else ""

    @property
    def text(self) -> str:
        """What the field holds now."""
        widget = self.query_one(f"#{self.id}-input")
        return widget.value if isinstance(widget, (Input, Cycler)) else ""

    def load(self, value: Any) -> None:
        """Show a stored value without posting a change that edits the case."""
        widget = self.query_one(f"#{self.id}-input")
        text = "" if value is None else str(value)
        with widget.prevent(Input.Changed, Cycler.Changed):
            widget.value = text
        if isinstance(widget, Input):
            widget.cursor_position = len(text)
        self.show(self.reading(text), "")

    _last_note = ""

    def unmark(self) -> None:
        """Take the engine's reason off the field: its own reading comes back (e.g. "a 4 h session")."""
        self.show(self._last_note, "")

    def reading(self, text: str) -> str:
        """A quantity stored in another unit than the field's reads in the field's unit (``154 lb``: ``= 69.85 kg``)."""
        if not (text and self.spec.kind.startswith("quantity:") and self.spec.unit):
            return ""
        from tdmtui.ui.entry import quantity_entry

        entry = quantity_entry(text, self.spec.kind.split(":", 1)[1], self.spec.unit, self.spec.key)
        return "" if entry.error else entry.note

    def show(self, note: str, error: str) -> None:
        """Show the reading (note) or the reason it fails (error); marks the field."""
        if not error:
            self._last_note = note
        self.set_class(bool(error), "-bad")
        widget = self.query_one(f"#{self.id}-input")
        widget.set_class(bool(error), "-invalid")
        text = f"! {error}" if error else (note or self._idle_note())
        if error and self.spec.unit and not self.text.strip():
            text += f" ({self.spec.unit})"  # an empty field still says its unit
        self.query_one(".field-note", Label).update(text)
