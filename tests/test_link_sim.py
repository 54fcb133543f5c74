"""End-to-end: the driver against the simulated winder on a real pseudo-terminal."""

from __future__ import annotations

import json
import os
import queue
import signal
import subprocess
import sys
import time

import pytest

from winder.link import (
    CommandRejected,
    DeviceEvent,
    LinkDown,
    LinkLost,
    LinkRestored,
    PortBusy,
    PortNotFound,
    Status,
    WinderLink,
)
from winder.link.simproc import start_sim

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="needs a POSIX pty")


@pytest.fixture
def sim_factory():
    sims = []

    def make(**kw):
        s = start_sim(**kw)
        sims.append(s)
        return s

    yield make
    for s in sims:
        s.close()


@pytest.fixture
def links():
    made = []

    def make(url, **kw):
        ln = WinderLink(url, **kw)
        made.append(ln)
        return ln

    yield make
    for ln in made:
        ln.close()


def wait_truth(sim, pred, timeout=5.0):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        t = sim.truth()
        if pred(t):
            return t
        time.sleep(0.02)
    raise AssertionError(f"simulator never reached the condition; last truth {t}")


def next_event(q: queue.Queue, kind, timeout=5.0, pred=lambda e: True):
    deadline = time.monotonic() + timeout
    while True:
        left = deadline - time.monotonic()
        if left <= 0:
            raise AssertionError(f"no {kind.__name__} event")
        ev = q.get(timeout=left)
        if isinstance(ev, kind) and pred(ev):
            return ev


def test_handshake_over_a_real_pty(sim_factory, links):
    sim = sim_factory()
    truth = sim.truth()
    assert os.path.realpath(sim.device).startswith("/dev/pts/")
    link = links(sim.device)
    info = link.open()
    assert info.protocol == 1
    assert info.boot_id == truth["boot_id"]
    assert info.capabilities == {"count", "spindle", "traverse", "ohm", "pedal", "limits"}
    assert info.counts_per_rev == 1 and info.watchdog_s == 1.0
    assert link.connected


def test_wind_500_turns_exactly(sim_factory, links):
    sim = sim_factory(speedup=40)
    link = links(sim.device)
    link.open()
    link.zero()
    link.queue_pass(5.0, 25.0, 250, 1500)
    link.queue_pass(25.0, 5.0, 250, 1500)
    link.go()
    st = link.wait_for(lambda s: s.state == "run", 5)
    st = link.wait_for(lambda s: s.state == "idle" and s.queued == 0, 20)
    truth = sim.truth()
    assert truth["coil_turns"] == pytest.approx(500, abs=1e-6)
    assert truth["count"] == 500 and st.count == 500
    assert link.turns == 500.0
    assert st.guide_mm == pytest.approx(5.0, abs=1e-3)      # back at the start flange
    assert link.stats.rejected == 0


def test_pause_and_continue(sim_factory, links):
    sim = sim_factory(speedup=30)
    link = links(sim.device)
    link.open()
    link.zero()
    link.queue_pass(2.0, 40.0, 400, 1500)
    link.go()
    link.wait_for(lambda s: s.turns > 40, 10)
    link.pause()
    held = link.wait_for(lambda s: s.state == "hold" and s.rpm == 0, 5)
    t = wait_truth(sim, lambda t: not t["motor_running"])
    assert t["queued"] == 1 and t["coil_turns"] < 400
    time.sleep(0.3)
    assert sim.truth()["count"] == t["count"] == link.wait_for(lambda s: True, 1).count
    assert held.turns == t["count"]
    link.resume()
    link.wait_for(lambda s: s.state == "idle" and s.queued == 0, 20)
    assert link.turns == 400 == sim.truth()["count"]


HOST_SCRIPT = r"""
import sys, time
from winder.link import WinderLink
link = WinderLink(sys.argv[1])
link.open()
link.queue_pass(1.0, 50.0, 100000, 600)
link.go()
link.wait_for(lambda s: s.rpm > 100, 10)
print("running", flush=True)
time.sleep(60)
"""


