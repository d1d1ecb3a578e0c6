"""Words for clinicians in the chart note: times, sources and case paths.

- Times (:func:`when`, :func:`local_times`): a contract time
  ``YYYY-MM-DDTHH:MM[offset]`` is written ``YYYY-MM-DD HH:MM``; while a note
  is written (:func:`shared_offset`) the UTC offset every one of its times
  carries is said once in its header and left off each time, and a time at
  another offset keeps its own.
- Sources (:func:`plain_source`, :func:`short_source`, :func:`outer`,
  :func:`nested`): remarks on how a source was checked stay in the drug
  library and the audit record; a source's name stands for it in the
  standard note, the sources cited inside it go to the full note's references.
- Case paths (:func:`plain_paths`): ``doses[2]`` is ``dose 3``.

Re-exported by :mod:`tdmtui.core.text.notefmt`, through which the note's
sections call them.
"""

from __future__ import annotations

import contextlib
import contextvars
import re
from typing import Callable, Iterator

#: The UTC offset every time of the note being written carries (said once in its header), or None.
_SHARED_OFFSET: contextvars.ContextVar[str | None] = contextvars.ContextVar("shared_offset", default=None)
_TIME = re.compile(r"\b(\d{4}-\d{2}-\d{2})[T ](\d{2}:\d{2})(Z|[+-]\d{2}:\d{2})?(?![\d:])")


@contextlib.contextmanager
def shared_offset(offset: str | None) -> Iterator[None]:
    """Within the block, :func:`when` and :func:`local_times` leave ``offset`` off the times that carry it
    (the note's header says it once); a time at another offset keeps its own."""
    token = _SHARED_OFFSET.set(offset)
    try:
        yield
    finally:
        _SHARED_OFFSET.reset(token)


def local_times(text: str) -> str:
    """Every contract time in a sentence written for people: ``2026-01-28 07:00``, its offset only when it
    differs from the note's shared one."""
    shared = _SHARED_OFFSET.get()

    def one(m: re.Match[str]) -> str:
        off = m.group(3) or ""
        return f"{m.group(1)} {m.group(2)}" + ("" if off == shared else off)
    return _TIME.sub(one, text)


def when(text: str | None) -> str:
    """A contract time (``YYYY-MM-DDTHH:MM[offset]``) written for people (:func:`local_times`)."""
    return "-" if not text else local_times(str(text))


#: Remarks about how a fact was checked: they belong to the library and the audit record, not the chart.
_CHECK_REMARKS = re.compile(
    r"\s*\[(?:library|protocol|confirmed[^\]]*|from memory[^\]]*)\]"
    r"|,?\s*(?:citation(?: details)? )?from memory"
    r"|,\s*confirmed(?:-secondary)?(?: text)?(?=[);,.]|$)"
    r"|,?\s*year not confirmed", re.IGNORECASE)
_PATHS = (
    (re.compile(r"\bdoses\[(\d+)\](?:\.\w+)?"), "dose"),
    (re.compile(r"\blevels\[(\d+)\](?:\.\w+)?"), "level"),
    (re.compile(r"\bpatient\.scr\[(\d+)\](?:\.\w+)?"), "SCr value"),
)


def outer(text: str) -> str:
    """``text`` without its nested parentheses: ``a (b (c); d)`` -> ``a (b; d)`` (the sources inside a
    source's own parenthesis are given in the references of the full note, :func:`nested`)."""
    out, depth = [], 0
    for ch in text:
        depth += ch == "("
        if depth <= 1:
            out.append(ch)
        depth -= ch == ")" and depth > 0
    return re.sub(r"\s{2,}", " ", re.sub(r"\s+(?=[);,])", "", "".join(out))).strip()


def nested(text: str) -> list[str]:
    """The parenthesised groups inside a parenthesis of ``text`` (what :func:`outer` leaves out)."""
    found, depth, start = [], 0, 0
    for k, ch in enumerate(text):
        if ch == "(":
            depth += 1
            if depth == 2:
                start = k + 1
        elif ch == ")" and depth > 0:
            if depth == 2:
                found.append(text[start:k])
            depth -= 1
    return found


def plain_source(text: str) -> str:
    """A source as a clinician reads it: remarks on how it was checked removed."""
    out = _CHECK_REMARKS.sub("", str(text or ""))
    return re.sub(r"\(\s*\)|\s+(?=[),.;])", "", out).strip(" ;,")


def short_source(text: str) -> str:
    """The name of a source, e.g. ``2020 vancomycin consensus guideline`` or ``KDIGO 2012``."""
    text = plain_source(text)
    head, colon, _ = text.partition(":")
    if colon and "(" not in head:
        name = head.strip()
    else:
        inner = text[text.find("(") + 1:].split(")")[0] if "(" in text else text
        name = re.split(r"[;,]", inner)[0].strip()
    # ``KDIGO 2012 trough 1-2 mg/L; Bauer`` names KDIGO 2012: the figures after the name are no part of it
    m = re.match(r"([A-Z][A-Za-z-]+ \d{4})\b(.*)", name)
    return m.group(1) if m and re.search(r"\d", m.group(2)) else name


def _numbered(word: str) -> Callable[[re.Match[str]], str]:
    return lambda m: f"{word} {int(m.group(1)) + 1}"


def plain_paths(text: str) -> str:
    """Case paths in words: ``doses[2]`` -> ``dose 3``, ``levels[0].time`` -> ``level 1``."""
    for pattern, word in _PATHS:
        text = pattern.sub(_numbered(word), text)
    return re.sub(r"\bpatient\.(\w+)", lambda m: m.group(1).replace("_", " "), text)
