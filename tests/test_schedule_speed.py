"""Speed profile and time estimate, checked against hand-worked kinematics.

Uniform-acceleration kinematics (v^2 = v0^2 + 2 a s, s = v t) give every figure
below; each case is worked in its comment.
"""

from __future__ import annotations

import pytest
import schedule_support as sup

from winder.schedule import build_schedule
from winder.schedule.machine import Machine, Spindle, Traverse
from winder.schedule.speed import plan_speeds, reversal_rpm, segment_time, traverse_limited_rpm


def machine(**kw) -> Machine:
    sp = dict(max_rpm=600.0, accel_rpm_s=600.0, slow_rpm=120.0, slow_start_turns=0,
              slow_finish_turns=0)
    tr = dict(max_speed_m_s=0.025, accel_m_s2=0.25, reversal_turns=0.5)
    for k in list(kw):
        if k in sp:
            sp[k] = kw.pop(k)
        elif k in tr:
            tr[k] = kw.pop(k)
    return Machine(spindle=Spindle(**sp), traverse=Traverse(**tr), **kw)


def test_traverse_limit():
    # 25 mm/s over 0.1 mm per turn = 250 turns/s = 15,000 rpm.
    assert traverse_limited_rpm(0.1e-3, machine()) == pytest.approx(15_000)
    assert traverse_limited_rpm(0.1e-3, machine(kind="spindle")) == float("inf")


def test_reversal_speed():
    # n = sqrt(R a / (2 p)) = sqrt(0.5 * 0.25 / 0.002) = 7.9057 rev/s = 474.34 rpm;
    # check: guide speed 7.9057 mm/s, stop-and-start 2 v / a = 63.2 ms, 0.5 turns.
    rpm = reversal_rpm(1e-3, machine())
    assert rpm == pytest.approx(474.34, rel=1e-4)
    n = rpm / 60
    assert n * 2 * (n * 1e-3) / 0.25 == pytest.approx(0.5)


def test_segment_times():
    # Rest to rest, 10 turns at 10 rev/s^2, no cap: triangle, 2 sqrt(L / a) = 2 s.
    assert segment_time(10, 0, 0, float("inf"), 10) == pytest.approx(2.0)
    # 100 turns, cap 10 rev/s: 1 s up (5 turns), 1 s down (5 turns), 90 turns at 10/s = 9 s.
    assert segment_time(100, 0, 0, 10, 10) == pytest.approx(11.0)
    # Already at speed both ends: L / v.
    assert segment_time(50, 10, 10, 10, 10) == pytest.approx(5.0)


def test_single_pass_time():
    # 1000 turns, 600 rpm = 10 rev/s, 600 rpm/s = 10 rev/s^2: 1 + 1 + 990 / 10 = 101 s.
    sp = plan_speeds([1000], [0.1e-3], machine())
    assert sp.total_s == pytest.approx(101.0)
    assert sp.cruise_rpm == [600.0] and not sp.warnings


def test_slow_start_time():
    # First 20 turns capped at 120 rpm (2 rev/s): 0.2 s up (0.2 turns) + 19.8 / 2 = 10.1 s.
    # Then 980 turns from 2 rev/s to rest, cap 10: up 0.8 s (4.8 turns), down 1 s (5 turns),
    # 970.2 turns at 10/s = 97.02 s -> 98.82 s.  Total 108.92 s.
    sp = plan_speeds([1000], [0.1e-3], machine(slow_start_turns=20))
    assert sp.total_s == pytest.approx(108.92)


def test_reversal_slowdown_costs_time():
    # Two 500-turn passes at 1 mm pitch: the reversal cap is 474.34 rpm (7.906 rev/s).
    # Pass 1: up 1 s (5 turns), down 10 -> 7.906 in 0.2094 s (1.875 turns),
    # cruise 493.125 turns / 10 = 49.3125 s; total 50.5219 s; pass 2 mirrors it.
    sp = plan_speeds([500, 500], [1e-3, 1e-3], machine())
    assert sp.reversal_rpm[0] == pytest.approx(474.34, rel=1e-4)
    assert sp.time_s[0] == pytest.approx(50.5219, rel=1e-4)
    assert sp.time_s[1] == pytest.approx(sp.time_s[0])


def test_traverse_limit_lowers_pass_speed_and_warns():
    # 1 mm pitch with a 5 mm/s guide: 5 turns/s = 300 rpm.
    p = sup.plan(20)
    sched = build_schedule(p, machine(max_speed_m_s=0.005))
    assert all(pa.rpm == pytest.approx(300) for pa in sched.passes)
    assert any("traverse speed limit" in w and "300 rpm" in w for w in sched.warnings)
    assert sched.passes[0].pitch_mm * sched.passes[0].rpm / 60 <= 5 + 1e-9


def test_estimate_is_sum_of_passes():
    sched = build_schedule(sup.plan(200))
    assert sched.est_time_s == pytest.approx(sum(p.time_s for p in sched.passes))
    assert sched.est_time_s > 200 / (1500 / 60)     # never faster than top speed throughout
