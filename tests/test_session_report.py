"""Reports and history, through the API and the CLI (`winder report`, `winder history`)."""

from __future__ import annotations

import csv
import io
import json

import pytest

from winder.session import store
from winder.session.session import Session

CURVE = [[0, 0.0], [1000, 1000.0], [2000, 2200.0]]   # invented demo curve, ohm at 20 C


def make(root, name, *, final_ohm=None, state="finished", planned=2000, t0=1.764e9):
    sess = Session.create(
        coil_name=name, coil_yaml=f"name: {name}\n", plan={"turns": planned,
                                                           "resistance_ohm": 2200.0},
        schedule=None, root=root,
        started={"planned_turns": planned, "target": {"kind": "turns", "value": planned},
                 "curve": CURVE, "device": {"boot_id": "b1"}, "t": t0})
    sess.record("checkpoint", turns=500.0, rpm=600.0, elapsed_s=50.0, t=t0 + 50)
    sess.record("reading", turns=1000.0, ohm=1052.0, temp_c=25.0, note="", source="user",
                t=t0 + 100)
    sess.record("link_lost", turns=1200.0, reason="cable", t=t0 + 120)
    sess.record("link_back", turns=1210.0, rebooted=False, device_turns=1210.0, t=t0 + 125)
    if state == "finished":
        sess.record("reading", turns=float(planned), ohm=final_ohm, temp_c=20.0, note="final",
                    source="user", t=t0 + 200)
        sess.record("finished", turns=float(planned), reason="planned turns", t=t0 + 201)
    sess.write_summary()
    sess.close()
    return sess.path


def test_report_keys_values_and_formats(tmp_path, run_cli):
    root = tmp_path / "data" / "sessions"
    path = make(root, "bridge coil", final_ohm=2244.0)
    r = run_cli("report", path.name, "--json")
    assert r.returncode == 0, r.stderr
    rep = json.loads(r.stdout)
    for key in ("session", "planned_turns", "turns_wound", "state", "readings",
                "predicted_final_ohm", "interruptions"):
        assert key in rep
    assert rep["state"] == "finished" and rep["turns_wound"] == 2000
    assert rep["readings"][0]["turns"] == 1000 and rep["readings"][0]["temp_c"] == 25.0
    # 1052 ohm at 25 C is 1052 / (1 + 0.00393 * 5) = 1031.72 ohm at 20 C (IEC 60287-1-1 alpha)
    assert rep["readings"][0]["ohm_20c"] == pytest.approx(1031.72, abs=0.01)
    assert rep["final_measured_ohm_20c"] == 2244.0
    assert rep["final_error_percent"] == pytest.approx(2.0)
    assert [i["kind"] for i in rep["interruptions"]] == ["link_lost"]
    assert rep["interruptions"][0]["duration_s"] == pytest.approx(5.0)
    assert rep["duration_s"] == pytest.approx(201.0)

    r = run_cli("report", str(path), "--csv")
    rows = list(csv.DictReader(io.StringIO(r.stdout)))
    assert [float(x["turns"]) for x in rows] == [1000.0, 2000.0]
    assert rows[1]["note"] == "final"

    r = run_cli("report", str(path))
    assert r.returncode == 0 and "link_lost at 1200 turns" in r.stdout
    assert "+2.00 %" in r.stdout


def test_summary_is_current_and_matches_report(tmp_path, run_cli):
    root = tmp_path / "data" / "sessions"
    path = make(root, "neck", final_ohm=2200.0)
    summ = json.loads((path / store.SUMMARY_FILE).read_text())
    rep = json.loads(run_cli("report", str(path), "--json").stdout)
    assert summ["journal_bytes"] == (path / store.JOURNAL_FILE).stat().st_size
    assert summ["turns_wound"] == rep["turns_wound"] and summ["readings"] == rep["readings"]


def test_unfinished_session_without_host_is_interrupted(tmp_path, run_cli):
    root = tmp_path / "data" / "sessions"
    path = make(root, "half done", state="running")
    rep = json.loads(run_cli("report", str(path), "--json").stdout)
    assert rep["state"] == "interrupted" and rep["turns_wound"] == 1210


