"""Hypothesis fuzzing of the quantity parser and the profile loader.

The property everywhere: whatever the input, the result is a value or a one-line
:class:`InputError`; never another exception, never a non-finite float.
"""

from __future__ import annotations

import math
from pathlib import Path

import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from winder.errors import InputError
from winder.planner import make_plan
from winder.profile import coil_from_mapping, load_bobbin, load_coil
from winder.units import parse, parse_temperature

FUZZ = settings(max_examples=150, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])

KINDS = ("length", "resistance", "voltage", "current", "inductance", "time", "mass",
         "frequency", "power")
UNIT_WORDS = ["mm", "m", "in", "mil", "mils", "thou", "ohm", "kohm", "Ohm", "\u03a9", "V",
              "A", "mA", "H", "uH", "s", "g", "Hz", "W", "degC", "C", "K", "F", "km", "um",
              "nm", "ft", "**", "^", "/", "*", "(", ")", "e", "nan", "inf", "-", ".", ",",
              "1e308", "1e-308", " ", "mm**1000", "ohm/m", "m/s", "kg", "percent", "%"]


def one_line(err: InputError) -> None:
    text = str(err)
    assert "\n" not in text and len(text) < 600, text
    assert "Traceback" not in text


quantity_text = st.one_of(
    st.text(max_size=40),
    st.lists(st.sampled_from(UNIT_WORDS), max_size=6).map(" ".join),
    st.builds(lambda x, u: f"{x!r} {u}",
              st.floats(allow_nan=True, allow_infinity=True), st.sampled_from(UNIT_WORDS)),
    st.builds(lambda x, u: f"{x}{u}", st.integers(-10**30, 10**30), st.sampled_from(UNIT_WORDS)),
)
any_value = st.one_of(quantity_text, st.none(), st.booleans(), st.integers(),
                      st.floats(), st.lists(st.integers(), max_size=3),
                      st.dictionaries(st.text(max_size=3), st.integers(), max_size=2))


@FUZZ
@given(text=any_value, kind=st.sampled_from(KINDS), positive=st.booleans())
def test_quantity_parser_gives_a_finite_value_or_an_input_error(text, kind, positive):
    try:
        v = parse(text, kind, where="fuzz", key="k", positive=positive, maximum=1e12)
    except InputError as err:
        one_line(err)
        assert err.where == "fuzz" and err.key == "k"
        return
    assert isinstance(v, float) and math.isfinite(v) and abs(v) <= 1e12
    if positive:
        assert v > 0


@FUZZ
@given(text=any_value)
def test_temperature_parser_gives_a_plausible_value_or_an_input_error(text):
    try:
        c = parse_temperature(text, where="fuzz", key="t")
    except InputError as err:
        one_line(err)
        return
    assert math.isfinite(c) and -273.15 <= c <= 1000


@FUZZ
@given(x=st.floats(min_value=1e-9, max_value=1e3, allow_nan=False),
       unit=st.sampled_from([("mm", 1e-3), ("m", 1.0), ("um", 1e-6), ("in", 0.0254),
                             ("mil", 0.0254e-3)]))
def test_well_formed_lengths_parse_to_their_si_value(x, unit):
    name, scale = unit
    # 1 in = 25.4 mm exactly, 1 mil = 0.001 in (NIST SP 811, appendix B)
    assert parse(f"{x!r} {name}", "length") == __import__("pytest").approx(x * scale, rel=1e-9)


# ---- profile loader ------------------------------------------------------------------------

VALID = {
    "name": "fuzz coil",
    "bobbin": {"name": "fuzz former", "core": {"shape": "round", "diameter": "10 mm"},
               "window": {"width": "12 mm", "height": "4 mm"},
               "clearance": {"ends": "0.2 mm", "top": "0.2 mm"}},
    "wire": {"size": "0.2 mm", "insulation": "grade 2"},
    "target": {"turns": 500},
    "style": {"kind": "layer"},
}
PATHS = [("name",), ("bobbin",), ("bobbin", "core"), ("bobbin", "core", "shape"),
         ("bobbin", "core", "diameter"), ("bobbin", "window"), ("bobbin", "window", "width"),
         ("bobbin", "window", "height"), ("bobbin", "clearance", "ends"),
         ("bobbin", "clearance", "top"), ("bobbin", "name"), ("wire",), ("wire", "size"),
         ("wire", "insulation"), ("wire", "od"), ("wire", "material"), ("target",),
         ("target", "turns"), ("target", "resistance"), ("target", "fill"), ("style",),
         ("style", "kind"), ("style", "packing"), ("style", "pitch_range"), ("style", "seed"),
         ("style", "taper"), ("bobbin", "reference_inductance"), ("notes",), ("bogus",),
         ("bobbin", "core", "width"), ("bobbin", "core", "corner_radius")]

json_like = st.recursive(
    st.one_of(st.none(), st.booleans(), st.integers(-10**20, 10**20), st.floats(),
              quantity_text, st.sampled_from(["round", "rect", "scatter", "layer",
                                              "orthocyclic", "heavy", "42 AWG", "copper"])),
    lambda children: st.one_of(st.lists(children, max_size=3),
                               st.dictionaries(st.text(max_size=6), children, max_size=3)),
    max_leaves=8)


def _deep_copy(d):
    return yaml.safe_load(yaml.safe_dump(d))


def _set(d: dict, path: tuple[str, ...], value) -> None:
    for k in path[:-1]:
        if not isinstance(d.get(k), dict):
            d[k] = {}
        d = d[k]
    d[path[-1]] = value


def _plan_or_input_error(data, tmp: Path) -> None:
    try:
        coil = coil_from_mapping(data, "fuzz.yaml", tmp / "fuzz.yaml")
        plan = make_plan(coil)
    except InputError as err:
        one_line(err)
        assert err.where == "fuzz.yaml"
        return
    assert plan.turns >= 0 and math.isfinite(plan.resistance_ohm)


@FUZZ
@given(edits=st.lists(st.tuples(st.sampled_from(PATHS), json_like), min_size=1, max_size=3))
def test_a_mutated_coil_plans_or_gives_an_input_error(tmp_path, edits):
    data = _deep_copy(VALID)
    for path, value in edits:
        _set(data, path, value)
    _plan_or_input_error(data, tmp_path)


@FUZZ
@given(data=json_like)
def test_arbitrary_yaml_data_as_a_coil(tmp_path, data):
    _plan_or_input_error(data, tmp_path)


@FUZZ
@given(raw=st.binary(max_size=300))
def test_arbitrary_bytes_as_profile_files(tmp_path, raw):
    for loader in (load_coil, load_bobbin):
        p = tmp_path / "x.yaml"
        p.write_bytes(raw)
        try:
            loader(p)
        except InputError as err:
            one_line(err)
            assert err.where == str(p)


@FUZZ
@given(text=st.text(alphabet=st.sampled_from(list("abc:-[]{}&*!|>'\" \n\t#%@`,?0123.")),
                    max_size=120))
def test_yaml_syntax_soup_as_a_coil_file(tmp_path, text):
    p = tmp_path / "soup.yaml"
    p.write_text(text)
    try:
        load_coil(p)
    except InputError as err:
        one_line(err)