def test_motor_stops_within_the_watchdog_window_when_the_host_is_killed(sim_factory):
    sim = sim_factory(speedup=1)
    env = dict(os.environ)
    env["PYTHONPATH"] = os.path.dirname(os.path.dirname(__file__)) + os.pathsep + env.get(
        "PYTHONPATH", "")
    host = subprocess.Popen([sys.executable, "-c", HOST_SCRIPT, sim.device],
                            stdout=subprocess.PIPE, text=True, env=env)
    try:
        assert host.stdout.readline().strip() == "running"
        assert sim.truth()["motor_running"]
        os.kill(host.pid, signal.SIGKILL)
        killed = time.monotonic()
        host.wait(5)
        t = wait_truth(sim, lambda t: not t["motor_running"], timeout=3)
        stopped_after = time.monotonic() - killed
    finally:
        if host.poll() is None:
            host.kill()
        host.stdout.close()
    # the device trips 1 s after the last valid host line (5 ms ticks, plus scheduling);
    # the wall-clock bound is loose because it includes process scheduling and polling
    assert 1.0 <= t["watchdog_trip_s"] <= 1.1
    assert stopped_after < 2.0
    assert "watchdog" in t["faults"] and t["state"] == "hold" and t["queued"] == 1


def test_reconnect_after_link_drop_keeps_the_count(sim_factory, links):
    sim = sim_factory(mode="counter", speedup=20)
    events: queue.Queue = queue.Queue()
    link = links(sim.device, events=events)
    link.open()
    link.wait_for(lambda s: s.turns > 20, 10)
    assert sim.control("drop 0.6")["ok"]
    lost = next_event(events, LinkLost, 5)
    assert lost.reason
    with pytest.raises(LinkDown):
        link.zero()
    restored = next_event(events, LinkRestored, 10)
    assert restored.rebooted is False
    assert link.stats.reconnects == 1 and link.stats.reboots == 0
    sim.control("crank 0")                       # the hand stops; let the last status in
    time.sleep(0.5)
    truth = sim.truth()
    assert truth["boots"] == 1
    st = link.wait_for(lambda s: s.t > time.monotonic() - 0.3, 2)
    assert st.count == truth["count"]
    assert link.turns == truth["count"]          # turns made during the outage are kept


def test_drop_while_winding_stops_the_motor_and_resumes(sim_factory, links):
    sim = sim_factory(speedup=1)
    events: queue.Queue = queue.Queue()
    link = links(sim.device, events=events)
    link.open()
    link.zero()
    link.queue_pass(1.0, 30.0, 300, 900)
    link.go()
    link.wait_for(lambda s: s.turns > 5, 10)
    sim.control("drop 1.2")
    t = wait_truth(sim, lambda t: not t["motor_running"], timeout=3)
    assert "watchdog" in t["faults"]             # device stopped on its own
    restored = next_event(events, LinkRestored, 10)
    st = link.wait_for(lambda s: s.t >= restored.t, 2)
    assert st.state == "hold" and "watchdog" in st.faults and st.queued == 1
    sim.control("speedup 40")
    link.go()
    link.wait_for(lambda s: s.state == "idle" and s.queued == 0, 20)
    assert link.turns == 300 == sim.truth()["count"]


def test_reboot_is_detected_and_the_offset_applied(sim_factory, links):
    sim = sim_factory(speedup=40)
    events: queue.Queue = queue.Queue()
    link = links(sim.device, events=events)
    info = link.open()
    link.zero()
    link.queue_pass(1.0, 20.0, 120, 1500)
    link.go()
    link.wait_for(lambda s: s.state == "idle" and s.queued == 0 and s.turns == 120, 10)
    new_boot = sim.control("reboot")["boot_id"]
    assert new_boot != info.boot_id
    restored = next_event(events, LinkRestored, 5)
    assert restored.rebooted and restored.info.boot_id == new_boot
    assert link.info.boot_id == new_boot and link.stats.reboots == 1
    assert sim.truth()["count"] == 0               # the device counter restarted
    assert link.turns == 120                       # the host kept its total
    link.queue_pass(20.0, 1.0, 80, 1500)
    link.go()
    link.wait_for(lambda s: s.state == "idle" and s.queued == 0 and s.count == 80, 10)
    assert link.turns == 200
    assert sim.truth()["coil_turns"] == pytest.approx(200)


