"""Calibration: learn the ratio of measured to predicted resistance while winding.

Every reading ``(n_i turns, R_i ohm at ambient T_i degC)`` is first corrected to
20 degC with the linear copper model ``R20 = R_T / (1 + alpha (T - 20))``,
``alpha = 0.00393 /K`` (IEC 60287-1-1 Table 1; IEC 60028 reference
temperature 20 C). A reading with no temperature is taken as 20 C.

The plan predicts ``P(n)``, the 20 C resistance after ``n`` turns. The model
is ``R20_i = k * P(n_i) + e_i`` with one unknown ratio ``k`` (the wire's real
resistance per metre and the real mean turn length against the planned ones).
``k`` is estimated by weighted least squares through the origin::

    k = sum(w_i P_i R_i) / sum(w_i P_i^2)

    w_i = (n_i / n_last) / s_i^2,   s_i^2 = (rel R_i)^2 + abs_ohm^2

``s_i`` is the meter's stated uncertainty (default 0.5 % of reading + 0.02
ohm, a typical handheld meter's DC-ohms spec; common practice, no source), so
a reading of a few ohms on a small coil counts for less than one of a full
coil; ``n_i / n_last`` weights later readings more, because they describe the
turns that make up most of the coil (the build, tension and pitch actually
used). With a single reading ``k = R20/P``. The standard error of ``k`` comes
from the weighted residuals when there are three readings or more, and from
the meter spec otherwise.

From ``k``: the predicted final resistance at the stop point is ``k P(n_stop)``,
and the turn count at which a target ``R*`` is reached is ``P^-1(R* / k)``.
The estimator takes a plain callable ``P`` (and optionally its inverse), so it
works with the plan's ``model.resistance_ohm`` / ``model.turns_for_resistance``
or with the frozen resistance table a session stores (:class:`ResistanceCurve`).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass

import numpy as np

#: Temperature coefficient of copper resistance at 20 C, 1/K (IEC 60287-1-1 Table 1).
COPPER_ALPHA_PER_K = 0.00393
REFERENCE_C = 20.0


def to_20c(ohm: float, temp_c: float | None, alpha_per_k: float = COPPER_ALPHA_PER_K) -> float:
    """Resistance measured at ``temp_c`` degC (None = 20 C) referred to 20 C, ohm."""
    if temp_c is None:
        return float(ohm)
    return float(ohm) / (1.0 + alpha_per_k * (float(temp_c) - REFERENCE_C))


def from_20c(ohm20: float, temp_c: float, alpha_per_k: float = COPPER_ALPHA_PER_K) -> float:
    """A 20 C resistance as it reads at ``temp_c`` degC, ohm."""
    return float(ohm20) * (1.0 + alpha_per_k * (float(temp_c) - REFERENCE_C))


class ResistanceCurve:
    """Predicted 20 C resistance against turns, as a monotone table (turns, ohm).

    Interpolates linearly; :meth:`turns_for` inverts it. A session freezes such
    a table (from the plan's model) into its journal, so reports and resume
    need no planner code. Beyond the last point it extrapolates with the last
    segment's slope.
    """

    def __init__(self, turns: Sequence[float], ohm: Sequence[float]):
        t = np.asarray(turns, dtype=float)
        r = np.asarray(ohm, dtype=float)
        if t.ndim != 1 or t.size < 2 or t.shape != r.shape:
            raise ValueError("a resistance curve needs two or more (turns, ohm) points")
        if np.any(np.diff(t) <= 0) or np.any(np.diff(r) < 0):
            raise ValueError("a resistance curve must increase with turns")
        self.turns = t
        self.ohm = r

    @classmethod
    def from_callable(cls, resistance: Callable[[float], float], max_turns: float,
                      points: int = 129) -> ResistanceCurve:
        """Sample ``resistance(turns)`` (ohm at 20 C) from 0 to ``max_turns``."""
        t = np.linspace(0.0, float(max_turns), points)
        r = np.array([float(resistance(x)) for x in t])
        return cls(t, np.maximum.accumulate(r))

    @classmethod
    def from_pairs(cls, pairs: Iterable[Sequence[float]]) -> ResistanceCurve:
        pts = [(float(a), float(b)) for a, b in pairs]
        return cls([p[0] for p in pts], [p[1] for p in pts])

    def to_pairs(self, digits: int = 9) -> list[list[float]]:
        return [[round(float(a), 4), float(f"{b:.{digits}g}")]
                for a, b in zip(self.turns, self.ohm, strict=True)]

    def __call__(self, turns: float) -> float:
        t = float(turns)
        if t <= self.turns[-1]:
            return float(np.interp(t, self.turns, self.ohm))
        slope = (self.ohm[-1] - self.ohm[-2]) / (self.turns[-1] - self.turns[-2])
        return float(self.ohm[-1] + slope * (t - self.turns[-1]))

    def turns_for(self, ohm: float) -> float:
        r = float(ohm)
        if r <= self.ohm[-1]:
            return float(np.interp(r, self.ohm, self.turns))
        slope = (self.ohm[-1] - self.ohm[-2]) / (self.turns[-1] - self.turns[-2])
        return float(self.turns[-1] + (r - self.ohm[-1]) / slope) if slope > 0 else math.inf


def invert(resistance: Callable[[float], float], ohm: float, hi: float) -> float:
    """Turns at which monotone ``resistance(turns)`` reaches ``ohm`` (bisection)."""
    lo = 0.0
    while resistance(hi) < ohm:
        hi *= 2.0
        if hi > 1e9:
            return math.inf
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        if resistance(mid) < ohm:
            lo = mid
        else:
            hi = mid
        if hi - lo < 1e-6:
            break
    return 0.5 * (lo + hi)


@dataclass(frozen=True)
class Reading:
    """One resistance reading: turns at the reading, ohm as measured, ambient degC."""

    turns: float
    ohm: float
    temp_c: float | None = None
    note: str = ""

    @property
    def ohm_20c(self) -> float:
        return to_20c(self.ohm, self.temp_c)


@dataclass(frozen=True)
class Estimate:
    """The calibration after some readings. Ohms at 20 C; turns."""

    ratio: float                    # k = measured / predicted
    ratio_std: float                # standard error of k
    readings: int                   # readings used
    predicted_final_ohm: float      # k * P(stop turns), 20 C
    stop_turns: float               # the stop point it was computed for
    turns_for_target: float | None  # P^-1(target / k), None without a target
    target_ohm: float | None

    @property
    def error_percent(self) -> float:
        """How far the plan's prediction is off, percent (measured over predicted - 1)."""
        return (self.ratio - 1.0) * 100.0

    def to_dict(self) -> dict:
        return {"ratio": self.ratio, "ratio_std": self.ratio_std, "readings": self.readings,
                "predicted_final_ohm": self.predicted_final_ohm, "stop_turns": self.stop_turns,
                "turns_for_target": self.turns_for_target, "target_ohm": self.target_ohm,
                "error_percent": self.error_percent}


@dataclass
class Calibrator:
    """Weighted least-squares ratio estimator (see the module docstring).

    ``predicted(turns)`` is the plan's 20 C resistance after ``turns`` turns;
    ``inverse(ohm)``, if given, its inverse (else bisection is used).
    ``rel`` and ``abs_ohm`` describe the meter (fraction of reading, ohm).
    Readings taken at fewer than ``min_turns`` turns (the lead-out alone) are
    ignored.
    """

    predicted: Callable[[float], float]
    inverse: Callable[[float], float] | None = None
    rel: float = 0.005
    abs_ohm: float = 0.02
    min_turns: float = 1.0

    def ratio(self, readings: Sequence[Reading]) -> tuple[float, float, int] | None:
        """``(k, std of k, readings used)`` or None when no reading is usable."""
        rows = []
        for r in readings:
            if r.turns < self.min_turns or not (r.ohm > 0):
                continue
            p = float(self.predicted(r.turns))
            if p <= 0:
                continue
            rows.append((r.turns, p, r.ohm_20c))
        if not rows:
            return None
        n = np.array([x[0] for x in rows])
        p = np.array([x[1] for x in rows])
        m = np.array([x[2] for x in rows])
        s2 = (self.rel * m) ** 2 + self.abs_ohm ** 2
        w = (n / n.max()) / s2
        swpp = float(np.sum(w * p * p))
        k = float(np.sum(w * p * m)) / swpp
        # spec-based standard error: Var(k) = sum(w^2 p^2 s^2) / (sum w p^2)^2
        spec_std = math.sqrt(float(np.sum(w * w * p * p * s2))) / swpp
        if len(rows) >= 3:
            resid = m - k * p
            chi2 = float(np.sum(resid * resid / s2)) / (len(rows) - 1)
            std = spec_std * math.sqrt(max(chi2, 1.0))
        else:
            std = spec_std
        return k, std, len(rows)

    def turns_for(self, ohm20: float, hint: float) -> float:
        """Turns at which the *plan* reaches ``ohm20`` (20 C)."""
        if self.inverse is not None:
            return float(self.inverse(ohm20))
        return invert(self.predicted, ohm20, max(hint, 1.0))

    def estimate(self, readings: Sequence[Reading], stop_turns: float,
                 target_ohm: float | None = None) -> Estimate | None:
        """The estimate for a stop point and optional 20 C target, or None without data."""
        got = self.ratio(readings)
        if got is None:
            return None
        k, std, used = got
        final = k * float(self.predicted(stop_turns))
        at = self.turns_for(target_ohm / k, stop_turns) if target_ohm else None
        return Estimate(k, std, used, final, float(stop_turns), at, target_ohm)

    def turns_from_reading(self, reading: Reading, ratio: float = 1.0,
                           hint: float = 1000.0) -> float:
        """The turn count a fresh reading implies, given the ratio learned so far."""
        return self.turns_for(reading.ohm_20c / ratio, hint)
