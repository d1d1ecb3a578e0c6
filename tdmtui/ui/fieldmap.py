"""Which form field shows an error the engine names by its case path. Pure."""

from __future__ import annotations

import re

_PATIENT = {"patient.age": "pt-age", "patient.sex": "pt-sex", "patient.weight": "pt-weight",
            "patient.height": "pt-height", "patient.scr": "scr-value", "patient.renal_replacement": "pt-rrt",
            "as_of": "pt-as_of", "target.mic": "pt-mic", "drug": "pt-drug", "label": "pt-label",
            "patient.conditions": "pt-conditions", "patient.comedications": "pt-comeds",
            "target.indication": "pt-indication", "timezone": "pt-timezone"}
_DOSE_KEYS = {"start": "start", "amount": "amount", "duration": "infusion", "end": "infusion", "kind": "kind",
              "timing": "timing", "": "start"}
_LEVEL_KEYS = {"time": "time", "conc": "conc", "below_loq": "limit", "above_uloq": "limit", "use": "use",
               "reason": "reason", "timing": "timing", "": "time"}
_ROW = re.compile(r"(doses|levels)\[(\d+)\](?:\.(\w+))?")
_SCR = re.compile(r"patient\.scr\[(\d+)\](?:\.(\w+))?")
_SESSION = re.compile(r"dialysis\.(sessions|planned)\[(\d+)\](?:\.(\w+))?")
_SESSION_KEYS = ("start", "end", "dialyser")


def widget_id_for(field: str, dose_row: int, level_row: int, scr_row: int = 0,
                  session_rows: dict[str, int] | None = None) -> str:
    """The FieldRow id for a case path, or "" when no form shows it now.

    Args:
        field: e.g. ``doses[2].amount``, ``patient.weight``, ``target.auc24[1]``.
        dose_row, level_row: the rows the doses and levels forms show now.
        scr_row: the SCr row the patient form shows now.
        session_rows: the rows the dialysis session forms show now (``{"sessions": 1, "planned": 0}``).
    """
    if field in _PATIENT:
        return _PATIENT[field]
    if field.startswith("patient.conditions["):
        return "pt-conditions"
    if field.startswith("patient.comedications["):
        return "pt-comeds"
    if field.startswith("target."):
        return "pt-target"
    if field == "schedule" or field.startswith("schedule."):
        return "order-schedule"
    m = _SCR.fullmatch(field)
    if m:
        index, key = int(m.group(1)), m.group(2) or "value"
        return ("scr-time" if key == "time" else "scr-value") if index == scr_row else ""
    m = _SESSION.fullmatch(field)
    if m:
        part, index, key = m.group(1), int(m.group(2)), m.group(3) or "start"
        if index == (session_rows or {}).get(part) and key in _SESSION_KEYS:
            return f"{part}-{key}"
        return ""
    m = _ROW.fullmatch(field)
    if m:
        name, index, key = m.group(1), int(m.group(2)), m.group(3) or ""
        if name == "doses" and index == dose_row and key in _DOSE_KEYS:
            return f"doses-{_DOSE_KEYS[key]}"
        if name == "levels" and index == level_row and key in _LEVEL_KEYS:
            return f"levels-{_LEVEL_KEYS[key]}"
    return ""


_ANY_ROW = re.compile(r"\b(doses|levels|patient\.scr)\[(\d+)\](?:\.(\w+))?")
_ROW_WORD = {"doses": "dose", "levels": "level", "patient.scr": "SCr"}


def rows_in_words(text: str) -> str:
    """Case rows counted as the tables show them: ``doses[2].amount`` -> ``dose 3 amount``."""
    def word(m: re.Match[str]) -> str:
        key = f" {m.group(3).replace('_', ' ')}" if m.group(3) else ""
        return f"{_ROW_WORD[m.group(1)]} {int(m.group(2)) + 1}{key}"

    return _ANY_ROW.sub(word, text)


_SESSION_WORD = {"sessions": "session done", "planned": "session planned"}


def session_row_words(field: str) -> str:
    """The table row of a dialysis session the engine names: ``dialysis.sessions[1].end`` ->
    `` (session done 2)``; "" for any other field (the engine's own name is kept beside it)."""
    m = _SESSION.fullmatch(field)
    return f" ({_SESSION_WORD[m.group(1)]} {int(m.group(2)) + 1})" if m else ""
