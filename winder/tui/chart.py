"""Resistance against turns, drawn with Unicode braille cells.

A braille character holds a 2 x 4 grid of dots, so a chart of ``w`` x ``h``
cells has ``2w`` x ``4h`` dots: enough to show the predicted curve, its
tolerance band and measured readings legibly in a terminal panel. Readings are
drawn one per cell as a solid marker over the curve; the turn count now is a
faint vertical line.

Pure function of its inputs (turns and ohms as plain floats); returns Rich text.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from rich.text import Text

from winder.tui.cells import CellText
from winder.tui.progress import ohm_text

# Braille dot bits by (column, row) inside a cell; rows count down from the top.
_DOTS = ((0x01, 0x02, 0x04, 0x40), (0x08, 0x10, 0x20, 0x80))

STYLE_CURVE = "#6fa8c8"
STYLE_BAND = "#3c5a6e"
STYLE_POINT = "bold #ffaf5f"
STYLE_NOW = "#5a5f6b"
STYLE_AXIS = "#8a94a6"

Y_LABEL_WIDTH = 10


def nice_ceiling(value: float) -> float:
    """The smallest 1, 1.2, 1.5, 2, 2.5, 3, 4, 5, 6 or 8 x 10^k at or above ``value``."""
    if value <= 0 or not math.isfinite(value):
        return 1.0
    exp = math.floor(math.log10(value))
    for m in (1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0):
        if m * 10**exp >= value * (1 - 1e-12):
            return m * 10**exp
    return 10.0 ** (exp + 1)  # pragma: no cover - unreachable


def round_up(value: float, digits: int = 2) -> float:
    """``value`` rounded up to ``digits`` significant figures (axis ends): 8058 -> 8100."""
    if value <= 0 or not math.isfinite(value):
        return 1.0
    step = 10 ** (math.floor(math.log10(value)) - digits + 1)
    return math.ceil(value / step * (1 - 1e-12)) * step


def _turns_text(value: float) -> str:
    if value >= 10_000:
        return f"{value / 1000:.4g}k"
    return f"{value:.4g}"


class _Canvas:
    """A dot grid ``2w`` x ``4h`` with one style per cell (last writer wins)."""

    def __init__(self, w: int, h: int):
        self.w, self.h = w, h
        self.bits = [[0] * w for _ in range(h)]
        self.style = [[""] * w for _ in range(h)]
        self.mark: dict[tuple[int, int], tuple[str, str]] = {}

    def dot(self, x: int, y: int, style: str) -> None:
        """Set dot (x, y); x from the left, y from the bottom, in dots."""
        if not (0 <= x < 2 * self.w and 0 <= y < 4 * self.h):
            return
        col, row = x // 2, self.h - 1 - y // 4
        self.bits[row][col] |= _DOTS[x % 2][3 - y % 4]
        if not self.style[row][col] or style != STYLE_BAND:
            self.style[row][col] = style

    def dot_under(self, x: int, y: int, style: str) -> None:
        """Set dot (x, y) beneath what is drawn: its style shows only in a cell that is
        empty or holds the band alone (as if drawn before the band and the curve)."""
        if not (0 <= x < 2 * self.w and 0 <= y < 4 * self.h):
            return
        col, row = x // 2, self.h - 1 - y // 4
        self.bits[row][col] |= _DOTS[x % 2][3 - y % 4]
        if self.style[row][col] in ("", STYLE_BAND):
            self.style[row][col] = style

    def copy(self) -> _Canvas:
        out = _Canvas.__new__(_Canvas)
        out.w, out.h = self.w, self.h
        out.bits = [row[:] for row in self.bits]
        out.style = [row[:] for row in self.style]
        out.mark = dict(self.mark)
        return out

    def line(self, x0: int, y0: int, x1: int, y1: int, style: str) -> None:
        steps = max(abs(x1 - x0), abs(y1 - y0), 1)
        for i in range(steps + 1):
            self.dot(round(x0 + (x1 - x0) * i / steps), round(y0 + (y1 - y0) * i / steps), style)

    def text(self) -> list[CellText]:
        lines = []
        for row in range(self.h):
            t = CellText()
            for col in range(self.w):
                if (col, row) in self.mark:
                    ch, st = self.mark[(col, row)]
                    t.append(ch, st)
                elif self.bits[row][col]:
                    t.append(chr(0x2800 + self.bits[row][col]), self.style[row][col])
                else:
                    t.append(" ")
            lines.append(t)
        return lines


_BASE: dict[tuple, _Canvas] = {}


def _draw_base(cv: _Canvas, sx: float, sy: float, xs: Sequence[float], ys: Sequence[float],
               band: tuple[Sequence[float], Sequence[float]] | None,
               readings: Sequence[tuple[float, float]]) -> None:
    """The parts of the chart that do not move with the count: band, curve, readings."""
    def pt(x: float, y: float) -> tuple[int, int]:
        return round(x * sx), round(max(0.0, y) * sy)

    if band is not None:
        for series in band:
            for i in range(1, len(xs)):
                cv.line(*pt(xs[i - 1], series[i - 1]), *pt(xs[i], series[i]), STYLE_BAND)
    for i in range(1, len(xs)):
        cv.line(*pt(xs[i - 1], ys[i - 1]), *pt(xs[i], ys[i]), STYLE_CURVE)
    for x, y in readings:
        px, py = pt(x, y)
        col, row = min(cv.w - 1, px // 2), cv.h - 1 - min(cv.h - 1, py // 4)
        cv.mark[(col, row)] = ("●", STYLE_POINT)


def resistance_chart(width: int, height: int, *, turns_max: float,
                     curve: tuple[Sequence[float], Sequence[float]],
                     band: tuple[Sequence[float], Sequence[float]] | None = None,
                     readings: Sequence[tuple[float, float]] = (),
                     now_turns: float | None = None) -> Text:
    """Chart resistance (ohm) against turns.

    ``curve`` is (turns, ohm) of the prediction; ``band`` is (ohm_low, ohm_high)
    on the same turns; ``readings`` are measured (turns, ohm) points;
    ``now_turns`` draws the turn count now. ``width``/``height`` in cells, axes
    included (at least 16 x 5).
    """
    width = max(16, int(width))
    height = max(5, int(height))
    plot_w = width - Y_LABEL_WIDTH - 1
    plot_h = height - 2                   # x axis row and label row below
    xs, ys = list(curve[0]), list(curve[1])
    y_top = max([*ys, *(band[1] if band else []), *(r[1] for r in readings), 0.0])
    y_max = round_up(y_top * 1.02)
    x_max = round_up(max(turns_max, *(r[0] for r in readings), 1.0))
    sx = (2 * plot_w - 1) / x_max
    sy = (4 * plot_h - 1) / y_max
    key = (plot_w, plot_h, x_max, y_max, tuple(xs), tuple(ys),
           None if band is None else (tuple(band[0]), tuple(band[1])), tuple(readings))
    base = _BASE.get(key)
    if base is None:
        base = _Canvas(plot_w, plot_h)
        _draw_base(base, sx, sy, xs, ys, band, readings)
        _BASE.clear()                    # one chart on screen: keep the newest only
        _BASE[key] = base
    cv = base.copy()
    if now_turns is not None and 0 <= now_turns <= x_max:
        x = round(now_turns * sx)
        for y in range(0, 4 * plot_h, 2):
            cv.dot_under(x, y, STYLE_NOW)

    out = CellText()
    for row, line in enumerate(cv.text()):
        if row == 0:
            label = ohm_text(y_max, 3)
        elif row == plot_h // 2:
            label = ohm_text(y_max / 2, 3)
        else:
            label = ""
        out.append(label.rjust(Y_LABEL_WIDTH - 1) + " ", STYLE_AXIS)
        out.append("┤" if label else "│", STYLE_AXIS)
        for chunk, style in line.parts:
            out.append(chunk, style)
        out.append("\n")
    out.append(" " * (Y_LABEL_WIDTH - 1) + "0└" + "─" * plot_w + "\n", STYLE_AXIS)
    mid = _turns_text(x_max / 2)
    right = f"{_turns_text(x_max)} turns"
    axis = [" "] * (plot_w + 1)
    half = plot_w // 2
    for i, ch in enumerate(mid):
        if 0 <= half - len(mid) // 2 + i < len(axis):
            axis[half - len(mid) // 2 + i] = ch
    for i, ch in enumerate(right):
        axis[len(axis) - len(right) + i] = ch
    out.append(" " * Y_LABEL_WIDTH + "".join(axis), STYLE_AXIS)
    return out.text()
