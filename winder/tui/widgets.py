"""Small drawing widgets: the window section, the resistance chart, the guide
track and the fill bar. Each keeps plain data set from the UI thread and draws
itself at its current size; none of them is touched from another thread.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import lru_cache
from typing import Any

import numpy as np
from rich.segment import Segment
from rich.style import Style
from rich.text import Text
from textual.strip import Strip
from textual.widget import Widget

from winder.tui.cells import CellText
from winder.tui.chart import resistance_chart
from winder.tui.progress import Estimate, Reading, band_ratios, predicted_ohm
from winder.tui.section import window_section


def fit(text: Text, width: int, height: int) -> Text:
    """``text`` cropped to ``width`` x ``height`` cells (a drawing never wraps)."""
    lines = text.split("\n", allow_blank=True)[:max(height, 0)]
    for line in lines:
        line.truncate(max(width, 0))
    return Text("\n").join(lines)


class SectionView(Widget):
    """The bobbin window in cross-section with the planned (and wound) build."""

    DEFAULT_CSS = "SectionView { height: 1fr; min-height: 6; }"

    def __init__(self, *, id: str | None = None, classes: str | None = None):
        super().__init__(id=id, classes=classes)
        self.bobbin: Any = None
        self.planned_m = 0.0
        self.wound_m: float | None = None
        self._key: tuple | None = None

    def show(self, bobbin: Any, planned_m: float, wound_m: float | None = None) -> None:
        """Draw ``bobbin`` with builds in metres; redraws only when the picture changes.

        The wound build is drawn to 1/8 of a row, so it is compared in those steps:
        a fine wire grows the build by micrometres a turn, far below one step.
        """
        step = self._step(bobbin)
        key = (id(bobbin), planned_m, None if wound_m is None else round(wound_m / step))
        self.bobbin, self.planned_m, self.wound_m = bobbin, planned_m, wound_m
        if key != self._key:
            self._key = key
            self.refresh()

    def _step(self, bobbin: Any) -> float:
        rows = max(4, self.size.height - 2) if self.size.height else 10
        return float(bobbin.window_height_m) / rows / 8

    def on_resize(self) -> None:
        self._key = None
        self.refresh()

    def render(self) -> Text:
        if self.bobbin is None:
            return Text("no bobbin")
        w, h = self.size
        return fit(window_section(self.bobbin, self.planned_m, self.wound_m, width=w,
                                  height=h), w, h)


class ChartView(Widget):
    """Resistance against turns: the plan's predicted curve and band, readings as points."""

    DEFAULT_CSS = "ChartView { height: 1fr; min-height: 6; }"
    SAMPLES = 96

    def __init__(self, *, id: str | None = None, classes: str | None = None):
        super().__init__(id=id, classes=classes)
        self.plan: Any = None
        self.readings: list[Reading] = []
        self.now_turns: float | None = None
        self.scale = 1.0
        self._curve: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None = None
        self._key: tuple | None = None

    def set_plan(self, plan: Any) -> None:
        """Sample the plan's model once (the curve does not change while winding)."""
        self.plan = plan
        top = max(float(plan.turns), 1.0) * 1.04
        turns = np.linspace(0.0, top, self.SAMPLES)
        ohm = predicted_ohm(plan, turns)
        lo_r, hi_r = band_ratios(plan)
        self._curve = (turns, ohm, ohm * lo_r, ohm * hi_r)
        self._key = None
        self.refresh()

    def set_state(self, now_turns: float | None, readings: Sequence[Reading],
                  estimate: Estimate | None = None) -> None:
        """The count now, the readings and the calibration; redraws only on a visible change.

        The count is drawn as a dot column, so it is compared in steps of one dot
        column (the turns axis span over twice the plot width in cells).
        """
        # The curve follows the calibration: predicted x (measured / predicted).
        scale = 1.0
        if estimate is not None and estimate.calibrated and self.plan is not None:
            base = float(predicted_ohm(self.plan, max(now_turns or 0.0, 1.0)))
            scale = estimate.ohm / base if base > 0 else 1.0
        span = float(self._curve[0][-1]) if self._curve is not None else 1.0
        step = span / max(2 * (self.size.width - 11), 2)
        key = (None if now_turns is None else round(now_turns / step), len(readings),
               round(scale, 4))
        self.now_turns, self.readings, self.scale = now_turns, list(readings), scale
        if key != self._key:
            self._key = key
            self.refresh()

    def on_resize(self) -> None:
        self._key = None
        self.refresh()

    def render(self) -> Text:
        if self._curve is None:
            return Text("no plan")
        turns, ohm, lo, hi = self._curve
        w, h = self.size
        s = self.scale
        pts = [(r.turns, r.ohm) for r in self.readings]
        return fit(resistance_chart(w, h, turns_max=float(turns[-1]), curve=(turns, ohm * s),
                                    band=(lo * s, hi * s), readings=pts,
                                    now_turns=self.now_turns), w, h)


