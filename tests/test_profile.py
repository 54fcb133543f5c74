"""Profile loading: validation, did-you-mean, relative and inline bobbins, safe YAML."""

from __future__ import annotations

from pathlib import Path

import pytest

from winder.errors import InputError
from winder.planner import make_plan
from winder.profile import MAX_PROFILE_BYTES, examples_dir, load_bobbin, load_coil

ROOT = Path(__file__).resolve().parent.parent
BOBBIN = "core: {shape: round, diameter: 8 mm}\nwindow: {width: 6 mm, height: 3 mm}\n"


def write(tmp_path: Path, name: str, text: str) -> Path:
    p = tmp_path / name
    p.parent.mkdir(parents=True, exist_ok=True)
    p.write_text(text)
    return p


def coil_text(bobbin: str = "bobbin.yaml", wire: str = "{size: 42 AWG, insulation: heavy}",
              target: str = "{turns: 1000}", extra: str = "") -> str:
    return f"name: c\nbobbin: {bobbin}\nwire: {wire}\ntarget: {target}\n{extra}"


def test_every_shipped_coil_plans():
    coils = sorted((examples_dir() / "coils").glob("*.yaml"))
    assert len(coils) >= 5
    names = {c.name for c in coils}
    assert {"driver-8ohm.yaml", "driver-4ohm.yaml", "driver-16ohm.yaml"} <= names
    for path in coils:
        plan = make_plan(load_coil(path))
        assert plan.turns > 0 and plan.fill <= 1.0 + 1e-9


def test_shipped_examples_cover_the_common_drive_resistances():
    # 4, 8 and 16 ohm: common amplifier loads (common practice, no source)
    got = {round(load_coil(examples_dir() / "coils" / f"driver-{r}ohm.yaml").target.value)
           for r in (4, 8, 16)}
    assert got == {4, 8, 16}
    sense = load_coil(examples_dir() / "coils" / "sense-6k2.yaml")
    assert sense.style.kind == "scatter" and sense.wire.size_name == "42 AWG"
    assert sense.target.value == pytest.approx(6200.0)


def test_examples_dir_in_a_checkout():
    assert examples_dir() == ROOT / "profiles"


def test_relative_and_named_bobbins(tmp_path):
    write(tmp_path, "bobbins/b.yaml", BOBBIN)
    c = load_coil(write(tmp_path, "coils/c.yaml", coil_text("../bobbins/b.yaml")))
    assert c.bobbin.name == "b" and c.bobbin.core.diameter_m == pytest.approx(8e-3)
    named = load_coil(write(tmp_path, "x/c.yaml", coil_text("blade-driver")))
    assert named.bobbin.name == "narrow blade driver bobbin"


def test_inline_bobbin(tmp_path):
    text = coil_text("{core: {shape: rect, width: 3 mm, length: 50 mm, corner_radius: 1.5 mm},"
                     " window: {width: 6 mm, height: 3 mm}, clearance: {top: 0.2 mm}}")
    c = load_coil(write(tmp_path, "c.yaml", text))
    assert c.bobbin.usable_height_m == pytest.approx(2.8e-3)


def test_style_and_measured_od(tmp_path):
    write(tmp_path, "bobbin.yaml", BOBBIN)
    c = load_coil(write(tmp_path, "c.yaml", coil_text(
        wire="{size: 0.063 mm, insulation: grade 2, od: 0.078 mm}",
        target="{resistance: 6.2 kohm}", extra="style: {kind: scatter, packing: 0.8, seed: 7}\n")))
    assert c.wire.od_m == pytest.approx(0.078e-3) and c.style.packing == 0.8
    assert c.style.seed == 7 and c.target.kind == "resistance"


def test_reference_inductance(tmp_path):
    b = load_bobbin(write(tmp_path, "b.yaml", BOBBIN +
                          "reference_inductance: {inductance: 1.2 H, turns: 5000}\n"))
    assert b.reference_inductance == (pytest.approx(1.2), 5000)


def test_drive_section_and_thermal_class(tmp_path):
    write(tmp_path, "bobbin.yaml", BOBBIN)
    coil = load_coil(write(tmp_path, "c.yaml", coil_text(
        wire="{size: 42 AWG, insulation: heavy, thermal_class: 155}",
        extra="drive: {voltage: 2 V, distance: 3 mm, ambient: 30 degC}\n")))
    d = coil.drive
    assert (d.voltage_v, d.current_a, d.ambient_c) == (2.0, None, 30.0)
    assert d.distance_m == pytest.approx(3e-3)
    assert coil.wire.thermal_class_c == 155.0
    amps = load_coil(write(tmp_path, "a.yaml", coil_text(
        wire="{size: 42 AWG, thermal_class: 180 degC}", extra="drive: {current: 25 mA}\n")))
    assert amps.drive.current_a == pytest.approx(0.025) and amps.drive.distance_m is None
    assert amps.drive.ambient_c == 25.0  # default ambient
    assert amps.wire.thermal_class_c == 180.0
    plain = load_coil(write(tmp_path, "p.yaml", coil_text()))
    assert plain.drive is None and plain.wire.thermal_class_c is None
    # not stated: the documented default class is assumed where a figure needs one
    assert plain.wire.thermal_class_or_default_c == 130.0


