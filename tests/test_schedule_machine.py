"""Machine profiles: shipped files load, bad keys and values give one-line errors."""

from __future__ import annotations

from pathlib import Path

import pytest

from winder.errors import InputError
from winder.schedule import DEFAULT_MACHINE, load_machine, machine_from_dict
from winder.schedule.machine import machine_from_mapping

MACHINES = Path(__file__).resolve().parent.parent / "profiles" / "machines"


def test_shipped_profiles_load_and_cover_every_kind():
    loaded = [load_machine(p) for p in sorted(MACHINES.glob("*.yaml"))]
    assert {m.kind for m in loaded} == {"counter", "spindle", "spindle+traverse"}
    for m in loaded:
        assert m.source and m.name


def test_generic_profile_is_the_default_machine():
    m = load_machine(MACHINES / "generic.yaml")
    assert (m.name, m.kind, m.counts_per_rev) == (DEFAULT_MACHINE.name, DEFAULT_MACHINE.kind,
                                                   DEFAULT_MACHINE.counts_per_rev)
    assert m.spindle == DEFAULT_MACHINE.spindle
    assert m.traverse == DEFAULT_MACHINE.traverse


def test_units_are_converted_to_si_and_rpm():
    m = machine_from_mapping({
        "kind": "spindle+traverse",
        "spindle": {"max_speed": "25 rev/s", "acceleration": "10 rev/s^2", "slow_speed": "2 rps"},
        "traverse": {"lead": "0.05 in", "travel": "4 cm", "max_speed": "1.2 m/min",
                     "acceleration": "0.1 m/s^2", "backlash": "20 um", "start_flange_at": "0 mm"},
    }, "t.yaml")
    assert m.spindle.max_rpm == pytest.approx(1500.0)
    assert m.spindle.accel_rpm_s == pytest.approx(600.0)
    assert m.spindle.slow_rpm == pytest.approx(120.0)
    assert m.traverse.lead_m == pytest.approx(1.27e-3)        # 0.05 in x 25.4 mm/in (exact)
    assert m.traverse.travel_m == pytest.approx(0.04)
    assert m.traverse.max_speed_m_s == pytest.approx(0.02)
    assert m.traverse.backlash_m == pytest.approx(20e-6)
    assert m.traverse.steps_per_m == pytest.approx(400 / 1.27e-3)


@pytest.mark.parametrize("data, key, words", [
    ({"knd": "counter"}, "knd", "did you mean 'kind'"),
    ({"spindle": {"max_sped": "100 rpm"}}, "spindle.max_sped", "did you mean 'max_speed'"),
    ({"traverse": {"leed": "1 mm"}}, "traverse.leed", "did you mean 'lead'"),
    ({"kind": "spindel"}, "kind", "did you mean 'spindle'"),
    ({"spindle": {"max_speed": 1500}}, "spindle.max_speed", "units"),
    ({"spindle": {"max_speed": "1500 Hz"}}, "spindle.max_speed", "rpm"),
    ({"spindle": {"max_speed": "1,5 rpm"}}, "spindle.max_speed", "decimal comma"),
    ({"traverse": {"lead": "2 s"}}, "traverse.lead", "is not a length"),
    ({"traverse": {"lead": "-2 mm"}}, "traverse.lead", "more than zero"),
    ({"traverse": {"max_speed": "25 mm"}}, "traverse.max_speed", "is not a speed"),
    ({"traverse": {"steps_per_rev": 200.5}}, "traverse.steps_per_rev", "whole number"),
    ({"counts_per_rev": 0}, "counts_per_rev", "out of range"),
    ({"spindle": {"max_speed": "100 rpm", "slow_speed": "200 rpm"}}, "spindle.slow_speed",
     "above"),
    ({"traverse": {"travel": "10 mm", "start_flange_at": "12 mm"}}, "traverse.start_flange_at",
     "beyond"),
    ({"spindle": "fast"}, "spindle", "mapping"),
])
def test_bad_values_name_file_and_key(data, key, words):
    with pytest.raises(InputError) as err:
        machine_from_mapping(data, "m.yaml")
    assert err.value.where == "m.yaml" and err.value.key == key
    text = str(err.value)
    assert "\n" not in text and text.startswith(f"m.yaml: {key}: ") and words in text


def test_load_machine_file_errors(tmp_path):
    with pytest.raises(InputError, match="no such machine profile"):
        load_machine(tmp_path / "missing.yaml")
    bad = tmp_path / "bad.yaml"
    bad.write_text("kind: [counter\n")
    with pytest.raises(InputError, match="not valid YAML"):
        load_machine(bad)
    tagged = tmp_path / "tagged.yaml"
    tagged.write_text("kind: !!python/object/apply:os.system ['true']\n")
    with pytest.raises(InputError):     # safe_load refuses python tags
        load_machine(tagged)
    listy = tmp_path / "list.yaml"
    listy.write_text("- counter\n")
    with pytest.raises(InputError, match="mapping"):
        load_machine(listy)


def test_round_trip_through_dict():
    m = load_machine(MACHINES / "fine-wire-traverse.yaml")
    assert machine_from_dict(m.to_dict()) == m
