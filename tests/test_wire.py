"""Wire catalog against published standards and tables."""

from __future__ import annotations

import math

import pytest

from winder.errors import InputError
from winder.wire import (
    INCH,
    MATERIALS,
    awg_diameter_m,
    awg_sizes,
    make_wire,
    metric_sizes,
    parse_wire,
)

FT = 0.3048  # m, exact


@pytest.mark.parametrize(
    ("awg", "d_mm"),
    # ASTM B258 formula d = 0.127 mm x 92^((36-n)/39), values as listed with the formula
    # in the ASTM B258 discussion (HyperPhysics wire gauge table gives the same).
    [(20, 0.81182), (24, 0.51056), (28, 0.32109), (30, 0.25464), (32, 0.20194),
     (34, 0.16014), (36, 0.12700), (38, 0.10072), (40, 0.07987), (42, 0.06334),
     (44, 0.05023)],
)
def test_awg_formula_diameters(awg, d_mm):
    assert make_wire(f"{awg} AWG").bare_m * 1e3 == pytest.approx(d_mm, abs=6e-6)


def test_awg_step_ratio_and_anchor():
    # ASTM B258: 36 AWG is exactly 0.005 in; consecutive sizes differ by 92^(1/39) = 1.1229322
    assert awg_diameter_m(36) == pytest.approx(0.005 * INCH, rel=1e-12)
    assert awg_diameter_m(35) / awg_diameter_m(36) == pytest.approx(1.1229322, rel=1e-7)


@pytest.mark.parametrize(
    ("awg", "table_in"),
    # ASTM B258 table values, rounded to 0.0001 in up to No. 44: 42 AWG 0.0025 in,
    # 44 AWG 0.0020 in, 30 AWG 0.0100 in. The formula (which winder uses) differs by up to
    # about 1-1.5 % for fine sizes (40 AWG: 0.003145 in vs 0.0031 in) because of that
    # rounding, and by less than half a
    # rounding step (0.00005 in) everywhere.
    [(30, 0.0100), (36, 0.0050), (40, 0.0031), (42, 0.0025), (44, 0.0020)],
)
def test_awg_formula_vs_rounded_table(awg, table_in):
    d_in = make_wire(f"{awg} AWG").bare_m / INCH
    assert abs(d_in - table_in) <= 0.00005 + 1e-12
    assert d_in == pytest.approx(table_in, rel=0.015)


@pytest.mark.parametrize(
    ("awg", "ohm_per_kft", "rel"),
    # Copper at 20 C, ohm per 1000 ft: HyperPhysics wire gauge table; CRC Handbook (53rd ed.).
    [(20, 10.15, 2e-3), (24, 25.67, 2e-3), (28, 64.9, 2e-3), (30, 103.2, 2e-3),
     (32, 164.1, 2e-3), (34, 260.9, 2e-3), (36, 414.8, 2e-3), (38, 659.6, 2e-3),
     (40, 1049, 2e-3),
     # 42 AWG: 1667.8 computed from IACS at the formula diameter (references: computed)
     (42, 1667.8, 1e-4)],
)
def test_copper_resistance_per_length_vs_table(awg, ohm_per_kft, rel):
    w = make_wire(f"{awg} AWG")
    assert w.ohm_per_m() * 1000 * FT == pytest.approx(ohm_per_kft, rel=rel)


def test_42_awg_at_the_table_diameter():
    # 1659.4 ohm/1000 ft at the ASTM B258 table's 0.0025 in (computed from IACS)
    w = make_wire("0.0025 in")
    assert w.ohm_per_m() * 1000 * FT == pytest.approx(1659.4, rel=2e-4)


def test_iacs_resistivity():
    # IEC 60028: annealed copper 1/58 ohm mm^2/m = 0.017241 ohm mm^2/m at 20 C
    assert MATERIALS["copper"].resistivity_ohm_m * 1e6 == pytest.approx(1 / 58, rel=1e-12)
    assert MATERIALS["copper"].resistivity_ohm_m * 1e6 == pytest.approx(0.017241, abs=5e-7)
    # IEC 60287-1-1 Table 1: aluminium 2.826e-8 ohm m (61 % IACS)
    assert MATERIALS["aluminium"].resistivity_ohm_m == pytest.approx(2.826e-8, rel=2e-4)


def test_temperature_correction():
    # R(T) = R20 (1 + alpha (T - 20)); copper alpha 0.00393 /K (IEC 60287-1-1 Table 1)
    w = make_wire("36 AWG")
    assert w.ohm_per_m(70.0) / w.ohm_per_m(20.0) == pytest.approx(1 + 0.00393 * 50, rel=1e-12)
    # aluminium 0.00403 /K (IEC 60287-1-1 Table 1)
    a = make_wire("36 AWG", material="aluminium")
    assert a.ohm_per_m(0.0) / a.ohm_per_m(20.0) == pytest.approx(1 - 0.00403 * 20, rel=1e-12)
    assert a.ohm_per_m() / w.ohm_per_m() == pytest.approx(1 / 0.61, rel=1e-12)


