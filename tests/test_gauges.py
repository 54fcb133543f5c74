"""Gauge chooser: the recommendation and the filled-bobbin scaling facts."""

from __future__ import annotations

import pytest

from winder.bobbin import Bobbin, RoundCore
from winder.errors import InputError
from winder.gauges import rank_gauges
from winder.profile import examples_dir, load_bobbin
from winder.winding import Style


def driver_bobbin() -> Bobbin:
    return load_bobbin(examples_dir() / "bobbins" / "blade-driver.yaml")


@pytest.mark.parametrize("ohm", [4.0, 8.0, 16.0])  # common drive loads (common practice, no source)
def test_recommends_the_fitting_size_that_fills_most(ohm):
    options = rank_gauges(driver_bobbin(), ohm, drive_v=2.0)
    rec = [o for o in options if o.recommended]
    assert len(rec) == 1
    best = rec[0]
    fitting = [o for o in options if o.fits]
    assert best.fits and best.fill == max(o.fill for o in fitting)
    # the thickest size whose target length fits (options run thickest first)
    assert best is fitting[0]
    # ... and the most ampere-turns at the fixed drive voltage among the fitting sizes
    assert best.ampere_turns == max(o.ampere_turns for o in fitting)
    assert best.ampere_turns == pytest.approx(best.turns * 2.0 / ohm)


def test_driver_8ohm_profile_uses_the_recommended_size():
    from winder.profile import load_coil

    coil = load_coil(examples_dir() / "coils" / "driver-8ohm.yaml")
    best = next(o for o in rank_gauges(coil.bobbin, 8.0, style=coil.style) if o.recommended)
    assert best.size == coil.wire.size_name == "31 AWG"


def test_filled_scaling_across_the_ranking():
    # Filled fixed bobbin (geometry and Ohm's law; rule of thumb, no source):
    # full turns ~ 1/OD^2, full resistance ~ about 1/d^4; within layer quantisation
    big = Bobbin("big", RoundCore(20e-3), 40e-3, 8e-3)
    opts = {o.size: o for o in rank_gauges(big, 10.0)}
    a, b = opts["28 AWG"], opts["34 AWG"]
    assert b.full_turns / a.full_turns == pytest.approx((a.od_mm / b.od_mm) ** 2, rel=0.05)
    assert b.full_resistance_ohm / a.full_resistance_ohm == pytest.approx(
        (a.bare_mm / b.bare_mm) ** 4, rel=0.25)


def test_max_turns_mode():
    opts = rank_gauges(driver_bobbin(), 50.0, max_turns=True)
    rec = next(o for o in opts if o.recommended)
    assert rec.full_resistance_ohm <= 50.0
    assert rec.full_turns == max(o.full_turns for o in opts if o.full_resistance_ohm <= 50.0)


def test_metric_and_scatter():
    opts = rank_gauges(driver_bobbin(), 8.0, series="metric", style=Style("scatter"))
    assert any(o.recommended for o in opts) and all(o.size.endswith("mm") for o in opts)


def test_needs_a_target():
    with pytest.raises(InputError):
        rank_gauges(driver_bobbin(), None)


@pytest.mark.parametrize("drive", [{"drive_v": 2.0}, {"drive_a": 0.2}])
def test_drive_figures_per_size(drive):
    # each size's hot state: P = I² R_hot with R_hot = R20 (1 + alpha (T - 20)),
    # alpha of copper 0.00393 /K (IEC 60287-1-1 Table 1), T = 25 C ambient + rise
    b = driver_bobbin()
    opts = [o for o in rank_gauges(b, 8.0, distance_m=3e-3, **drive) if o.fits]
    assert opts
    for o in opts:
        r_hot = o.resistance_ohm * (1 + 0.00393 * (25.0 + o.temp_rise_c - 20.0))
        assert o.power_w == pytest.approx(o.current_a ** 2 * r_hot, rel=1e-9)
        if "drive_v" in drive:
            assert o.current_a == pytest.approx(2.0 / r_hot, rel=1e-9)
        else:
            assert o.current_a == 0.2 and o.ampere_turns == pytest.approx(0.2 * o.turns)
        assert o.field_at_point_mT > 0
    # at a fixed voltage and resistance the power hardly changes with the size, but more
    # turns (thicker wire) give more field at the point
    fields = [o.field_at_point_mT for o in opts]
    if "drive_v" in drive:
        assert fields == sorted(fields, reverse=True)
