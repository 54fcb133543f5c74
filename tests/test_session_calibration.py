"""Calibration: 20 C correction and the measured/predicted ratio estimator."""

from __future__ import annotations

import math
import random

import pytest

from winder.session.calibration import (
    COPPER_ALPHA_PER_K,
    Calibrator,
    Reading,
    ResistanceCurve,
    from_20c,
    to_20c,
)

# 42 AWG bare diameter from the ASTM B258 formula, 0.127 mm x 92^((36-42)/39) = 0.06334 mm;
# annealed copper 1/58 ohm mm^2/m at 20 C (IEC 60028).
D_BARE_MM = 0.127 * 92 ** ((36 - 42) / 39)
OHM_PER_M = (1 / 58) / (math.pi / 4 * D_BARE_MM ** 2)


def coil_r20(turns: float) -> float:
    """An independent closed form: turns on a 6 mm x 52 mm rectangular core whose mean
    turn length grows linearly with build (to 4 mm at 8000 turns). Ohm at 20 C."""
    build_m = 0.004 * turns / 8000
    # perimeter of the build's mid line: 2 (w + l) + 2 pi h_mid  (rounded corners)
    mean_turn = 2 * (0.006 + 0.052) + math.pi * build_m   # mean over turns 0..n: h/2 each
    return OHM_PER_M * turns * mean_turn


def test_copper_alpha_and_20c_correction():
    # IEC 60287-1-1 Table 1: alpha20 of copper 0.00393 /K; R(T) = R20 (1 + alpha (T - 20))
    assert COPPER_ALPHA_PER_K == 0.00393
    assert from_20c(100.0, 30.0) == pytest.approx(103.93, abs=1e-9)
    assert to_20c(103.93, 30.0) == pytest.approx(100.0, abs=1e-9)
    assert to_20c(50.0, None) == 50.0           # no temperature: taken as 20 C


def test_closed_form_matches_published_ohm_per_metre():
    # 42 AWG: 1667.8 ohm per 1000 ft from the formula diameter (IACS), references table
    assert OHM_PER_M * 304.8 == pytest.approx(1667.8, rel=1e-3)


@pytest.mark.parametrize("seed", range(40))
def test_recovers_injected_ratio_within_half_percent_after_three_noisy_readings(seed):
    rng = random.Random(seed)
    k_true = 1.03                               # the plan is 3 % low
    cal = Calibrator(coil_r20)
    readings = []
    for n in (2000, 4000, 6000):
        temp = rng.uniform(18.0, 30.0)          # ambient varies between readings
        noise = 1 + rng.gauss(0.0, 0.002)       # 0.2 % meter noise (4.5-digit meter)
        ohm = from_20c(k_true * coil_r20(n), temp) * noise + rng.uniform(-0.02, 0.02)
        readings.append(Reading(n, ohm, round(temp, 1)))
    est = cal.estimate(readings, stop_turns=8000, target_ohm=None)
    assert est is not None and est.readings == 3
    assert abs(est.ratio / k_true - 1) < 0.005
    assert abs(est.predicted_final_ohm / (k_true * coil_r20(8000)) - 1) < 0.005
    assert 0 < est.ratio_std < 0.01


def test_turns_for_target_lands_on_true_resistance():
    k_true = 0.97
    target = 4000.0
    curve = ResistanceCurve.from_callable(coil_r20, 10000)
    cal = Calibrator(curve, curve.turns_for)
    readings = [Reading(n, k_true * coil_r20(n)) for n in (1500, 3000, 4500)]
    est = cal.estimate(readings, stop_turns=8000, target_ohm=target)
    assert est.ratio == pytest.approx(k_true, rel=1e-4)
    # the turns the estimator names give the target on the *true* coil
    assert k_true * coil_r20(est.turns_for_target) == pytest.approx(target, rel=1e-3)
    # and bisection on the plain callable agrees with the table inverse
    est2 = Calibrator(coil_r20).estimate(readings, 8000, target)
    assert est2.turns_for_target == pytest.approx(est.turns_for_target, rel=1e-3)


def test_without_temperature_correction_the_ratio_would_be_off():
    # readings at 35 C read 5.9 % high; corrected, the ratio is recovered
    readings = [Reading(n, from_20c(coil_r20(n), 35.0), 35.0) for n in (1000, 2000)]
    est = Calibrator(coil_r20).estimate(readings, 8000)
    assert est.ratio == pytest.approx(1.0, rel=1e-9)
    raw = [Reading(r.turns, r.ohm, None) for r in readings]
    assert Calibrator(coil_r20).estimate(raw, 8000).ratio == pytest.approx(
        1 + COPPER_ALPHA_PER_K * 15, rel=1e-9)


def test_later_readings_weigh_more():
    # an early reading 5 % off and a late exact one: with relative meter error the ratios
    # are weighted by (n_i / n_last) (P_i / R_i)^2: a = (1/12) / 1.05^2 and 1, so
    # k = (1.05 a + 1) / (a + 1) = 1.00351, where a plain mean of the ratios gives 1.025
    readings = [Reading(500, 1.05 * coil_r20(500)), Reading(6000, coil_r20(6000))]
    est = Calibrator(coil_r20).estimate(readings, 8000)
    a = (1 / 12) / 1.05 ** 2
    assert est.ratio == pytest.approx((1.05 * a + 1) / (a + 1), abs=1e-5)


def test_no_usable_reading_gives_none():
    cal = Calibrator(coil_r20)
    assert cal.estimate([], 8000) is None
    assert cal.estimate([Reading(0, 0.3)], 8000) is None   # lead-out only


def test_curve_round_trip_and_monotone():
    curve = ResistanceCurve.from_callable(coil_r20, 8000, points=65)
    for n in (0, 123, 4000, 7999, 8000):
        assert curve(n) == pytest.approx(coil_r20(n), rel=1e-4, abs=1e-9)
        assert curve.turns_for(curve(n)) == pytest.approx(n, abs=1e-6)
    assert curve.turns_for(curve(8000) * 1.01) > 8000       # extrapolates
    again = ResistanceCurve.from_pairs(curve.to_pairs())
    assert again(5000) == pytest.approx(curve(5000), rel=1e-8)
    with pytest.raises(ValueError):
        ResistanceCurve([0, 1, 1], [0, 1, 2])