class GuideTrack(Widget):
    """A one-line picture of the traverse: flanges, usable window, where the wire goes.

    ``target_mm`` (from the schedule) is where the wire should be now; ``guide_mm``
    (from the device) is where the guide is. Both in mm from the start flange.
    """

    DEFAULT_CSS = "GuideTrack { height: 2; }"

    def __init__(self, *, id: str | None = None, classes: str | None = None):
        super().__init__(id=id, classes=classes)
        self.window_mm = 1.0
        self.ends_mm = 0.0
        self.target_mm: float | None = None
        self.guide_mm: float | None = None
        self.direction: str | None = None
        self._key: tuple | None = None

    def set_window(self, window_mm: float, ends_mm: float) -> None:
        self.window_mm, self.ends_mm = max(window_mm, 1e-6), ends_mm
        self.refresh()

    def set_position(self, target_mm: float | None, guide_mm: float | None,
                     direction: str | None) -> None:
        """Positions in mm from the start flange; redraws only when a marker moves a cell."""
        inner = max(4, self.size.width - 2)
        key = (None if target_mm is None else self._col(target_mm, inner),
               None if guide_mm is None else self._col(guide_mm, inner), direction)
        self.target_mm, self.guide_mm, self.direction = target_mm, guide_mm, direction
        if key != self._key:
            self._key = key
            self.refresh()

    def _col(self, mm: float, inner: int) -> int:
        return max(0, min(inner - 1, int(mm / self.window_mm * inner)))

    def _cells(self, inner: int) -> tuple[list[tuple[str, str]], list[str]]:
        ends = int(round(self.ends_mm / self.window_mm * inner))
        cells = [("─", "#4a5263") if (c < ends or c >= inner - ends) else ("━", "#8a94a6")
                 for c in range(inner)]
        under = [" "] * inner
        if self.guide_mm is not None:
            cells[self._col(self.guide_mm, inner)] = ("◆", "bold #c0c6d0")
        if self.target_mm is not None:
            col = self._col(self.target_mm, inner)
            arrow = {"outward": "▶", "homeward": "◀"}.get(self.direction or "", "●")
            cells[col] = (arrow, "bold #5fd7af")
            under[col] = "▲"
        return cells, under

    def render_line(self, y: int) -> Strip:
        """Line API: two lines of merged segments (cheaper than a Text per frame)."""
        width = self.size.width
        inner = max(4, width - 2)
        cells, under = self._cells(inner)
        out = CellText()
        if y == 0:
            out.append("▐", "bold #8a94a6")
            for ch, st in cells:
                out.append(ch, st)
            out.append("▌", "bold #8a94a6")
        elif y == 1:
            out.append(" " + "".join(under), "#5fd7af")
        segs = [Segment(chunk, _style(style)) for chunk, style in out.parts]
        return Strip(segs).crop_extend(0, width, self.rich_style)


@lru_cache(maxsize=64)
def _style(text: str) -> Style:
    return Style.parse(text) if text else Style()


class FillBar(Widget):
    """Build height as a share of the usable height, marked at 90 % and 100 %."""

    DEFAULT_CSS = "FillBar { height: 1; }"

    def __init__(self, *, id: str | None = None, classes: str | None = None):
        super().__init__(id=id, classes=classes)
        self.fill = 0.0
        self.planned = 0.0

    def set_fill(self, fill: float, planned: float) -> None:
        key = (round(fill, 3), round(planned, 3))
        if key != (round(self.fill, 3), round(self.planned, 3)):
            self.fill, self.planned = fill, planned
            self.refresh()

    def render(self) -> Text:
        label = f" {self.fill * 100:5.1f} %"
        width = max(10, self.size.width - len(label) - 2)
        span = 1.1                                   # the bar runs to 110 % of usable height
        col = lambda f: max(0, min(width, int(round(f / span * width))))  # noqa: E731
        n, p = col(self.fill), col(self.planned)
        warn, full = col(0.9), col(1.0)
        colour = ("#c43c3c" if self.fill >= 1.0 else "#d9a440" if self.fill >= 0.9
                  else "#5fd7af")
        out = CellText()
        out.append("[", "#8a94a6")
        for c in range(width):
            if c < n:
                out.append("█", colour)
            elif c == warn:
                out.append("╎", "#d9a440")
            elif c == full:
                out.append("┃", "#c43c3c")
            elif c < p:
                out.append("░", "#6fa8c8")
            else:
                out.append(" ")
        out.append("]", "#8a94a6")
        out.append(label, f"bold {colour}")
        return out.text()
