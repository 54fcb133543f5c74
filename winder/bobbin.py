"""Bobbin geometry: round and rounded-rectangle cores, the winding window, turn lengths.

Lengths in metres. A turn whose wire centre lies ``h`` above the core follows
the core outline offset outward by ``h``. For a round core of diameter D that
is a circle of length pi (D + 2h). For a rectangular core W x L with corner
radius r the offset outline keeps its straight sides (W - 2r and L - 2r, twice
each) and its corners become quarter circles of radius r + h, so its length is
2 (W - 2r) + 2 (L - 2r) + 2 pi (r + h). Both are exact, and both grow by
2 pi per unit of h.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from winder.errors import InputError


@dataclass(frozen=True)
class RoundCore:
    """A cylindrical core; ``diameter_m`` in metres."""

    diameter_m: float

    shape = "round"

    def __post_init__(self) -> None:
        _positive(self.diameter_m, "core.diameter")

    @property
    def perimeter_m(self) -> float:
        """Length of the core outline (m)."""
        return math.pi * self.diameter_m


@dataclass(frozen=True)
class RectCore:
    """A rectangular core ``width_m`` x ``length_m`` with corner radius ``corner_radius_m``.

    A corner radius of half the width gives full-round ends (a blade or
    elongated pickup-style core); zero gives sharp corners.
    """

    width_m: float
    length_m: float
    corner_radius_m: float = 0.0

    shape = "rect"

    def __post_init__(self) -> None:
        _positive(self.width_m, "core.width")
        _positive(self.length_m, "core.length")
        if not (math.isfinite(self.corner_radius_m) and self.corner_radius_m >= 0):
            raise InputError("corner radius must be zero or more", key="core.corner_radius")
        half = min(self.width_m, self.length_m) / 2
        if self.corner_radius_m > half * (1 + 1e-9):
            raise InputError(f"corner radius {self.corner_radius_m * 1e3:.4g} mm is more than "
                             f"half the core's smaller side ({half * 1e3:.4g} mm)",
                             key="core.corner_radius")

    @property
    def perimeter_m(self) -> float:
        """Length of the core outline (m)."""
        r = min(self.corner_radius_m, min(self.width_m, self.length_m) / 2)
        return 2 * (self.width_m - 2 * r) + 2 * (self.length_m - 2 * r) + 2 * math.pi * r


def _positive(value: float, key: str) -> None:
    if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
        raise InputError(f"must be a positive length, got {value!r}", key=key)


@dataclass(frozen=True)
class Bobbin:
    """A bobbin: core, window between the flanges, clearances. Lengths in metres.

    ``window_width_m`` is the traverse length between flanges, ``window_height_m``
    the flange height above the core; ``clearance_ends_m`` is kept free at each
    flange and ``clearance_top_m`` below the rim. ``reference_inductance`` is an
    optional (henry, turns) pair measured on this bobbin.
    """

    name: str
    core: RoundCore | RectCore
    window_width_m: float
    window_height_m: float
    clearance_ends_m: float = 0.0
    clearance_top_m: float = 0.0
    reference_inductance: tuple[float, int] | None = None

    def __post_init__(self) -> None:
        _positive(self.window_width_m, "window.width")
        _positive(self.window_height_m, "window.height")
        for value, key in ((self.clearance_ends_m, "clearance.ends"),
                           (self.clearance_top_m, "clearance.top")):
            if not (math.isfinite(value) and value >= 0):
                raise InputError("clearance must be zero or more", key=key)
        if self.usable_width_m <= 0:
            raise InputError(f"the end clearances ({self.clearance_ends_m * 1e3:.4g} mm each) "
                             f"leave no usable width in a {self.window_width_m * 1e3:.4g} mm "
                             "window", key="clearance.ends")
        if self.usable_height_m <= 0:
            raise InputError(f"the top clearance ({self.clearance_top_m * 1e3:.4g} mm) leaves "
                             f"no usable height in a {self.window_height_m * 1e3:.4g} mm window",
                             key="clearance.top")
        if self.reference_inductance is not None:
            henry, turns = self.reference_inductance
            if not (math.isfinite(henry) and henry > 0 and int(turns) > 0):
                raise InputError("reference inductance needs a positive value and turn count",
                                 key="reference_inductance")

    @property
    def usable_width_m(self) -> float:
        """Traverse length available to the winding (m)."""
        return self.window_width_m - 2 * self.clearance_ends_m

    @property
    def usable_height_m(self) -> float:
        """Build height available to the winding (m)."""
        return self.window_height_m - self.clearance_top_m

    @property
    def core_perimeter_m(self) -> float:
        """Length of a turn lying on the core (h = 0), m."""
        return self.core.perimeter_m

    def turn_length_m(self, h: float | np.ndarray) -> np.ndarray:
        """Length (m) of one turn whose wire centre is ``h`` metres above the core (vectorised)."""
        h = np.asarray(h, dtype=float)
        return self.core.perimeter_m + 2.0 * math.pi * h

    def usable_window_mm(self) -> tuple[float, float]:
        """(start, end) of the usable window in mm from the start flange."""
        return self.clearance_ends_m * 1e3, (self.window_width_m - self.clearance_ends_m) * 1e3
