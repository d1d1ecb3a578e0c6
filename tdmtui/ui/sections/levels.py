"""Levels: measured concentrations, with below-LOQ and set-aside flags."""

from __future__ import annotations

from typing import Any

from textual.widgets import DataTable

from tdmtui.core.input.casetypes import TIMINGS
from tdmtui.ui.entry import Entry
from tdmtui.ui.formatting import short_time
from tdmtui.ui.sections.rows import RowsSection
from tdmtui.ui.widgets.form import FieldSpec

LIMITS = ("quantified", "below-loq", "above-uloq")
USE = ("use", "set-aside", "keep")  # keep: "use": true written, keeps a level drawn soon after a dialysis session


def session_words(item: dict[str, Any]) -> str:
    """``during 2``, ``20 min before 3``, ``2.5 h after 2`` (the sessions done, numbered as in their table)."""
    number, hours = item.get("session_number"), item.get("hours")
    if item.get("relation") == "during":
        return f"during {number}"
    if item.get("relation") not in ("before", "after") or hours is None:
        return ""
    span = f"{round(60 * hours):.0f} min" if hours < 1 else f"{hours:.1f} h"
    return f"{span} {item['relation']} {number}"


class LevelsSection(RowsSection):
    """Measured levels: time, concentration, assay limit, use or set aside (with reason), timing."""

    NAME = "levels"
    TITLE = "Level"
    COLUMNS = ("#", "Time", "Conc", "Flags", "Timing", "Dialysis", "Reason set aside")
    FIELDS = (
        FieldSpec("time", "Drawn", "time", hint="2026-03-03T07:35, 07:35 or +11h"),
        FieldSpec("conc", "Conc", "quantity:conc", "mg/L"),
        FieldSpec("limit", "Assay", "choice", options=LIMITS),
        FieldSpec("use", "Use", "choice", options=USE),
        FieldSpec("reason", "Reason", "text", hint="why set aside"),
        FieldSpec("timing", "Timing", "choice", options=TIMINGS),
    )

    #: the last result's relation of each level (by its path, ``levels[i]``) to the dialysis sessions done, in words
    relations: dict[str, str] = {}

    def show_relations(self, result: dict[str, Any]) -> None:
        """Put each level's relation to the sessions (the result's ``dialysis.levels``) in its table line."""
        got: dict[str, str] = {}
        aside = {str(lv.get("field")) for lv in result.get("levels") or []
                 if lv.get("excluded_code") in ("level-during-dialysis", "level-post-dialysis")}
        for item in ((result.get("dialysis") or {}).get("levels") or []):
            got[str(item.get("level"))] = session_words(item) + (", aside" if item.get("level") in aside else "")
        if got == self.relations:
            return
        self.relations = got
        table = self.query_one(DataTable)
        for i in range(table.row_count):
            table.update_cell(str(i), "Dialysis", got.get(f"levels[{i}]", ""), update_width=True)

    def cells(self, index: int, row: dict[str, Any]) -> tuple[str, ...]:
        """One table line for a level row (flags in words)."""
        flags = []
        if row.get("below_loq"):
            flags.append("<LOQ")
        if row.get("above_uloq"):
            flags.append(">ULOQ")
        if row.get("use") is False:
            flags.append("ASIDE")
        elif row.get("use") is True:
            flags.append("KEPT")
        return (str(index + 1), short_time(row.get("time", "")), str(row.get("conc", "")), " ".join(flags),
                row.get("timing", "actual"), self.relations.get(f"levels[{index}]", ""), str(row.get("reason", ""))[:24])

    def form_value(self, key: str, row: dict[str, Any]) -> Any:
        """What a form field shows for a level row."""
        if key == "limit":
            return "below-loq" if row.get("below_loq") else ("above-uloq" if row.get("above_uloq") else "quantified")
        if key == "use":
            return "set-aside" if row.get("use") is False else "keep" if row.get("use") is True else "use"
        if key == "timing":
            return row.get("timing", "actual")
        return row.get(key, "")

    def entry(self, key: str, text: str, row: dict[str, Any]) -> Entry:
        """Evaluate a level field's text."""
        f = f"levels[{self.current}]"
        if key == "time":
            return self.time(text, f"{f}.time")
        if key == "conc":
            return self.qty(text, "conc", "mg/L", f"{f}.conc")
        if key == "reason" and row.get("use") is False and not text.strip():
            return Entry(text, "", "say why this level is set aside")
        return Entry(text)

    def store(self, key: str, entry: Entry, row: dict[str, Any]) -> None:
        """Put a level field's value in the row (flags only when set)."""
        if key == "limit":
            row.pop("below_loq", None)
            row.pop("above_uloq", None)
            if entry.stored == "below-loq":
                row["below_loq"] = True
            elif entry.stored == "above-uloq":
                row["above_uloq"] = True
        elif key == "use":
            if entry.stored == "set-aside":
                row["use"] = False
                row.setdefault("reason", "")
            elif entry.stored == "keep":
                row["use"] = True
            else:
                row.pop("use", None)
        elif key == "reason":
            if entry.stored or "reason" in row:
                row["reason"] = entry.stored
        elif key == "timing":
            if entry.stored != "actual" or "timing" in row:
                row["timing"] = entry.stored
        else:
            row[key] = entry.stored

    def new_row(self) -> dict[str, Any]:
        """A new, empty level."""
        return {"time": "", "conc": ""}
