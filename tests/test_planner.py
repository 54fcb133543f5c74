"""Planner: solve modes, warnings, the JSON layout, and fixed-bobbin scaling facts."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from winder.bobbin import Bobbin, RectCore, RoundCore
from winder.errors import InputError
from winder.planner import Coil, Style, Target, make_plan
from winder.wire import make_wire

BLADE = Bobbin("blade", RectCore(2.4e-3, 56e-3, 1.2e-3), 7e-3, 2.6e-3, 0.2e-3, 0.3e-3)
ROUND = Bobbin("round", RoundCore(8e-3), 6e-3, 3e-3)

PLAN_KEYS = {"turns", "layers", "turns_per_layer", "build_height_mm", "fill", "wire_length_m",
             "resistance_ohm", "mass_g", "warnings"}


def coil(target: Target, wire: str = "31 AWG", bobbin: Bobbin = BLADE, style: Style | None = None,
         insulation: str | None = None) -> Coil:
    return Coil("t", bobbin, make_wire(wire, insulation), target, style or Style())


def test_from_resistance_reaches_target():
    p = make_plan(coil(Target("resistance", 8.0)))
    # a whole number of turns: within one turn's resistance of 8 ohm
    one_turn = float(p.model.resistance_ohm(p.turns) - p.model.resistance_ohm(p.turns - 1))
    assert abs(p.resistance_ohm - 8.0) <= one_turn / 2 + 1e-12
    assert p.resistance_band_ohm[0] < p.resistance_ohm < p.resistance_band_ohm[1]
    assert p.turns_per_layer == p.model.turns_per_layer
    assert p.layers == math.ceil(p.turns / p.turns_per_layer)


def test_from_turns_and_temperature():
    p = make_plan(coil(Target("turns", 100.0)), temp_c=70.0)
    assert p.turns == 100
    # copper R(70 C) = R20 (1 + 0.00393 x 50) (IEC 60287-1-1 Table 1 alpha)
    assert p.resistance_at_temp_ohm == pytest.approx(p.resistance_ohm * (1 + 0.00393 * 50))
    # copper density 8.89 g/cm^3 (IEC 60028) times conductor volume
    vol = p.wire_length_m * math.pi * p.wire.bare_m ** 2 / 4
    assert p.mass_kg == pytest.approx(vol * 8890.0)


def test_fill_mode_is_capacity():
    p = make_plan(coil(Target("fill")))
    assert p.turns == p.model.capacity_turns
    assert p.fill <= 1.0 + 1e-12
    with pytest.raises(InputError):
        make_plan(coil(Target("turns", float(p.turns + 1))))


def test_over_full_error_unless_forced():
    with pytest.raises(InputError) as info:
        make_plan(coil(Target("resistance", 8.0), wire="28 AWG"))
    assert "over-full" in str(info.value)
    p = make_plan(coil(Target("resistance", 8.0), wire="28 AWG"), force=True)
    assert p.forced and p.warnings[0].startswith("over-full") and p.fill > 1


def test_near_full_warning():
    cap = make_plan(coil(Target("fill"))).turns
    p = make_plan(coil(Target("turns", float(cap))))
    assert any(w.startswith("near full") for w in p.warnings)
    q = make_plan(coil(Target("turns", 10.0)))
    assert not q.warnings


def test_edge_of_catalog_warning():
    p = make_plan(coil(Target("turns", 10.0), wire="56 AWG", bobbin=ROUND))
    assert any("edge of the catalog" in w for w in p.warnings)


def test_to_dict_is_json_with_all_keys():
    for style in (Style("layer"), Style("orthocyclic"), Style("scatter", packing=0.8)):
        d = make_plan(coil(Target("resistance", 8.0), style=style)).to_dict()
        assert PLAN_KEYS <= set(d)
        json.dumps(d, allow_nan=False)
        assert isinstance(d["turns"], int) and isinstance(d["warnings"], list)
        if style.kind == "scatter":
            assert d["turns_per_layer"] is None and isinstance(d["layers"], float)
        else:
            assert isinstance(d["turns_per_layer"], int) and isinstance(d["layers"], int)


def _filled(awg: int, style: str):
    # a large fixed bobbin so layer quantisation stays small
    big = Bobbin("big", RoundCore(20e-3), 40e-3, 8e-3)
    return make_plan(Coil("f", big, make_wire(f"{awg} AWG"), Target("fill"), Style(style)))


@pytest.mark.parametrize("style", ["layer", "orthocyclic", "scatter"])
def test_filled_bobbin_scaling(style):
    # A completely filled fixed bobbin (geometry and Ohm's law; rule of thumb, no source):
    # turns ~ 1/OD^2, resistance ~ 1/d^4 (about: d and OD differ), ampere-turns at a
    # fixed voltage ~ d^2. Checked between 30 and 36 AWG within layer quantisation.
    a, b = _filled(30, style), _filled(36, style)
    od_a, od_b = a.wire.od_m, b.wire.od_m
    assert b.turns / a.turns == pytest.approx((od_a / od_b) ** 2, rel=0.05)
    # resistance ~ turns / d^2 ~ 1 / (OD^2 d^2): exactly that within quantisation ...
    exact = (od_a / od_b) ** 2 * (a.wire.bare_m / b.wire.bare_m) ** 2
    assert b.resistance_ohm / a.resistance_ohm == pytest.approx(exact, rel=0.05)
    # ... and about 1/d^4 (the insulation makes thin wire a little worse)
    d4 = (a.wire.bare_m / b.wire.bare_m) ** 4
    assert b.resistance_ohm / a.resistance_ohm == pytest.approx(d4, rel=0.25)
    # ampere-turns at fixed V: N V / R ~ d^2
    at_a, at_b = a.turns / a.resistance_ohm, b.turns / b.resistance_ohm
    assert at_b / at_a == pytest.approx((b.wire.bare_m / a.wire.bare_m) ** 2, rel=0.05)


def test_bad_targets():
    with pytest.raises(InputError):
        Target("turns", 1.5)
    with pytest.raises(InputError):
        Target("resistance", -8.0)
    with pytest.raises(InputError):
        Target("volume", 1.0)


@settings(max_examples=40, deadline=None)
@given(st.sampled_from(["layer", "orthocyclic", "scatter"]), st.integers(30, 40),
       st.floats(0.05, 0.9))
def test_resistance_turns_resistance_round_trip(kind, awg, frac):
    base = Coil("p", ROUND, make_wire(f"{awg} AWG"), Target("fill"), Style(kind))
    full = make_plan(base)
    target = full.resistance_ohm * frac
    p = make_plan(Coil("p", ROUND, base.wire, Target("resistance", target), Style(kind)))
    again = make_plan(Coil("p", ROUND, base.wire, Target("turns", float(p.turns)), Style(kind)))
    assert again.resistance_ohm == pytest.approx(p.resistance_ohm, rel=1e-12)
    assert np.isclose(p.model.turns_for_resistance(p.resistance_ohm), p.turns, rtol=1e-9)
