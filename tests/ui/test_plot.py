"""The plot widget's drawing: points where the data say, distinct glyphs, legend, axis."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pytest
from textual.app import App, ComposeResult

from tdmtui.ui.widgets.canvas import BrailleCanvas, dashed
from tdmtui.ui.widgets.plot import ConcPlot, braille_ok, plot_lines
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
    width, height = 80, 14  # the app's width: the legend fits one line, so the canvas has height - 2 rows
    lines = plot_lines(data, width, height)
    cols, rows = width - 7, height - 2
    y_max = 40.0 * 1.1  # highest value x 1.1 headroom
    for (x, y, _), glyph in zip(data.levels, "oxv"):
        r, c = _cell_of(x, y, cols, rows, y_max)
        assert lines[r][1][c][0] == glyph, (x, y, r, c)


def test_target_limits_now_line_legend_and_axis():
    lines = plot_lines(_data(), 80, 14)
    text = ["".join(ch for ch, _ in cells) for _, cells in lines]
    assert sum(1 for row in text[:-2] if row.count("-") > 20) == 2  # two target limits drawn as "-" lines
    assert lines[-2][0] == "mg/L" and "now" in text[-2]
    # the legend names what is drawn, the target band by its name and range (no 90 % band in this data)
    assert text[-1] == "o level x aside v <LOQ  \u28c0\u28c0 fitted  \u28c0 \u28c0 plan  - trough 10-20  | now"
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


def _rows(lines) -> list[str]:  # noqa: ANN001
    return ["".join(ch for ch, _ in cells) for _, cells in lines]


def test_ascii_fallback_draws_the_same_plot_without_braille():
    data = _data()
    braille, ascii_ = plot_lines(data, 80, 14), plot_lines(data, 80, 14, braille=False)
    text = "".join(_rows(ascii_))
    assert all(ord(ch) < 128 for ch in text)
    assert "*" in text and "+" in text  # fitted and plan curves
    # the same cells hold something in both: each braille cell becomes its layer's character
    for (_, b), (_, a) in zip(braille[:-2], ascii_[:-2]):
        for (cb, lb), (ca, la) in zip(b, a):
            assert (cb == " ") == (ca == " ") and lb == la
            if 0x2800 <= ord(cb) <= 0x28FF:
                assert ca == {"fit": "*", "plan": "+", "band": "."}[lb]
    assert _rows(ascii_)[-1] == "o level x aside v <LOQ  * fitted  + plan  - trough 10-20  | now"


@pytest.mark.parametrize("env, expected", [
    ({"TDMTUI_PLOT": "ascii", "LANG": "en_GB.UTF-8"}, False),
    ({"TDMTUI_PLOT": "braille", "LANG": "C"}, True),
    ({"LANG": "en_GB.UTF-8"}, True),
    ({"LANG": "C.utf8"}, True),
    ({"LANG": "C"}, False),
    ({"LANG": "POSIX"}, False),
    ({"LANG": "de_DE.ISO-8859-1"}, False),
    ({"LC_ALL": "C", "LANG": "en_GB.UTF-8"}, False),  # LC_ALL wins, as the C library reads it
    ({"LC_CTYPE": "en_US.UTF-8", "LANG": "C"}, True),
    ({"LC_CTYPE": "C.UTF-8", "LANG": "C"}, False),  # what Python's coercion of the C locale leaves (PEP 538)
    ({"LC_CTYPE": "C.UTF-8", "LANG": "C.UTF-8"}, True),
])
def test_braille_only_in_a_utf8_locale_or_when_asked(env, expected):
    assert braille_ok(env) is expected


def test_every_target_band_is_drawn_both_limits_also_at_zero_and_inside_the_90_band():
    t = np.linspace(0.0, 24.0, 241)
    conc = 9.0 * np.exp(-0.1 * t)
    band = (t, conc * 0.5, conc * 1.5)
    data = PlotData(0.0, 24.0, 12.0, t, conc, None, band, levels=[], fmt=None,
                    targets=[(0.0, 2.0, "trough"), (6.0, 10.0, "peak")])
    lines = plot_lines(data, 60, 15, braille=False)
    axis = next(i for i, (label, _) in enumerate(lines) if label == "mg/L")
    assert axis == 12  # 15 lines: 12 of canvas, the time axis, a legend on two lines (60 columns)
    rows = _rows(lines)[:axis]
    y_max = 10.0 * 1.1  # the highest target limit x 1.1 headroom
    for y, ch in ((0.0, "-"), (2.0, "-"), (6.0, "="), (10.0, "=")):
        r = min(math.floor((1 - y / y_max) * 12 * 4) // 4, 11)  # 12 canvas rows; 0 mg/L on the bottom one
        assert rows[r].count(ch) > 20, (y, rows[r])
    # the legend is never cut: it takes a second line when it needs one
    assert " ".join(_rows(lines)[-2:]).endswith("- trough 0-2  = peak 6-10  | now")
    assert ". 90% band" in _rows(lines)[-2] + _rows(lines)[-1]


def test_an_auc_only_target_draws_no_band_and_the_legend_claims_none():
    from tdmtui.core.input.case import load_case
    from tdmtui.core.compute import compute
    from tdmtui.ui.widgets.plotdata import build_plot_data
    from uihelpers import SAMPLES

    vanc = build_plot_data(compute(load_case(SAMPLES / "vanc-trough-only.json")))
    assert vanc.bands() == []  # AUC24 400-600 is not a concentration: nothing to draw in mg/L
    assert "target" not in _rows(plot_lines(vanc, 120, 14))[-1] and "trough" not in _rows(plot_lines(vanc, 120, 14))[-1]
    gent = build_plot_data(compute(load_case(SAMPLES / "gent-peak-trough.json")))
    names = [name for _, _, name in gent.bands()]
    assert names and set(names) <= {"trough", "peak"}
    legend = _rows(plot_lines(gent, 120, 14))[-1]
    for lo, hi, name in gent.bands():
        assert f"{name} {lo:g}-{hi:g}" in legend
