"""End to end: `winder wind` / `winder resume` as subprocesses against the simulated winder
on a real pseudo-terminal (`winder sim --pty`, started by winder.link.simproc).

The coil is an invented test solenoid: a thin build (4 layers of 44 AWG) on a wide 30 mm
former, so its resistance grows almost in proportion to the turns, like the simulator's
resistance model (ohm per turn x a hidden factor); the simulator's ohm per turn is set to
the plan's mean at the planned turns.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from winder.link.simproc import start_sim
from winder.session.journal import replay
from winder.session.state import rebuild

ROOT = Path(__file__).resolve().parent.parent

COIL = """\
name: test solenoid
bobbin:
  name: wide round former
  core: {shape: round, diameter: 30 mm}
  window: {width: 12 mm, height: 2 mm}
  clearance: {ends: 0.2 mm, top: 0.2 mm}
wire: {size: 44 AWG, insulation: heavy}
target: {resistance: 500 ohm}
style: {kind: layer}
"""


@pytest.fixture
def coil(tmp_path):
    p = tmp_path / "solenoid.yaml"
    p.write_text(COIL)
    from winder.planner import make_plan
    from winder.profile import load_coil

    plan = make_plan(load_coil(p))
    return p, plan


def env(tmp_path):
    e = dict(os.environ)
    e["PYTHONPATH"] = str(ROOT) + os.pathsep + e.get("PYTHONPATH", "")
    e["WINDER_DATA_DIR"] = str(tmp_path / "data")
    return e


def sim_for(plan, *, speedup, factor=1.0, mode="controller", extra=()):
    opt = plan.resistance_ohm / plan.turns
    return start_sim(mode=mode, speedup=speedup, extra=[
        "--ohm-per-turn", f"{opt:.9g}", "--resistance-factor", str(factor), "--seed", "7",
        *extra])


def winder(tmp_path, *args, stdin=subprocess.PIPE):
    return subprocess.Popen([sys.executable, "-m", "winder", *map(str, args)], env=env(tmp_path),
                            cwd=ROOT, stdin=stdin, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)


def finish(proc, timeout=60):
    out, err = proc.communicate(timeout=timeout)
    return proc.returncode, out, err


def journal_turns(sdir: Path) -> float:
    try:
        return rebuild(replay(sdir / "journal.jsonl").events).turns
    except Exception:
        return 0.0


def wait_turns(sdir, at_least, timeout=30.0):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if journal_turns(sdir) >= at_least:
            return
        time.sleep(0.05)
    raise AssertionError(f"the journal never reached {at_least} turns")


def wait_stopped(sim, timeout=5.0):
    t = sim.wait_truth(lambda t: not t["motor_running"], timeout)
    if t is None:
        raise AssertionError("the simulated motor did not stop")
    return t


def report(tmp_path, sdir):
    """The report as `winder report --json` prints it (built in-process to save a start-up;
    the command itself is tested in test_session_report.py)."""
    from winder.session.report import build_report
    from winder.session.session import Session

    return json.loads(json.dumps(build_report(Session.open(sdir))))


def test_wind_headless_to_the_planned_count(tmp_path, coil):
    path, plan = coil
    sdir = tmp_path / "s1"
    with sim_for(plan, speedup=40) as sim:
        rc, out, err = finish(winder(tmp_path, "wind", path, "--port", sim.device,
                                     "--headless", "--session", sdir, stdin=subprocess.DEVNULL))
        assert rc == 0, err + out
        truth = sim.truth()
    rep = report(tmp_path, sdir)
    assert rep["state"] == "finished"
    assert rep["turns_wound"] == plan.turns == truth["count"] == truth["coil_turns"]
    assert rep["planned_turns"] == plan.turns
    assert "caution" in out and "finished" in out
    assert len(rep["readings"]) >= 2            # the device measured on the way
    assert rep["final_measured_ohm_20c"] == pytest.approx(truth["true_ohm"], rel=0.02)


def test_sigkill_mid_wind_then_resume_finishes_with_the_exact_count(tmp_path, coil):
    path, plan = coil
    sdir = tmp_path / "s2"
    with sim_for(plan, speedup=10) as sim:
        host = winder(tmp_path, "wind", path, "--port", sim.device, "--headless",
                      "--session", sdir)
        wait_turns(sdir, plan.turns * 0.3)
        assert report(tmp_path, sdir)["state"] == "running"     # a live host holds the lock
        host.kill()                              # SIGKILL: no chance to journal anything
        host.communicate(timeout=10)
        at_kill = journal_turns(sdir)
        t = wait_stopped(sim)                    # the device watchdog stopped the motor
        assert t["count"] >= at_kill and "watchdog" in t["faults"]
        rep = report(tmp_path, sdir)
        assert rep["state"] == "interrupted"
        with open(sdir / "journal.jsonl", "ab") as fh:   # as if killed in mid-write
            fh.write(b'{"seq":9999,"t":1.0,"kind":"checkpoint","tur')
        rc, out, err = finish(winder(tmp_path, "resume", sdir, "--headless",
                                     stdin=subprocess.DEVNULL))
        assert rc == 0, err + out
        truth = sim.truth()
    assert "torn fragment" in out                 # reported, kept, acknowledged
    assert b'"kind":"checkpoint","tur\n' in (sdir / "journal.jsonl").read_bytes()
    assert "same device boot: adopted its count" in out
    rep = report(tmp_path, sdir)
    assert rep["state"] == "finished"
    assert rep["turns_wound"] == plan.turns == truth["count"]
    # the watchdog stopped the spindle part way through a turn; a one-count-per-turn
    # counter cannot see that fraction, so the coil may hold up to one turn more
    assert 0 <= truth["coil_turns"] - plan.turns < 1
    lost = [i for i in rep["interruptions"] if i["kind"] == "host_lost"]
    assert len(lost) == 1 and lost[0]["turns"] == at_kill
    assert lost[0]["turns_after"] == t["count"]  # turns made while the host was down kept


def test_device_reboot_during_the_outage(tmp_path, coil):
    path, plan = coil
    sdir = tmp_path / "s3"
    with sim_for(plan, speedup=10) as sim:
        host = winder(tmp_path, "wind", path, "--port", sim.device, "--headless",
                      "--session", sdir)
        wait_turns(sdir, plan.turns * 0.3)
        sim.control("speedup 1")                 # real-time spindle, so rpm means turns/s
        time.sleep(1.2)
        host.kill()
        host.communicate(timeout=10)
        at_kill = journal_turns(sdir)
        stopped = wait_stopped(sim)
        physical = stopped["coil_turns"]
        sim.control("reboot")                    # the count on the device is gone
        time.sleep(0.6)
        sim.control("speedup 10")
        rc, out, err = finish(winder(tmp_path, "resume", sdir, "--headless",
                                     stdin=subprocess.DEVNULL))
        assert rc == 0, err + out
        truth = sim.truth()
    rep = report(tmp_path, sdir)
    assert rep["state"] == "finished"
    # the host count and the device's own count agree and end on the planned turns
    assert rep["turns_wound"] == plan.turns == truth["count"]
    reb = [i for i in rep["interruptions"] if i["kind"] == "device_rebooted"]
    assert len(reb) == 1
    unacc = reb[0]["unaccounted_turns"]
    assert "may be unaccounted" in out
    # the turns made after the last journal entry are within the bound winder stated
    assert 0 <= physical - at_kill <= unacc
    assert truth["coil_turns"] - plan.turns == pytest.approx(physical - at_kill, abs=1e-6)
    # the device measured the coil at resume and winder suggested the physical count
    assert "the reading implies" in out
    assert len(rep["boot_ids"]) == 2


def test_reboot_with_correction_from_a_reading(tmp_path, coil):
    path, plan = coil
    sdir = tmp_path / "s4"
    with sim_for(plan, speedup=10) as sim:
        host = winder(tmp_path, "wind", path, "--port", sim.device, "--headless",
                      "--session", sdir)
        wait_turns(sdir, plan.turns * 0.4)
        host.kill()
        host.communicate(timeout=10)
        physical = wait_stopped(sim)["coil_turns"]
        sim.control("reboot")
        time.sleep(0.6)
        rc, out, err = finish(winder(tmp_path, "resume", sdir, "--headless",
                                     "--accept-correction", stdin=subprocess.DEVNULL))
        assert rc == 0, err + out
        truth = sim.truth()
    rep = report(tmp_path, sdir)
    corr = rep["corrections"]
    assert len(corr) == 1 and corr[0]["reason"] == "resistance reading"
    # a 0.3 % reading of a ~250-turn coil: within 2 % of the physical count
    assert corr[0]["turns"] == pytest.approx(physical, rel=0.02)
    assert truth["coil_turns"] == pytest.approx(plan.turns, rel=0.02)
    assert rep["turns_wound"] == plan.turns == truth["count"]


def test_stop_at_resistance_lands_within_half_a_percent(tmp_path, coil):
    path, plan = coil
    sdir = tmp_path / "s5"
    target = 500.0
    with sim_for(plan, speedup=40, factor=1.03) as sim:     # the plan is 3 % low
        rc, out, err = finish(winder(tmp_path, "wind", path, "--port", sim.device,
                                     "--headless", "--session", sdir, "--stop-at-resistance",
                                     stdin=subprocess.DEVNULL))
        assert rc == 0, err + out
        truth = sim.truth()
    assert truth["true_ohm"] == pytest.approx(target, rel=0.005)
    rep = report(tmp_path, sdir)
    assert rep["state"] == "finished"
    assert rep["stop_turns"] < plan.turns          # 3 % more resistance: fewer turns
    assert rep["calibration"]["ratio"] == pytest.approx(1.03, rel=0.005)
    assert rep["stop_changes"] and rep["stop_changes"][-1]["reason"] == "calibration"
    assert rep["turns_wound"] == truth["count"]


def test_sigterm_stops_the_motor_and_resume_finishes(tmp_path, coil):
    path, plan = coil
    sdir = tmp_path / "s6"
    with sim_for(plan, speedup=10) as sim:
        host = winder(tmp_path, "wind", path, "--port", sim.device, "--headless",
                      "--session", sdir)
        wait_turns(sdir, plan.turns * 0.3)
        host.send_signal(signal.SIGTERM)
        rc, out, err = finish(host)
        t = sim.truth()
        assert rc == 128 + signal.SIGTERM, err
        assert "Resume with: winder resume" in out
        assert not t["motor_running"] and t["queued"] == 0
        rep = report(tmp_path, sdir)
        assert rep["state"] == "paused" and rep["turns_wound"] == t["count"]
        rc, out, err = finish(winder(tmp_path, "resume", sdir, "--headless",
                                     stdin=subprocess.DEVNULL))
        assert rc == 0, err + out
        truth = sim.truth()
    rep = report(tmp_path, sdir)
    assert rep["turns_wound"] == plan.turns == truth["count"]
    assert 0 <= truth["coil_turns"] - plan.turns < 1     # HALT mid-turn (see above)
    assert [i["kind"] for i in rep["interruptions"]] == ["host_stopped"]


def test_counter_device_follows_the_count_and_stops_journaling(tmp_path, coil):
    path, plan = coil
    sdir = tmp_path / "s7"
    crank_rpm, speedup = 900, 10
    with sim_for(plan, speedup=speedup, mode="counter",
                 extra=["--crank-rpm", str(crank_rpm)]) as sim:
        rc, out, err = finish(winder(tmp_path, "wind", path, "--port", sim.device,
                                     "--headless", "--session", sdir, stdin=subprocess.DEVNULL))
        assert rc == 0, err + out
        size = (sdir / "journal.jsonl").stat().st_size
        time.sleep(0.5)
        assert sim.truth()["coil_turns"] > plan.turns     # the maker is still cranking
    assert (sdir / "journal.jsonl").stat().st_size == size
    rep = report(tmp_path, sdir)
    assert rep["state"] == "finished"
    # the count is seen every status (0.1 s); hand cranking wobbles up to about +40 %
    per_status = 1.5 * crank_rpm * speedup / 60 * 0.1
    assert plan.turns <= rep["turns_wound"] <= plan.turns + per_status + 1
    assert "stop winding now" in out
    assert "caution: the spindle will turn" not in out
