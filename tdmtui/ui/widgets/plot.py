"""Concentration-time plot widget: braille curves, glyph markers, a legend.

Monochrome-safe: each element differs by glyph or line pattern, not colour:
fitted curve solid braille, proposed regimen dashed braille, 90 % band
sparse dots, levels "o" (used), "x" (set aside), "v" (below the limit of
quantification), target limits "-" lines (a second band "="), "now" a "|" line.
Without braille (``TDMTUI_PLOT=ascii``, or a locale that is not UTF-8) the
curves are "*" fitted, "+" plan, "." band. The legend names only what is drawn.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.text import Text
from textual.widget import Widget

if TYPE_CHECKING:  # numpy stays off the path to the first paint
    from tdmtui.ui.widgets.canvas import BrailleCanvas
    from tdmtui.ui.widgets.plotdata import PlotData

LEGEND = "o level x aside v <LOQ  \u28c0\u28c0 fitted  \u28c0 \u28c0 plan  \u2801 90% band  - target  | now"
MARK = {"used": "o", "aside": "x", "blq": "v"}
Y_LABEL_W = 6
#: Glyphs without braille (a terminal or locale that cannot show it): one character per cell and layer.
ASCII = {"fit": "*", "plan": "+", "band": "."}
#: The line of each target band (a second band, e.g. the peak beside the trough, gets its own).
BAND_CHARS = ("-", "=")
def braille_ok(env: dict[str, str] | None = None) -> bool:
    """Whether to draw in braille: ``TDMTUI_PLOT=ascii`` or ``braille`` decides; else the locale must be UTF-8
    (:func:`tdmtui.ui.charset.utf8_locale`: LC_ALL, LC_CTYPE, LANG as the C library reads them; ``LANG=C``
    with the LC_CTYPE Python sets when it coerces the C locale counts as C)."""
    import os

    from tdmtui.ui.charset import utf8_locale

    env = os.environ if env is None else env
    choice = env.get("TDMTUI_PLOT", "").strip().lower()
    if choice in ("ascii", "braille"):
        return choice == "braille"
    return utf8_locale(env)


def legend(data: PlotData, braille: bool) -> str:
    """What is drawn, and only that: the level glyphs, curves, the band, each target band by name and range."""
    fit, plan, band = ("\u28c0\u28c0", "\u28c0 \u28c0", "\u2801") if braille else ("*", "+", ".")
    parts = ["o level x aside v <LOQ", f"{fit} fitted"]
    if data.plan is not None:
        parts.append(f"{plan} plan")
    if data.band is not None:
        parts.append(f"{band} 90% band")
    for ch, (lo, hi, name) in zip(BAND_CHARS, data.bands()):
        parts.append(f"{ch} {name} {lo:g}-{hi:g}")
    parts.append("| now")
    return "  ".join(parts)


def legend_lines(text: str, cols: int) -> list[str]:
    """The legend on as many lines as it needs (broken between its parts), never cut."""
    lines: list[str] = []
    for part in text.split("  "):
        if lines and len(lines[-1]) + 2 + len(part) <= cols:
            lines[-1] += "  " + part
        else:
            lines.append(part[:cols])
    return lines


def draw(data: PlotData, cols: int, rows: int) -> BrailleCanvas:
    """Rasterise PlotData onto a canvas of cols x rows cells."""
    import numpy as np

    from tdmtui.ui.widgets.canvas import BrailleCanvas, dashed, solid, sparse

    canvas = BrailleCanvas(cols, rows, data.x0, data.x1, 0.0, data.y_max())
    canvas.under_guides = {"band"}
    xs = canvas.dot_xs()
    for ch, (lo, hi, _) in zip(BAND_CHARS, data.bands()):
        canvas.hguide(lo, ch, "target")
        canvas.hguide(hi, ch, "target")
    canvas.vguide(data.now, "|", "now")
    if data.band is not None:
        bt, lo, hi = data.band
        inside = (xs >= bt[0]) & (xs <= bt[-1])
        canvas.curve("band", np.interp(xs, bt, lo), sparse, inside)
        canvas.curve("band", np.interp(xs, bt, hi), sparse, inside)
    canvas.curve("fit", np.interp(xs, data.t, data.fit, left=np.nan, right=np.nan), solid)
    if data.plan is not None:
        canvas.curve("plan", np.interp(xs, data.t, data.plan, left=np.nan, right=np.nan), dashed)
    for t, c, kind in data.levels:
        if data.x0 <= t <= data.x1:
            canvas.marker(t, c, MARK[kind], "level" if kind == "used" else "aside")
    return canvas


def plot_lines(data: PlotData, width: int, height: int,
               braille: bool = True) -> list[tuple[str, list[tuple[str, str]]]]:
    """The whole plot as lines of (axis label, cells): canvas, time axis, legend (ASCII when not ``braille``)."""
    cols = max(width - Y_LABEL_W - 1, 10)
    key = legend_lines(legend(data, braille), cols)
    rows = max(height - 1 - len(key), 2)
    canvas = draw(data, cols, rows)
    cells = canvas.cells(None if braille else ASCII)
    top = data.y_max()
    out = []
    for r, line in enumerate(cells):
        label = ""
        if r == 0:
            label = f"{top:.0f}"
        elif r == rows // 2:
            label = f"{top / 2:.0f}"
        elif r == rows - 1:
            label = "0"
        out.append((label, line))
    fmt = data.fmt or (lambda h: f"{h:.0f} h")
    left, right = fmt(data.x0)[5:16].replace("T", " "), fmt(data.x1)[5:16].replace("T", " ")
    now = "now " + fmt(data.now)[11:16]
    axis = [" "] * cols
    for i, ch in enumerate(left):
        if i < cols:
            axis[i] = ch
    start = cols - len(right)
    for i, ch in enumerate(right):
        if 0 <= start + i < cols:
            axis[start + i] = ch
    pos = min(max(canvas.dot_x(data.now) // 2 - len(now) // 2, len(left) + 1), cols - len(right) - len(now) - 1)
    if pos > len(left):
        for i, ch in enumerate(now):
            axis[pos + i] = ch
    out.append(("mg/L", [(ch, "axis") for ch in axis]))
    out += [("", [(ch, "legend") for ch in line]) for line in key]
    return out


class ConcPlot(Widget, can_focus=True):
    """The concentration-time plot: :meth:`show_outcome` gives it an assessment, whose curves are
    built (:func:`~tdmtui.ui.widgets.plotdata.build_plot_data`, the plot's own object) only when the
    plot is drawn; :meth:`show` gives it ready PlotData or None."""

    COMPONENT_CLASSES = {"plot--fit", "plot--plan", "plot--band", "plot--level", "plot--aside",
                         "plot--target", "plot--now", "plot--axis"}
    DEFAULT_CSS = """
    ConcPlot { height: 1fr; }
    ConcPlot .plot--fit { color: $accent; text-style: bold; }
    ConcPlot .plot--plan { color: $success; }
    ConcPlot .plot--band { color: $text-muted; }
    ConcPlot .plot--level { color: $warning; text-style: bold; }
    ConcPlot .plot--aside { color: $text-muted; }
    ConcPlot .plot--target { color: $success-darken-2; }
    ConcPlot .plot--now { color: $text-muted; }
    ConcPlot .plot--axis { color: $text-muted; }
    """

    def __init__(self, *, id: str | None = None) -> None:  # noqa: A002
        super().__init__(id=id)
        self.data: PlotData | None = None
        self._outcome: Any = None
        self.braille = braille_ok()

    def on_mount(self) -> None:
        if getattr(self.app, "ascii_only", False) and not self.braille_asked():
            self.braille = False  # tdmtui --ascii, or a locale that is not UTF-8: ASCII everywhere

    @staticmethod
    def braille_asked() -> bool:
        """True when TDMTUI_PLOT=braille asks for braille whatever the locale."""
        import os

        return os.environ.get("TDMTUI_PLOT", "").strip().lower() == "braille"

    def show(self, data: PlotData | None) -> None:
        """Draw new data (None: no estimate to plot)."""
        self.data = data
        self._outcome = None
        self.refresh()

    def show_outcome(self, outcome: Any) -> None:
        """Plot this assessment (None: nothing to plot); the curves are built when the plot is drawn."""
        self.data = None
        self._outcome = outcome
        self.refresh()

    def render(self) -> Text:
        w, h = self.size.width, self.size.height
        if self.data is None and self._outcome is not None:
            from tdmtui.ui.widgets.plotdata import build_plot_data

            self.data, self._outcome = build_plot_data(self._outcome), None
        if self.data is None:
            return Text("No fitted curve yet: the plot appears when an estimate exists.")
        styles = {name.split("--")[1]: self.get_component_rich_style(name) for name in self.COMPONENT_CLASSES}
        text = Text(no_wrap=True, overflow="crop")
        for i, (label, cells) in enumerate(plot_lines(self.data, w, h, self.braille)):
            if i:
                text.append("\n")
            text.append(f"{label:>{Y_LABEL_W}} ")
            for ch, layer in cells:
                text.append(ch, styles.get(layer) or "")
        return text
