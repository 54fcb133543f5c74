"""Machine steps from millimetres and turns, with the rounding error carried forward.

A motor moves in whole steps; a schedule asks for fractional ones. Rounding each
move on its own lets the error pile up (a 0.4-step loss per pass is 400 steps
after a thousand passes). Here every move is rounded against the exact running
total instead: the step count after any move is the exact total rounded to the
nearest step, so the machine is never more than half a step (and so never more
than one step) away from the plan, however many turns are wound.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from fractions import Fraction


class StepAccumulator:
    """Turns a stream of exact moves (in any unit) into whole steps without drift.

    ``steps_per_unit`` is steps per turn for a spindle, steps per metre for a
    traverse. The exact running total is kept as a :class:`~fractions.Fraction`
    of the float inputs, so no floating-point error accumulates either.
    """

    def __init__(self, steps_per_unit: float, start: float = 0.0):
        self.steps_per_unit = Fraction(steps_per_unit)
        self.exact = Fraction(start) * self.steps_per_unit   # exact position, steps
        self.steps = _round_half_away(self.exact)             # commanded position, steps

    def move_by(self, amount: float) -> int:
        """Advance by ``amount`` units; return the whole steps to command for this move."""
        self.exact += Fraction(amount) * self.steps_per_unit
        return self._settle()

    def move_to(self, position: float) -> int:
        """Go to the absolute ``position`` (units); return the whole steps for this move."""
        self.exact = Fraction(position) * self.steps_per_unit
        return self._settle()

    def _settle(self) -> int:
        target = _round_half_away(self.exact)
        delta = target - self.steps
        self.steps = target
        return delta

    @property
    def error_steps(self) -> float:
        """Commanded minus exact position, in steps (always within +/- 0.5)."""
        return float(self.steps - self.exact)


def _round_half_away(x: Fraction) -> int:
    """Round to the nearest integer, halves away from zero (symmetric for both directions)."""
    n = math.floor(abs(x) + Fraction(1, 2))
    return n if x >= 0 else -n


def to_steps(moves: Iterable[float], steps_per_unit: float) -> list[int]:
    """Whole steps for each of ``moves`` (units), the rounding error carried forward."""
    acc = StepAccumulator(steps_per_unit)
    return [acc.move_by(m) for m in moves]


@dataclass(frozen=True)
class PassSteps:
    """One pass in machine units.

    ``spindle_steps`` turn the spindle through the pass's turns; ``traverse_steps``
    (signed, + outward) move the guide from its start to its end;
    ``backlash_steps`` (signed) are the extra steps taken first when the guide
    reverses, to take up the lead-screw backlash; ``reposition_steps`` (signed)
    move the guide, spindle still, from where the last pass ended to where this
    one starts (non-zero only for orthocyclic half-pitch offsets). ``counts_end``
    is the turn counter reading at the pass end.
    """

    index: int
    spindle_steps: int
    traverse_steps: int
    backlash_steps: int
    reposition_steps: int
    counts_end: int


def schedule_steps(schedule) -> list[PassSteps]:  # noqa: ANN001 - Schedule (avoid an import cycle)
    """Convert every pass of ``schedule`` to machine steps for its machine.

    Spindle steps come from the cumulative turn count, traverse steps from the
    absolute guide position (start flange offset included), so neither drifts.
    """
    m = schedule.machine
    spindle = StepAccumulator(m.spindle.steps_per_rev)
    traverse_spm = m.traverse.steps_per_m
    offset_m = m.traverse.start_flange_m
    first = schedule.passes[0] if schedule.passes else None
    guide = StepAccumulator(traverse_spm, offset_m + (first.start_mm * 1e-3 if first else 0.0))
    backlash = round(m.traverse.backlash_m * traverse_spm)
    counts = StepAccumulator(m.counts_per_rev)
    out: list[PassSteps] = []
    last_dir = 0
    for p in schedule.passes:
        sign = 1 if p.direction == "outward" else -1
        repos = guide.move_to(offset_m + p.start_mm * 1e-3)
        bl = backlash * sign if (last_dir and sign != last_dir and backlash) else 0
        tr = guide.move_to(offset_m + p.end_mm * 1e-3)
        counts.move_to(p.turns_end)
        out.append(PassSteps(
            index=p.index,
            spindle_steps=spindle.move_to(p.turns_end),
            traverse_steps=tr,
            backlash_steps=bl,
            reposition_steps=repos,
            counts_end=counts.steps,
        ))
        last_dir = sign
    return out
