"""The serum creatinine history: every dated value as a row, added and deleted as doses and levels are.

The case keeps ``patient.scr`` as the contract allows: one timeless value
as a string, or a list of ``{time, value}``. A single row without a time
is written back as the string form; anything more is the list, every row
kept as typed (the engine names a row that does not read). Nothing typed
is dropped.
"""

from __future__ import annotations

from typing import Any

from tdmtui.ui.entry import Entry, parsed_time
from tdmtui.ui.formatting import short_time
from tdmtui.ui.sections.rows import RowsSection
from tdmtui.ui.widgets.form import FieldSpec


class ScrRows(RowsSection):
    """SCr values: when drawn and the value (any creatinine unit)."""

    NAME = "scr"
    TITLE = "SCr"
    NOUN = "SCr values"
    COLUMNS = ("#", "Drawn", "SCr")
    FIELDS = (
        FieldSpec("value", "SCr", "quantity:scr", "mg/dL"),
        FieldSpec("time", "  drawn", "time", hint="date-time, 06:00 or +24h"),
    )

    def __init__(self, doc: Any, *, id: str | None = None) -> None:  # noqa: A002
        super().__init__(doc, id=id)
        self._single: list[dict[str, Any]] | None = None

    def _patient(self) -> dict[str, Any]:
        pat = self.doc.raw.get("patient")
        if not isinstance(pat, dict):
            pat = self.doc.raw["patient"] = {}
        return pat

    def rows(self) -> list[dict[str, Any]]:
        """The SCr rows: the case's list itself, or one row standing for the timeless string."""
        scr = self._patient().get("scr", "")
        if isinstance(scr, list):
            return scr
        if self._single is None:
            self._single = [{"time": "", "value": scr}] if scr else []
        return self._single

    def reload(self, keep: int | None = None) -> None:
        """Rebuild from the case as it is now (after an undo or a restore too)."""
        self._single = None
        super().reload(keep)

    def stored(self) -> None:
        """Write the rows back: one timeless row as the string form, else the list."""
        rows = self.rows()
        pat = self._patient()
        if not rows:
            pat["scr"] = ""
            self._single = None
        elif len(rows) == 1 and not rows[0].get("time"):
            pat["scr"] = rows[0].get("value", "")
            self._single = rows  # the row stays on screen while its value is retyped
        else:
            if pat.get("scr") is not rows:
                pat["scr"] = rows
            self._single = None

    def insert(self, at: int, rows: list[dict[str, Any]]) -> None:
        """Insert SCr rows (undoable)."""
        self.doc.snapshot(f"add {len(rows)} SCr row(s)")
        current = [dict(r) for r in self.rows()]
        current[at:at] = [dict(r) for r in rows]
        self._patient()["scr"] = current
        self.stored()
        self.doc.dirty = True

    def remove(self, index: int) -> None:
        """Delete one SCr row (undoable)."""
        self.doc.snapshot(f"delete SCr row {index + 1}")
        current = [dict(r) for r in self.rows()]
        current.pop(index)
        self._patient()["scr"] = current
        self.stored()
        self.doc.dirty = True

    def cells(self, index: int, row: dict[str, Any]) -> tuple[str, ...]:
        """One table line: number, when drawn, the value as typed."""
        return (str(index + 1), short_time(row.get("time", "")) if row.get("time") else "(undated)",
                str(row.get("value", "")))

    def anchor(self) -> float | None:
        """Clock and relative times count from the SCr above, else from the first dose."""
        clock = self.clock()
        for row in reversed(self.rows()[: self.current]):
            t = parsed_time(clock, row.get("time")) if isinstance(row, dict) else None
            if t is not None:
                return t
        for row in self.doc.raw.get("doses") or []:
            t = parsed_time(clock, row.get("start")) if isinstance(row, dict) else None
            if t is not None:
                return t
        return None

    def entry(self, key: str, text: str, row: dict[str, Any]) -> Entry:
        """Evaluate an SCr field's text."""
        f = f"patient.scr[{self.current}]"
        if key == "value":
            return self.qty(text, "scr", "mg/dL", f"{f}.value")
        if not text.strip():
            return Entry("", "needed when there is more than one value" if len(self.rows()) > 1 else "")
        return self.time(text, f"{f}.time")

    def new_row(self) -> dict[str, Any]:
        """A new, empty SCr value."""
        return {"time": "", "value": ""}
