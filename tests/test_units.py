"""Quantity parsing at the edges (winder.units)."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from winder.errors import InputError
from winder.units import format_si, parse, parse_temperature


@pytest.mark.parametrize(
    ("text", "kind", "expected"),
    [
        ("0.063 mm", "length", 63e-6),
        # the trade's mil is a thousandth of an inch: 2.5 x 25.4 um (the inch is exactly 25.4 mm)
        ("2.5 mil", "length", 2.5 * 25.4e-6),
        ("2.5 mils", "length", 2.5 * 25.4e-6),
        ("0.0025 in", "length", 63.5e-6),
        ("8 ohm", "resistance", 8.0),
        ("8 ohms", "resistance", 8.0),
        ("8 Ohm", "resistance", 8.0),
        ("8 Ω", "resistance", 8.0),
        ("6.2 kohm", "resistance", 6200.0),
        ("6.2 kΩ", "resistance", 6200.0),
        ("2 V", "voltage", 2.0),
        ("250 mA", "current", 0.25),
    ],
)
def test_parses_trade_spellings(text, kind, expected):
    assert parse(text, kind) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "expected"),
    [("25 degC", 25.0), ("25 °C", 25.0), ("25 C", 25.0), ("298.15 K", 25.0), ("77 degF", 25.0),
     ("-10 degC", -10.0)],
)
def test_temperatures(text, expected):
    assert parse_temperature(text) == pytest.approx(expected, abs=1e-9)


@pytest.mark.parametrize(
    ("value", "kind", "fragment"),
    [
        ("8 mm", "resistance", "is not a resistance"),
        (8, "resistance", "bare number"),
        ("8", "resistance", "no unit"),
        ("nan mm", "length", "finite"),
        ("inf mm", "length", "finite"),
        ("-1 mm", "length", "more than zero"),
        ("0 mm", "length", "more than zero"),
        ("1,5 mm", "length", "decimal comma"),
        ("furlong", "length", "not a number"),
        ("3 blorbs", "length", "unknown unit"),
        (None, "length", "with units"),
        (True, "length", "with units"),
        (["1 mm"], "length", "as text"),
        ("x" * 500, "length", "characters"),
    ],
)
def test_refuses_with_one_line_naming_file_and_key(value, kind, fragment):
    with pytest.raises(InputError) as info:
        parse(value, kind, where="coil.yaml", key="wire.od")
    text = str(info.value)
    assert text.startswith("coil.yaml: wire.od: ")
    assert fragment in text
    assert "\n" not in text


def test_zero_allowed_when_asked():
    assert parse("0 mm", "length", allow_zero=True) == 0.0


def test_maximum():
    with pytest.raises(InputError):
        parse("5 km", "length", maximum=10.0)


def test_temperature_below_absolute_zero_refused():
    with pytest.raises(InputError):
        parse_temperature("-300 degC")


@given(st.text(max_size=60))
def test_parser_never_raises_anything_but_input_error(text):
    try:
        value = parse(text, "length")
    except InputError as err:
        assert "\n" not in str(err)
    else:
        assert math.isfinite(value) and value > 0


def test_format_si():
    assert format_si(6200.0, "ohm") == "6.2 kohm"
    assert format_si(63e-6, "m") == "63 um"


@pytest.mark.parametrize(
    ("text", "kind", "expected"),
    [
        # SI prefixes (BIPM SI Brochure, 9th ed., Table 7)
        ("1 km", "length", 1e3), ("1 cm", "length", 1e-2), ("1 um", "length", 1e-6),
        ("1 µm", "length", 1e-6), ("1 nm", "length", 1e-9), ("1 micron", "length", 1e-6),
        # the international inch is exactly 25.4 mm (1959 agreement); foot = 12 in
        ("1 in", "length", 0.0254), ("1 ft", "length", 0.3048), ("1 thou", "length", 25.4e-6),
        ("1 Mohm", "resistance", 1e6), ("1 mohm", "resistance", 1e-3),
        ("1 mV", "voltage", 1e-3), ("1 kV", "voltage", 1e3),
        ("1 uA", "current", 1e-6), ("1 mA", "current", 1e-3),
        ("1 mH", "inductance", 1e-3), ("400 uH", "inductance", 400e-6),
        ("1 g", "mass", 1e-3), ("1 kg", "mass", 1.0), ("1 min", "time", 60.0),
        ("1 h", "time", 3600.0), ("1 kHz", "frequency", 1e3), ("1 mW", "power", 1e-3),
    ],
)
def test_unit_table(text, kind, expected):
    assert parse(text, kind) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "kind", "expected"),
    [
        # 1 rev/s = 60 rpm by definition of the minute
        ("1500 rpm", "spindle speed", 1500.0), ("25 rev/s", "spindle speed", 1500.0),
        ("25 rps", "spindle speed", 1500.0), ("600 rpm/s", "spindle acceleration", 600.0),
        ("1 rev/s^2", "spindle acceleration", 60.0), ("1 rev/s2", "spindle acceleration", 60.0),
        ("25 mm/s", "speed", 0.025), ("250 mm/s^2", "acceleration", 0.25),
        ("250 mm/s**2", "acceleration", 0.25),
    ],
)
def test_rates(text, kind, expected):
    assert parse(text, kind) == pytest.approx(expected, rel=1e-12)


def test_a_frequency_is_not_a_spindle_speed():
    with pytest.raises(InputError, match="not a spindle speed"):
        parse("1500 Hz", "spindle speed")
