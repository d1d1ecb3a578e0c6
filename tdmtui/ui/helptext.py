"""The help text: every key, by where it works, and the short safety text."""

from __future__ import annotations

from typing import Any

from tdmtui.ui.safety import short_text

KEYS = """\
Everywhere
  F1 or ?        this help (? only outside text fields)
  F2..F7, 1..6   sections: patient, doses, levels, estimate, plan, note
                 (digits only outside text fields)
  F8             every warning
  ctrl+s         save (0600; refuses a file changed since you opened it)
  ctrl+q         quit (asks when there are unsaved changes)
  Tab, shift+Tab next / previous field;  Esc: from a form to its table
Patient
  A bare number takes the unit shown; another unit may be typed:
  "180 lb", "97 umol/L", "1.25 g". Choices: left/right, space, or type
  the start of one ("gen"). Target: "auc24 400-600" or "peak 8-10; trough 0.5-1"
  (empty: the library's or your protocol's targets).
  Dialysis ihd: the sessions done and planned are tables like the
  doses (a, x, u, Enter); an end "12:00" or "+4h" from its start.
Doses and levels
  a add a row (the last one, one interval later)   x delete   u undo
  Enter edit the row   r repeat a dose: "12h x 3" (doses only)
  Times: 2026-03-03T08:00; 08:00 (date of the row above, the next day
  when earlier than it, shown beside the field); +12h or +90min from
  the row above. Infusion: a duration (90 min; a bare number is
  minutes) or an end time (21:30).
  Order (doses): the standing order, "1250 mg every 12 h over 90 min";
  empty: the last two maintenance doses define the current regimen.
Estimate
  t methods side by side   w show working   g concentration plot
  m model average: each model's weight, estimate and why it has none
  ] / [ next / previous page of methods (the one used, *, stays)
  The plot draws in braille; TDMTUI_PLOT=ascii (or a locale that is
  not UTF-8, or tdmtui --ascii) draws it in plain characters: * fitted,
  + plan, . band; a locale that is not UTF-8 or --ascii also makes every
  border and scrollbar ASCII.
Plan
  arrows move, Enter chooses the regimen named in the note
Note
  c copy to your clipboard (OSC 52; some terminals and tmux block it)
  w write the note to a file (0600)
"""


def help_text(app: Any = None) -> str:
    """The help screen's text."""
    return KEYS + "\nSafety\n" + short_text() + "\n\nEsc closes this help."
