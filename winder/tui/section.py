"""The bobbin window drawn in cross-section, as Rich text for a terminal.

One half of the window is drawn, the way a coil is sectioned on a drawing: the
core along the bottom, the two flanges as walls left and right, the end
clearances shaded beside each flange, the top clearance below the rim shaded
across, a dashed line at the usable height, and the build growing up from the
core. The planned build is drawn shaded (its top to 1/8 of a row) and the build
wound so far (monitor) solid, to 1/8 of a row.

All lengths come in metres (the bobbin's SI floats); labels are millimetres.
Pure function of its inputs: no terminal or Textual state.
"""

from __future__ import annotations

import math
from typing import Any

from rich.text import Text

from winder.tui.cells import CellText

# Eighth blocks from empty to full, for the top cell of a column of build.
_EIGHTHS = " ▁▂▃▄▅▆▇█"

STYLE_FLANGE = "bold #8a94a6"
STYLE_CORE = "#8a94a6"
STYLE_CLEAR = "#4a5263"
STYLE_USABLE = "#d9a440"
COLOUR_PLANNED = "#4f8fb0"
COLOUR_WOUND = "#5fd7af"
COLOUR_OVER = "#c43c3c"
STYLE_PLANNED = "#6fa8c8"
STYLE_WOUND = "bold #5fd7af"
STYLE_OVER = "bold #ff5f5f"
STYLE_LABEL = "#c0c6d0"

LABEL_WIDTH = 24  # columns reserved on the right for the height labels


def core_text(core: Any) -> str:
    """'core Ø 5.00 mm' or 'core 6.40 x 58.0 mm' for a round or rectangular core."""
    if hasattr(core, "diameter_m"):
        return f"core Ø {core.diameter_m * 1e3:.2f} mm"
    if hasattr(core, "width_m") and hasattr(core, "length_m"):
        return f"core {core.width_m * 1e3:.2f} x {core.length_m * 1e3:.1f} mm"
    return "core"


def _fill_cell(level: float) -> str:
    """The block for a cell whose lower ``level`` (0..1) is filled."""
    k = max(0, min(8, int(round(level * 8))))
    return _EIGHTHS[k]


def window_section(bobbin: Any, planned_m: float, wound_m: float | None = None, *,
                   width: int = 60, height: int = 14) -> Text:
    """Draw ``bobbin``'s window with the planned build (and the build wound so far).

    ``planned_m`` and ``wound_m`` are build heights above the core in metres.
    ``width``/``height`` are the size in terminal cells, labels included; at least
    36 x 6. Returns Rich :class:`~rich.text.Text` of ``height`` lines.
    """
    width = max(36, int(width))
    height = max(6, int(height))
    win_w = float(bobbin.window_width_m)
    win_h = float(bobbin.window_height_m)
    usable_h = float(bobbin.usable_height_m)
    clear_end = float(bobbin.clearance_ends_m)

    rows = height - 2                     # window rows; then a core row and a scale row
    inner = width - 2 - LABEL_WIDTH       # columns between the flanges
    inner = max(10, inner)
    row_h = win_h / rows                  # metres per row
    clear_cols = int(round(clear_end / win_w * inner)) if win_w > 0 else 0
    clear_cols = min(clear_cols, inner // 2 - 1)
    if clear_end > 0:
        clear_cols = max(1, clear_cols)
    usable_row = rows - int(round(usable_h / row_h))   # row index of the usable line
    usable_row = max(0, min(rows - 1, usable_row))

    over = planned_m > usable_h * (1 + 1e-9)
    labels: dict[int, tuple[str, str]] = {0: (f" rim {win_h * 1e3:6.2f} mm", STYLE_LABEL)}

    def put_label(row: int, text: str, style: str) -> None:
        # Keep labels apart: move down (or up) to the nearest free row.
        for delta in range(rows):
            for r in (row + delta, row - delta):
                if 0 <= r < rows and r not in labels:
                    labels[r] = (text, style)
                    return

    put_label(usable_row, f" usable {usable_h * 1e3:6.2f} mm", STYLE_USABLE)
    pct = planned_m / usable_h * 100 if usable_h > 0 else math.inf
    plan_row = rows - 1 - min(rows - 1, int(planned_m / row_h)) if planned_m > 0 else rows - 1
    put_label(plan_row, f" plan {planned_m * 1e3:6.2f} mm {pct:4.0f} %",
              STYLE_OVER if over else STYLE_PLANNED)
    if wound_m is not None:
        wpct = wound_m / usable_h * 100 if usable_h > 0 else math.inf
        wound_row = rows - 1 - min(rows - 1, int(wound_m / row_h)) if wound_m > 0 else rows - 1
        put_label(wound_row, f" now  {wound_m * 1e3:6.2f} mm {wpct:4.0f} %",
                  STYLE_OVER if wound_m > usable_h else STYLE_WOUND)

    out = CellText()
    for r in range(rows):
        lo = (rows - 1 - r) * row_h        # bottom of this row, metres above the core
        out.append("▐", STYLE_FLANGE)
        for c in range(inner):
            if c < clear_cols or c >= inner - clear_cols:
                out.append("·", STYLE_CLEAR)                 # end clearance
                continue
            ch, fg = " ", ""
            if r < usable_row:
                ch, fg = "░", STYLE_CLEAR                    # top clearance
            elif r == usable_row:
                ch, fg = "┄", STYLE_USABLE
            high = lo >= usable_h - row_h * 1e-6           # row at or above the usable line
            planned_level = (planned_m - lo) / row_h
            if planned_level >= 1:
                ch, fg = "▒", COLOUR_OVER if high else COLOUR_PLANNED
            elif planned_level >= 1 / 16:
                ch, fg = _fill_cell(planned_level), COLOUR_OVER if high else COLOUR_PLANNED
            if wound_m is not None:
                wound_level = (wound_m - lo) / row_h
                if wound_level >= 1 / 16:
                    ch = _fill_cell(min(1.0, wound_level))
                    fg = "bold " + (COLOUR_OVER if high else COLOUR_WOUND)
            out.append(ch, fg)
        out.append("▌", STYLE_FLANGE)
        text, style = labels.get(r, ("", ""))
        out.append(text[:LABEL_WIDTH].ljust(LABEL_WIDTH), style)
        out.append("\n")
    # Core row.
    out.append("▐" + "▀" * inner + "▌", STYLE_CORE)
    out.append(f" {core_text(bobbin.core)}"[:LABEL_WIDTH].ljust(LABEL_WIDTH), STYLE_LABEL)
    out.append("\n")
    # Scale row: the window and usable widths.
    usable_w = float(bobbin.usable_width_m)
    scale = (f" window {win_w * 1e3:.1f} mm · usable {usable_w * 1e3:.1f} mm"
             f" · ends {clear_end * 1e3:.1f} mm")
    out.append(scale[: width].ljust(width), STYLE_LABEL)
    return out.text()
