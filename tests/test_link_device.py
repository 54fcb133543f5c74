"""The simulated device's firmware logic on a simulated clock, and port-error wording."""

from __future__ import annotations

import errno
import os

import pytest
import serial

from winder.link.codec import encode_command, parse_device_line
from winder.link.errors import HandshakeError, PortBusy, PortNotFound, PortPermission
from winder.link.messages import Ack, Hello, Nak, StatusReport
from winder.link.sim import SimDevice, parse_faults
from winder.link.transport import classify


def run(dev: SimDevice, seconds: float, now: float, dt: float = 0.005, beat: bool = True):
    """Advance the device ``seconds`` of real time from ``now``; return (now, lines)."""
    out = []
    end = now + seconds
    next_beat = now
    while now < end:
        now += dt
        if beat and now >= next_beat:
            dev.handle(encode_command(0, "BEAT")[:-1], now)
            next_beat = now + 0.25
        out += dev.step(dt, now)
    return now, out


def cmd(dev, seq, verb, *args, now=0.0):
    lines = dev.handle(encode_command(seq, verb, *args)[:-1], now)
    return [parse_device_line(x[:-1]) for x in lines]


def test_hi_answers_hello_then_ack():
    dev = SimDevice(seed=1)
    r = cmd(dev, 7, "HI")
    assert isinstance(r[0], Hello) and r[0].boot_id == dev.boot_id and r[1] == Ack(7)


def test_repeated_seq_is_answered_but_not_executed():
    dev = SimDevice(seed=1)
    assert cmd(dev, 5, "PASS", 1.0, 2.0, 10.0, 100.0) == [Ack(5)]
    assert cmd(dev, 5, "PASS", 1.0, 2.0, 10.0, 100.0) == [Ack(5)]
    assert len(dev.queue) == 1
    assert cmd(dev, 6, "PASS", 1.0, 2.0, 10.0, 100.0) == [Ack(6)]
    assert len(dev.queue) == 2


def test_reason_codes():
    dev = SimDevice(seed=1)
    assert cmd(dev, 1, "GO") == [Nak(1, "STA")]
    assert cmd(dev, 2, "PASS", 1.0, 99.0, 10.0, 100.0) == [Nak(2, "ARG")]   # beyond travel
    assert cmd(dev, 3, "FLY") == [Nak(3, "UNK")]
    counter = SimDevice("counter", seed=1)
    assert cmd(counter, 1, "PASS", 1.0, 2.0, 10.0, 100.0) == [Nak(1, "CAP")]
    assert cmd(counter, 2, "HALT") == [Ack(2)]


def test_bad_crc_is_dropped_silently_and_does_not_feed_the_watchdog():
    dev = SimDevice(seed=1, now=0.0)
    line = bytearray(encode_command(1, "HI")[:-1])
    line[0] ^= 1
    assert dev.handle(bytes(line), 5.0) == []
    assert dev.last_host == 0.0 and dev.bad_lines == 1


def test_watchdog_stops_the_spindle_within_the_window():
    dev = SimDevice(seed=1, watchdog_s=1.0, now=0.0)
    cmd(dev, 1, "PASS", 1.0, 50.0, 10000.0, 1500.0, now=0.0)
    cmd(dev, 2, "GO", now=0.0)
    now, _ = run(dev, 2.0, 0.0)                       # host alive: spinning at speed
    assert dev.rpm == pytest.approx(1500)
    last_host = dev.last_host
    stopped_at = None
    t = now
    while t < now + 3.0:
        t += 0.005
        dev.step(0.005, t)
        if dev.rpm == 0 and stopped_at is None:
            stopped_at = t
    assert stopped_at is not None
    assert stopped_at - last_host <= 1.0 + 0.006      # one 5 ms tick of granularity
    assert dev.state == "hold" and dev.faults & 1 and len(dev.queue) == 1
    assert cmd(dev, 3, "GO", now=t) == [Ack(3)]
    assert dev.faults == 0


def test_passes_end_exactly_and_guide_follows():
    dev = SimDevice(seed=1, accel_rpm_s=2000, now=0.0)
    cmd(dev, 1, "PASS", 10.0, 30.0, 100.0, 1200.0)
    cmd(dev, 2, "PASS", 30.0, 10.0, 50.5, 1200.0)
    cmd(dev, 3, "GO")
    now, lines = run(dev, 20.0, 0.0)
    assert dev.state == "idle" and dev.rpm == 0
    assert dev.coil_turns == pytest.approx(150.5)
    assert dev.count == 150
    assert dev.guide_mm == pytest.approx(10.0)
    sts = [parse_device_line(x[:-1]) for x in lines]
    sts = [s for s in sts if isinstance(s, StatusReport)]
    assert max(s.rpm for s in sts) == pytest.approx(1200)
    assert max(s.guide_mm for s in sts) == pytest.approx(30.0, abs=0.5)


def test_reboot_resets_counter_and_changes_boot_id():
    dev = SimDevice(seed=3, now=0.0)
    cmd(dev, 1, "LOAD", 500)
    assert dev.count == 500
    old = dev.boot_id
    dev.boot(1.0)
    assert dev.boot_id != old and dev.count == 0 and dev.queue == []


def test_counter_wraps_at_the_declared_width():
    dev = SimDevice("counter", seed=1, wrap=2**8, crank_rpm=600)
    cmd(dev, 1, "LOAD", 250)
    run(dev, 2.0, 0.0)
    assert 0 <= dev.count < 256
    assert dev.coil_turns > 6
    assert cmd(dev, 2, "LOAD", 256) == [Nak(2, "ARG")]


def test_fault_spec():
    assert parse_faults("5:reboot, 2:drop 1.5") == [(2.0, "drop 1.5"), (5.0, "reboot")]
    with pytest.raises(ValueError):
        parse_faults("reboot")


@pytest.mark.parametrize("err, kind, words", [
    (serial.SerialException(errno.ENOENT, "could not open port /dev/ttyUSB9: No such file"),
     PortNotFound, "no such port"),
    (serial.SerialException(errno.EACCES, "could not open port /dev/ttyUSB0: Permission denied"),
     PortPermission, "dialout"),
    (serial.SerialException(errno.EAGAIN, "Could not exclusively lock port /dev/ttyUSB0"),
     PortBusy, "busy"),
    (serial.SerialException(errno.EBUSY, "could not open port: Device or resource busy"),
     PortBusy, "busy"),
])
def test_port_errors_are_classified_with_one_line_messages(err, kind, words):
    e = classify("/dev/ttyUSB0", err)
    assert isinstance(e, kind) and words in str(e) and "\n" not in str(e)


@pytest.mark.skipif(os.geteuid() == 0 if hasattr(os, "geteuid") else True,
                    reason="root ignores file permissions")
def test_permission_denied_on_a_real_file(tmp_path):
    from winder.link import WinderLink

    p = tmp_path / "ttyLOCKED"
    p.write_text("")
    p.chmod(0)
    with pytest.raises(PortPermission, match="dialout"):
        WinderLink(str(p)).open()


def test_loopback_url_is_not_a_winder():
    from winder.link import WinderLink

    with pytest.raises(HandshakeError, match="no handshake"):
        WinderLink("loop://", hello_timeout=0.5).open()
