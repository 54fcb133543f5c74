"""What the monitor shows, worked out from the plan, the schedule and the count.

Pure functions and small dataclasses, no Textual: the monitor screen renders a
:class:`Figures` made here at its refresh rate, and the tests check the
arithmetic directly. Units: turns (float), ohms, metres, seconds, degC.

Resistance so far comes from the plan's winding model at the turn count now,
scaled by the calibration: the ratio k of measured to predicted resistance at
20 degC (the session layer's weighted estimator over the readings, each
corrected with the wire's temperature coefficient). Before any reading the band
is the plan's (bare-diameter tolerance); after, k +/- 2 standard errors.
A caller with its own calibrated model can pass ``estimate``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

FILL_WARN = 0.90   # fraction of usable height: warn (common practice, no source)
FILL_STOP = 1.00   # at the usable height: the rim clearance is being eaten


@dataclass(frozen=True)
class Reading:
    """A resistance measured during winding: at ``turns``, ``ohm`` at ``temp_c``."""

    turns: float
    ohm: float
    temp_c: float = 20.0

    def ohm_20(self, alpha_per_k: float) -> float:
        """The reading corrected to 20 degC with the conductor's temperature coefficient."""
        return self.ohm / (1.0 + alpha_per_k * (self.temp_c - 20.0))


@dataclass(frozen=True)
class Estimate:
    """Resistance estimated at a turn count: ``ohm`` within ``lo``..``hi``, at 20 degC."""

    ohm: float
    lo: float
    hi: float
    calibrated: bool = False


@dataclass
class Figures:
    """Everything the monitor panels show for one refresh."""

    turns: float
    planned_turns: float
    fraction: float                 # turns / planned turns, 0..1+ (progress)
    rpm: float
    remaining_s: float | None       # time to the planned turns at the rate now (or scheduled)
    pass_index: int | None          # 0-based, from the schedule
    pass_count: int
    direction: str | None           # "outward" | "homeward"
    guide_mm: float | None          # where the wire should be now (schedule), mm from start flange
    build_m: float                  # build height at the count now
    fill: float                     # build / usable height
    fill_level: str                 # "ok" | "warn" | "full"
    estimate: Estimate
    readings: list[Reading] = field(default_factory=list)
    final: Estimate | None = None   # resistance expected at the stop point


def alpha_of(plan: Any) -> float:
    """The wire's resistance temperature coefficient, 1/K (copper 0.00393 if unknown)."""
    material = getattr(getattr(plan, "wire", None), "material", None)
    # 0.00393 /K: annealed copper at 20 degC, IEC 60287-1-1 Table 1.
    return float(getattr(material, "alpha_per_k", 0.00393))


def predicted_ohm(plan: Any, turns: float | Sequence[float]) -> np.ndarray:
    """The plan's model resistance at 20 degC for ``turns`` (vectorised), ohm."""
    t = np.asarray(turns, dtype=float)
    return np.asarray(plan.model.resistance_ohm(np.maximum(t, 0.0), 20.0), dtype=float)


def band_ratios(plan: Any) -> tuple[float, float]:
    """(low, high) of the plan's resistance band as fractions of its nominal resistance."""
    nominal = float(plan.resistance_ohm)
    lo, hi = plan.resistance_band_ohm
    if nominal <= 0:
        return 1.0, 1.0
    return float(lo) / nominal, float(hi) / nominal


def calibration(plan: Any, readings: Sequence[Reading]) -> tuple[float, float] | None:
    """(k, standard error of k): measured / predicted at 20 degC from the readings, or None.

    The session layer's weighted least-squares estimator
    (:class:`winder.session.calibration.Calibrator`), on the plan's model.
    """
    from winder.session.calibration import Calibrator
    from winder.session.calibration import Reading as CalReading

    alpha = alpha_of(plan)
    cal = Calibrator(lambda n: float(predicted_ohm(plan, n)))
    # The calibrator corrects to 20 degC with copper's coefficient; pass readings already
    # corrected with the wire's own (the same for copper, right for aluminium).
    rows = [CalReading(r.turns, r.ohm_20(alpha), 20.0) for r in readings]
    got = cal.ratio(rows)
    if got is None:
        return None
    k, std, _used = got
    return k, std


def estimate_at(plan: Any, turns: float, readings: Sequence[Reading] = ()) -> Estimate:
    """Resistance at 20 degC after ``turns``, with its band, calibrated by ``readings``.

    Without readings the band is the plan's (from the bare-diameter tolerance);
    with readings it is k +/- 2 standard errors of k (about 95 %).
    """
    nominal = float(predicted_ohm(plan, turns))
    lo_r, hi_r = band_ratios(plan)
    cal = calibration(plan, readings)
    if cal is None:
        return Estimate(nominal, nominal * lo_r, nominal * hi_r, False)
    k, std = cal
    return Estimate(nominal * k, nominal * (k - 2 * std), nominal * (k + 2 * std), True)


