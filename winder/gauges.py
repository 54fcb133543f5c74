"""Gauge chooser: rank the standard wire sizes for a bobbin and a target resistance.

SI inside (ohms, volts, metres). For each size of a series this gives the turns
that reach the target resistance at 20 C, the fill at that point, whether it
fits, the resistance and turns when the bobbin is full, and the ampere-turns
N V / R at a drive voltage V.

Driver mode (default): at a fixed resistance and voltage the current is fixed,
so ampere-turns grow with turns, and turns at a fixed resistance grow with the
wire's cross-section (length = R A / rho). The recommended size is therefore
the thickest one whose target-resistance length still fits: of the sizes that
fit, the one that fills the bobbin most (ties go to the thicker wire).

Sensing mode (``max_turns``): rank by turns when the bobbin is full; the
recommended size has the most turns among sizes whose full resistance stays
at or below the resistance limit (when one is given).

Scaling on a filled fixed bobbin (geometry and Ohm's law): turns ~ 1/OD^2,
full resistance ~ 1/d^4, ampere-turns at fixed voltage ~ d^2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from winder.bobbin import Bobbin
from winder.errors import InputError
from winder.winding import Style, make_model
from winder.wire import awg_sizes, make_wire, metric_sizes

SERIES = ("awg", "metric")


@dataclass(frozen=True)
class GaugeOption:
    """One wire size's figures for a bobbin. Resistances at 20 C in ohms; fills 1.0 = full."""

    wire: str
    size: str
    bare_mm: float
    od_mm: float
    turns: int | None             # turns at the target resistance (None without a target)
    fill: float | None            # build / usable height at those turns
    fits: bool
    full_turns: int
    full_resistance_ohm: float
    ampere_turns: float | None    # N V / R at the target (driver mode) or when full (sensing)
    recommended: bool = False

    def to_dict(self) -> dict[str, Any]:
        """JSON form used by ``winder gauges --json``."""
        return {"wire": self.wire, "size": self.size, "bare_mm": self.bare_mm,
                "od_mm": self.od_mm, "turns": self.turns, "fill": self.fill, "fits": self.fits,
                "full_turns": self.full_turns, "full_resistance_ohm": self.full_resistance_ohm,
                "ampere_turns": self.ampere_turns, "recommended": self.recommended}


def series_sizes(series: str) -> list[str]:
    """Size names of ``series`` ('awg' or 'metric'), thickest first."""
    if series == "awg":
        return awg_sizes()
    if series == "metric":
        return metric_sizes()
    raise InputError(f"unknown wire series {series!r}; use awg or metric", key="--series")


def rank_gauges(bobbin: Bobbin, resistance_ohm: float | None, *, drive_v: float = 1.0,
                series: str = "awg", insulation: str | None = None,
                style: Style | None = None, material: str = "copper",
                max_turns: bool = False) -> list[GaugeOption]:
    """Figures for every size of ``series`` that can be wound on ``bobbin``, thickest first.

    ``resistance_ohm`` is the target (driver mode) or the upper limit on the
    full resistance (``max_turns``; may be None there). Exactly one option is
    marked recommended when any qualifies.
    """
    style = style or Style()
    if not max_turns and resistance_ohm is None:
        raise InputError("a target resistance is needed (or choose --max-turns)",
                         key="--resistance")
    if not (math.isfinite(drive_v) and drive_v > 0):
        raise InputError("drive voltage must be positive", key="--drive")
    options: list[GaugeOption] = []
    for size in series_sizes(series):
        wire = make_wire(size, insulation, material=material)
        try:
            model = make_model(bobbin, wire, style)
        except InputError:
            continue  # wire does not fit the window at all
        full = int(model.capacity_turns)
        if full < 1:
            continue
        full_r = float(model.resistance_ohm(full))
        turns = fill = at = None
        fits = True
        if resistance_ohm is not None:
            exact = model.turns_for_resistance(resistance_ohm)
            turns = max(1, int(round(exact)))
            fill = float(model.fill(turns))
            fits = turns <= full
        if max_turns:
            at = full * drive_v / full_r
        elif turns is not None and resistance_ohm is not None:
            at = turns * drive_v / resistance_ohm
        options.append(GaugeOption(wire=wire.name, size=wire.size_name, bare_mm=wire.bare_m * 1e3,
                                   od_mm=wire.od_m * 1e3, turns=turns, fill=fill, fits=fits,
                                   full_turns=full, full_resistance_ohm=full_r, ampere_turns=at))
    best = _recommend(options, resistance_ohm, max_turns)
    if best is not None:
        options[best] = GaugeOption(**{**options[best].__dict__, "recommended": True})
    return options


def _recommend(options: list[GaugeOption], resistance_ohm: float | None,
               max_turns: bool) -> int | None:
    if max_turns:
        usable = [i for i, o in enumerate(options)
                  if resistance_ohm is None or o.full_resistance_ohm <= resistance_ohm]
        return max(usable, key=lambda i: (options[i].full_turns, -i)) if usable else None
    fitting = [i for i, o in enumerate(options) if o.fits and o.fill is not None]
    # most fill; on a tie the thicker wire (lower index: options run thickest first)
    return max(fitting, key=lambda i: (options[i].fill, -i)) if fitting else None
