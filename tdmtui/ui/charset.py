"""Which drawing characters the terminal can show: Unicode in a UTF-8 locale, else ASCII.

Under a locale that is not UTF-8 (``LANG=C``, ``LC_ALL=C``, ``de_DE.ISO-8859-1``) or with
``tdmtui --ascii``, every frame the app draws is ASCII: dialog borders, the rule over a
row's form, notices, scrollbars, and the plot (``*`` ``+`` ``.`` for its curves). The
plot alone follows ``TDMTUI_PLOT=ascii|braille`` where that is set
(:func:`tdmtui.ui.widgets.plot.braille_ok`). Textual's border styles come from CSS
variables (``$tdm-frame``, ``$tdm-rule``, ``$tdm-notice``) in ``app.tcss``.
"""

from __future__ import annotations

import locale
import os
from collections.abc import Mapping

from rich.segment import Segment, Segments
from textual.scrollbar import ScrollBar, ScrollBarRender

#: The LC_CTYPE values Python's C-locale coercion writes into the environment (PEP 538).
COERCED = ("C.UTF-8", "C.utf8", "UTF-8")

#: The border styles of each kind of frame: (Unicode, ASCII).
FRAMES = {"tdm-frame": ("heavy", "ascii"), "tdm-rule": ("solid", "ascii"), "tdm-notice": ("outer", "ascii")}


def utf8_locale(env: Mapping[str, str] | None = None) -> bool:
    """Whether the locale is UTF-8: the first of LC_ALL, LC_CTYPE, LANG that is set (as the C library
    reads it); with none set, Python's preferred encoding. ``LANG=C`` with the LC_CTYPE Python sets when
    it coerces the C locale counts as C (the terminal may not be UTF-8)."""
    env = os.environ if env is None else env
    if not env.get("LC_ALL") and env.get("LANG") in ("C", "POSIX") and env.get("LC_CTYPE") in COERCED:
        return False
    name = next((env[k] for k in ("LC_ALL", "LC_CTYPE", "LANG") if env.get(k)), "")
    enc = name.rsplit(".", 1)[1] if "." in name else ("" if name else locale.getpreferredencoding(False))
    return enc.split("@")[0].replace("-", "").lower() == "utf8"


def ascii_frames(asked: bool = False, env: Mapping[str, str] | None = None) -> bool:
    """True when the app draws its frames in ASCII: asked for (``--ascii``), or the locale is not UTF-8."""
    return asked or not utf8_locale(env)


def css_variables(ascii_only: bool) -> dict[str, str]:
    """The border style of each frame, for the app's CSS variables."""
    return {name: pair[1] if ascii_only else pair[0] for name, pair in FRAMES.items()}


class AsciiScrollBarRender(ScrollBarRender):
    """A scrollbar without block glyphs: the thumb is ``#`` (also seen without colour), the track blank."""

    VERTICAL_BARS = [" "] * 8
    HORIZONTAL_BARS = [" "] * 8

    @classmethod
    def render_bar(cls, *args, **kwargs) -> Segments:  # noqa: ANN002, ANN003
        bar = super().render_bar(*args, **kwargs)
        # the thumb is the reversed blank run (Textual's own drawing); the track keeps its blanks
        bar.segments = [Segment("#" * len(s.text), s.style, s.control) if s.style is not None and s.style.reverse
                        and not s.text.strip() else s for s in bar.segments]
        return bar


def use_scrollbars(ascii_only: bool) -> type[ScrollBarRender]:
    """Draw every scrollbar of the process in ASCII (or not); returns the renderer it replaced.

    Textual keeps the renderer on the ScrollBar class: the app sets it while it runs and puts the
    one it replaced back when it stops.
    """
    before = ScrollBar.renderer
    ScrollBar.renderer = AsciiScrollBarRender if ascii_only else ScrollBarRender
    return before


def restore_scrollbars(renderer: type[ScrollBarRender]) -> None:
    """Put back the scrollbar renderer :func:`use_scrollbars` replaced."""
    ScrollBar.renderer = renderer
