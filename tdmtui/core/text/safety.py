"""Short forms of the safety text in SAFETY.md, for the app, the CLI and notes.

Keep these in step with SAFETY.md ("Short form"). Plain text only: no markup,
no colour, every line of :data:`SHORT` fits an 80-column terminal.
"""

from __future__ import annotations

#: Where the full text lives (shown beside the short form).
DOC = "SAFETY.md"

#: The short form, one entry per display line (3-6 lines, each under 80 columns),
#: shown on first run and in help.
SHORT_LINES: tuple[str, ...] = (
    "tdmtui is decision support for licensed clinicians, not an automatic dosing",
    "system. It covers adults on IV vancomycin (intermittent or continuous),",
    "gentamicin, tobramycin or amikacin only. Every result rests on the doses,",
    "times and levels you enter: check them against the chart. Follow your local",
    "protocol, and let clinical judgement decide. See SAFETY.md for limits and",
    "for reporting a wrong result.",
)

#: The short form as one block of text, lines joined with newlines.
SHORT: str = "\n".join(SHORT_LINES)

#: The one line every chart note and printed result carries (callers may wrap it).
NOTE_LINE: str = (
    "Decision support only, for adults on IV vancomycin or aminoglycosides: "
    "verify every input, follow local protocol; clinical judgement decides (see SAFETY.md)."
)

#: The one-line caution under every result section of the app (fits 80 columns in two lines).
SCREEN_LINE: str = (
    "Decision support only: check every number, follow your local protocol, "
    "and let licensed clinical judgement decide."
)
