"""A coil changed in the plan view is frozen into the session as changed: the profile
mapping written for it loads back (through the real profile loader) to the same plan."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
import yaml

from tests.conftest import PROFILES
from winder.planner import Drive, Target, make_plan
from winder.profile import coil_from_mapping, load_coil
from winder.tui.wind import coil_mapping, coil_yaml
from winder.wire import make_wire

# invented drives and thermal classes (demo values): as shipped, a voltage drive with a field
# point and a warm room, a current drive with neither, and a class given as a temperature
EXTRAS = {
    "as shipped": (None, None),
    "2 V at 3 mm, 155 C": (Drive(voltage_v=2.0, distance_m=0.003, ambient_c=25.0), 155.0),
    "0.35 A, 150 C": (Drive(current_a=0.35), 150.0),
}


@pytest.mark.parametrize("extra", sorted(EXTRAS))
@pytest.mark.parametrize("name", sorted(p.stem for p in (PROFILES / "coils").glob("*.yaml")))
def test_every_shipped_coil_round_trips(name, extra, tmp_path):
    coil = load_coil(PROFILES / "coils" / f"{name}.yaml")
    drive, thermal = EXTRAS[extra]
    if drive is not None:
        coil = dataclasses.replace(coil, drive=drive)
    if thermal is not None:
        coil = dataclasses.replace(coil, wire=dataclasses.replace(coil.wire,
                                                                  thermal_class_c=thermal))
    text = coil_yaml(coil, "test")
    back = coil_from_mapping(yaml.safe_load(text), "frozen", tmp_path / "coil.yaml")
    assert dataclasses.replace(back, source=None) == dataclasses.replace(coil, source=None)
    a, b = make_plan(coil, force=True), make_plan(back, force=True)
    assert (a.turns, a.resistance_ohm) == (b.turns, b.resistance_ohm)
    assert b.coil.drive == coil.drive
    assert b.coil.wire.thermal_class_c == coil.wire.thermal_class_c


def test_a_changed_coil_round_trips(tmp_path):
    coil = load_coil(PROFILES / "coils" / "sense-6k2.yaml")
    changed = dataclasses.replace(coil, wire=make_wire("43 AWG", "heavy"),
                                  target=Target("turns", 9000.0),
                                  style=dataclasses.replace(coil.style, kind="layer"))
    data = coil_mapping(changed)
    assert data["wire"] == {"size": "43 AWG", "insulation": "heavy"}
    assert data["target"] == {"turns": 9000}
    back = coil_from_mapping(data, "frozen", Path(tmp_path / "c.yaml"))
    assert make_plan(back, force=True).turns == 9000
    assert back.wire == changed.wire and back.bobbin == changed.bobbin
