"""The planning commands through the real CLI (subprocess)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PROFILES = ROOT / "profiles"

DRIVER = str(PROFILES / "coils" / "driver-8ohm.yaml")
BLADE = str(PROFILES / "bobbins" / "blade-driver.yaml")


def test_plan_human(run_cli):
    r = run_cli("plan", DRIVER)
    assert r.returncode == 0, r.stderr
    assert "turns" in r.stdout and "ohm" in r.stdout and "mm" in r.stdout


def test_plan_json_keys(run_cli):
    r = run_cli("plan", DRIVER, "--json", "--temp", "25degC")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    for key in ("turns", "layers", "turns_per_layer", "build_height_mm", "fill", "wire_length_m",
                "resistance_ohm", "mass_g", "warnings"):
        assert key in d
    assert d["temp_c"] == 25.0 and d["resistance_at_temp_ohm"] > d["resistance_ohm"]
    assert d["resistance_ohm"] == pytest.approx(8.0, rel=0.01)


def test_plan_adhoc(run_cli):
    r = run_cli("plan", "--bobbin", BLADE, "--wire", "0.2 mm grade 2", "--resistance", "16 ohm",
                "--style", "orthocyclic", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["wire"]["size"] == "0.200 mm" and d["style"]["kind"] == "orthocyclic"
    r = run_cli("plan", "--bobbin", BLADE, "--wire", "36 AWG", "--fill", "--style", "scatter",
                "--packing", "0.75", "--json")
    d = json.loads(r.stdout)
    assert d["turns_per_layer"] is None and d["style"]["packing"] == 0.75


def test_wires_json(run_cli):
    r = run_cli("wires", "--json")
    assert r.returncode == 0, r.stderr
    rows = {w["name"]: w for w in json.loads(r.stdout)}
    w42 = rows["42 AWG"]
    # 42 AWG, formula diameter 0.06334 mm (ASTM B258 formula)
    assert w42["bare_mm"] == pytest.approx(0.06334, abs=1e-5)
    # 1667.8 ohm / 1000 ft computed from IACS (IEC 60028) at the formula diameter
    assert w42["ohm_per_m"] * 304.8 == pytest.approx(1667.8, rel=1e-4)
    assert set(w42["od_mm"]) == {"single", "heavy", "triple"}
    assert set(rows["0.063 mm"]["od_mm"]) == {"grade 1", "grade 2", "grade 3"}
    assert run_cli("wires").returncode == 0


def test_gauges(run_cli):
    r = run_cli("gauges", "--bobbin", BLADE, "--resistance", "8 ohm", "--drive", "2 V", "--json")
    assert r.returncode == 0, r.stderr
    opts = json.loads(r.stdout)
    assert isinstance(opts, list) and opts[0]["drive_v"] == 2.0
    for o in opts:
        assert {"wire", "turns", "fill", "full_resistance_ohm", "ampere_turns",
                "recommended"} <= set(o)
    rec = [o for o in opts if o["recommended"]]
    assert [o["wire"] for o in rec] == ["31 AWG heavy"]
    human = run_cli("gauges", "--bobbin", BLADE, "--resistance", "8 ohm")
    assert "recommended: 31 AWG heavy" in human.stdout


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (("plan", "nope.yaml"), "no such coil file"),
        (("plan", DRIVER, "--temp", "hot"), "--temp"),
        (("plan", "--bobbin", BLADE, "--wire", "42 AWG", "--resistance", "8 mm"),
         "is not a resistance"),
        (("plan", "--bobbin", BLADE, "--wire", "42 AWG", "--turns", "many"), "--turns"),
        (("plan", "--bobbin", BLADE, "--wire", "kapton", "--fill"), "--wire"),
        (("plan", "--bobbin", BLADE, "--wire", "24 AWG", "--turns", "5000"), "over-full"),
        (("plan", "--bobbin", BLADE, "--wire", "36 AWG", "--fill", "--style", "scatter",
          "--packing", "2"), "--packing"),
        (("plan",), "give a coil profile"),
        (("gauges", "--bobbin", BLADE, "--resistance", "8"), "--resistance"),
        (("gauges", "--bobbin", BLADE, "--resistance", "8 ohm", "--drive", "1,5 V"),
         "decimal comma"),
    ],
)
def test_bad_input_exits_2_with_one_line(run_cli, args, fragment):
    r = run_cli(*args)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1 and fragment in r.stderr


def test_over_full_forced(run_cli):
    r = run_cli("plan", "--bobbin", BLADE, "--wire", "24 AWG", "--turns", "5000", "--force",
                "--json")
    assert r.returncode == 0 and json.loads(r.stdout)["warnings"][0].startswith("over-full")


def test_planning_imports_neither_textual_nor_serial(tmp_path):
    code = ("import sys\nfrom winder.cli import main\n"
            f"rc = main(['plan', {DRIVER!r}, '--json'])\n"
            "main(['gauges', '--bobbin', " + repr(BLADE) + ", '--resistance', '8 ohm'])\n"
            "main(['wires'])\n"
            "bad = sorted(m for m in sys.modules if m.split('.')[0] in ('textual', 'serial'))\n"
            "print('BAD', bad, file=sys.stderr)\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       env={**os.environ, "PYTHONPATH": str(ROOT),
                                                     "WINDER_DATA_DIR": str(tmp_path)},
                       cwd=ROOT, timeout=60)
    assert r.returncode == 0, r.stderr
    assert "BAD []" in r.stderr