def test_reboot_during_a_drop_is_reported_on_reconnect(sim_factory, links):
    sim = sim_factory(mode="counter", speedup=20)
    events: queue.Queue = queue.Queue()
    link = links(sim.device, events=events)
    info = link.open()
    sim.control("crank 0")
    time.sleep(0.4)
    kept = link.turns
    assert kept > 0
    sim.control("drop 0.6")
    sim.control("reboot")
    restored = next_event(events, LinkRestored, 10)
    assert restored.rebooted and restored.info.boot_id != info.boot_id
    time.sleep(0.4)
    assert sim.truth()["count"] == 0 and link.turns == kept


HOST_EXIT_SCRIPT = r"""
import sys
from winder.link import WinderLink
link = WinderLink(sys.argv[1])
link.open()
link.queue_pass(1.0, 50.0, 100000, 600)
link.go()
link.wait_for(lambda s: s.rpm > 100, 10)
raise SystemExit("host gives up without closing the link")
"""


def test_host_exit_without_close_stops_the_motor_at_once(sim_factory):
    sim = sim_factory(speedup=1)
    env = dict(os.environ)
    env["PYTHONPATH"] = os.path.dirname(os.path.dirname(__file__)) + os.pathsep + env.get(
        "PYTHONPATH", "")
    r = subprocess.run([sys.executable, "-c", HOST_EXIT_SCRIPT, sim.device], env=env,
                       capture_output=True, text=True, timeout=20)
    assert r.returncode == 1
    t = sim.truth()
    assert not t["motor_running"] and t["queued"] == 0      # HALT at exit, not the watchdog
    assert "watchdog" not in t["faults"]


def test_corrupted_bytes_are_rejected_counted_and_survived(sim_factory, links):
    sim = sim_factory(speedup=10)
    link = links(sim.device, retries=8)
    link.open()
    link.zero()
    sim.control("corrupt 0.01")
    link.queue_pass(1.0, 30.0, 300, 1200)
    link.go()
    link.wait_for(lambda s: s.state == "idle" and s.queued == 0 and s.turns >= 300, 30)
    sim.control("corrupt 0")
    time.sleep(0.3)
    truth = sim.truth()
    assert truth["count"] == 300
    assert link.turns == 300                 # nothing corrupted got through the CRC
    assert link.stats.rejected > 0
    assert link.stats.lines_ok > 10


def test_torn_overlong_and_bad_crc_lines_are_counted(sim_factory, links):
    from winder.link.codec import MAX_LINE, encode_device

    sim = sim_factory()
    link = links(sim.device)
    link.open()
    time.sleep(0.3)
    before = link.stats.to_dict()
    good = encode_device("EV", "pedal", state="down")
    bad_crc = bytearray(good)
    bad_crc[3] ^= 0x20                                   # one flipped bit in the body
    torn = good[:12] + good                   # a line cut short and run into the next one
    cut = good[:12] + b"\n"                  # a line cut short
    overlong = b"Z" * (MAX_LINE + 40) + b"\n"
    sim.control("inject " + (bytes(bad_crc) + torn + cut + overlong).hex())
    time.sleep(0.5)
    after = link.stats.to_dict()
    assert after["bad_crc"] - before["bad_crc"] == 2          # flipped bit; torn + next
    assert after["malformed"] - before["malformed"] == 1      # cut short: no checksum
    assert after["too_long"] - before["too_long"] == 1
    assert link.connected


def test_integer_only_fallback_device(sim_factory, links):
    sim = sim_factory(mode="plain", speedup=20)
    link = links(sim.device, plain_cpr=1)
    info = link.open()
    assert info.protocol == 0 and info.capabilities == {"count"}
    st = link.wait_for(lambda s: s.turns > 10, 10)
    assert st.state == "unknown"
    with pytest.raises(CommandRejected) as err:
        link.queue_pass(0, 10, 10, 100)
    assert err.value.code == "CAP"
    link.zero()
    assert link.turns < st.turns
    sim.control("crank 0")
    time.sleep(0.4)
    before = link.turns
    link.preload(1000)
    assert link.turns == 1000
    time.sleep(0.3)
    assert link.turns == 1000 and before >= 0
    link.stop()                               # no motor: accepted as a no-op


