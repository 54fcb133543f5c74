"""Winding models: how turns stack in a bobbin window. One interface, three kinds.

Lengths in metres, resistances in ohms, temperatures degrees Celsius. Every
function of a turn count is vectorised over numpy arrays and accepts float
turns (the monitor calls them at every tick).

* ``layer``: square stacking. Pitch = OD, turns per layer = floor(usable width
  / OD) (with a small guard so 8 mm / 0.25 mm is 32, not 31), layers OD high;
  the wire length is the exact sum of the per-layer turn lengths, turn centres
  at OD (i + 1/2) above the core.
* ``orthocyclic``: nested (hexagonal) stacking. Layer pitch OD sqrt(3)/2; odd
  layers (1, 3, ...) sit in the grooves of the layer below and hold one turn
  fewer. Its packing tends to pi / (2 sqrt 3) = 0.9069 for a wide window.
* ``scatter``: random/scatter winding described by a packing factor p, the
  fraction of the winding cross-section filled by wire circles of diameter OD
  (square layer winding is pi/4 = 0.785, hexagonal 0.9069). Default
  :data:`DEFAULT_SCATTER_PACKING` = 0.70, common practice, no source. Closed
  forms: build h(N) = N pi OD^2 / (4 p w); wire length
  L(N) = P0 N + pi k N^2 with k = dh/dN and P0 the core perimeter (each turn
  laid at the current build surface).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Protocol

import numpy as np

from winder.bobbin import Bobbin
from winder.errors import InputError
from winder.wire import Wire

KINDS = ("layer", "orthocyclic", "scatter")
DEFAULT_SCATTER_PACKING = 0.70  # common practice, no source
ORTHOCYCLIC_LIMIT = math.pi / (2 * math.sqrt(3))
MAX_LAYERS = 1_000_000  # layers modelled at most (a guard against absurd targets)
_EPS = 1e-9  # relative guard against floating error in floor(width / od)


@dataclass(frozen=True)
class Style:
    """How the coil is wound: kind, scatter packing and traverse options."""

    kind: str = "layer"               # layer | orthocyclic | scatter
    packing: float | None = None      # scatter packing factor (default DEFAULT_SCATTER_PACKING)
    pitch_range: tuple[float, float] = (1.0, 3.0)  # scatter: pitch as multiples of OD
    seed: int | None = None           # scatter traverse seed
    taper: float = 0.0                # scatter end taper

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InputError(f"unknown winding style {self.kind!r}; use one of "
                             f"{', '.join(KINDS)}", key="style.kind")
        if self.packing is not None:
            if not (math.isfinite(self.packing) and 0 < self.packing <= ORTHOCYCLIC_LIMIT):
                raise InputError(f"packing {self.packing!r} must be more than 0 and at most "
                                 f"{ORTHOCYCLIC_LIMIT:.4f} (hexagonal packing)",
                                 key="style.packing")
        lo, hi = self.pitch_range
        if not (0 < lo <= hi):
            raise InputError("pitch range must be two increasing positive multiples of OD",
                             key="style.pitch_range")
        if not (0 <= self.taper < 1):
            raise InputError("taper must be at least 0 and less than 1", key="style.taper")

    @property
    def packing_value(self) -> float:
        """The scatter packing factor in use."""
        return DEFAULT_SCATTER_PACKING if self.packing is None else self.packing


class WindingModel(Protocol):
    """What every winding model offers (see the module docstring for the physics)."""

    kind: str
    turns_per_layer: int | None
    layer_height_m: float | None
    capacity_turns: int

    def layer_turns(self, layer_index: int) -> int: ...
    def build_height_m(self, turns) -> np.ndarray: ...
    def wire_length_m(self, turns) -> np.ndarray: ...
    def resistance_ohm(self, turns, temp_c: float = 20.0) -> np.ndarray: ...
    def turns_for_resistance(self, ohm: float, temp_c: float = 20.0) -> float: ...


class _Base:
    kind: str
    bobbin: Bobbin
    wire: Wire

    def resistance_ohm(self, turns, temp_c: float = 20.0) -> np.ndarray:
        """DC resistance (ohm) after ``turns`` turns at ``temp_c``."""
        return self.wire_length_m(turns) * self.wire.ohm_per_m(temp_c)

    def turns_for_resistance(self, ohm: float, temp_c: float = 20.0) -> float:
        """Turns (float) at which the resistance reaches ``ohm`` at ``temp_c``."""
        if not (math.isfinite(ohm) and ohm > 0):
            raise InputError("target resistance must be positive", key="target.resistance")
        return self.turns_for_length(ohm / self.wire.ohm_per_m(temp_c))

    def mass_kg(self, turns) -> np.ndarray:
        """Conductor mass (kg) of ``turns`` turns."""
        return self.wire_length_m(turns) * self.wire.kg_per_m()

    def fill(self, turns) -> np.ndarray:
        """Build height over usable height (1.0 = full)."""
        return self.build_height_m(turns) / self.bobbin.usable_height_m

    def wire_length_m(self, turns) -> np.ndarray:  # pragma: no cover - overridden
        raise NotImplementedError

    def build_height_m(self, turns) -> np.ndarray:  # pragma: no cover - overridden
        raise NotImplementedError

    def turns_for_length(self, length_m: float) -> float:  # pragma: no cover - overridden
        raise NotImplementedError


def _check_fits(bobbin: Bobbin, wire: Wire) -> int:
    od = wire.od_m
    tpl = int(math.floor(bobbin.usable_width_m / od * (1 + _EPS)))
    if tpl < 1:
        raise InputError(f"the usable window ({bobbin.usable_width_m * 1e3:.4g} mm) is narrower "
                         f"than one wire ({wire.name}, OD {od * 1e3:.4g} mm)", key="window.width")
    if od > bobbin.usable_height_m * (1 + _EPS):
        raise InputError(f"the wire ({wire.name}, OD {od * 1e3:.4g} mm) is thicker than the "
                         f"usable window height ({bobbin.usable_height_m * 1e3:.4g} mm)",
                         key="window.height")
    return tpl


class LayeredModel(_Base):
    """Layer and orthocyclic winding: whole layers, exact sums of turn lengths."""

    def __init__(self, bobbin: Bobbin, wire: Wire, kind: str):
        self.kind = kind
        self.bobbin = bobbin
        self.wire = wire
        self.turns_per_layer = _check_fits(bobbin, wire)
        od = wire.od_m
        if kind == "orthocyclic":
            if self.turns_per_layer < 2:
                raise InputError("orthocyclic winding needs room for at least two turns per "
                                 "layer", key="window.width")
            self.layer_height_m = od * math.sqrt(3) / 2
        else:
            self.layer_height_m = od
        # layers whose top (od/2 + i * lh + od/2) stays within the usable height
        self.capacity_layers = int(math.floor(
            (bobbin.usable_height_m - od) / self.layer_height_m * (1 + _EPS) + _EPS)) + 1
        self._n = 0
        self._grow(max(self.capacity_layers + 1, 8))
        self.capacity_turns = int(self._cum_turns[self.capacity_layers])

    def layer_turns(self, layer_index: int) -> int:
        """Turns in layer ``layer_index`` (0-based)."""
        if layer_index < 0:
            raise ValueError("layer index must be 0 or more")
        if self.kind == "orthocyclic" and layer_index % 2 == 1:
            return self.turns_per_layer - 1
        return self.turns_per_layer

    def _grow(self, layers: int) -> None:
        """Make the per-layer tables hold at least ``layers`` layers."""
        if layers <= self._n:
            return
        layers = max(layers, 2 * self._n)
        idx = np.arange(layers)
        per = np.full(layers, self.turns_per_layer, dtype=float)
        if self.kind == "orthocyclic":
            per[1::2] -= 1
        centre = self.wire.od_m / 2 + idx * self.layer_height_m
        self._per = per
        self._centre = centre
        self._turn_len = self.bobbin.turn_length_m(centre)
        self._cum_turns = np.concatenate([[0.0], np.cumsum(per)])
        self._cum_len = np.concatenate([[0.0], np.cumsum(per * self._turn_len)])
        self._n = layers

    def _ensure(self, turns: np.ndarray) -> None:
        top = float(np.max(turns)) if turns.size else 0.0
        if not math.isfinite(top):
            raise ValueError("turn count must be finite")
        if top > self._cum_turns[-1]:
            need = int(top / max(self.turns_per_layer - 1, 1)) + 2
            if need > MAX_LAYERS:
                raise InputError(f"{top:.0f} turns would need about {need} layers of "
                                 f"{self.wire.name}; at most {MAX_LAYERS} are modelled",
                                 key="target")
            self._grow(need)

    def layers_for(self, turns) -> np.ndarray:
        """Layers started (int array) after ``turns`` turns."""
        n = np.maximum(np.asarray(turns, dtype=float), 0.0)
        self._ensure(n)
        return np.searchsorted(self._cum_turns, n * (1 - 1e-12), side="left")

    def build_height_m(self, turns) -> np.ndarray:
        """Height (m) of the build after ``turns`` turns: top of the highest started layer."""
        k = self.layers_for(turns)
        od = self.wire.od_m
        return np.where(k > 0, od + (k - 1) * self.layer_height_m, 0.0)

    def wire_length_m(self, turns) -> np.ndarray:
        """Wire length (m) of ``turns`` turns: whole layers plus the partial one."""
        n = np.maximum(np.asarray(turns, dtype=float), 0.0)
        self._ensure(n)
        k = np.searchsorted(self._cum_turns, n, side="right") - 1
        k = np.clip(k, 0, self._n - 1)
        return self._cum_len[k] + (n - self._cum_turns[k]) * self._turn_len[k]

    def turns_for_length(self, length_m: float) -> float:
        """Turns (float) whose wire length is ``length_m``."""
        while self._cum_len[-1] < length_m:
            if 2 * self._n > MAX_LAYERS:
                raise InputError(f"{length_m:.4g} m of {self.wire.name} would need more than "
                                 f"{MAX_LAYERS} layers", key="target")
            self._grow(2 * self._n)
        k = int(np.searchsorted(self._cum_len, length_m, side="right") - 1)
        k = min(max(k, 0), self._n - 1)
        return float(self._cum_turns[k] + (length_m - self._cum_len[k]) / self._turn_len[k])


class ScatterModel(_Base):
    """Scatter (random) winding with a packing factor: continuous closed forms."""

    kind = "scatter"
    turns_per_layer = None
    layer_height_m = None

    def __init__(self, bobbin: Bobbin, wire: Wire, packing: float):
        self.bobbin = bobbin
        self.wire = wire
        self.packing = packing
        _check_fits(bobbin, wire)
        # build height per turn, m
        self.k = math.pi * wire.od_m ** 2 / (4 * packing * bobbin.usable_width_m)
        self.capacity_turns = int(math.floor(bobbin.usable_height_m / self.k * (1 + _EPS)))

    def layer_turns(self, layer_index: int) -> int:
        """Equivalent turns per OD of build (scatter has no real layers)."""
        return int(round(self.wire.od_m / self.k))

    def build_height_m(self, turns) -> np.ndarray:
        """Build height (m) after ``turns`` turns: N pi OD^2 / (4 p w)."""
        return self.k * np.maximum(np.asarray(turns, dtype=float), 0.0)

    def wire_length_m(self, turns) -> np.ndarray:
        """Wire length (m): P0 N + pi k N^2."""
        n = np.maximum(np.asarray(turns, dtype=float), 0.0)
        return self.bobbin.core_perimeter_m * n + math.pi * self.k * n * n

    def turns_for_length(self, length_m: float) -> float:
        """Turns (float) whose wire length is ``length_m`` (root of the quadratic)."""
        p0, a = self.bobbin.core_perimeter_m, math.pi * self.k
        # stable form of (-p0 + sqrt(p0^2 + 4 a L)) / (2 a)
        return float(2 * length_m / (p0 + math.sqrt(p0 * p0 + 4 * a * length_m)))


def make_model(bobbin: Bobbin, wire: Wire, style: Style) -> WindingModel:
    """The winding model of ``style.kind`` for this bobbin and wire.

    Raises :class:`InputError` when the wire cannot be wound on the bobbin.
    """
    if style.kind == "scatter":
        return ScatterModel(bobbin, wire, style.packing_value)
    if style.kind in ("layer", "orthocyclic"):
        return LayeredModel(bobbin, wire, style.kind)
    raise InputError(f"unknown winding style {style.kind!r}", key="style.kind")
