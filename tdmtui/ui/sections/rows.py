"""A table of rows (doses or levels) with an entry form for the highlighted row.

Keys here: a add, x delete, u undo, r repeat (doses), Enter edit,
Escape back to the table. Typing in the form edits the case at once; the
raw text is kept even when it does not read, and the reason is shown.
"""

from __future__ import annotations

from typing import Any

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.widgets import DataTable, Input, Label

from tdmtui.ui.entry import Entry, anchor_for, case_clock, infusion_entry, parsed_time, quantity_entry, time_entry
from tdmtui.ui.messages import CaseEdited
from tdmtui.ui.textguard import plain
from tdmtui.ui.widgets.cycler import Cycler
from tdmtui.ui.widgets.form import FieldRow, FieldSpec


class RowsSection(Vertical):
    """Base for the doses and levels sections."""

    NAME = ""
    TITLE = ""
    NOUN = ""  # what the rows are, in "No ... yet" (default: NAME)
    FIELDS: tuple[FieldSpec, ...] = ()
    COLUMNS: tuple[str, ...] = ()
    # priority: run before the next key is routed (so keys typed right after "a" reach the new row);
    # check_action lets them through to the fields as ordinary typing
    BINDINGS = [
        Binding("a", "add", "Add row", id="rows.add", priority=True),
        Binding("x,delete", "delete", "Delete", id="rows.delete", priority=True),
        Binding("u", "undo", "Undo", id="rows.undo", priority=True),
        Binding("enter", "edit", "Edit", show=False, id="rows.edit", priority=True),
        Binding("escape", "to_table", "Table", show=False, id="rows.table", priority=True),
    ]
    TABLE_ACTIONS = ("add", "delete", "undo", "repeat", "edit")

    def __init__(self, doc: Any, *, id: str | None = None) -> None:  # noqa: A002
        super().__init__(id=id)
        self.doc = doc
        self.current = 0

    def compose(self) -> ComposeResult:
        table: DataTable = DataTable(cursor_type="row", zebra_stripes=True, id=f"{self.NAME}-table")
        yield table
        with Vertical(id=f"{self.NAME}-form", classes="row-form"):
            yield Label("", id=f"{self.NAME}-form-title", classes="form-title", markup=False)
            for spec in self.FIELDS:
                yield FieldRow(spec, prefix=self.NAME)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """Row keys act on the table; in a field the letter is typed instead (shown dimmed)."""
        if action in self.TABLE_ACTIONS:
            return None if not isinstance(self.app.focused, DataTable) else True
        return True

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        for col in self.COLUMNS:
            table.add_column(col, key=col)
        self.reload()

    # ---------------------------------------------------------------- display
    def rows(self) -> list[dict[str, Any]]:
        """The raw rows of this section."""
        return self.doc.rows(self.NAME)

    def cells(self, index: int, row: dict[str, Any]) -> tuple[str, ...]:
        """One table line for a row (subclasses)."""
        raise NotImplementedError

    def reload(self, keep: int | None = None) -> None:
        """Rebuild the table from the case and load the current row into the form."""
        table = self.query_one(DataTable)
        rows = self.rows()
        # the rebuild's own highlight events would reload the form later, over what is being typed
        with table.prevent(DataTable.RowHighlighted):
            table.clear()
            for i, row in enumerate(rows):
                table.add_row(*map(plain, self.cells(i, row if isinstance(row, dict) else {})), key=str(i))
            if rows:
                self.current = min(keep if keep is not None else self.current, len(rows) - 1)
                table.move_cursor(row=self.current)
        self.load_form()

    def load_form(self) -> None:
        """Show the current row in the form."""
        rows = self.rows()
        title = self.query_one(f"#{self.NAME}-form-title", Label)
        form = self.query_one(f"#{self.NAME}-form")
        if not rows:
            title.update(f"No {self.NOUN or self.NAME} yet: press a (or just type below) to add one.")
            form.set_class(True, "-empty")
            for spec in self.FIELDS:
                self.query_one(f"#{self.NAME}-{spec.key}", FieldRow).load(self.form_value(spec.key, {}))
            return
        form.set_class(False, "-empty")
        title.update(f"{self.TITLE} row {self.current + 1} of {len(rows)}  (Enter edit, Esc table)")
        row = rows[self.current]
        for spec in self.FIELDS:
            self.query_one(f"#{self.NAME}-{spec.key}", FieldRow).load(self.form_value(spec.key, row))

    def form_value(self, key: str, row: dict[str, Any]) -> Any:
        """What a form field shows for a row."""
        return row.get(key, "")

    def refresh_row(self) -> None:
        """Update the table line of the current row after an edit."""
        table = self.query_one(DataTable)
        row = self.rows()[self.current]
        for col, value in zip(self.COLUMNS, self.cells(self.current, row)):
            table.update_cell(str(self.current), col, value, update_width=True)

    # ---------------------------------------------------------------- events
    @on(DataTable.RowHighlighted)
    def _row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        if event.cursor_row is not None and event.cursor_row != self.current and 0 <= event.cursor_row < len(self.rows()):
            self.current = event.cursor_row
            self.load_form()

    @on(DataTable.RowSelected)
    def _row_selected(self, event: DataTable.RowSelected) -> None:
        self.focus_form()

    def focus_form(self) -> None:
        """Focus the first field of the form (at once)."""
        if self.FIELDS:
            self.screen.set_focus(self.query_one(f"#{self.NAME}-{self.FIELDS[0].key}-input"))

    def entry(self, key: str, text: str, row: dict[str, Any]) -> Entry:
        """Evaluate one field's text (subclasses)."""
        raise NotImplementedError

    def store(self, key: str, entry: Entry, row: dict[str, Any]) -> None:
        """Put a field's value in the row."""
        row[key] = entry.stored

    @on(Input.Changed)
    @on(Cycler.Changed)
    def _field_changed(self, event: Input.Changed | Cycler.Changed) -> None:
        widget_id = event.control.id or ""
        if not widget_id.startswith(f"{self.NAME}-"):
            return
        event.stop()
        if not self.rows():  # typing into the empty form starts the first row: nothing typed is dropped
            self.insert(0, [self.new_row()])
            self.current = 0
            table = self.query_one(DataTable)
            table.add_row(*map(plain, self.cells(0, self.rows()[0])), key="0")
            self.query_one(f"#{self.NAME}-form-title", Label).update(f"{self.TITLE} row 1 of 1  (Esc table)")
        key = widget_id[len(self.NAME) + 1:].removesuffix("-input")
        row = self.rows()[self.current]
        e = self.entry(key, event.control.value, row)  # the field as it is now (a queued event may be stale)
        if not e.key and e.stored == self.form_value(key, row):
            self.query_one(f"#{self.NAME}-{key}", FieldRow).show(e.note, e.error)
            return
        self.store(key, e, row)
        self.stored()
        self.doc.dirty = True
        self.query_one(f"#{self.NAME}-{key}", FieldRow).show(e.note, e.error)
        self.refresh_row()
        self.post_message(CaseEdited(f"{self.NAME}[{self.current}].{key}"))

    # ---------------------------------------------------------------- helpers for subclasses
    def clock(self):  # noqa: ANN201
        """The case's clock as far as its times read now."""
        return case_clock(self.doc.raw)

    def anchor(self) -> float | None:
        """The time of the row above (for clock and relative times)."""
        return anchor_for(self.doc.raw, self.NAME, self.current, self.clock())

    def time_of(self, text: Any) -> float | None:
        """Hours of a stored time, or None."""
        return parsed_time(self.clock(), text)

    def qty(self, text: str, kind: str, unit: str, field: str) -> Entry:
        """Evaluate a quantity field."""
        return quantity_entry(text, kind, unit, field)

    def time(self, text: str, field: str) -> Entry:
        """Evaluate a time field."""
        return time_entry(text, self.anchor(), self.clock(), field)

    def infusion(self, text: str, start: float | None, field: str) -> Entry:
        """Evaluate an infusion field."""
        return infusion_entry(text, start, self.clock(), field)

    # ---------------------------------------------------------------- actions
    def new_row(self) -> dict[str, Any]:
        """A new row for "add" (subclasses)."""
        raise NotImplementedError

    def insert(self, at: int, rows: list[dict[str, Any]]) -> None:
        """Insert rows into the case (undoable); subclasses keeping rows elsewhere override it."""
        self.doc.insert_rows(self.NAME, at, rows)

    def remove(self, index: int) -> None:
        """Delete one row from the case (undoable)."""
        self.doc.delete_row(self.NAME, index)

    def stored(self) -> None:
        """After a field's value went into its row (subclasses may tidy the case's form)."""

    def action_add(self) -> None:
        """Add a row after the last one, pre-filled from it, and start editing it."""
        at = len(self.rows())
        self.insert(at, [self.new_row()])
        self.current = at
        self.reload(at)
        self.post_message(CaseEdited(f"add {self.NAME}"))
        self.focus_form()

    def action_delete(self) -> None:
        """Delete the current row (u undoes)."""
        if not self.rows():
            return
        self.remove(self.current)
        self.reload(max(self.current - 1, 0) if self.current >= len(self.rows()) else self.current)
        self.post_message(CaseEdited(f"delete {self.NAME}"))
        self.app.notify("Row deleted: press u to undo.", timeout=4)

    def action_undo(self) -> None:
        """Undo the last row change, wherever it was made: every table shows the case again."""
        what = self.doc.undo()
        if not what:
            self.app.notify("Nothing to undo.", timeout=3)
            return
        reload_all = getattr(self.app, "reload_sections", None)
        if callable(reload_all):  # the change undone may lie in another table (one undo list per case)
            reload_all()
        else:
            self.reload()
        self.post_message(CaseEdited("undo"))
        self.app.notify(f"Undone: {what}", timeout=4)

    def action_edit(self) -> None:
        """Enter on the table: edit the highlighted row."""
        self.focus_form()

    def action_to_table(self) -> None:
        """Back from the form to the table."""
        self.screen.set_focus(self.query_one(DataTable))