def test_history_filters_and_pairs(tmp_path, run_cli):
    root = tmp_path / "data" / "sessions"
    make(root, "pickup A", final_ohm=7900.0, t0=1.764e9)
    make(root, "pickup A", final_ohm=7950.0, t0=1.764e9 + 10)   # 0.63 % from the first
    make(root, "pickup B", final_ohm=8300.0, t0=1.764e9 + 20)
    make(root, "pickup B", state="running", t0=1.764e9 + 30)
    r = run_cli("history", "--json")
    assert r.returncode == 0, r.stderr
    out = json.loads(r.stdout)
    assert len(out["sessions"]) == 4
    assert [s["state"] for s in out["sessions"]] == ["finished"] * 3 + ["interrupted"]

    out = json.loads(run_cli("history", "--json", "--coil", "b").stdout)
    assert {s["coil"] for s in out["sessions"]} == {"pickup B"}
    out = json.loads(run_cli("history", "--json", "--state", "interrupted").stdout)
    assert len(out["sessions"]) == 1

    out = json.loads(run_cli("history", "--json", "--pairs", "--tolerance", "1%").stdout)
    assert len(out["pairs"]) == 1
    p = out["pairs"][0]
    assert p["difference_percent"] == pytest.approx(50 / 7925 * 100)
    out = json.loads(run_cli("history", "--json", "--pairs", "--tolerance", "5").stdout)
    assert len(out["pairs"]) == 1          # distinct sets: the third coil has no partner
    out = json.loads(run_cli("history", "--json", "--pairs", "--tolerance", "5",
                             "--all-pairs").stdout)
    assert len(out["pairs"]) == 3
    out = json.loads(run_cli("history", "--json", "--pairs", "--tolerance", "5",
                             "--all-pairs", "--same-coil").stdout)
    assert len(out["pairs"]) == 1

    text = run_cli("history", "--pairs").stdout
    assert "matched pairs within 1 %" in text


def test_history_since_until_and_bad_input(tmp_path, run_cli):
    root = tmp_path / "data" / "sessions"
    make(root, "old", final_ohm=10.0, t0=1.70e9)     # 2023-11-14
    make(root, "new", final_ohm=10.0, t0=1.764e9)    # 2025-11-24
    out = json.loads(run_cli("history", "--json", "--since", "2025-01-01").stdout)
    assert [s["coil"] for s in out["sessions"]] == ["new"]
    out = json.loads(run_cli("history", "--json", "--until", "2024-01-01").stdout)
    assert [s["coil"] for s in out["sessions"]] == ["old"]
    r = run_cli("history", "--since", "yesterday")
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and "--since" in r.stderr
    r = run_cli("history", "--pairs", "--tolerance", "lots")
    assert r.returncode == 2 and "--tolerance" in r.stderr


def test_report_of_unknown_or_newer_session_is_one_line(tmp_path, run_cli):
    r = run_cli("report", "nothing-here")
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and "Traceback" not in r.stderr
    d = tmp_path / "future"
    d.mkdir()
    (d / store.JOURNAL_FILE).write_text(json.dumps(
        {"seq": 0, "t": 1.0, "kind": "started", "format": 7}) + "\n")
    r = run_cli("report", str(d))
    assert r.returncode == 2 and "newer" in r.stderr and r.stderr.count("\n") == 1
    r = run_cli("history")          # an unreadable session elsewhere does not break history
    assert r.returncode == 0


def test_report_tolerates_torn_last_line(tmp_path, run_cli):
    root = tmp_path / "data" / "sessions"
    path = make(root, "torn", state="running")
    with open(path / store.JOURNAL_FILE, "ab") as fh:
        fh.write(b'{"seq":99,"t":1.0,"kind":"checkpo')
    before = (path / store.JOURNAL_FILE).read_bytes()
    rep = json.loads(run_cli("report", str(path), "--json").stdout)
    assert "torn fragment" in rep["torn_line"] and rep["turns_wound"] == 1210
    assert (path / store.JOURNAL_FILE).read_bytes() == before