def test_hand_winding_counter_speed_is_irregular(sim_factory, links):
    sim = sim_factory(mode="counter", speedup=20)
    seen: list[Status] = []
    link = links(sim.device, on_event=lambda e: seen.append(e) if isinstance(e, Status) else 0)
    info = link.open()
    assert info.capabilities == {"count", "pedal"} and info.queue_max == 0
    with pytest.raises(CommandRejected):
        link.go()
    link.zero()
    link.wait_for(lambda s: s.turns > 30, 10)
    rpms = [s.rpm for s in seen if s.rpm > 0]
    assert len(rpms) > 5
    assert max(rpms) - min(rpms) > 20          # a hand is not a servo
    assert all(s.guide_mm is None for s in seen)


def test_events_estop_stall_pedal_and_readings(sim_factory, links):
    sim = sim_factory(speedup=20, extra=["--resistance-factor", "1.08", "--ohm-per-turn", "0.5"])
    events: queue.Queue = queue.Queue()
    link = links(sim.device, events=events)
    link.open()
    link.zero()
    link.queue_pass(1.0, 30.0, 400, 1500)
    link.go()
    link.wait_for(lambda s: s.turns > 30, 10)
    sim.control("stall")
    ev = next_event(events, DeviceEvent, pred=lambda e: e.kind == "stall")
    st = link.wait_for(lambda s: s.state == "fault", 3)
    assert "stall" in st.faults
    with pytest.raises(CommandRejected) as err:
        link.go()
    assert err.value.code == "FLT"
    link.clear()
    link.go()
    link.wait_for(lambda s: s.state == "idle" and s.queued == 0, 20)
    link.measure()
    ev = next_event(events, DeviceEvent, pred=lambda e: e.kind == "reading")
    true_ohm = sim.truth()["true_ohm"]
    assert true_ohm == pytest.approx(400 * 0.5 * 1.08)
    assert ev.data["ohm"] == pytest.approx(true_ohm, rel=0.02)
    assert ev.data["ohm"] != pytest.approx(400 * 0.5, rel=0.02)   # the hidden factor shows
    sim.control("pedal down")
    assert next_event(events, DeviceEvent, pred=lambda e: e.kind == "pedal").data["state"] \
        == "down"
    link.queue_pass(1.0, 30.0, 400, 1500)
    link.go()
    link.wait_for(lambda s: s.rpm > 0, 5)
    sim.control("estop")
    next_event(events, DeviceEvent, pred=lambda e: e.kind == "estop")
    st = link.wait_for(lambda s: s.state == "estop", 3)
    assert st.queued == 0 and "estop" in st.faults
    assert not sim.truth()["motor_running"]


def test_close_commands_a_stop_and_is_idempotent(sim_factory, links):
    sim = sim_factory(speedup=5)
    link = links(sim.device)
    link.open()
    link.queue_pass(1.0, 30.0, 10000, 600)
    link.go()
    link.wait_for(lambda s: s.rpm > 0, 5)
    link.close()
    t = sim.truth()
    assert not t["motor_running"] and t["queued"] == 0 and t["since_host_s"] < 0.5
    link.close()
    with pytest.raises(LinkDown):
        link.zero()


def test_repeated_sequence_number_is_not_executed_twice(sim_factory):
    import serial

    from winder.link.codec import LineFramer, encode_command, parse_device_line

    sim = sim_factory()
    port = serial.serial_for_url(sim.device, baudrate=115200, timeout=0.1)
    try:
        port.reset_input_buffer()
        line = encode_command(42, "PASS", 1.0, 2.0, 10.0, 100.0)
        fr = LineFramer()
        replies = []
        for _ in range(2):
            port.write(line)
            deadline = time.monotonic() + 2
            while time.monotonic() < deadline and len(replies) < 1 + len(replies) // 1:
                got = [parse_device_line(x) for x in fr.feed(port.read(port.in_waiting or 1))]
                acks = [m for m in got if type(m).__name__ in ("Ack", "Nak")]
                if acks:
                    replies += acks
                    break
        assert [type(r).__name__ for r in replies] == ["Ack", "Ack"]
        assert all(r.seq == 42 for r in replies)
        assert sim.truth()["queued"] == 1
    finally:
        port.close()


