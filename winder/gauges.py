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

Drive figures (:mod:`winder.em`, per size at the ranked turns): the steady hot
state at the drive voltage or current (copper resistance rising with the coil's
temperature, still-air cooling of the outer surface), its current, power and
temperature rise, and the on-axis flux density at ``distance_m`` beyond the top
face at that current. ``ampere_turns`` stays the cold figure N V / R20 (or N I).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from winder import em
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
    resistance_ohm: float | None = None   # at 20 C at the turns the figures below are for
    current_a: float | None = None        # steady hot current at the drive, A
    power_w: float | None = None          # steady hot power at the drive, W (None: runaway)
    temp_rise_c: float | None = None      # steady rise over ambient, K (None: runaway)
    field_at_point_mT: float | None = None  # on-axis flux density at the point, mT

    def to_dict(self) -> dict[str, Any]:
        """JSON form used by ``winder gauges --json``."""
        return {"wire": self.wire, "size": self.size, "bare_mm": self.bare_mm,
                "od_mm": self.od_mm, "turns": self.turns, "fill": self.fill, "fits": self.fits,
                "full_turns": self.full_turns, "full_resistance_ohm": self.full_resistance_ohm,
                "ampere_turns": self.ampere_turns, "recommended": self.recommended,
                "resistance_ohm": self.resistance_ohm,
                "current_a": self.current_a, "power_w": self.power_w,
                "temp_rise_c": self.temp_rise_c, "field_at_point_mT": self.field_at_point_mT}


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
                max_turns: bool = False, drive_a: float | None = None,
                distance_m: float = 0.0, ambient_c: float = em.AMBIENT_C
                ) -> list[GaugeOption]:
    """Figures for every size of ``series`` that can be wound on ``bobbin``, thickest first.

    ``resistance_ohm`` is the target (driver mode) or the upper limit on the
    full resistance (``max_turns``; may be None there). Exactly one option is
    marked recommended when any qualifies. The drive is ``drive_v`` volts, or
    ``drive_a`` amperes when given; ``distance_m`` (m beyond the top face) is the
    field point and ``ambient_c`` (degC) the air for the steady hot state.
    """
    style = style or Style()
    if not max_turns and resistance_ohm is None:
        raise InputError("a target resistance is needed (or choose --max-turns)",
                         key="--resistance")
    if drive_a is not None:
        if not (math.isfinite(drive_a) and drive_a > 0):
            raise InputError("drive current must be positive", key="--drive")
    elif not (math.isfinite(drive_v) and drive_v > 0):
        raise InputError("drive voltage must be positive", key="--drive")
    if not (math.isfinite(distance_m) and distance_m >= 0):
        raise InputError("distance beyond the face must be zero or more", key="--distance")
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
        n = full if (max_turns or turns is None) else turns
        r_n = full_r if n == full else float(model.resistance_ohm(n))
        if drive_a is not None:
            at = n * drive_a
        elif max_turns or resistance_ohm is None:
            at = full * drive_v / full_r
        else:
            at = n * drive_v / resistance_ohm
        hot = _drive(bobbin, model, wire, n, r_n, drive_v, drive_a, distance_m, ambient_c)
        options.append(GaugeOption(wire=wire.name, size=wire.size_name, bare_mm=wire.bare_m * 1e3,
                                   od_mm=wire.od_m * 1e3, turns=turns, fill=fill, fits=fits,
                                   full_turns=full, full_resistance_ohm=full_r, ampere_turns=at,
                                   resistance_ohm=r_n, **hot))
    best = _recommend(options, resistance_ohm, max_turns)
    if best is not None:
        options[best] = GaugeOption(**{**options[best].__dict__, "recommended": True})
    return options


def _drive(bobbin: Bobbin, model: Any, wire: Any, turns: int, r20: float, drive_v: float,
           drive_a: float | None, distance_m: float, ambient_c: float) -> dict[str, Any]:
    """Steady hot drive figures of ``turns`` of ``wire`` on ``bobbin`` (GaugeOption fields)."""
    core = bobbin.core
    build = max(float(model.build_height_m(turns)), 1e-9)
    if hasattr(core, "diameter_m"):
        shape = em.round_shape(core.diameter_m, build, bobbin.usable_width_m, turns)
    else:
        shape = em.rect_shape(core.width_m, core.length_m, build, bobbin.usable_width_m, turns,
                              corner_radius_m=core.corner_radius_m)
    d = em.drive_figures(shape, resistance_ohm=r20, bare_m=wire.bare_m,
                         drive_v=None if drive_a is not None else drive_v, drive_a=drive_a,
                         alpha_per_k=wire.material.alpha_per_k, distance_m=distance_m,
                         ambient_c=ambient_c)

    def finite(x: float) -> float | None:
        return x if math.isfinite(x) else None

    b = d.field_at_point_t
    return {"current_a": d.current_a, "power_w": finite(d.power_w),
            "temp_rise_c": finite(d.temp_rise_c),
            "field_at_point_mT": None if b is None else b * 1e3}


def _recommend(options: list[GaugeOption], resistance_ohm: float | None,
               max_turns: bool) -> int | None:
    if max_turns:
        usable = [i for i, o in enumerate(options)
                  if resistance_ohm is None or o.full_resistance_ohm <= resistance_ohm]
        return max(usable, key=lambda i: (options[i].full_turns, -i)) if usable else None
    fitting = [i for i, o in enumerate(options) if o.fits and o.fill is not None]
    # most fill; on a tie the thicker wire (lower index: options run thickest first)
    return max(fitting, key=lambda i: (options[i].fill, -i)) if fitting else None
