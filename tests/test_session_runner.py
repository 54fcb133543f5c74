"""The runner against a scripted stand-in link (fast, no pty): pass segments, the journal it
writes for statuses, readings, link loss, reboot and user actions; the headless key parser."""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from pathlib import Path

import pytest

from winder.cli.session_cmd import split_reading
from winder.link.messages import DeviceEvent, DeviceInfo, LinkLost, LinkRestored, Status
from winder.session.journal import CheckpointPolicy, replay
from winder.session.prepare import machine_for, prepare, started_fields
from winder.session.runner import Runner, make_segments
from winder.session.session import Session
from winder.session.state import rebuild

ROOT = Path(__file__).resolve().parent.parent
COIL = ROOT / "profiles" / "coils" / "driver-8ohm.yaml"
CAPS = frozenset({"count", "spindle", "traverse", "ohm"})


@pytest.fixture(scope="module")
def prep():
    return prepare(COIL, machine_for(None, CAPS, 1))


@dataclass
class StandInLink:
    """Records commands; the test plays the device by feeding events to the runner."""

    info: DeviceInfo = field(default_factory=lambda: DeviceInfo(
        protocol=1, boot_id="b1", capabilities=CAPS, counts_per_rev=1, queue_max=4))
    turns: float = 0.0
    counts: int = 0
    connected: bool = True
    calls: list = field(default_factory=list)

    def __getattr__(self, name):
        if name in ("zero", "preload", "queue_pass", "go", "pause", "stop", "clear",
                    "measure", "close"):
            return lambda *a: self.calls.append((name, *a))
        raise AttributeError(name)

    def names(self):
        return [c[0] for c in self.calls]


def status(turns, *, rpm=600.0, state="run", queued=1, faults=()):
    return Status(count=int(turns), turns=float(turns), rpm=rpm, guide_mm=None, state=state,
                  faults=frozenset(faults), queued=queued, t=time.monotonic())


def new_runner(tmp_path, prep, **kw):
    link = StandInLink()
    sess = Session.create(coil_name=prep.coil.name, coil_yaml=prep.coil_yaml,
                          plan=prep.plan.to_dict(), schedule=prep.schedule.to_dict(),
                          started=started_fields(prep, link.info.to_dict()),
                          session_dir=tmp_path / "s", fsync=False)
    updates = []
    r = Runner(sess, link, schedule=prep.schedule, machine=prep.machine,
               policy=CheckpointPolicy(interval_s=1.0, every_turns=20, min_gap_s=0.0),
               on_update=updates.append, **kw)
    return r, link, sess, updates


def feed(r, *events):
    for ev in events:
        r.events.put(ev)
    r.poll(0.0)


def kinds(sess):
    return [e["kind"] for e in replay(sess.path / "journal.jsonl").events]


def test_segments_add_up_exactly_and_follow_the_passes(prep):
    sched, machine = prep.schedule, prep.machine
    off = machine.traverse.start_flange_m * 1e3
    segs = make_segments(sched, machine, 0.0, sched.total_turns)
    assert round(sum(s.turns for s in segs), 6) == sched.total_turns
    assert segs[0].start_mm == pytest.approx(sched.passes[0].start_mm + off)
    assert segs[-1].end_mm == pytest.approx(sched.passes[-1].end_mm + off)
    slow = machine.spindle.slow_rpm
    assert segs[0].rpm == slow and segs[-1].rpm == slow         # slow start and finish
    assert segs[0].turns == machine.spindle.slow_start_turns
    # from the middle of a pass: the guide starts where the schedule says it is
    t = 61.0
    i, pos = sched.pass_at(t)
    mid = make_segments(sched, machine, t, sched.total_turns)
    assert mid[0].start_mm == pytest.approx(pos + off)
    assert round(sum(s.turns for s in mid), 6) == sched.total_turns - t
    # past the schedule's end the layer pattern goes on inside the window
    lo, hi = sched.window_mm
    ext = make_segments(sched, machine, 0.0, sched.total_turns + 60)
    assert round(sum(s.turns for s in ext), 6) == sched.total_turns + 60
    assert all(lo + off - 1e-9 <= min(s.start_mm, s.end_mm) and
               max(s.start_mm, s.end_mm) <= hi + off + 1e-9 for s in ext)


