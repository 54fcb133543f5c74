"""Bobbin geometry: exact turn lengths and refusal of impossible shapes."""

from __future__ import annotations

import math

import numpy as np
import pytest

from winder.bobbin import Bobbin, RectCore, RoundCore
from winder.errors import InputError


def test_round_turn_length():
    # circle through the wire centre: pi (D + 2h), hand computed: D = 8 mm, h = 0.5 mm -> 9 pi mm
    b = Bobbin("r", RoundCore(8e-3), 6e-3, 3e-3)
    assert b.turn_length_m(0.5e-3) == pytest.approx(math.pi * 9e-3, rel=1e-12)


def test_rounded_rectangle_offset_keeps_straight_sides():
    # W 4 mm x L 60 mm, r 1 mm: straights (4-2) and (60-2) twice = 120 mm, corners a full
    # circle of radius r + h. Hand computed at h = 0.5 mm: 120 + 2 pi 1.5 = 129.42478 mm.
    b = Bobbin("b", RectCore(4e-3, 60e-3, 1e-3), 10e-3, 5e-3)
    assert b.turn_length_m(0.5e-3) * 1e3 == pytest.approx(129.42478, abs=1e-5)
    # full-round ends (r = W/2): a stadium; perimeter 2 (L - W) + pi W
    s = Bobbin("s", RectCore(4e-3, 60e-3, 2e-3), 10e-3, 5e-3)
    assert s.core_perimeter_m == pytest.approx(2 * 56e-3 + math.pi * 4e-3, rel=1e-12)
    # sharp corners: perimeter 2 (W + L) at h = 0, then + 2 pi h
    q = Bobbin("q", RectCore(4e-3, 60e-3, 0.0), 10e-3, 5e-3)
    assert q.turn_length_m(np.array([0.0, 1e-3])) == pytest.approx(
        [128e-3, 128e-3 + 2 * math.pi * 1e-3], rel=1e-12)


def test_usable_window():
    b = Bobbin("r", RoundCore(8e-3), 6e-3, 3e-3, clearance_ends_m=0.25e-3, clearance_top_m=0.3e-3)
    assert b.usable_width_m == pytest.approx(5.5e-3)
    assert b.usable_height_m == pytest.approx(2.7e-3)
    assert b.usable_window_mm() == pytest.approx((0.25, 5.75))


@pytest.mark.parametrize(
    ("make", "key"),
    [
        (lambda: RectCore(4e-3, 60e-3, 2.5e-3), "core.corner_radius"),
        (lambda: RoundCore(-1e-3), "core.diameter"),
        (lambda: Bobbin("x", RoundCore(8e-3), 6e-3, 3e-3, clearance_ends_m=3e-3),
         "clearance.ends"),
        (lambda: Bobbin("x", RoundCore(8e-3), 6e-3, 3e-3, clearance_top_m=3e-3), "clearance.top"),
        (lambda: Bobbin("x", RoundCore(8e-3), 0.0, 3e-3), "window.width"),
        (lambda: Bobbin("x", RoundCore(8e-3), 6e-3, float("nan")), "window.height"),
    ],
)
def test_impossible_geometry(make, key):
    with pytest.raises(InputError) as info:
        make()
    assert info.value.key == key
