"""The schedule's data: passes along the window and the schedule that holds them.

Window coordinates are millimetres along the winding window measured from the
start flange (the flange the first pass starts at); the usable window runs from
``clearance_ends`` to ``window_width - clearance_ends``. A pass's direction is
``"outward"`` (away from the start flange, positions increasing) or
``"homeward"`` (toward it, positions decreasing). Guide positions are the
centre of the wire being laid; over a pass the guide moves linearly with the
spindle, ``pitch_mm`` per turn.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import asdict, dataclass, field
from typing import Any

from winder.errors import InputError
from winder.schedule.machine import Machine, machine_from_dict

OUTWARD = "outward"
HOMEWARD = "homeward"
FORMAT_VERSION = 1


@dataclass(frozen=True)
class Pass:
    """One traverse pass.

    Positions in mm from the start flange; ``turns`` (may be fractional) wound in
    this pass; ``pitch_mm`` guide travel per spindle turn; ``rpm`` the spindle's
    cruise speed for the pass (already lowered where the traverse cannot keep
    up); ``reversal_rpm`` the speed at the reversal that ends it;
    ``turns_end``/``build_mm_end``/``ohm_end`` the cumulative turns, build height
    (mm) and predicted DC resistance (ohm at 20 degC) at the pass end;
    ``time_s`` the estimated seconds for the pass; ``layer`` the layer index
    (layer and orthocyclic styles) or None (scatter).
    """

    index: int
    direction: str
    start_mm: float
    end_mm: float
    turns: float
    pitch_mm: float
    rpm: float
    turns_end: float
    build_mm_end: float
    ohm_end: float
    reversal_rpm: float = 0.0
    time_s: float = 0.0
    layer: int | None = None

    @property
    def turns_start(self) -> float:
        """Cumulative turns at the start of the pass."""
        return self.turns_end - self.turns

    def guidance(self) -> str:
        """One line for someone guiding the wire by hand.

        E.g. 'pass 3: outward over the next 38 turns, 0.50 to 9.50 mm (0.237 mm per turn)'.
        """
        return (f"pass {self.index}: {self.direction} over the next {self.turns:g} turns, "
                f"{self.start_mm:.2f} to {self.end_mm:.2f} mm ({self.pitch_mm:.3g} mm per turn)")

    def position_at(self, turns: float) -> float:
        """Guide position (mm) after ``turns`` cumulative turns, clamped to this pass."""
        if self.turns <= 0:
            return self.end_mm
        frac = min(max((turns - self.turns_start) / self.turns, 0.0), 1.0)
        return self.start_mm + (self.end_mm - self.start_mm) * frac


@dataclass
class Schedule:
    """An ordered list of passes plus totals.

    ``total_turns`` equals the plan's turns; ``est_time_s`` is the estimated
    winding time in seconds; ``seed`` the scatter seed used (None for layer
    styles); ``seed_picked`` is True when the coil had no seed and one was
    picked (store it to wind the same coil again).
    """

    passes: list[Pass]
    total_turns: float
    est_time_s: float
    seed: int | None
    machine: Machine
    warnings: list[str] = field(default_factory=list)
    style: str = "layer"
    coil_name: str = ""
    seed_picked: bool = False
    window_mm: tuple[float, float] = (0.0, 0.0)    # usable window (mm from the start flange)
    od_mm: float = 0.0

    def __post_init__(self) -> None:
        self._ends = [p.turns_end for p in self.passes]

    def pass_at(self, turns: float) -> tuple[int, float]:
        """(pass index, guide position mm) after ``turns`` cumulative turns.

        A turn count on a pass boundary belongs to the pass that starts there;
        counts below zero give the first pass's start, counts at or past the end
        the last pass's end.
        """
        if not self.passes:
            raise InputError("the schedule has no passes")
        if not math.isfinite(turns):
            raise InputError(f"turn count {turns!r} is not a number")
        if turns <= 0:
            return 0, self.passes[0].start_mm
        i = bisect.bisect_right(self._ends, turns)
        if i >= len(self.passes):
            last = self.passes[-1]
            return last.index, last.end_mm
        return i, self.passes[i].position_at(turns)

    def rpm_at(self, turns: float) -> float:
        """Spindle speed cap (rpm) at ``turns``: the pass's cruise, slow near start and finish."""
        i, _ = self.pass_at(turns)
        rpm = self.passes[i].rpm
        sp = self.machine.spindle
        if turns < sp.slow_start_turns or turns > self.total_turns - sp.slow_finish_turns:
            rpm = min(rpm, sp.slow_rpm)
        return rpm

    def to_dict(self) -> dict[str, Any]:
        """The stable JSON form: ``passes`` (list of pass objects) and the totals."""
        return {
            "format": FORMAT_VERSION,
            "units": {"position": "mm from the start flange", "pitch": "mm per turn",
                      "speed": "rpm", "build": "mm", "resistance": "ohm at 20 degC",
                      "time": "s"},
            "coil": self.coil_name,
            "style": self.style,
            "seed": self.seed,
            "seed_picked": self.seed_picked,
            "total_turns": self.total_turns,
            "passes_count": len(self.passes),
            "est_time_s": self.est_time_s,
            "window_mm": list(self.window_mm),
            "od_mm": self.od_mm,
            "machine": self.machine.to_dict(),
            "warnings": list(self.warnings),
            "passes": [asdict(p) for p in self.passes],
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Schedule:
        """Rebuild a schedule from :meth:`to_dict` output (e.g. a session's schedule.json)."""
        try:
            passes = [Pass(**p) for p in data["passes"]]
            return cls(passes=passes, total_turns=float(data["total_turns"]),
                       est_time_s=float(data["est_time_s"]), seed=data.get("seed"),
                       machine=machine_from_dict(data["machine"]),
                       warnings=list(data.get("warnings", [])), style=data.get("style", ""),
                       coil_name=data.get("coil", ""),
                       seed_picked=bool(data.get("seed_picked", False)),
                       window_mm=tuple(data.get("window_mm", (0.0, 0.0))),
                       od_mm=float(data.get("od_mm", 0.0)))
        except (KeyError, TypeError, ValueError) as err:
            raise InputError(f"not a winder schedule ({err.__class__.__name__}: {err})") from err