def test_start_queues_within_the_device_queue_and_finishes_with_a_reading(tmp_path, prep):
    r, link, sess, updates = new_runner(tmp_path, prep)
    r.start()
    assert link.names()[0] == "zero"
    queued = [c for c in link.calls if c[0] == "queue_pass"]
    assert len(queued) == link.info.queue_max - 1 and link.names()[-1] == "go"
    n = prep.plan.turns
    feed(r, status(50, queued=0))            # room again: the runner tops the queue up
    assert len([c for c in link.calls if c[0] == "queue_pass"]) > len(queued)
    feed(r, *[status(t, queued=0) for t in range(60, n, 10)])
    ck = [e for e in replay(sess.path / "journal.jsonl").events if e["kind"] == "checkpoint"]
    assert ck and all(b["turns"] - a["turns"] >= 20 or b["t"] - a["t"] >= 1.0
                      for a, b in zip(ck, ck[1:], strict=False))
    link.calls.clear()
    feed(r, status(n, rpm=0.0, state="idle", queued=0))
    assert "measure" in link.names() and not r.done
    feed(r, DeviceEvent("reading", {"ohm": 8.1, "c": n}, time.monotonic()))
    assert r.done and sess.state.state == "finished" and sess.state.turns == n
    assert sess.state.readings[-1]["note"] == "final"
    assert any(u.kind == "finished" for u in updates)


def test_fault_pauses_and_continue_requeues_from_the_count(tmp_path, prep):
    r, link, sess, updates = new_runner(tmp_path, prep)
    r.start()
    feed(r, status(40), status(41, rpm=0.0, state="fault", faults=("stall",)))
    assert sess.state.state == "paused" and "stall" in sess.state.reason and r.waiting
    assert "stop" in link.names()
    link.calls.clear()
    r.cont()
    r.poll(0.0)
    assert link.names()[:2] == ["stop", "clear"] and link.names()[-1] == "go"
    first = next(c for c in link.calls if c[0] == "queue_pass")
    _, pos = prep.schedule.pass_at(41.0)
    assert first[1] == pytest.approx(pos + prep.machine.traverse.start_flange_m * 1e3)
    assert sess.state.state == "running"
    assert [i["kind"] for i in sess.state.interruptions] == ["fault"]


def test_link_loss_and_reboot_keep_the_count_and_wait(tmp_path, prep):
    r, link, sess, updates = new_runner(tmp_path, prep)
    r.start()
    feed(r, status(70, rpm=1500.0))
    feed(r, LinkLost("no valid line for 1.0 s", time.monotonic()))
    assert sess.state.link_down
    link.calls.clear()
    link.turns, link.counts = 70.0, 70
    info = DeviceInfo(protocol=1, boot_id="b2", capabilities=CAPS, counts_per_rev=1,
                      queue_max=4, watchdog_s=1.0)
    link.info = info
    feed(r, LinkRestored(True, info, 70.0, time.monotonic()))
    assert ("preload", 70) in link.calls            # the device holds the kept count
    assert kinds(sess)[-4:] == ["link_lost", "link_back", "device_rebooted", "paused"]
    st = rebuild(replay(sess.path / "journal.jsonl").events)
    reb = [i for i in st.interruptions if i["kind"] == "device_rebooted"][0]
    # 1500 rpm: at most the watchdog's 1 s + 0.1 s of turns plus the stop (600 rpm/s):
    # ceil(25 * 1.1 + 1500^2 / (120 * 600)) = ceil(27.5 + 31.25) = 59
    assert reb["unaccounted_turns"] <= 59 and st.boot_id == "b2"
    assert r.waiting and "go" not in link.names()       # no restart without the maker


