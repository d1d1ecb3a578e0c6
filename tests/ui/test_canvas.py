"""Braille canvas: dot arithmetic against the Unicode braille block definition.

Unicode 15, U+2800-U+28FF "Braille Patterns": dot n sets bit n-1; dots 1,2,3,7
run down the left column, 4,5,6,8 down the right. So the full cell is U+28FF,
the top-left dot alone U+2801 and the bottom row (dots 7, 8) U+28C0.
"""

from __future__ import annotations

import numpy as np
import pytest

from tdmtui.ui.widgets.canvas import BrailleCanvas, dashed, sparse


def test_single_dots_match_the_unicode_table():
    c = BrailleCanvas(1, 1, 0.0, 2.0, 0.0, 4.0)
    c.point("a", 0.1, 3.9)  # top-left -> dot 1
    assert c.text_rows() == ["\u2801"]
    c.point("a", 1.9, 0.1)  # bottom-right -> dot 8
    assert c.text_rows() == [chr(0x2801 | 0x80)]


def test_flat_line_at_the_bottom_fills_dots_7_and_8():
    c = BrailleCanvas(3, 2, 0.0, 1.0, 0.0, 8.0)
    c.curve("fit", np.full(6, 0.5))
    assert c.text_rows() == ["   ", "\u28c0" * 3]


def test_steep_rise_is_joined_vertically():
    c = BrailleCanvas(1, 2, 0.0, 1.0, 0.0, 8.0)
    c.curve("fit", [0.5, 7.5])  # left column bottom, right column top: right column filled top to bottom
    rows = c.text_rows()
    assert rows[0] == chr(0x2800 | 0x08 | 0x10 | 0x20 | 0x80)
    assert rows[1] == chr(0x2800 | 0x40 | 0x08 | 0x10 | 0x20 | 0x80)


def test_dashed_and_sparse_patterns_leave_gaps():
    assert [dashed(i) for i in range(6)] == [True, True, False, False, True, True]
    assert [sparse(i) for i in range(5)] == [True, False, False, False, True]
    c = BrailleCanvas(4, 1, 0.0, 1.0, 0.0, 4.0)
    c.curve("plan", np.full(8, 0.5), dashed)
    assert c.text_rows() == ["\u28c0 \u28c0 "]


def test_markers_win_over_dots_and_guides_fill_empty_cells():
    c = BrailleCanvas(4, 2, 0.0, 4.0, 0.0, 10.0)
    c.hguide(1.0, "-", "target")
    c.curve("fit", np.full(8, 9.0))
    c.marker(1.5, 9.0, "o", "level")
    rows = c.cells()
    assert rows[0][1] == ("o", "level")
    assert rows[0][0][1] == "fit"
    assert "".join(ch for ch, _ in rows[1]) == "----"


def test_nan_makes_a_gap_and_out_of_range_is_clipped():
    c = BrailleCanvas(2, 1, 0.0, 1.0, 0.0, 4.0)
    c.curve("fit", [np.nan, np.nan, 100.0, 100.0])
    assert c.text_rows()[0][0] == " "
    assert c.text_rows()[0][1] != " "  # clipped to the top row, still visible


def test_bad_ranges_are_refused():
    with pytest.raises(ValueError):
        BrailleCanvas(2, 2, 1.0, 1.0, 0.0, 1.0)
