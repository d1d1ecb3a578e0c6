"""A small braille canvas for concentration-time plots, readable in monochrome.

Each terminal cell holds a 2 x 4 grid of braille dots (Unicode U+2800 block:
dot bits 0x01, 0x02, 0x04, 0x40 down the left column, 0x08, 0x10, 0x20, 0x80
down the right). Layers keep their dots apart so each can be drawn with its
own pattern (solid, dashed, sparse) and style; markers and guide lines are
whole characters. No Textual imports: rendered to (char, layer) cells and
tested as plain Python.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

BRAILLE_BASE = 0x2800
#: DOT_BITS[row][col] for the 4 x 2 dots of one cell.
DOT_BITS = ((0x01, 0x08), (0x02, 0x10), (0x04, 0x20), (0x40, 0x80))

Cell = tuple[str, str]


def solid(_col: int) -> bool:
    """Every dot column drawn."""
    return True


def dashed(col: int) -> bool:
    """Two dot columns on, two off: a dashed line (one cell on, one off)."""
    return (col // 2) % 2 == 0


def sparse(col: int) -> bool:
    """One dot column in four: a dotted line."""
    return col % 4 == 0


class BrailleCanvas:
    """A cols x rows character canvas over data ranges x0..x1, y0..y1.

    Args:
        cols: width in cells (2 dots each). rows: height in cells (4 dots each).
        x0, x1: data range across (e.g. hours). y0, y1: data range up (e.g. mg/L).
    """

    def __init__(self, cols: int, rows: int, x0: float, x1: float, y0: float, y1: float) -> None:
        if cols < 1 or rows < 1 or not x1 > x0 or not y1 > y0:
            raise ValueError("canvas needs a positive size and increasing ranges")
        self.cols, self.rows = cols, rows
        self.x0, self.x1, self.y0, self.y1 = x0, x1, y0, y1
        self.width, self.height = cols * 2, rows * 4
        self._layers: dict[str, np.ndarray] = {}
        self._order: list[str] = []
        self._chars: dict[tuple[int, int], Cell] = {}
        self._guides: dict[tuple[int, int], Cell] = {}
        #: Layers a guide line is drawn over (a cell holding only these shows the guide).
        self.under_guides: set[str] = set()

    # ------------------------------------------------------------ coordinates
    def dot_xs(self) -> np.ndarray:
        """The data x at the centre of each dot column (for sampling curves)."""
        return self.x0 + (np.arange(self.width) + 0.5) * (self.x1 - self.x0) / self.width

    def dot_x(self, x: float) -> int:
        """Dot column of a data x (may fall outside 0..width-1)."""
        return int(np.floor((x - self.x0) / (self.x1 - self.x0) * self.width))

    def dot_y(self, y: np.ndarray | float) -> np.ndarray:
        """Dot row (0 = top) of data y values, unclipped."""
        frac = (np.asarray(y, dtype=float) - self.y0) / (self.y1 - self.y0)
        return np.floor((1.0 - frac) * self.height).astype(int).clip(-1, self.height)

    # ------------------------------------------------------------ drawing
    def _layer(self, name: str) -> np.ndarray:
        if name not in self._layers:
            self._layers[name] = np.zeros((self.height, self.width), dtype=bool)
            self._order.append(name)
        return self._layers[name]

    def curve(self, layer: str, ys: Sequence[float] | np.ndarray, pattern: Callable[[int], bool] = solid,
              mask: np.ndarray | None = None) -> None:
        """Draw a curve sampled at :meth:`dot_xs`, joining neighbours vertically.

        The pattern thins only the flat stretches: steep rises and falls (more
        than two dots in one column) are always drawn, so a dashed curve keeps
        its shape.

        Args:
            layer: layer name (its style and draw order).
            ys: one data y per dot column (NaN = gap).
            pattern: which dot columns are drawn (solid, dashed, sparse).
            mask: optional bool per dot column; False columns are not drawn.
        """
        grid = self._layer(layer)
        y = np.asarray(ys, dtype=float)
        rows = self.dot_y(np.nan_to_num(y, nan=self.y0 - 1e9))
        prev: int | None = None
        for c in range(self.width):
            ok = np.isfinite(y[c]) and (mask is None or bool(mask[c]))
            if not ok:
                prev = None
                continue
            r = min(max(int(rows[c]), 0), self.height - 1)
            lo, hi = (r, r) if prev is None else (min(r, prev), max(r, prev))
            prev = r
            if pattern(c) or hi - lo > 2:
                lo, hi = max(lo, 0), min(hi, self.height - 1)
                if lo <= hi:
                    grid[lo:hi + 1, c] = True

    def point(self, layer: str, x: float, y: float) -> None:
        """Set one dot."""
        c, r = self.dot_x(x), int(self.dot_y(y))
        if 0 <= c < self.width and 0 <= r < self.height:
            self._layer(layer)[r, c] = True

    def marker(self, x: float, y: float, char: str, layer: str) -> None:
        """A whole-cell glyph at a data point (drawn over dots); clipped to the edge."""
        c = min(max(self.dot_x(x) // 2, 0), self.cols - 1)
        r = min(max(int(self.dot_y(y)) // 4, 0), self.rows - 1)
        self._chars[(r, c)] = (char, layer)

    def hguide(self, y: float, char: str, layer: str) -> None:
        """A horizontal guide line of ``char`` in cells with no dots (e.g. a target limit).

        A limit at the foot of the axis (a trough target from 0 mg/L) is drawn on the bottom row.
        """
        r = int(self.dot_y(y)) // 4
        if r == self.rows and y >= self.y0:
            r = self.rows - 1
        if 0 <= r < self.rows:
            for c in range(self.cols):
                self._guides[(r, c)] = (char, layer)

    def vguide(self, x: float, char: str, layer: str) -> None:
        """A vertical guide line (e.g. "now") in cells with no dots."""
        c = self.dot_x(x) // 2
        if 0 <= c < self.cols:
            for r in range(self.rows):
                self._guides[(r, c)] = (char, layer)

    # ------------------------------------------------------------ output
    def cells(self, ascii_glyphs: dict[str, str] | None = None) -> list[list[Cell]]:
        """Rows of (character, layer) cells; the layer drawn last wins a shared cell's style.

        A guide line shows through the layers named in ``under_guides`` (the sparse 90 % band), so a
        target limit stays visible inside the band. With ``ascii_glyphs`` (layer -> one ASCII character)
        a cell with dots shows its layer's character instead of braille, for terminals without it.
        """
        out: list[list[Cell]] = []
        for r in range(self.rows):
            line: list[Cell] = []
            for c in range(self.cols):
                if (r, c) in self._chars:
                    line.append(self._chars[(r, c)])
                    continue
                bits, owner, owners = 0, "", set()
                for name in self._order:
                    block = self._layers[name][r * 4:r * 4 + 4, c * 2:c * 2 + 2]
                    if block.any():
                        owner = name
                        owners.add(name)
                        for dr in range(4):
                            for dc in range(2):
                                if block[dr, dc]:
                                    bits |= DOT_BITS[dr][dc]
                if bits and not ((r, c) in self._guides and owners <= self.under_guides):
                    glyph = ascii_glyphs.get(owner, "*") if ascii_glyphs is not None else chr(BRAILLE_BASE + bits)
                    line.append((glyph, owner))
                elif (r, c) in self._guides:
                    line.append(self._guides[(r, c)])
                else:
                    line.append((" ", ""))
            out.append(line)
        return out

    def text_rows(self) -> list[str]:
        """The canvas as plain strings (for tests and plain output)."""
        return ["".join(ch for ch, _ in row) for row in self.cells()]
