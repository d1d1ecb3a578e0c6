"""The plot widget's drawing: points where the data say, distinct glyphs, legend, axis."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
from textual.app import App, ComposeResult

from tdmtui.ui.widgets.canvas import BrailleCanvas, dashed
from tdmtui.ui.widgets.plot import LEGEND, ConcPlot, plot_lines
from tdmtui.ui.widgets.plotdata import PlotData


def _data() -> PlotData:
    t = np.linspace(0.0, 24.0, 241)
    conc = 40.0 * np.exp(-0.1 * t)  # a single decay, ke 0.1 /h
    fit = np.where(t <= 12.0, conc, np.nan)
    plan = np.where(t >= 12.0, conc, np.nan)
    return PlotData(0.0, 24.0, 12.0, t, fit, plan, None,
                    levels=[(2.0, 30.0, "used"), (10.0, 10.0, "aside"), (20.0, 2.0, "blq")],
                    target=(10.0, 20.0, "trough"), fmt=None)


def _cell_of(x: float, y: float, cols: int, rows: int, y_max: float) -> tuple[int, int]:
    """Linear axes worked by hand: column from x in 0..24 h, row from y in 0..y_max (row 0 at the top)."""
    col = math.floor(x / 24.0 * cols * 2) // 2
    row = math.floor((1 - y / y_max) * rows * 4) // 4
    return row, col


def test_levels_land_where_the_axes_put_them():
    data = _data()
    width, height = 60, 14
    lines = plot_lines(data, width, height)
    cols, rows = width - 7, height - 2
    y_max = 40.0 * 1.1  # highest value x 1.1 headroom
    for (x, y, _), glyph in zip(data.levels, "oxv"):
        r, c = _cell_of(x, y, cols, rows, y_max)
        assert lines[r][1][c][0] == glyph, (x, y, r, c)


def test_target_limits_now_line_legend_and_axis():
    lines = plot_lines(_data(), 60, 14)
    text = ["".join(ch for ch, _ in cells) for _, cells in lines]
    assert sum(1 for row in text[:-2] if row.count("-") > 20) == 2  # two target limits drawn as "-" lines
    assert lines[-2][0] == "mg/L" and "now" in text[-2]
    assert text[-1] == LEGEND[:53]
    assert lines[0][0] == "44"  # y axis top label = y_max rounded


def test_fitted_and_plan_layers_are_separate_glyph_layers():
    lines = plot_lines(_data(), 60, 14)
    layers = {layer for _, cells in lines for _, layer in cells}
    assert {"fit", "plan", "target", "now", "level", "aside", "legend", "axis"} <= layers


def test_dashed_keeps_steep_rises():
    c = BrailleCanvas(2, 2, 0.0, 1.0, 0.0, 8.0)
    c.curve("plan", [0.5, 0.5, 7.5, 7.5], dashed)  # column 2 rises 7 dots although the dash is "off" there
    assert c.text_rows()[0][1] != " " and c.text_rows()[1][1] != " "
    assert not dashed(2)


class _PlotApp(App):
    def compose(self) -> ComposeResult:
        yield ConcPlot(id="p")


async def test_widget_renders_data_and_the_empty_message():
    app = _PlotApp()
    async with app.run_test(size=(60, 14)) as pilot:
        plot = app.query_one(ConcPlot)
        assert "No fitted curve yet" in str(plot.render())
        plot.show(_data())
        await pilot.pause()
        rendered = str(plot.render())
        assert "o" in rendered and "mg/L" in rendered and rendered.count("\n") == 13


def test_start_up_path_keeps_scipy_numpy_and_pint_out():
    code = "import sys, tdmtui.ui.app; print(sorted(m for m in ('scipy', 'numpy', 'pint') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


async def test_a_dialog_answers_once_even_when_keys_pile_up():
    from tdmtui.ui.dialogs import AskDialog

    answers = []
    app = _PlotApp()
    async with app.run_test(size=(60, 14)) as pilot:
        dialog = AskDialog("Restore?", [("r", "restore"), ("d", "discard")])
        app.push_screen(dialog, answers.append)
        await pilot.pause()
        dialog.finish("discard")
        dialog.finish("discard")  # a second key before the dialog has closed: no ScreenStackError
        await pilot.pause()
        assert answers == ["discard"] and not isinstance(app.screen, AskDialog)
