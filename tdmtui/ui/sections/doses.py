"""Doses: every infusion given (or scheduled), with quick time entry and "repeat"."""

from __future__ import annotations

from typing import Any

from textual.binding import Binding

from tdmtui.core.input.casetypes import DOSE_KINDS, TIMINGS
from tdmtui.core.errors import InputError
from tdmtui.core.input.timeentry import repeat_rows
from tdmtui.core.input.units import parse_quantity
from tdmtui.ui.dialogs import TextDialog
from textual import on
from textual.app import ComposeResult
from textual.widgets import Input

from tdmtui.ui.entry import Entry, schedule_entry, schedule_text
from tdmtui.ui.formatting import short_time
from tdmtui.ui.messages import CaseEdited
from tdmtui.ui.sections.rows import RowsSection
from tdmtui.ui.widgets.form import FieldRow, FieldSpec

ORDER = FieldSpec("schedule", "Order", "target", hint="1 g every 12 h over 1 h")


def parse_repeat(text: str) -> tuple[float, int]:
    """"12h x 3", "every 12 h x 3", "8 x 4" -> (interval h, count).

    Raises:
        InputError: naming ``repeat`` when it does not read.
    """
    s = text.lower().replace("every", "").replace("*", "x").strip()
    if "x" not in s:
        raise InputError("repeat", "type the interval and the count, e.g. 12h x 3")
    left, _, right = s.rpartition("x")
    left = left.strip()
    if left.replace(".", "", 1).isdigit():
        left += " h"
    elif left[-1:].isalpha() and not left.split()[-1].isalpha():
        num = left.rstrip("abcdefghijklmnopqrstuvwxyz")
        left = f"{num} {left[len(num):]}"
    interval = parse_quantity(left, "time", "repeat.interval")
    if not right.strip().isdigit():
        raise InputError("repeat.count", f"{right.strip()!r} is not a whole number of doses")
    return interval, int(right)


class DosesSection(RowsSection):
    """The dose history: start, amount, infusion (duration or end), kind, timing."""

    NAME = "doses"
    TITLE = "Dose"
    COLUMNS = ("#", "Start", "Amount", "Infusion", "Kind", "Timing")
    FIELDS = (
        FieldSpec("start", "Start", "time", hint="2026-03-03T08:00, 08:00 or +12h"),
        FieldSpec("amount", "Amount", "quantity:dose", "mg"),
        FieldSpec("infusion", "Infusion", "infusion", hint="90 min, or end 21:30"),
        FieldSpec("kind", "Kind", "choice", options=DOSE_KINDS),
        FieldSpec("timing", "Timing", "choice", options=TIMINGS),
    )
    BINDINGS = [*RowsSection.BINDINGS, Binding("r", "repeat", "Repeat", id="doses.repeat", priority=True)]

    def compose(self) -> ComposeResult:
        yield FieldRow(ORDER, prefix="order")
        yield from super().compose()

    def reload(self, keep: int | None = None) -> None:
        """Rebuild the table and form, and show the standing order."""
        super().reload(keep)
        self.query_one("#order-schedule", FieldRow).load(schedule_text(self.doc.raw.get("schedule")))

    @on(Input.Changed, "#order-schedule-input")
    def _order_changed(self, event: Input.Changed) -> None:
        """The standing order (the case's ``schedule``)."""
        event.stop()
        e = schedule_entry(event.control.value)
        current = self.doc.raw.get("schedule")
        if e.stored == current or (e.stored is None and current is None):
            self.query_one("#order-schedule", FieldRow).show(e.note, e.error)
            return
        if e.stored is None:
            self.doc.raw.pop("schedule", None)
        else:
            self.doc.raw["schedule"] = e.stored
        self.doc.dirty = True
        self.query_one("#order-schedule", FieldRow).show(e.note, e.error)
        self.post_message(CaseEdited("schedule"))

    def cells(self, index: int, row: dict[str, Any]) -> tuple[str, ...]:
        """One table line for a dose row (raw text kept)."""
        infusion = row.get("duration") or (f"to {short_time(row['end'])[6:]}" if "end" in row else "")
        kind = row.get("kind", "maintenance")
        return (str(index + 1), short_time(row.get("start", "")), str(row.get("amount", "")), str(infusion),
                {"maintenance": "maint."}.get(kind, kind), row.get("timing", "actual"))

    def form_value(self, key: str, row: dict[str, Any]) -> Any:
        """What a form field shows for a dose row."""
        if key == "infusion":
            return row.get("duration", row.get("end", ""))
        if key == "kind":
            return row.get("kind", "maintenance")
        if key == "timing":
            return row.get("timing", "actual")
        return row.get(key, "")

    def entry(self, key: str, text: str, row: dict[str, Any]) -> Entry:
        """Evaluate a dose field's text."""
        f = f"doses[{self.current}]"
        if key == "start":
            return self.time(text, f"{f}.start")
        if key == "amount":
            return self.qty(text, "dose", "mg", f"{f}.amount")
        if key == "infusion":
            return self.infusion(text, self.time_of(row.get("start")), f)
        return Entry(text)

    def store(self, key: str, entry: Entry, row: dict[str, Any]) -> None:
        """Put a dose field's value in the row (duration or end, never both)."""
        if key == "infusion":
            row.pop("duration", None)
            row.pop("end", None)
            row[entry.key or "duration"] = entry.stored
        elif key in ("kind", "timing") and entry.stored in ("maintenance", "actual") and key not in row:
            return
        else:
            row[key] = entry.stored

    def new_row(self) -> dict[str, Any]:
        """A new dose: the last one an interval later (loading becomes maintenance)."""
        rows = self.rows()
        if not rows:
            return {"start": "", "amount": "", "duration": ""}
        last = dict(rows[-1])
        if last.get("kind") == "loading":
            last["kind"] = "maintenance"
        clock = self.clock()
        starts = [self.time_of(r.get("start")) for r in rows[-2:]]
        step = starts[1] - starts[0] if len(starts) == 2 and None not in starts and starts[1] > starts[0] else 12.0
        if starts[-1] is not None:
            last["start"] = clock.format(starts[-1] + step)
            if "end" in last:
                end = self.time_of(last["end"])
                last["end"] = clock.format(end + step) if end is not None else last["end"]
        return last

    def action_repeat(self) -> None:
        """Lay out a regimen in one step: every N h x k after the current row."""
        if not self.rows():
            self.app.notify("Add the first dose, then repeat it.", timeout=4)
            return

        def check(text: str) -> str:
            if not text:
                return ""
            try:
                parse_repeat(text)
            except InputError as exc:
                return exc.message
            return ""

        def done(text: str | None) -> None:
            if not text:
                return
            interval, count = parse_repeat(text)
            try:
                new = repeat_rows(self.rows()[self.current], interval, count, self.clock(), f"doses[{self.current}]")
            except InputError as exc:
                self.app.notify(str(exc), severity="error", markup=False)
                return
            self.doc.insert_rows("doses", self.current + 1, new)
            self.reload(self.current + count)
            self.post_message(CaseEdited("repeat"))
            self.app.notify(f"Added {count} doses every {interval:g} h (u to undo).", timeout=4)

        self.app.push_screen(TextDialog(f"Repeat dose {self.current + 1} every N hours, k times (e.g. 12h x 3):",
                                        "12h x 3", check), done)