@pytest.mark.parametrize(
    ("size", "grade", "max_od"),
    # IEC 60317-0-1 maximum overall diameter, grade 1 / 2 / 3 (mm)
    [("0.063 mm", 1, 0.076), ("0.063 mm", 2, 0.083), ("0.063 mm", 3, 0.090),
     ("0.071 mm", 1, 0.084), ("0.071 mm", 2, 0.091), ("0.071 mm", 3, 0.098),
     ("0.100 mm", 1, 0.117), ("0.100 mm", 2, 0.125), ("0.100 mm", 3, 0.132),
     ("0.315 mm", 1, 0.349), ("0.315 mm", 2, 0.367), ("0.315 mm", 3, 0.384)],
)
def test_iec_grade_max_od(size, grade, max_od):
    w = make_wire(size, f"grade {grade}")
    assert w.od_max_m * 1e3 == pytest.approx(max_od, abs=1e-9)
    assert w.bare_m < w.od_m <= w.od_max_m


@pytest.mark.parametrize(
    ("size", "grade", "min_inc", "max_od"),
    # IEC 60317-0-1 minimum increase and maximum OD (mm): nominal OD is their midpoint
    [("0.063 mm", 2, 0.012, 0.083), ("0.100 mm", 1, 0.008, 0.117), ("0.315 mm", 3, 0.053, 0.384)],
)
def test_nominal_od_between_min_and_max(size, grade, min_inc, max_od):
    w = make_wire(size, f"grade {grade}")
    d = w.bare_m * 1e3
    assert w.od_m * 1e3 == pytest.approx((d + min_inc + max_od) / 2, abs=1e-9)


def test_iec_tolerance():
    # IEC 60317-0-1 conductor tolerances: 0.100 +/-0.003, 0.315 +/-0.004, 0.500 +/-0.005 mm
    assert make_wire("0.100 mm").bare_tol_m == pytest.approx(0.003e-3)
    assert make_wire("0.315 mm").bare_tol_m == pytest.approx(0.004e-3)
    assert make_wire("0.500 mm").bare_tol_m == pytest.approx(0.005e-3)


def test_awg_resistance_band_matches_magnet_wire_sheet():
    # A copper magnet wire data sheet, 30 AWG: 101.7 / 103.7 / 105.8 ohm per 1000 ft
    # (min / nom / max) at 0.0100 in. The band's ratios to nominal follow from the
    # +/-0.0001 in (1 %) NEMA bare tolerance (tolerance from memory).
    w = make_wire("30 AWG")
    lo, hi = w.ohm_per_m_band()
    nom = w.ohm_per_m()
    assert w.bare_tol_m / w.bare_m == pytest.approx(0.01, rel=1e-9)
    assert hi / nom == pytest.approx(105.8 / 103.7, rel=1e-3)
    assert lo / nom == pytest.approx(101.7 / 103.7, rel=1e-3)


def test_od_ordering_and_measured_od_wins():
    s, h, t = (make_wire("42 AWG", b) for b in ("single", "heavy", "triple"))
    assert s.bare_m < s.od_m < h.od_m < t.od_m
    m = make_wire("42 AWG", "heavy", od_m=0.0712e-3)
    assert m.od_m == 0.0712e-3 and m.od_source == "measured"


def test_catalog_extent():
    assert awg_sizes()[0] == "10 AWG" and awg_sizes()[-1] == "56 AWG"
    assert "0.020 mm" in metric_sizes() and "2.000 mm" in metric_sizes()
    assert make_wire("56 AWG").edge_of_catalog and not make_wire("42 AWG").edge_of_catalog
    for name in awg_sizes() + metric_sizes():
        w = make_wire(name)
        assert w.od_max_m >= w.od_m > w.bare_m > 0 and math.isfinite(w.od_m)


def test_parse_wire():
    assert parse_wire("42 AWG heavy") == ("42 AWG", "heavy")
    assert parse_wire("0.063 mm grade 2") == ("0.063 mm", "grade 2")
    assert parse_wire("AWG 43") == ("AWG 43", None)
    assert make_wire("AWG 43").size_name == "43 AWG"


@pytest.mark.parametrize(
    ("size", "ins", "fragment"),
    [("60 AWG", None, "AWG sizes run"), ("42 AWG", "grade 2", "metric"),
     ("0.063 mm", "heavy", "AWG"), ("8 ohm", None, "not a length"), ("1,5 mm", None, "comma"),
     ("0.063 mm", "glossy", "unknown insulation")],
)
def test_bad_wires(size, ins, fragment):
    with pytest.raises(InputError) as info:
        make_wire(size, ins)
    assert fragment in str(info.value)
