"""Spindle speed profile and winding-time estimate.

Per pass the spindle cruises at the machine's top speed unless the traverse
could not keep up (guide speed = pitch x spindle speed above the traverse's
limit: that pass's speed is lowered and a warning raised). At a reversal the
guide must stop and start again; with traverse acceleration ``a`` and guide
speed ``v = p n`` (pitch ``p``, spindle ``n`` rev/s) that takes ``2 v / a``
seconds, during which the spindle turns ``2 p n^2 / a`` times and lays those
turns bunched at the flange. The machine allows ``reversal_turns`` of them, so
at a reversal the spindle slows to ``n = sqrt(reversal_turns a / (2 p))``
(kinematics of uniform acceleration). The first and last
``slow_start_turns``/``slow_finish_turns`` run at the slow speed; the coil
starts and ends at rest.

The time estimate runs the spindle's own acceleration through those limits
(forward and backward passes over the speed caps, trapezoidal segments): the
standard minimum-time profile for an acceleration-limited axis.

Units: speeds here are rpm (revolutions per minute) at the interfaces and
rev/s inside; pitch in metres; times in seconds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from winder.schedule.machine import Machine


def traverse_limited_rpm(pitch_m: float, machine: Machine) -> float:
    """Highest spindle speed (rpm) at which the guide keeps up with ``pitch_m`` per turn."""
    if not machine.drives_traverse or pitch_m <= 0:
        return math.inf
    return machine.traverse.max_speed_m_s / pitch_m * 60.0


def reversal_rpm(pitch_m: float, machine: Machine) -> float:
    """Spindle speed (rpm) at a reversal so the turnaround spends at most ``reversal_turns``."""
    if not machine.drives_traverse or pitch_m <= 0:
        return math.inf
    t = machine.traverse
    return 60.0 * math.sqrt(t.reversal_turns * t.accel_m_s2 / (2.0 * pitch_m))


@dataclass
class SpeedPlan:
    """Result of :func:`plan_speeds`: per-pass cruise and reversal rpm, per-pass time (s)."""

    cruise_rpm: list[float]
    reversal_rpm: list[float]      # speed cap at the end of each pass (its reversal)
    time_s: list[float]
    warnings: list[str] = field(default_factory=list)

    @property
    def total_s(self) -> float:
        """Estimated total winding time, seconds (spindle motion only)."""
        return math.fsum(self.time_s)


def plan_speeds(turns: list[float], pitch_m: list[float], machine: Machine) -> SpeedPlan:
    """Speeds and times for passes of ``turns`` each at ``pitch_m`` (metres of guide per turn)."""
    sp = machine.spindle
    n = len(turns)
    cruise: list[float] = []
    rev: list[float] = []
    warnings: list[str] = []
    lowered = []
    for i in range(n):
        limit = traverse_limited_rpm(pitch_m[i], machine)
        rpm = min(sp.max_rpm, limit)
        if rpm < sp.max_rpm:
            lowered.append((i, rpm))
        cruise.append(rpm)
        rev.append(min(rpm, reversal_rpm(pitch_m[i], machine)))
    if lowered:
        i0, r0 = lowered[0]
        warnings.append(
            f"traverse speed limit {machine.traverse.max_speed_m_s * 1e3:g} mm/s: spindle "
            f"lowered to {min(r for _, r in lowered):.0f} rpm on {len(lowered)} pass(es) "
            f"(first: pass {i0}, {r0:.0f} rpm)")

    # Segments of constant speed cap (rev/s), split at the slow-start/finish boundaries.
    total = math.fsum(turns)
    a = sp.accel_rpm_s / 60.0
    slow = sp.slow_rpm / 60.0
    s_end = min(sp.slow_start_turns, total)
    f_start = max(total - sp.slow_finish_turns, 0.0)
    seg_len: list[float] = []
    seg_cap: list[float] = []
    seg_pass: list[int] = []
    bound_cap: list[float] = [0.0]          # speed cap at each segment boundary
    t0 = 0.0
    for i in range(n):
        t1 = t0 + turns[i]
        cuts = sorted({t0, t1, *(c for c in (s_end, f_start) if t0 < c < t1)})
        for a0, a1 in zip(cuts, cuts[1:], strict=False):
            mid = 0.5 * (a0 + a1)
            cap = cruise[i] / 60.0
            if mid < s_end or mid > f_start:
                cap = min(cap, slow)
            seg_len.append(a1 - a0)
            seg_cap.append(cap)
            seg_pass.append(i)
            bound_cap.append(math.inf)
        if bound_cap and seg_len:
            nxt = reversal_rpm(pitch_m[i + 1], machine) if i < n - 1 else 0.0
            bound_cap[-1] = min(rev[i], nxt) / 60.0
        t0 = t1
    m = len(seg_len)
    v = [0.0] * (m + 1)
    for j in range(m + 1):
        left = seg_cap[j - 1] if j > 0 else 0.0
        right = seg_cap[j] if j < m else 0.0
        v[j] = min(bound_cap[j], left, right) if 0 < j < m else 0.0
    for j in range(m):                        # forward: can we accelerate to it?
        v[j + 1] = min(v[j + 1], math.sqrt(v[j] ** 2 + 2 * a * seg_len[j]))
    for j in range(m - 1, -1, -1):            # backward: can we brake from it?
        v[j] = min(v[j], math.sqrt(v[j + 1] ** 2 + 2 * a * seg_len[j]))
    times = [0.0] * n
    for j in range(m):
        times[seg_pass[j]] += segment_time(seg_len[j], v[j], v[j + 1], seg_cap[j], a)
    return SpeedPlan(cruise_rpm=cruise, reversal_rpm=rev, time_s=times, warnings=warnings)


def segment_time(length: float, v0: float, v1: float, cap: float, accel: float) -> float:
    """Time (s) to run ``length`` turns from ``v0`` to ``v1`` rev/s, capped at ``cap``.

    ``accel`` in rev/s^2.

    Trapezoidal (or triangular) profile: accelerate, cruise, decelerate.
    """
    if length <= 0:
        return 0.0
    peak = min(cap, math.sqrt((2 * accel * length + v0 * v0 + v1 * v1) / 2))
    peak = max(peak, v0, v1, 1e-12)
    d_up = max(peak * peak - v0 * v0, 0.0) / (2 * accel)
    d_down = max(peak * peak - v1 * v1, 0.0) / (2 * accel)
    cruise = max(length - d_up - d_down, 0.0)
    return (peak - v0) / accel + (peak - v1) / accel + cruise / peak
