"""The safety caution as text the core can print (falls back until SAFETY text lands)."""

from __future__ import annotations


def caution_line() -> str:
    """The one-line caution every result and note carries (see SAFETY.md)."""
    try:
        from tdmtui.core.safety import NOTE_LINE
    except ImportError:
        return ("Decision support only: check every number, follow your local protocol, "
                "and let licensed clinical judgement decide (see SAFETY.md).")
    return NOTE_LINE
