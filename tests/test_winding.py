"""Winding models: hand-computed layer sums, packing limits, closed forms, properties."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from winder.bobbin import Bobbin, RectCore, RoundCore
from winder.errors import InputError
from winder.winding import ORTHOCYCLIC_LIMIT, Style, make_model
from winder.wire import make_wire


def wire_with_od(od_m: float, size: str = "30 AWG"):
    return dataclasses.replace(make_wire(size), od_m=od_m)


ROUND = Bobbin("round", RoundCore(8e-3), 8e-3, 3e-3)


def test_turns_per_layer_guards_floating_error():
    # 8 mm / 0.25 mm is exactly 32 turns (floor of 31.999999... must not give 31)
    m = make_model(ROUND, wire_with_od(0.25e-3), Style("layer"))
    assert m.turns_per_layer == 32
    w = Bobbin("w", RoundCore(8e-3), 0.3e-3 * 10, 3e-3)
    assert make_model(w, wire_with_od(0.3e-3), Style()).turns_per_layer == 10


def test_layer_sum_round_core_hand_computed():
    # D = 8 mm, OD = 0.25 mm, 32 turns/layer, layer i centre at 0.25 (i + 1/2) mm.
    # 2 full layers + 5 turns: 32 pi (8.25) + 32 pi (8.75) + 5 pi (9.25) mm
    # = pi (264 + 280 + 46.25) = 590.25 pi mm = 1854.3251 mm (hand computed)
    m = make_model(ROUND, wire_with_od(0.25e-3), Style("layer"))
    assert m.wire_length_m(69) * 1e3 == pytest.approx(590.25 * math.pi, rel=1e-12)
    assert m.wire_length_m(69) * 1e3 == pytest.approx(1854.3251, abs=1e-4)
    assert m.build_height_m([0, 32, 33, 69]) == pytest.approx([0, 0.25e-3, 0.5e-3, 0.75e-3])
    # 3 mm / 0.25 mm = 12 layers of 32
    assert m.capacity_turns == 384


def test_layer_sum_rounded_rectangle_hand_computed():
    # Core 3 x 50 mm, r = 1.5 mm (full-round ends): P0 = 2 (50 - 3) + 3 pi mm.
    # OD 0.5 mm, window 5 mm -> 10 turns/layer. 3 layers, centres 0.25, 0.75, 1.25 mm:
    # L = 10 [3 P0 + 2 pi (0.25 + 0.75 + 1.25)] = 10 [282 + 9 pi + 4.5 pi] = 2820 + 135 pi mm
    # = 3244.1150 mm (hand computed)
    b = Bobbin("blade", RectCore(3e-3, 50e-3, 1.5e-3), 5e-3, 2e-3)
    m = make_model(b, wire_with_od(0.5e-3, "24 AWG"), Style("layer"))
    assert m.turns_per_layer == 10
    assert m.wire_length_m(30) * 1e3 == pytest.approx(2820 + 135 * math.pi, rel=1e-12)
    assert m.wire_length_m(30) * 1e3 == pytest.approx(3244.1150, abs=1e-4)


def test_orthocyclic_alternates_and_nests():
    m = make_model(ROUND, wire_with_od(0.25e-3), Style("orthocyclic"))
    assert [m.layer_turns(i) for i in range(4)] == [32, 31, 32, 31]
    assert m.layer_height_m == pytest.approx(0.25e-3 * math.sqrt(3) / 2)
    # layers k with 0.25 + (k-1) 0.2165 <= 3 mm -> k = 13 -> 7 x 32 + 6 x 31 = 410 (hand computed)
    assert m.capacity_turns == 410
    # second layer centre sits OD sqrt(3)/2 above the first
    first = 32 * math.pi * (8e-3 + 0.25e-3)
    second = 31 * math.pi * (8e-3 + 2 * (0.125e-3 + 0.25e-3 * math.sqrt(3) / 2))
    assert m.wire_length_m(63) == pytest.approx(first + second, rel=1e-12)


def test_orthocyclic_packing_tends_to_hexagonal_limit():
    # Hexagonal packing of circles: pi / (2 sqrt 3) = 0.9069 (geometry)
    assert ORTHOCYCLIC_LIMIT == pytest.approx(0.9069, abs=1e-4)
    od = 0.1e-3
    b = Bobbin("wide", RoundCore(10e-3), 1000 * od, 200 * od)
    m = make_model(b, wire_with_od(od), Style("orthocyclic"))
    n = m.capacity_turns
    packing = n * math.pi * od ** 2 / 4 / (b.usable_width_m * float(m.build_height_m(n)))
    assert packing == pytest.approx(ORTHOCYCLIC_LIMIT, rel=0.01)
    # square stacking gives pi/4 = 0.7854 (geometry)
    s = make_model(b, wire_with_od(od), Style("layer"))
    ns = s.capacity_turns
    sq = ns * math.pi * od ** 2 / 4 / (b.usable_width_m * float(s.build_height_m(ns)))
    assert sq == pytest.approx(math.pi / 4, rel=1e-9)


def test_scatter_closed_form():
    b = Bobbin("r", RoundCore(8e-3), 6e-3, 3e-3)
    w = wire_with_od(0.07e-3, "42 AWG")
    m = make_model(b, w, Style("scatter", packing=0.8))
    assert m.turns_per_layer is None and m.layer_height_m is None
    n = 5000.0
    # build: N pi OD^2 / (4 p w)
    h = n * math.pi * 0.07e-3 ** 2 / (4 * 0.8 * 6e-3)
    assert m.build_height_m(n) == pytest.approx(h, rel=1e-12)
    # length = integral of pi (D + 2 h(n)) dn = pi D N + pi h(N) N
    assert m.wire_length_m(n) == pytest.approx(math.pi * 8e-3 * n + math.pi * h * n, rel=1e-12)
    assert m.capacity_turns == math.floor(3e-3 / (h / n))


def test_scatter_default_packing():
    m = make_model(ROUND, wire_with_od(0.25e-3), Style("scatter"))
    assert m.packing == 0.70


def test_vectorised():
    m = make_model(ROUND, wire_with_od(0.25e-3), Style("layer"))
    turns = np.linspace(0, 2000, 101)
    r = m.resistance_ohm(turns, 25.0)
    assert r.shape == turns.shape and np.all(np.diff(r) > 0)
    assert m.build_height_m(turns).shape == turns.shape


@pytest.mark.parametrize(
    ("bobbin", "od", "key"),
    [(Bobbin("n", RoundCore(8e-3), 0.2e-3, 3e-3), 0.25e-3, "window.width"),
     (Bobbin("f", RoundCore(8e-3), 6e-3, 0.2e-3), 0.25e-3, "window.height")],
)
def test_wire_does_not_fit(bobbin, od, key):
    with pytest.raises(InputError) as info:
        make_model(bobbin, wire_with_od(od), Style())
    assert info.value.key == key


def test_bad_style():
    with pytest.raises(InputError):
        Style("wild")
    with pytest.raises(InputError):
        Style("scatter", packing=0.95)


KINDS = st.sampled_from(["layer", "orthocyclic", "scatter"])
SIZES = st.integers(min_value=28, max_value=46)


@settings(max_examples=60, deadline=None)
@given(KINDS, SIZES, st.floats(0, 5000), st.floats(0, 5000))
def test_monotonic_in_turns(kind, awg, a, b):
    m = make_model(ROUND, make_wire(f"{awg} AWG"), Style(kind))
    lo, hi = sorted((a, b))
    assert m.wire_length_m(lo) <= m.wire_length_m(hi)
    assert m.build_height_m(lo) <= m.build_height_m(hi)
    assert m.resistance_ohm(lo, 40.0) <= m.resistance_ohm(hi, 40.0)


@settings(max_examples=60, deadline=None)
@given(KINDS, SIZES, st.floats(0.01, 1.0))
def test_monotonic_in_size(kind, awg, frac):
    # thinner wire (higher AWG): more turns when full, and more resistance for the same
    # turns within the bobbin
    thick = make_model(ROUND, make_wire(f"{awg} AWG"), Style(kind))
    thin = make_model(ROUND, make_wire(f"{awg + 1} AWG"), Style(kind))
    assert thin.capacity_turns >= thick.capacity_turns
    turns = max(1.0, frac * thick.capacity_turns)
    # thinner wire packs tighter, so its length can be a hair shorter; resistance per metre
    # rises by 92^(2/39) = 26 %, far more than that
    assert thin.resistance_ohm(turns) > thick.resistance_ohm(turns)


@settings(max_examples=80, deadline=None)
@given(KINDS, SIZES, st.floats(1, 30000), st.floats(-20, 150))
def test_turns_resistance_round_trip(kind, awg, turns, temp):
    m = make_model(ROUND, make_wire(f"{awg} AWG"), Style(kind))
    ohm = float(m.resistance_ohm(turns, temp))
    assert m.turns_for_resistance(ohm, temp) == pytest.approx(turns, rel=1e-9)


def test_absurd_turn_counts_are_refused_not_allocated():
    m = make_model(ROUND, wire_with_od(0.25e-3), Style("layer"))
    with pytest.raises(InputError):
        m.wire_length_m(1e9)
    with pytest.raises(InputError):
        m.turns_for_resistance(1e12)