def test_unaccounted_bound_after_a_host_loss(tmp_path, prep):
    r, link, sess, _ = new_runner(tmp_path, prep)
    sess.record("checkpoint", turns=40.0, rpm=1500.0, elapsed_s=2.0)
    link.info = DeviceInfo(protocol=1, boot_id="b1", capabilities=CAPS, counts_per_rev=1,
                           watchdog_s=1.0)
    # one checkpoint interval (1 s) + the watchdog (1 s) at 25 rev/s, plus the stop at
    # the machine's 600 rpm/s: ceil(50 + 31.25) = 82
    assert r._unaccounted_after_host_loss() == 82
    assert math.isclose(r._decel_turns(1500.0), 31.25)


def test_readings_propose_a_stop_point_and_accept_moves_it(tmp_path, prep):
    r, link, sess, updates = new_runner(tmp_path, prep)
    r.start()
    feed(r, status(80))
    half = sess.state.curve(80)
    r.reading(1.05 * half * (1 + 0.00393 * 5), 25.0)    # 5 % high, read at 25 C
    r.poll(0.0)
    prop = [u for u in updates if u.kind == "stop_proposed"]
    assert prop, [u.text for u in updates]
    est = sess.state.estimate()
    assert est.ratio == pytest.approx(1.05, rel=1e-6)
    r.accept_stop()
    r.poll(0.0)
    assert sess.state.stop_turns == prop[-1].data["stop_turns"] < prep.plan.turns
    assert kinds(sess)[-1] == "target_changed"


def test_halt_journals_a_pause_and_stops_the_motor(tmp_path, prep):
    r, link, sess, updates = new_runner(tmp_path, prep)
    r.start()
    feed(r, status(33))
    r.halt("signal SIGTERM")
    assert "stop" in link.names()
    assert sess.state.state == "paused" and sess.state.turns == 33
    assert sess.state.interruptions[-1]["kind"] == "host_stopped"


def test_stop_at_resistance_needs_a_resistance_target(tmp_path):
    p = tmp_path / "c.yaml"
    p.write_text(COIL.read_text().replace("{resistance: 8 ohm}", "{turns: 100}")
                 .replace("../bobbins/blade-driver.yaml",
                          str(ROOT / "profiles" / "bobbins" / "blade-driver.yaml")))
    pr = prepare(p, machine_for(None, CAPS, 1))
    from winder.errors import InputError

    with pytest.raises(InputError, match="resistance"):
        new_runner(tmp_path, pr, stop_at_resistance=True)


@pytest.mark.parametrize("text,expect", [
    ("812.4 ohm 23 C", ("812.4 ohm", "23 C")),
    ("6.2 kohm", ("6.2 kohm", None)),
    ("8.05ohm @ 21.5 degC", ("8.05ohm", "21.5 degC")),
])
def test_reading_key_parsing(text, expect):
    assert split_reading(text) == expect


def test_stop_at_resistance_needs_a_measuring_device():
    from winder.errors import InputError
    from winder.session.runner import check_stop_at_resistance

    check_stop_at_resistance(True, 500.0, CAPS)
    check_stop_at_resistance(False, None, frozenset({"count"}))
    with pytest.raises(InputError, match="measures resistance"):
        check_stop_at_resistance(True, 500.0, frozenset({"count", "pedal"}))
    with pytest.raises(InputError, match="target is a resistance"):
        check_stop_at_resistance(True, None, CAPS)