def fill_level(fill: float) -> str:
    """'ok' below 90 % of usable height, 'warn' from 90 %, 'full' from 100 %."""
    if fill >= FILL_STOP:
        return "full"
    if fill >= FILL_WARN:
        return "warn"
    return "ok"


def remaining_seconds(turns: float, planned: float, rpm: float,
                      schedule: Any | None = None) -> float | None:
    """Seconds to the planned turns: at ``rpm`` if turning, else by the schedule.

    By the schedule: each pass's estimated time (its ``time_s``, which includes
    speed changes at the reversals; else turns / rpm), pro rata for the part of
    the pass still to wind.
    """
    left = max(0.0, planned - turns)
    if left == 0:
        return 0.0
    if rpm > 1.0:
        return left / rpm * 60.0
    if schedule is None:
        return None
    total = 0.0
    for p in schedule.passes:
        n = float(p.turns)
        if n <= 0:
            continue
        start = float(p.turns_end) - n
        todo = n - min(max(turns - start, 0.0), n)
        if todo <= 0:
            continue
        t = float(getattr(p, "time_s", 0.0) or 0.0)
        if t <= 0 and p.rpm > 0:
            t = n / float(p.rpm) * 60.0
        total += t * todo / n
    return total


def figures(plan: Any, turns: float, rpm: float = 0.0, *, schedule: Any | None = None,
            readings: Sequence[Reading] = (),
            estimate: Callable[[float], Estimate] | None = None,
            stop_turns: float | None = None) -> Figures:
    """Work out every monitor figure for a count of ``turns`` turning at ``rpm``.

    ``stop_turns`` is the session's stop point when it differs from the plan's
    turns (moved after a calibration).
    """
    planned = float(stop_turns or plan.turns)
    pass_index = direction = guide = None
    count = 0
    if schedule is not None and schedule.passes:
        count = len(schedule.passes)
        idx, pos = schedule.pass_at(max(0.0, turns))
        pass_index = int(idx)
        guide = float(pos)
        direction = schedule.passes[min(pass_index, count - 1)].direction
    build = float(np.asarray(plan.model.build_height_m(max(0.0, turns))))
    usable = float(plan.bobbin.usable_height_m)
    fill = build / usable if usable > 0 else math.inf
    est = estimate(turns) if estimate is not None else estimate_at(plan, turns, readings)
    final = estimate(planned) if estimate is not None else estimate_at(plan, planned, readings)
    return Figures(
        turns=turns, planned_turns=planned,
        fraction=turns / planned if planned > 0 else 0.0,
        rpm=rpm, remaining_s=remaining_seconds(turns, planned, rpm, schedule),
        pass_index=pass_index, pass_count=count, direction=direction, guide_mm=guide,
        build_m=build, fill=fill, fill_level=fill_level(fill), estimate=est,
        readings=list(readings), final=final,
    )


def ohm_text(value: float, digits: int = 4) -> str:
    """A resistance for the screen: '6.2 kohm', '7.9 ohm', '0.493 ohm'.

    Below 1 ohm the value stays in ohms: 'mohm' reads too easily as megohm.
    """
    from winder.units import format_si

    if 0 < abs(value) < 1:
        return f"{value:.{digits}g} ohm"
    return format_si(value, "ohm", digits)


def band_text(lo: float, hi: float, unit: str = "ohm", digits: int = 3) -> str:
    """'7.21–8.46 kohm' (one prefix when both ends share it) or '980 ohm–1.02 kohm'."""
    from winder.units import format_si

    fmt = ohm_text if unit == "ohm" else (lambda v, d: format_si(v, unit, d))
    a, b = fmt(lo, digits), fmt(hi, digits)
    ua, ub = a.split(" ", 1)[1], b.split(" ", 1)[1]
    if ua == ub:
        return f"{a.split(' ', 1)[0]}–{b}"
    return f"{a}–{b}"


def duration_text(seconds: float | None) -> str:
    """'1 h 02 min', '12 min 05 s', '42 s' or '--' for unknown."""
    if seconds is None or not math.isfinite(seconds):
        return "--"
    s = int(round(seconds))
    if s >= 3600:
        return f"{s // 3600} h {s % 3600 // 60:02d} min"
    if s >= 60:
        return f"{s // 60} min {s % 60:02d} s"
    return f"{s} s"
