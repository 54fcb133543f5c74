"""`winder schedule` on every shipped coil, with and without a machine, in every format."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
import yaml

from winder.cli import main
from winder.planner import make_plan
from winder.profile import load_coil

ROOT = Path(__file__).resolve().parent.parent
COILS = sorted((ROOT / "profiles" / "coils").glob("*.yaml"))
MACHINES = sorted((ROOT / "profiles" / "machines").glob("*.yaml"))
FORMATS = ("table", "yaml", "json", "csv", "gcode")


def check_output(fmt: str, text: str) -> None:
    if fmt == "json":
        data = json.loads(text)
    elif fmt == "yaml":
        data = yaml.safe_load(text)
    elif fmt == "csv":
        rows = list(csv.DictReader(io.StringIO(text)))
        assert rows and float(rows[-1]["turns_end"]) == sum(float(r["turns"]) for r in rows)
        return
    elif fmt == "gcode":
        assert text.startswith("(winder schedule: ") and text.endswith("M2\n")
        return
    else:
        assert "pass  direction" in text and "turns end" in text
        return
    assert data["total_turns"] == sum(p["turns"] for p in data["passes"])
    assert len(data["steps"]) == len(data["passes"]) == data["passes_count"]
    assert data["est_time_s"] > 0


def test_every_shipped_coil_is_covered():
    assert len(COILS) >= 3 and len(MACHINES) >= 4


@pytest.mark.parametrize("fmt", FORMATS)
@pytest.mark.parametrize("coil", COILS, ids=lambda p: p.stem)
def test_every_coil_every_format_with_and_without_machine(coil, fmt, tmp_path, capsys):
    assert main(["schedule", str(coil), "--format", fmt]) == 0
    check_output(fmt, capsys.readouterr().out)
    machine = MACHINES[(COILS.index(coil) + FORMATS.index(fmt)) % len(MACHINES)]
    out = tmp_path / f"s.{fmt}"
    assert main(["schedule", str(coil), "--machine", str(machine), "--format", fmt,
                 "-o", str(out)]) == 0
    check_output(fmt, out.read_text())


@pytest.mark.parametrize("coil", COILS, ids=lambda p: p.stem)
def test_json_matches_the_plan(coil, capsys):
    assert main(["schedule", str(coil), "--format", "json", "--machine", "generic"]) == 0
    sched = json.loads(capsys.readouterr().out)
    turns = make_plan(load_coil(coil)).turns
    assert sched["total_turns"] == turns == sum(p["turns"] for p in sched["passes"])
    lo, hi = sched["window_mm"]
    assert all(lo - 1e-9 <= p["start_mm"] <= hi + 1e-9 and lo - 1e-9 <= p["end_mm"] <= hi + 1e-9
               for p in sched["passes"])


def test_subprocess_scatter_seed_reproducible(run_cli, capsys):
    coil = ROOT / "profiles" / "coils" / "sense-6k2.yaml"
    a = run_cli("schedule", coil, "--format", "csv", "--seed", "42")
    assert a.returncode == 0, a.stderr
    assert main(["schedule", str(coil), "--format", "csv", "--seed", "42"]) == 0
    assert capsys.readouterr().out == a.stdout
    assert main(["schedule", str(coil), "--format", "csv", "--seed", "43"]) == 0
    assert capsys.readouterr().out != a.stdout


def test_subprocess_error_is_one_line_exit_2(run_cli, tmp_path):
    coil = ROOT / "profiles" / "coils" / "bench-solenoid.yaml"
    small = tmp_path / "small.yaml"
    small.write_text("kind: spindle+traverse\ntraverse: {travel: 12 mm, start_flange_at: 1 mm}\n")
    r = run_cli("schedule", coil, "--machine", small)
    assert r.returncode == 2 and r.stdout == ""
    line = r.stderr.strip()
    assert "\n" not in line and "small.yaml: traverse.travel:" in line and "Traceback" not in line


def test_errors_exit_2(tmp_path, capsys):
    coil = str(ROOT / "profiles" / "coils" / "bench-solenoid.yaml")
    typo = tmp_path / "typo.yaml"
    typo.write_text("kind: counter\nspindle: {max_sped: 100 rpm}\n")
    assert main(["schedule", coil, "--machine", str(typo)]) == 2
    assert "did you mean 'max_speed'" in capsys.readouterr().err
    assert main(["schedule", coil, "--machine", str(tmp_path / "none.yaml")]) == 2
    assert "no such machine profile" in capsys.readouterr().err
    assert main(["schedule", coil, "-o", str(tmp_path / "no" / "dir" / "x.txt")]) == 2
    assert "-o" in capsys.readouterr().err


def test_traverse_limit_warns_on_stderr(capsys):
    # 0.2526 mm pitch x 2000 rpm = 8.42 mm/s over the machine's 8 mm/s: 1900 rpm
    # (8 mm/s / 0.2526 mm x 60 = 1900.2 rpm).
    coil = str(ROOT / "profiles" / "coils" / "driver-8ohm.yaml")
    machine = str(ROOT / "profiles" / "machines" / "fine-wire-traverse.yaml")
    assert main(["schedule", coil, "--machine", machine, "--format", "json"]) == 0
    out = capsys.readouterr()
    data = json.loads(out.out)
    expect = 8.0 / data["passes"][0]["pitch_mm"] * 60    # the pitch is the planner's wire OD
    assert "traverse speed limit 8 mm/s" in out.err and f"{expect:.0f} rpm" in out.err
    assert all(p["rpm"] * p["pitch_mm"] / 60 <= 8 + 1e-9 for p in data["passes"])
