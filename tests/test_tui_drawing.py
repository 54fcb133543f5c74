"""The monitor's arithmetic and the two drawings (window section, resistance chart).

Check values are worked by hand from the inputs; the copper temperature
coefficient is IEC 60287-1-1 Table 1 (0.00393 /K at 20 degC).
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.tui_standins import pickup_coil, planned
from winder.tui.chart import nice_ceiling, resistance_chart, round_up
from winder.tui.progress import (
    Reading,
    band_text,
    duration_text,
    estimate_at,
    figures,
    fill_level,
    predicted_ohm,
    remaining_seconds,
)
from winder.tui.section import window_section


@pytest.fixture(scope="module")
def plan_sched():
    return planned(pickup_coil())


# ----- progress -------------------------------------------------------------------------

def test_estimate_before_readings_is_the_plan(plan_sched):
    plan, _ = plan_sched
    e = estimate_at(plan, plan.turns)
    assert e.ohm == pytest.approx(plan.resistance_ohm, rel=1e-9)
    assert (e.lo, e.hi) == pytest.approx(plan.resistance_band_ohm, rel=1e-9)
    assert not e.calibrated


def test_one_reading_scales_the_model(plan_sched):
    plan, _ = plan_sched
    n = plan.turns // 2
    p = float(predicted_ohm(plan, n))
    # A reading 4 % above the model at 20 degC: every later estimate is 1.04 x the model.
    e = estimate_at(plan, plan.turns, [Reading(n, 1.04 * p, 20.0)])
    assert e.calibrated
    assert e.ohm == pytest.approx(1.04 * plan.resistance_ohm, rel=1e-9)
    assert e.lo < e.ohm < e.hi


def test_warm_reading_is_corrected_to_20c(plan_sched):
    plan, _ = plan_sched
    n = plan.turns // 3
    p = float(predicted_ohm(plan, n))
    # Copper at 30 degC reads R20 (1 + 0.00393 x 10) (IEC 60287-1-1 Table 1 alpha).
    warm = p * (1 + 0.00393 * 10)
    e = estimate_at(plan, n, [Reading(n, warm, 30.0)])
    assert e.ohm == pytest.approx(p, rel=1e-9)


def test_fill_levels_warn_at_90_and_100_percent():
    assert fill_level(0.8999) == "ok"
    assert fill_level(0.90) == "warn"
    assert fill_level(0.9999) == "warn"
    assert fill_level(1.0) == "full"
    assert fill_level(1.2) == "full"


def test_remaining_time_at_speed_and_by_schedule(plan_sched):
    plan, sched = plan_sched
    # 1000 turns left at 500 rev/min: 2 min.
    assert remaining_seconds(plan.turns - 1000, plan.turns, 500.0) == pytest.approx(120.0)
    # Stopped at the start: the schedule's own estimate, pass by pass.
    assert remaining_seconds(0.0, plan.turns, 0.0, sched) == pytest.approx(
        sum(p.time_s for p in sched.passes), rel=1e-9)
    assert remaining_seconds(0.0, plan.turns, 0.0, sched) == pytest.approx(
        sched.est_time_s, rel=0.02)
    assert remaining_seconds(plan.turns, plan.turns, 0.0, sched) == 0.0
    assert remaining_seconds(10, plan.turns, 0.0, None) is None


def test_figures_follow_the_schedule(plan_sched):
    plan, sched = plan_sched
    p = sched.passes[3]
    mid = p.turns_end - p.turns / 2
    f = figures(plan, mid, 0.0, schedule=sched)
    assert f.pass_index == 3 and f.pass_count == len(sched.passes)
    assert f.direction == p.direction
    assert f.guide_mm == pytest.approx(sched.pass_at(mid)[1])
    # Half-way along the pass the wire is half-way between its ends.
    assert f.guide_mm == pytest.approx((p.start_mm + p.end_mm) / 2, abs=0.05)
    assert f.fraction == pytest.approx(mid / plan.turns)
    full = figures(plan, plan.turns, 0.0, schedule=sched)
    assert full.build_m == pytest.approx(plan.build_height_m, rel=1e-9)
    assert full.fill == pytest.approx(plan.fill, rel=1e-9)


def test_text_helpers():
    assert duration_text(42) == "42 s"
    assert duration_text(725) == "12 min 05 s"
    assert duration_text(3720) == "1 h 02 min"
    assert duration_text(None) == "--"
    assert band_text(7210, 8460) == "7.21–8.46 kohm"
    assert band_text(980, 1020) == "980 ohm–1.02 kohm"


# ----- window section --------------------------------------------------------------------

def _bobbin(width_mm=40.0, height_mm=10.0, ends_mm=1.0, top_mm=1.0):
    return SimpleNamespace(
        name="b", core=SimpleNamespace(diameter_m=0.005),
        window_width_m=width_mm * 1e-3, window_height_m=height_mm * 1e-3,
        clearance_ends_m=ends_mm * 1e-3, clearance_top_m=top_mm * 1e-3,
        usable_width_m=(width_mm - 2 * ends_mm) * 1e-3,
        usable_height_m=(height_mm - top_mm) * 1e-3)


def _rows(text):
    return text.plain.split("\n")


def test_section_rows_scale_with_build():
    # 10 mm window drawn on 10 rows (height 12 = 10 + core + scale): 1 mm per row.
    lines = _rows(window_section(_bobbin(), 0.005, 0.0025, width=64, height=12))
    assert len(lines) == 12
    window = lines[:10]
    mid = 1 + 20                       # a column well inside the usable width
    column = "".join(line[mid] for line in window)
    # From the top: clearance, usable line at 9 mm, 4 empty rows, then the build.
    assert column[0] == "░"
    assert column[1] == "┄"
    assert column[5:10].count("▒") + column[5:10].count("█") + column[5:10].count("▄") == 5
    # Wound 2.5 mm: two full rows and a half row at the bottom.
    assert column[-2:] == "██"
    assert column[-3] == "▄"
    assert "core Ø 5.00 mm" in lines[10]
    assert "usable 38.0 mm" in lines[11]


def test_section_end_clearances_scale_with_window():
    # Inner width = 64 - 2 - 24 = 38 columns for 40 mm: 1 mm end clearance is ~1 column.
    line = _rows(window_section(_bobbin(ends_mm=4.0), 0.005, width=64, height=12))[8]
    inner = line[1:39]
    assert inner.startswith("····") and inner.endswith("····")
    assert "·" not in inner[5:-5]


def test_section_labels_height_and_percent():
    text = window_section(_bobbin(), 0.0099, width=64, height=12)
    plain = text.plain
    assert "rim  10.00 mm" in plain
    assert "usable   9.00 mm" in plain
    assert "110 %" in plain          # 9.9 mm of 9 mm usable


@settings(deadline=None, max_examples=60)
@given(st.floats(0.5, 200), st.floats(0.5, 60), st.floats(0, 0.2), st.floats(0, 0.3),
       st.floats(0, 2.0), st.integers(36, 140), st.integers(6, 40))
def test_section_never_breaks_its_box(width_mm, height_mm, ends_f, top_f, fill, w, h):
    b = _bobbin(width_mm, height_mm, ends_f * width_mm, top_f * height_mm)
    planned_m = fill * b.usable_height_m
    lines = _rows(window_section(b, planned_m, planned_m / 2, width=w, height=h))
    assert len(lines) == max(6, h)
    assert all(len(line) == max(36, w) for line in lines)


# ----- chart ---------------------------------------------------------------------------

def test_axis_ends():
    assert round_up(8058) == 8100
    assert round_up(1.0) == 1.0
    assert round_up(12_345, 3) == 12_400
    assert nice_ceiling(6240) == 8000
    assert nice_ceiling(0.9) == 1.0


def test_chart_puts_a_reading_where_it_belongs():
    turns = np.linspace(0, 1000, 50)
    ohm = turns * 8.0                        # 8 kohm at 1000 turns
    text = resistance_chart(64, 14, turns_max=1000, curve=(turns, ohm),
                            readings=[(500.0, 4000.0)])
    lines = _rows(text)
    assert len(lines) == 14
    marks = [(r, line.index("●")) for r, line in enumerate(lines) if "●" in line]
    assert len(marks) == 1
    row, col = marks[0]
    plot_w, plot_h = 64 - 11, 12
    # Half the turns and half the ohms: the middle of the plot area.
    assert abs((col - 11) - plot_w / 2) <= 1
    assert abs(row - plot_h / 2) <= 1
    # The y axis ends 2 % above the highest value, rounded up to two figures: 8.2 kohm.
    assert "8.2 kohm" in lines[0] and "1000 turns" in lines[-1]


def test_chart_curve_rises_left_to_right():
    turns = np.linspace(0, 5000, 80)
    ohm = turns * 1.2
    lines = _rows(resistance_chart(60, 12, turns_max=5000, curve=(turns, ohm)))[:-2]
    # The lowest row with ink in the first plot column, the highest in the last.
    def rows_with_ink(col):
        return [r for r, line in enumerate(lines) if line[col] not in " "]
    left, right = rows_with_ink(11), rows_with_ink(59)
    assert max(left) == len(lines) - 1
    assert min(right) < 3
    assert not math.isnan(ohm[-1])
