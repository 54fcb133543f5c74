"""The coil planner: from a target (turns, resistance or fill) to a complete plan.

SI floats inside (metres, ohms, kilograms), temperatures in degrees Celsius;
:meth:`Plan.to_dict` gives the stable JSON of ``winder plan --json`` in
millimetres, metres, ohms and grams as its key names say.

Solve modes
-----------
* ``turns``: the given turn count.
* ``resistance``: the turn count (rounded to a whole turn) whose DC resistance
  at 20 C reaches the target, and whether it fits.
* ``fill``: the most turns that fit in the usable window.

Warnings: over-full (an error unless ``force``), near-full (build at 95 % of
the usable height or more), a wire at the edge of the catalog, and a
resistance target that a whole turn cannot meet closely.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from winder.bobbin import Bobbin, RectCore
from winder.errors import InputError
from winder.winding import DEFAULT_SCATTER_PACKING, Style, WindingModel, make_model
from winder.wire import Wire

__all__ = ["Coil", "Drive", "Plan", "Style", "Target", "TARGET_KINDS", "NEAR_FULL",
           "PLAN_FORMAT", "DEFAULT_AMBIENT_C", "make_plan"]

TARGET_KINDS = ("turns", "resistance", "fill")
NEAR_FULL = 0.95  # fraction of the usable height from which a plan warns
PLAN_FORMAT = 1   # version of the to_dict() layout
DEFAULT_AMBIENT_C = 25.0  # room temperature for drive figures, degC (common practice, no source)


@dataclass(frozen=True)
class Target:
    """What to solve for: ``kind`` turns (value = turns), resistance (ohm at 20 C) or fill."""

    kind: str
    value: float | None = None

    def __post_init__(self) -> None:
        if self.kind not in TARGET_KINDS:
            raise InputError(f"unknown target {self.kind!r}; use one of "
                             f"{', '.join(TARGET_KINDS)}", key="target")
        if self.kind == "fill":
            return
        v = self.value
        if v is None or isinstance(v, bool) or not math.isfinite(v) or v <= 0:
            raise InputError(f"a {self.kind} target needs a positive value, got {v!r}",
                             key=f"target.{self.kind}")
        if self.kind == "turns" and (v != int(v) or v > 1e8):
            raise InputError(f"turns must be a whole number up to 100000000, got {v!r}",
                             key="target.turns")


@dataclass(frozen=True)
class Drive:
    """How the coil is driven, for the electromagnetic figures (:mod:`winder.em`).

    Exactly one of ``voltage_v`` (volts, e.g. an amplifier's output) or ``current_a``
    (amperes); ``distance_m`` is the field point on the axis beyond the top face (m,
    optional); ``ambient_c`` the surrounding air, degC.
    """

    voltage_v: float | None = None
    current_a: float | None = None
    distance_m: float | None = None
    ambient_c: float = DEFAULT_AMBIENT_C

    def __post_init__(self) -> None:
        if (self.voltage_v is None) == (self.current_a is None):
            raise InputError("give a drive voltage or a drive current, not both or neither",
                             key="drive")
        for value, key in ((self.voltage_v, "drive.voltage"), (self.current_a, "drive.current")):
            if value is not None and not (math.isfinite(value) and value > 0):
                raise InputError(f"must be more than zero, got {value!r}", key=key)
        if self.distance_m is not None and not (math.isfinite(self.distance_m)
                                                and 0.0 <= self.distance_m <= 2.0):
            raise InputError(f"distance beyond the face must be 0 to 2 m, got "
                             f"{self.distance_m!r} m", key="drive.distance")
        if not (math.isfinite(self.ambient_c) and -60.0 <= self.ambient_c <= 200.0):
            raise InputError(f"ambient {self.ambient_c!r} degC is not plausible (-60 to 200 C)",
                             key="drive.ambient")

    def to_dict(self) -> dict[str, Any]:
        """JSON form (SI names as the keys say)."""
        return {"voltage_v": self.voltage_v, "current_a": self.current_a,
                "distance_mm": None if self.distance_m is None else self.distance_m * 1e3,
                "ambient_c": self.ambient_c}


@dataclass(frozen=True)
class Coil:
    """A coil to plan: bobbin, wire, target and winding style; ``source`` is its file, if any."""

    name: str
    bobbin: Bobbin
    wire: Wire
    target: Target
    style: Style = field(default_factory=Style)
    source: str | None = None
    drive: Drive | None = None  # optional drive for the electromagnetic figures


@dataclass
class Plan:
    """A solved coil. SI units; resistances at 20 C unless named ``_at_temp``."""

    coil: Coil
    wire: Wire
    bobbin: Bobbin
    model: WindingModel
    turns: int
    layers: int | float
    turns_per_layer: int | None
    build_height_m: float
    fill: float
    wire_length_m: float
    resistance_ohm: float
    resistance_band_ohm: tuple[float, float]
    resistance_at_temp_ohm: float
    temp_c: float
    mass_kg: float
    warnings: list[str]
    capacity_turns: int = 0
    forced: bool = False

    def to_dict(self) -> dict[str, Any]:
        """The stable JSON layout of ``winder plan --json`` (see README, "Profiles")."""
        c, w, b = self.coil, self.wire, self.bobbin
        core: dict[str, Any]
        if isinstance(b.core, RectCore):
            core = {"shape": "rect", "width_mm": b.core.width_m * 1e3,
                    "length_mm": b.core.length_m * 1e3,
                    "corner_radius_mm": b.core.corner_radius_m * 1e3}
        else:
            core = {"shape": "round", "diameter_mm": b.core.diameter_m * 1e3}
        style = c.style
        return {
            "format": PLAN_FORMAT,
            "name": c.name,
            "source": c.source,
            "turns": self.turns,
            "layers": self.layers,
            "turns_per_layer": self.turns_per_layer,
            "build_height_mm": self.build_height_m * 1e3,
            "fill": self.fill,
            "wire_length_m": self.wire_length_m,
            "resistance_ohm": self.resistance_ohm,
            "resistance_band_ohm": list(self.resistance_band_ohm),
            "resistance_at_temp_ohm": self.resistance_at_temp_ohm,
            "temp_c": self.temp_c,
            "mass_g": self.mass_kg * 1e3,
            "capacity_turns": self.capacity_turns,
            "forced": self.forced,
            "warnings": list(self.warnings),
            "target": {"kind": c.target.kind, "value": c.target.value},
            "style": {"kind": style.kind,
                      "packing": (style.packing_value if style.kind == "scatter" else None),
                      "pitch_range": list(style.pitch_range), "seed": style.seed,
                      "taper": style.taper},
            "wire": {"name": w.name, "size": w.size_name, "insulation": w.insulation,
                     "material": w.material.name, "bare_mm": w.bare_m * 1e3,
                     "bare_tol_mm": w.bare_tol_m * 1e3, "od_mm": w.od_m * 1e3,
                     "od_max_mm": w.od_max_m * 1e3, "od_source": w.od_source,
                     "ohm_per_m": w.ohm_per_m(), "thermal_class_c": w.thermal_class_c},
            "bobbin": {"name": b.name, "core": core,
                       "window_width_mm": b.window_width_m * 1e3,
                       "window_height_mm": b.window_height_m * 1e3,
                       "clearance_ends_mm": b.clearance_ends_m * 1e3,
                       "clearance_top_mm": b.clearance_top_m * 1e3,
                       "usable_width_mm": b.usable_width_m * 1e3,
                       "usable_height_mm": b.usable_height_m * 1e3},
        }


def _solve_turns(coil: Coil, model: WindingModel) -> tuple[int, list[str]]:
    t = coil.target
    notes: list[str] = []
    if t.kind == "turns":
        assert t.value is not None
        return int(t.value), notes
    if t.kind == "fill":
        return int(model.capacity_turns), notes
    assert t.value is not None
    exact = model.turns_for_resistance(t.value, 20.0)
    turns = max(1, int(round(exact)))
    got = float(model.resistance_ohm(turns, 20.0))
    if abs(got - t.value) > 0.01 * t.value:
        notes.append(f"a whole number of turns cannot reach {t.value:.4g} ohm within 1 % "
                     f"({turns} turns give {got:.4g} ohm)")
    return turns, notes


def make_plan(coil: Coil, *, temp_c: float = 20.0, force: bool = False) -> Plan:
    """Solve ``coil`` and return the :class:`Plan`; ``temp_c`` is for the hot resistance.

    Raises :class:`InputError` when the coil does not fit its bobbin (over-full)
    unless ``force`` is set, in which case the plan carries a warning instead.
    """
    if not (math.isfinite(temp_c) and -273.15 <= temp_c <= 1000):
        raise InputError(f"temperature {temp_c!r} degC is not plausible", key="temp")
    model = make_model(coil.bobbin, coil.wire, coil.style)
    turns, warnings = _solve_turns(coil, model)
    b, w = coil.bobbin, coil.wire
    if turns > model.capacity_turns and not force:
        raise InputError(f"over-full: {turns} turns of {w.name} do not fit; at most "
                         f"{model.capacity_turns} fit in the usable "
                         f"{b.usable_width_m * 1e3:.3f} x {b.usable_height_m * 1e3:.3f} mm "
                         f"({coil.style.kind} winding); use a thinner wire, a lower target, "
                         "or --force", where=coil.source, key="target")
    build = float(model.build_height_m(turns))
    fill = build / b.usable_height_m
    length = float(model.wire_length_m(turns))
    r20 = float(model.resistance_ohm(turns, 20.0))
    lo_pm, hi_pm = w.ohm_per_m_band(20.0)
    band = (length * lo_pm, length * hi_pm)
    if turns > model.capacity_turns:
        warnings.insert(0, f"over-full: {turns} turns need a build of {build * 1e3:.3f} mm but "
                        f"the usable height is {b.usable_height_m * 1e3:.3f} mm (at most "
                        f"{model.capacity_turns} turns of {w.name} fit, {coil.style.kind} "
                        "winding)")
    elif fill >= NEAR_FULL:
        warnings.append(f"near full: the build uses {fill * 100:.1f} % of the usable height; "
                        "allow for tension, enamel variation and the outer wrap")
    if w.edge_of_catalog:
        warnings.append(f"{w.size_name} is at the edge of the catalog; check the wire's data "
                        "sheet and give a measured od")
    if coil.style.kind == "scatter" and coil.style.packing is None:
        warnings.append(f"scatter packing not given; using {DEFAULT_SCATTER_PACKING} "
                        "(common practice); measure yours and set style.packing")
    if model.layer_height_m is not None:
        layers: int | float = int(np.asarray(model.layers_for(turns)))  # type: ignore[attr-defined]
    else:
        layers = round(build / w.od_m, 3)
    return Plan(
        coil=coil, wire=w, bobbin=b, model=model, turns=turns, layers=layers,
        turns_per_layer=model.turns_per_layer, build_height_m=build, fill=fill,
        wire_length_m=length, resistance_ohm=r20, resistance_band_ohm=band,
        resistance_at_temp_ohm=float(model.resistance_ohm(turns, temp_c)), temp_c=temp_c,
        mass_kg=length * w.kg_per_m(), warnings=warnings,
        capacity_turns=int(model.capacity_turns), forced=bool(force and turns >
                                                              model.capacity_turns),
    )