def test_resume_says_where_the_schedule_continues(tmp_path, prep):
    r, link, sess, updates = new_runner(tmp_path, prep)
    r.start()
    feed(r, status(90))
    r.halt("quit")
    sess.close()
    again = Session.open(tmp_path / "s", writable=True, fsync=False)
    link2 = StandInLink()
    link2.turns = 90.0
    r2 = Runner(again, link2, schedule=prep.schedule, machine=prep.machine,
                on_update=updates.append)
    rec = r2.resume()
    assert rec.same_boot and rec.turns == 90.0 and rec.unaccounted_turns == 0
    i, pos = prep.schedule.pass_at(90.0)
    msg = [u for u in updates if u.text.startswith("continuing from 90 turns")]
    assert msg and msg[-1].data["pass_index"] == i and msg[-1].data["guide_mm"] == pos
    first = next(c for c in link2.calls if c[0] == "queue_pass")
    assert first[1] == pytest.approx(pos + prep.machine.traverse.start_flange_m * 1e3)
    assert again.state.state == "running" and again.state.host_runs == 2
    again.close()


def test_device_readings_carry_the_ambient_temperature(tmp_path, prep):
    r, link, sess, updates = new_runner(tmp_path, prep, ambient_c=25.0)
    r.start()
    feed(r, status(60), DeviceEvent("reading", {"ohm": 3.0, "c": 60}, time.monotonic()))
    got = sess.state.readings[-1]
    assert got["temp_c"] == 25.0 and got["source"] == "device" and got["turns"] == 60.0
    # 3.0 ohm at 25 C is 3.0 / (1 + 0.00393 * 5) ohm at 20 C (IEC 60287-1-1 alpha)
    assert sess.state.reading_objects[-1].ohm_20c == pytest.approx(3.0 / 1.01965)


def test_a_full_device_queue_is_retried_quietly_and_a_dry_queue_restarts(tmp_path, prep):
    from winder.link.errors import CommandRejected

    r, link, sess, updates = new_runner(tmp_path, prep)
    r.start()
    sent_before = len([c for c in link.calls if c[0] == "queue_pass"])
    full = {"n": 1}
    real = link.__getattr__("queue_pass")

    def queue_pass(*a):
        if full["n"]:
            full["n"] -= 1
            raise CommandRejected("PASS", "FUL")
        real(*a)

    link.__dict__["queue_pass"] = queue_pass
    time.sleep(0.001)
    feed(r, status(30, queued=0))                     # room, but the device says full
    assert not [u for u in updates if u.kind == "warn"]
    assert len([c for c in link.calls if c[0] == "queue_pass"]) == sent_before
    link.calls.clear()
    time.sleep(0.001)
    feed(r, status(35, rpm=0.0, state="idle", queued=0))   # ran dry before the top-up
    assert "queue_pass" in link.names() and link.names()[-1] == "go"


def test_statuses_older_than_the_last_send_never_overfill_the_device_queue(tmp_path, prep):
    # the device's queue holds queue_max passes (the hello); statuses that were on their
    # way before the runner's last passes still show the old queue, so the runner counts
    # what it sent since, and a FUL answer is never seen nor logged
    r, link, sess, updates = new_runner(tmp_path, prep)
    qmax = link.info.queue_max
    device_queue: list = []
    rejected = []

    def queue_pass(*a):
        from winder.link.errors import CommandRejected

        if len(device_queue) >= qmax:
            rejected.append(a)
            raise CommandRejected("PASS", "FUL")
        device_queue.append(a)
        link.calls.append(("queue_pass", *a))

    link.__dict__["queue_pass"] = queue_pass
    before = status(0, queued=0)                     # sent before the first passes
    r.start()
    assert len(device_queue) == qmax - 1
    for k in range(6):                               # a backlog of statuses from before
        feed(r, Status(**{**before.__dict__, "count": k, "turns": float(k)}))
    assert len(device_queue) <= qmax and not rejected
    device_queue.pop(0)                              # the device ran one pass
    time.sleep(0.001)
    feed(r, status(20, queued=len(device_queue)))    # a status after the last send
    assert len(device_queue) == qmax - 1 and not rejected
    assert not [u for u in updates if u.kind == "warn"]