def test_tcp_transport(sim_factory, links):
    sim = sim_factory(tcp=0, speedup=20)
    assert sim.device.startswith("socket://127.0.0.1:")
    link = links(sim.device)
    info = link.open()
    assert info.protocol == 1 and info.boot_id == sim.truth()["boot_id"]
    link.zero()
    link.queue_pass(1.0, 5.0, 50, 1500)
    link.go()
    link.wait_for(lambda s: s.state == "idle" and s.queued == 0 and s.turns == 50, 10)


def test_port_errors_are_one_line(sim_factory, links, tmp_path):
    with pytest.raises(PortNotFound, match="no such port"):
        WinderLink(str(tmp_path / "ttyNOPE")).open()
    sim = sim_factory()
    links(sim.device).open()
    with pytest.raises(PortBusy, match="busy"):
        WinderLink(sim.device).open()


def test_probe_cli(sim_factory, run_cli, tmp_path):
    sim = sim_factory()
    r = run_cli("probe", sim.device, "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["protocol"] == 1 and d["boot_id"] == sim.truth()["boot_id"]
    assert "traverse" in d["capabilities"]
    r = run_cli("probe", sim.device)
    assert r.returncode == 0 and "boot_id" in r.stdout and "capabilities" in r.stdout
    r = run_cli("probe", str(tmp_path / "ttyNONE"))
    assert r.returncode == 2
    assert r.stderr.strip().count("\n") == 0 and "no such port" in r.stderr


def test_probe_of_a_plain_counter(sim_factory, run_cli):
    sim = sim_factory(mode="plain")
    r = run_cli("probe", sim.device, "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["protocol"] == 0 and d["capabilities"] == ["count"]


def test_sim_control_rejects_bad_commands(sim_factory):
    sim = sim_factory()
    assert sim.control("corrupt 2")["ok"] is False
    assert sim.control("frobnicate")["ok"] is False
    assert "truth" in sim.control("help")["commands"]


def test_sim_cli_prints_device_path_last_on_first_line(run_cli):
    r = subprocess.run(
        [sys.executable, "-m", "winder", "sim", "--pty", "--exit-on-eof"],
        input="truth\nquit\n", capture_output=True, text=True, timeout=20,
    )
    first, second = r.stdout.splitlines()[:2]
    assert first.split()[-1].endswith("ttySIM0")
    assert json.loads(second)["state"] == "idle"
    r = run_cli("sim", "--speedup", "0")
    assert r.returncode == 2 and "--speedup" in r.stderr


def test_silence_is_link_loss_and_recovers(sim_factory, links):
    sim = sim_factory(mode="counter", speedup=5)
    events: queue.Queue = queue.Queue()
    link = links(sim.device, events=events)
    link.open()
    sim.control("corrupt 1")                  # bytes still flow, but no valid line
    lost = next_event(events, LinkLost, 5)
    assert "no valid line" in lost.reason
    sim.control("corrupt 0")
    restored = next_event(events, LinkRestored, 10)
    assert restored.rebooted is False


def test_counter_wrap_is_followed_end_to_end(sim_factory, links):
    sim = sim_factory(mode="counter", speedup=20, extra=["--counter-bits", "8",
                                                          "--crank-rpm", "600"])
    link = links(sim.device)
    info = link.open()
    assert info.wrap == 256
    link.zero()
    link.wait_for(lambda s: s.turns > 600, 20)
    sim.control("crank 0")
    time.sleep(0.5)
    truth = sim.truth()
    assert truth["count"] < 256
    assert link.turns == pytest.approx(truth["coil_turns"], abs=1.0)
    assert link.turns % 256 == truth["count"]
