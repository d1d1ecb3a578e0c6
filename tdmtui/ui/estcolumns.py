"""The estimate table's columns: one naming of methods (the note's), and pages that fit the window.

Every method is named as the note names it (``bayesian (model average)``, ``population (Goti 2018)``),
on two header lines when it is long. The table never scrolls sideways: the row labels and the method
used stay on every page, the other methods are shown as many as fit, and ``[``/``]`` page through them.
"""

from __future__ import annotations

from typing import Any

#: A header line longer than this is broken in two (at " (" or a hyphen).
HEADER_W = 14
#: Columns between cells (the table's cell padding, one each side).
PAD = 2


def title_lines(label: str) -> tuple[str, str]:
    """``bayesian (model average)`` -> (``bayesian``, ``(model average)``); short names stay on one line."""
    if len(label) <= HEADER_W:
        return label, ""
    if " (" in label:
        head, rest = label.split(" (", 1)
        return head, "(" + rest
    cut = label.rfind("-", 0, len(label) // 2 + 2)
    if cut <= 0:
        cut = label.find("-")
    return (label[:cut + 1], label[cut + 1:]) if cut > 0 else (label, "")


def columns(result: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """(method label, estimate): the method used first (marked ``*`` in the table), then the others."""
    from tdmtui.core.text.noteplan import method_label  # not on the first screen's import path (numpy)

    cols: list[tuple[str, dict[str, Any]]] = []
    if result.get("estimate"):
        used = result["estimate"]
        cols.append((method_label(used.get("method") or result.get("method") or "", used), used))
    for name, est in (result.get("methods") or {}).items():
        cols.append((method_label(name, est), est))
    return cols


def pages(widths: list[int], fixed: int, room: int) -> list[list[int]]:
    """Split column indices into pages that fit ``room`` cells beside the ``fixed`` ones (at least one each)."""
    out: list[list[int]] = []
    page: list[int] = []
    used = fixed
    for i, w in enumerate(widths):
        if page and used + w + PAD > room:
            out.append(page)
            page, used = [], fixed
        page.append(i)
        used += w + PAD
    if page or not out:
        out.append(page)
    return out


def header(label: str, used: bool) -> str:
    """The column's two-line header (the method used has a ``*``)."""
    first, second = title_lines(label)
    return (first + (" *" if used else "")) + ("\n" + second if second else "\n")
