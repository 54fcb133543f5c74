"""Step conversion: whole steps with the rounding error carried forward, no drift."""

from __future__ import annotations

import math
from fractions import Fraction

import schedule_support as sup
from hypothesis import given, settings
from hypothesis import strategies as st

from winder.schedule import DEFAULT_MACHINE, StepAccumulator, build_schedule, to_steps
from winder.schedule.machine import Machine, Traverse
from winder.schedule.steps import schedule_steps


def test_hand_computed_thirds():
    # 1/3 turn moves at 10 steps/turn: exact 3.33, 6.67, 10 -> positions 3, 7, 10.
    assert to_steps([1 / 3, 1 / 3, 1 / 3], 10) == [3, 4, 3]
    # Rounding each move alone would give 3 + 3 + 3 = 9 steps, one turn short by a step.
    assert sum(round(10 / 3) for _ in range(3)) == 9


def test_halves_round_away_from_zero_both_ways():
    acc = StepAccumulator(1)
    assert acc.move_by(0.5) == 1
    assert acc.move_by(-1.0) == -2       # at -0.5 -> -1
    assert acc.move_to(0.0) == 1


def test_no_drift_over_twenty_thousand_turns():
    # 20,000 turns fed as 0.3703-turn moves (an awkward fraction; 54,010 moves) at 3200
    # steps/turn, and as 1.37-turn moves at 1600 x 7/3 steps/turn (not a whole number).
    for step, spr in ((0.3703, 3200), (1.37, 1600 * 7 / 3)):
        acc = StepAccumulator(spr)
        per_move = Fraction(step) * Fraction(spr)
        moved = 0
        n = int(20000 / step)
        for k in range(1, n + 1):
            moved += acc.move_by(step)
            if k % 997 == 0 or k == n:
                assert abs(moved - k * per_move) <= Fraction(1, 2)
        assert abs(moved - n * step * spr) <= 1.0
        # Rounding each move on its own drifts by whole turns' worth of steps.
        naive = n * round(step * spr)
        assert abs(naive - n * step * spr) > 100


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(min_value=-50, max_value=50, allow_nan=False), min_size=1,
                max_size=200),
       st.floats(min_value=0.5, max_value=5000))
def test_every_prefix_is_within_half_a_step(moves, spr):
    steps = to_steps(moves, spr)
    total = 0
    exact = Fraction(0)
    for m, s in zip(moves, steps, strict=True):
        total += s
        exact += Fraction(m) * Fraction(spr)
        assert abs(total - exact) <= Fraction(1, 2)


def test_schedule_steps_match_totals_and_positions():
    p = sup.plan(20)                    # 9 + 9 + 2 turns at 1 mm pitch, window 0.5..9.5 mm
    m = Machine(traverse=Traverse(lead_m=2e-3, steps_per_rev=400, start_flange_m=5e-3,
                                  backlash_m=0.02e-3))
    sched = build_schedule(p, m)
    steps = schedule_steps(sched)
    spm = 400 / 2e-3                    # 200 steps per mm
    assert [s.spindle_steps for s in steps] == [9 * 3200, 9 * 3200, 2 * 3200]
    assert [s.traverse_steps for s in steps] == [9 * 200, -9 * 200, 2 * 200]
    assert [s.counts_end for s in steps] == [9, 18, 20]
    # 0.02 mm backlash = 4 steps, taken on each reversal in the new direction.
    assert [s.backlash_steps for s in steps] == [0, -4, 4]
    assert sum(s.spindle_steps for s in steps) == 20 * 3200
    assert math.isclose(spm, 200_000)


def test_schedule_steps_long_scatter_has_no_drift():
    p = sup.plan(20000, kind="scatter", od_mm=0.07, size="0.063 mm", seed=7, height_mm=20)
    m = DEFAULT_MACHINE
    sched = build_schedule(p, m)
    steps = schedule_steps(sched)
    assert sum(s.spindle_steps for s in steps) == 20000 * m.spindle.steps_per_rev
    guide = 0
    spm = m.traverse.steps_per_m
    start = round((m.traverse.start_flange_m + sched.passes[0].start_mm * 1e-3) * spm)
    for pa, st_ in zip(sched.passes, steps, strict=True):
        guide += st_.reposition_steps + st_.traverse_steps
        exact = (m.traverse.start_flange_m + pa.end_mm * 1e-3) * spm
        assert abs(start + guide - exact) <= 0.5 + 1e-6
