"""Dialysis sessions (the case's ``dialysis.sessions`` done and ``dialysis.planned`` to come), added,
edited and deleted as doses and levels are (a, x, u, Enter, Esc).

Each row is ``{start, end}`` and optionally ``dialyser`` (docs/dialysis.md). Times are typed as
elsewhere: in full, as a clock time or relative ("+48h" from the row above; the end "+4h" or "12:00"
from its own start). Every row is kept as typed; the engine names a row that does not read
(``dialysis.sessions[1].end``). The ``dialysis`` object is written only once a row exists, and an
empty list is taken out again, so a case without sessions is saved as it was opened.
"""

from __future__ import annotations

from typing import Any

from tdmtui.ui.entry import Entry, time_entry
from tdmtui.ui.formatting import short_time
from tdmtui.ui.sections.rows import RowsSection
from tdmtui.ui.widgets.form import FieldSpec


class SessionRows(RowsSection):
    """The sessions done (``dialysis.sessions``): start, end, dialyser."""

    NAME = "sessions"
    TITLE = "Session done"
    NOUN = "sessions done"
    COLUMNS = ("#", "Start", "End", "Hours", "Dialyser")
    FIELDS = (
        FieldSpec("start", "Start", "time", hint="2026-09-07T08:00 or +48h"),
        FieldSpec("end", "End", "time", hint="12:00 or +4h from its start"),
        FieldSpec("dialyser", "Dialyser", "text", hint="e.g. high-flux (optional)"),
    )

    def field(self, key: str = "") -> str:
        """The case path of the current row (``dialysis.sessions[1].end``), as the engine names it."""
        return f"dialysis.{self.NAME}[{self.current}]" + (f".{key}" if key else "")

    def _dialysis(self, create: bool = False) -> dict[str, Any] | None:
        d = self.doc.raw.get("dialysis")
        if not isinstance(d, dict):
            if not create:
                return None
            d = self.doc.raw["dialysis"] = {}
        return d

    def rows(self) -> list[dict[str, Any]]:
        """The case's list itself, or an empty one (not written into the case) when it has none."""
        d = self._dialysis()
        rows = d.get(self.NAME) if d is not None else None
        return rows if isinstance(rows, list) else []

    def insert(self, at: int, rows: list[dict[str, Any]]) -> None:
        """Insert session rows (undoable), creating ``dialysis`` and its list when needed."""
        self.doc.snapshot(f"add {len(rows)} {self.NAME} session(s)")
        d = self._dialysis(create=True)
        assert d is not None
        current = d.get(self.NAME)
        if not isinstance(current, list):
            current = d[self.NAME] = []
        current[at:at] = [dict(r) for r in rows]
        self.doc.dirty = True

    def remove(self, index: int) -> None:
        """Delete one session (undoable); an emptied list, then an emptied ``dialysis``, is taken out."""
        self.doc.snapshot(f"delete {self.NAME} session {index + 1}")
        d = self._dialysis()
        assert d is not None
        d[self.NAME].pop(index)
        if not d[self.NAME]:
            del d[self.NAME]
        if not d:
            del self.doc.raw["dialysis"]
        self.doc.dirty = True

    def cells(self, index: int, row: dict[str, Any]) -> tuple[str, ...]:
        """One table line: number, start, end, its length in hours, the dialyser (as typed)."""
        start, end = self.time_of(row.get("start")), self.time_of(row.get("end"))
        hours = f"{end - start:.3g}" if start is not None and end is not None else ""
        end_text = str(row.get("end", ""))
        same_day = end_text[:10] == str(row.get("start", ""))[:10] and end is not None
        return (str(index + 1), short_time(row.get("start", "")),
                end_text[11:16] if same_day else short_time(end_text), hours, str(row.get("dialyser", "")))

    def anchor(self) -> float | None:
        """Clock and relative starts count from the session above."""
        for row in reversed(self.rows()[: self.current]):
            t = self.time_of(row.get("start")) if isinstance(row, dict) else None
            if t is not None:
                return t
        return None

    def entry(self, key: str, text: str, row: dict[str, Any]) -> Entry:
        """Evaluate a session field's text (the end counts from the row's own start)."""
        if key == "start":
            return self.time(text, self.field("start"))
        if key == "end":
            start = self.time_of(row.get("start"))
            e = time_entry(text, start, self.clock(), self.field("end"))
            end = self.time_of(e.stored) if not e.error else None
            if start is not None and end is not None:
                return Entry(e.stored, f"ends {short_time(e.stored)}, a {end - start:.3g} h session")
            return e
        return Entry(text.strip() or None)

    def store(self, key: str, entry: Entry, row: dict[str, Any]) -> None:
        """Put a session field's value in the row (an empty dialyser takes the key out)."""
        if entry.stored is None:
            row.pop(key, None)
        else:
            row[key] = entry.stored

    def new_row(self) -> dict[str, Any]:
        """A new session: its times to type (never guessed), the dialyser of the last one."""
        rows = self.rows()
        new: dict[str, Any] = {"start": "", "end": ""}
        if rows and isinstance(rows[-1], dict) and rows[-1].get("dialyser"):
            new["dialyser"] = rows[-1]["dialyser"]
        return new


class PlannedRows(SessionRows):
    """The sessions to come (``dialysis.planned``): the schedule the proposal doses after."""

    NAME = "planned"
    TITLE = "Session planned"
    NOUN = "planned sessions"
