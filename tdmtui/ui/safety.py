"""The safety text the app shows, from the core, with a fallback until it lands."""

from __future__ import annotations


def short_text() -> str:
    """The short safety text for the help screen."""
    try:
        from tdmtui.core.safety import SHORT  # type: ignore[attr-defined]
    except ImportError:
        return caution_line()
    return str(SHORT)


def caution_line() -> str:
    """The one-line caution every result section carries."""
    try:
        from tdmtui.core.safety_text import caution_line as core_line
    except ImportError:
        return ("Decision support only: check every number, follow your local protocol, "
                "and let licensed clinical judgement decide.")
    return core_line()