@pytest.mark.parametrize(
    ("text", "key", "fragment"),
    [
        (coil_text(extra="stlye: {kind: layer}\n"), "stlye", "did you mean 'style'"),
        (coil_text(wire="{size: 42 AWG, insulaton: heavy}"), "wire.insulaton",
         "did you mean 'insulation'"),
        (coil_text(target="{resistance: 8}"), "target.resistance", "bare number"),
        (coil_text(target="{resistance: 8 mm}"), "target.resistance", "is not a resistance"),
        (coil_text(target="{turns: 100, fill: true}"), "target", "exactly one"),
        (coil_text(target="{turns: 1.5}"), "target.turns", "whole number"),
        (coil_text(wire="{size: 42 AWG, od: '1,5 mm'}"), "wire.od", "decimal comma"),
        (coil_text(wire="{size: 99 AWG}"), "wire.size", "AWG sizes run"),
        (coil_text(extra="style: {kind: wild}\n"), "style.kind", "unknown winding style"),
        (coil_text("missing.yaml"), "bobbin", "not found"),
        ("name: c\nwire: {size: 42 AWG}\ntarget: {fill: true}\n", "bobbin", "missing"),
        (coil_text(extra="drive: {voltge: 2 V}\n"), "drive.voltge", "did you mean 'voltage'"),
        (coil_text(extra="drive: {voltage: 2 V, current: 0.5 A}\n"), "drive", "exactly one"),
        (coil_text(extra="drive: {distance: 3 mm}\n"), "drive", "exactly one"),
        (coil_text(extra="drive: {voltage: 2 A}\n"), "drive.voltage", "is not a voltage"),
        (coil_text(extra="drive: {current: -1 A}\n"), "drive.current", "more than zero"),
        (coil_text(extra="drive: {voltage: 2 V, distance: 3}\n"), "drive.distance",
         "bare number"),
        (coil_text(extra="drive: {voltage: 2 V, ambient: 900 degC}\n"), "drive.ambient",
         "not plausible"),
        (coil_text(extra="drive: 2 V\n"), "drive", "expected a mapping"),
        (coil_text(wire="{size: 42 AWG, thermal_class: 150}"), "wire.thermal_class",
         "not a thermal class"),
        (coil_text(wire="{size: 42 AWG, thermal_class: 20 degC}"), "wire.thermal_class",
         "not a plausible thermal class"),
        (coil_text(wire="{size: 42 AWG, thermal_clas: 155}"), "wire.thermal_clas",
         "did you mean 'thermal_class'"),
    ],
)
def test_coil_errors_name_file_and_key(tmp_path, text, key, fragment):
    write(tmp_path, "bobbin.yaml", BOBBIN)
    path = write(tmp_path, "c.yaml", text)
    with pytest.raises(InputError) as info:
        load_coil(path)
    msg = str(info.value)
    assert info.value.key == key, msg
    assert msg.startswith(str(path)) and fragment in msg and "\n" not in msg


@pytest.mark.parametrize(
    ("text", "key"),
    [
        ("core: {shape: rect, width: 4 mm, length: 50 mm, corner_radius: 3 mm}\n"
         "window: {width: 6 mm, height: 3 mm}\n", "core.corner_radius"),
        ("core: {shape: oval, diameter: 8 mm}\nwindow: {width: 6 mm, height: 3 mm}\n",
         "core.shape"),
        ("core: {shape: round, diametre: 8 mm}\nwindow: {width: 6 mm, height: 3 mm}\n",
         "core.diametre"),
        (BOBBIN + "clearance: {ends: 3 mm}\n", "clearance.ends"),
        ("core: {shape: round, diameter: 8 mm}\nwindow: {width: 6 mm}\n", "window.height"),
    ],
)
def test_bobbin_errors(tmp_path, text, key):
    with pytest.raises(InputError) as info:
        load_bobbin(write(tmp_path, "b.yaml", text))
    assert info.value.key == key and info.value.where.endswith("b.yaml")


def test_inline_bobbin_errors_are_prefixed(tmp_path):
    text = coil_text("{core: {shape: round, diameter: 0 mm}, window: {width: 6 mm, height: 3 mm}}")
    with pytest.raises(InputError) as info:
        load_coil(write(tmp_path, "c.yaml", text))
    assert info.value.key == "bobbin.core.diameter"


def test_unsafe_yaml_and_size_limit(tmp_path):
    evil = write(tmp_path, "e.yaml", "!!python/object/apply:os.system ['true']\n")
    with pytest.raises(InputError) as info:
        load_coil(evil)
    assert "YAML error" in str(info.value)
    big = write(tmp_path, "big.yaml", "# " + "x" * MAX_PROFILE_BYTES + "\n")
    with pytest.raises(InputError) as info:
        load_coil(big)
    assert "too large" in str(info.value)
    with pytest.raises(InputError):
        load_coil(write(tmp_path, "list.yaml", "- 1\n- 2\n"))
    with pytest.raises(InputError):
        load_coil(tmp_path / "nope.yaml")
    with pytest.raises(InputError):
        load_coil(write(tmp_path, "bad.yaml", "name: [\n"))


def test_examples_dir_in_a_regular_install(tmp_path):
    # a regular install ships profiles/ as the package winder.examples
    import os
    import shutil
    import subprocess
    import sys

    shutil.copytree(ROOT / "winder", tmp_path / "winder",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copytree(ROOT / "profiles", tmp_path / "winder" / "examples")
    code = "from winder.profile import examples_dir; print(examples_dir())"
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       cwd=tmp_path, env={**os.environ, "PYTHONPATH": str(tmp_path)}, timeout=60)
    assert r.returncode == 0, r.stderr
    assert Path(r.stdout.strip()) == tmp_path / "winder" / "examples"


def test_wire_shorthand(tmp_path):
    write(tmp_path, "bobbin.yaml", BOBBIN)
    c = load_coil(write(tmp_path, "c.yaml", coil_text(wire="0.063 mm grade 1")))
    assert c.wire.name == "0.063 mm grade 1"
