"""The threaded driver: :class:`WinderLink`.

Shape borrowed from two well-kept designs: pyserial's ``threaded.ReaderThread``
(one thread owns reading; a framing object only turns bytes into lines) and
python-can's bus (a small backend call, the base doing timeouts, one exception
family, an idempotent shutdown). See the package docstring for the thread rules.
"""

from __future__ import annotations

import atexit
import logging
import queue
import random
import threading
import time
import weakref
from collections.abc import Callable
from dataclasses import dataclass

import serial

from winder.link.codec import PROTOCOL_VERSION, LineFramer, encode_command, parse_device_line
from winder.link.counting import TurnTracker
from winder.link.errors import (
    CommandRejected,
    CommandTimeout,
    FrameError,
    HandshakeError,
    LinkDown,
    LinkError,
)
from winder.link.messages import (
    Ack,
    DeviceEvent,
    DeviceInfo,
    EventReport,
    Hello,
    LinkLost,
    LinkRestored,
    LinkStats,
    Nak,
    PlainCount,
    Status,
    StatusReport,
    faults_from_bits,
)
from winder.link.transport import open_port

log = logging.getLogger("winder.link")

_IO_ERRORS = (serial.SerialException, OSError, ValueError, TypeError, AttributeError)

_OPEN_LINKS: weakref.WeakSet = weakref.WeakSet()


@atexit.register
def _close_open_links() -> None:
    """At interpreter exit, stop every motor a link still drives (the watchdog is the
    backstop for a hard crash)."""
    for link in list(_OPEN_LINKS):
        try:
            link.close()
        except Exception:  # exiting anyway; never mask the original exit
            log.exception("closing link at exit")


@dataclass
class _Pending:
    seq: int
    verb: str
    on_ack: Callable[[], None] | None
    result: str | None = None     # "ack" | "nak"
    code: str = ""


def _info_from_hello(h: Hello, url: str) -> DeviceInfo:
    return DeviceInfo(
        protocol=h.protocol, boot_id=h.boot_id, capabilities=h.capabilities,
        counts_per_rev=h.counts_per_rev, wrap=h.wrap, watchdog_s=h.watchdog_ms / 1000.0,
        queue_max=h.queue_max, firmware=h.firmware, state=h.state, url=url,
    )


# a status count this many turns below the last one, with no HELLO, is checked by a new
# handshake (a restart whose HELLO was lost on a noisy line)
BACK_JUMP_TURNS = 5


class WinderLink:
    """A connection to a winder (counter or controller) over any pyserial URL.

    Times in seconds. ``on_event`` runs on the link thread; ``events`` (a
    ``queue.Queue``) receives the same events for consumers on other threads.
    """

    def __init__(
        self,
        url: str,
        *,
        on_event: Callable[[object], None] | None = None,
        events: queue.Queue | None = None,
        baudrate: int = 115200,
        hello_timeout: float = 2.0,
        ack_timeout: float = 0.25,
        retries: int = 4,
        heartbeat_s: float = 0.25,
        silence_s: float = 1.0,
        reconnect: bool = True,
        backoff_s: tuple[float, float] = (0.1, 2.0),
        plain_cpr: int = 1,
    ):
        self.url = url
        self._on_event = on_event
        self._events = events
        self.baudrate = baudrate
        self.hello_timeout = hello_timeout
        self.ack_timeout = ack_timeout
        self.retries = retries
        self.heartbeat_s = heartbeat_s
        self.silence_s = silence_s
        self.reconnect = reconnect
        self.backoff_s = backoff_s
        self.plain_cpr = plain_cpr

        self.info: DeviceInfo | None = None
        self.status: Status | None = None
        self.stats = LinkStats()
        self.connected = False
        self.dropped_events = 0

        self._ser = None
        self._framer = LineFramer()
        self._tracker = TurnTracker()
        self._plain = False
        self._wlock = threading.Lock()
        self._cmd_lock = threading.Lock()
        self._cond = threading.Condition()
        self._pending: _Pending | None = None
        self._seq = random.randrange(1, 65535)   # a fresh host never reuses a stale number
        self._last_valid = 0.0
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        self._close_lock = threading.Lock()
        self._closed = False
        self._opened = False
        self._tracker_seed = 0
        self._accept_back = False

    # ---- public ---------------------------------------------------------------------

    @property
    def turns(self) -> float:
        """Host-tracked turns (monotonic across reconnects, reboots and wrap)."""
        return self._tracker.turns

    @property
    def counts(self) -> int:
        """Host-tracked count in sensor counts."""
        return self._tracker.total

    @property
    def last_line_age(self) -> float:
        """Seconds since the last valid line from the device."""
        return time.monotonic() - self._last_valid

    def open(self) -> DeviceInfo:
        """Open, wait for hello, flush, handshake; start the link thread."""
        if self._opened:
            raise LinkError("link already opened")
        ser = open_port(self.url, baudrate=self.baudrate)
        try:
            info = self._handshake(ser)
        except BaseException:
            _quiet_close(ser)
            raise
        self._opened = True
        self._install(ser, info, first=True)
        self._thread = threading.Thread(target=self._run, name="winder-link", daemon=True)
        self._thread.start()
        _OPEN_LINKS.add(self)
        return info

    def __enter__(self) -> WinderLink:
        if not self._opened:
            self.open()
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        """Command a stop (best effort), stop the link thread, close the port. Idempotent."""
        with self._close_lock:
            if self._closed:
                return
            self._closed = True
            if self.connected:
                try:
                    self.stop()
                except LinkError as err:
                    log.warning("stop on close failed: %s", err)
            self._stop.set()
            t = self._thread
            if t is not None and t is not threading.current_thread():
                t.join(2.0)
            with self._cond:
                ser, self._ser = self._ser, None
                self.connected = False
                self._cond.notify_all()
            if ser is not None:
                _quiet_close(ser)

    def send(self, verb: str, *args, on_ack: Callable[[], None] | None = None) -> None:
        """Send one command and wait for its ACK (retrying with the same sequence number)."""
        if self._thread is not None and threading.current_thread() is self._thread:
            raise LinkError("link commands cannot be sent from the link thread (on_event)")
        with self._cmd_lock:
            self._seq = self._seq % 65535 + 1
            seq = self._seq
            line = encode_command(seq, verb, *args)
            pending = _Pending(seq, verb, on_ack)
            try:
                for attempt in range(self.retries + 1):
                    with self._cond:
                        if not self.connected:
                            raise LinkDown(f"link down; {verb} not sent")
                        pending.result = None
                        self._pending = pending
                    if attempt:
                        self.stats.retries += 1
                    self._write(line)
                    with self._cond:
                        self._cond.wait_for(
                            lambda: pending.result is not None or not self.connected,
                            self.ack_timeout,
                        )
                    if pending.result == "ack":
                        return
                    if pending.result == "nak":
                        if pending.code == "CRC":
                            continue
                        raise CommandRejected(verb, pending.code)
                    if not self.connected:
                        raise LinkDown(f"link lost while sending {verb}")
                tries = self.retries + 1
                raise CommandTimeout(f"no acknowledgement for {verb} after {tries} tries")
            finally:
                with self._cond:
                    if self._pending is pending:
                        self._pending = None

    def zero(self) -> None:
        """Set the count to zero (device and host)."""
        if self._plain:
            self._tracker.set(0, self._tracker._last or 0)
            return
        self.send("ZERO", on_ack=lambda: self._tracker.set(0, 0))

    def preload(self, counts: int) -> None:
        """Set the count to ``counts`` (resume after a power cut)."""
        counts = int(counts)
        if self._plain:
            self._tracker.set(counts, self._tracker._last or 0)
            return
        wrap = self._tracker.wrap
        self.send("LOAD", counts % wrap, on_ack=lambda: self._tracker.set(counts, counts % wrap))

    def queue_pass(self, start_mm: float, end_mm: float, turns: float, rpm: float) -> None:
        """Queue one pass: guide from ``start_mm`` to ``end_mm`` over ``turns`` at ``rpm``."""
        self._need_protocol("PASS")
        self.send("PASS", float(start_mm), float(end_mm), float(turns), float(rpm))

    def go(self) -> None:
        """Start the queued passes, or continue after ``pause``."""
        self._need_protocol("GO")
        self.send("GO")

    resume = go

    def pause(self) -> None:
        """Decelerate to a stop and hold; the queue is kept."""
        self._need_protocol("HOLD")
        self.send("HOLD")

    def stop(self) -> None:
        """Stop now and clear the queue. A no-op on an integer-only device (no motor)."""
        if self._plain:
            return
        self.send("HALT")

    def clear(self) -> None:
        """Clear latched faults (stall, limit, watchdog; e-stop once released)."""
        self._need_protocol("CLR")
        self.send("CLR")

    def measure(self) -> None:
        """Ask for a resistance reading; it arrives as ``DeviceEvent("reading", {"ohm": ...})``."""
        self._need_protocol("MEAS")
        self.send("MEAS")

    def wait_for(self, predicate: Callable[[Status], bool], timeout: float) -> Status:
        """Block until the latest status satisfies ``predicate``; return it."""
        with self._cond:
            ok = self._cond.wait_for(
                lambda: self.status is not None and predicate(self.status), timeout
            )
            if not ok:
                raise CommandTimeout(f"condition not reached within {timeout:g} s")
            assert self.status is not None
            return self.status

    # ---- internals ------------------------------------------------------------------

    def _need_protocol(self, verb: str) -> None:
        if self._plain:
            raise CommandRejected(verb, "CAP")

    def _write(self, data: bytes) -> None:
        ser = self._ser
        if ser is None:
            return
        try:
            with self._wlock:
                ser.write(data)
        except _IO_ERRORS as err:  # the link thread notices the loss on its next read
            log.debug("write failed: %s", err)

    def _handshake(self, ser) -> DeviceInfo:
        """Wait for the power-on hello, flush, send ``HI`` until HELLO + ACK arrive."""
        framer = LineFramer()
        t0 = time.monotonic()
        deadline = t0 + self.hello_timeout
        hello: Hello | None = None
        plain = 0
        protocol_seen = False
        next_hi = t0 + 0.05
        self._seq = self._seq % 65535 + 1
        hi_seq = self._seq
        garbled = 0
        while True:
            now = time.monotonic()
            if now >= deadline:
                # a device that talks through a noisy line (lines arrive, but damaged)
                # gets up to three times the timeout before the handshake gives up
                if (garbled or protocol_seen) and now < t0 + 3 * self.hello_timeout:
                    deadline = min(now + self.hello_timeout, t0 + 3 * self.hello_timeout)
                else:
                    break
            if plain >= 3 and not protocol_seen and now - t0 > 0.6:
                break
            if now >= next_hi:
                try:
                    ser.write(encode_command(hi_seq, "HI"))
                except _IO_ERRORS as err:
                    raise HandshakeError(f"{self.url}: write failed: {err}") from err
                next_hi = now + max(self.ack_timeout, 0.1)
            try:
                data = ser.read(ser.in_waiting or 1)
            except _IO_ERRORS as err:
                raise HandshakeError(f"{self.url}: read failed during handshake: {err}") from err
            for line in framer.feed(data):
                try:
                    msg = parse_device_line(line, allow_plain=True)
                except FrameError:
                    garbled += 1
                    continue
                if isinstance(msg, PlainCount):
                    plain += 1
                    self._tracker_seed = msg.count
                    continue
                protocol_seen = True
                if isinstance(msg, Hello):
                    if hello is None:
                        # first hello may be a power-on greeting after a reset: drop what
                        # the boot left in the buffers and ask again at once
                        try:
                            ser.reset_input_buffer()
                        except _IO_ERRORS:
                            pass
                        framer.reset()
                        next_hi = 0.0
                    hello = msg
                elif isinstance(msg, Ack) and msg.seq == hi_seq and hello is not None:
                    if hello.protocol > PROTOCOL_VERSION:
                        raise HandshakeError(
                            f"{self.url}: device speaks protocol {hello.protocol}; this "
                            f"winder knows protocol {PROTOCOL_VERSION} (update winder)")
                    return _info_from_hello(hello, self.url)
        if plain >= 2 and not protocol_seen:
            return DeviceInfo(
                protocol=0, boot_id="", capabilities=frozenset({"count"}),
                counts_per_rev=self.plain_cpr, wrap=2**63, watchdog_s=0.0, url=self.url,
                state="unknown",
            )
        raise HandshakeError(
            f"{self.url}: no handshake within {self.hello_timeout:g} s "
            "(is it a winder, at 115200 baud?)"
        )

    def _install(self, ser, info: DeviceInfo, *, first: bool) -> bool:
        """Adopt a freshly handshaken port; return True if the device rebooted."""
        rebooted = False
        prev = self.info
        if first:
            self._tracker = TurnTracker(info.counts_per_rev, info.wrap)
            if info.protocol == 0:
                self._tracker.set(self._tracker_seed, self._tracker_seed)
        elif info.protocol and prev is not None and info.boot_id != prev.boot_id:
            rebooted = True
            self.stats.reboots += 1
            self._tracker.rebooted(info.counts_per_rev, info.wrap)
        else:
            self._tracker.reconnected(info.counts_per_rev, info.wrap)
        self._plain = info.protocol == 0
        self._framer = LineFramer()
        with self._cond:
            self._ser = ser
            self.info = info
            self.connected = True
            self._last_valid = time.monotonic()
            self._cond.notify_all()
        return rebooted

    def _emit(self, ev: object) -> None:
        if self._on_event is not None:
            try:
                self._on_event(ev)
            except Exception:  # a consumer bug must not kill the link (and the watchdog feed)
                log.exception("on_event callback raised")
        if self._events is not None:
            try:
                self._events.put_nowait(ev)
            except queue.Full:
                self.dropped_events += 1

    def _lost(self, reason: str) -> None:
        with self._cond:
            ser, self._ser = self._ser, None
            was = self.connected
            self.connected = False
            self._cond.notify_all()
        if ser is not None:
            _quiet_close(ser)
        if was:
            self.stats.losses += 1
            log.info("link lost: %s", reason)
            self._emit(LinkLost(reason, time.monotonic()))

    def _run(self) -> None:
        last_beat = 0.0
        while not self._stop.is_set():
            ser = self._ser
            if ser is None:
                if not self.reconnect:
                    self._stop.wait(0.05)
                    continue
                self._reconnect_loop()
                continue
            try:
                data = ser.read(ser.in_waiting or 1)
            except _IO_ERRORS as err:
                if self._stop.is_set():
                    break
                self._lost(f"read failed: {' '.join(str(err).split())}")
                continue
            now = time.monotonic()
            if data:
                before = self._framer.overlong
                lines = self._framer.feed(data)
                self.stats.too_long += self._framer.overlong - before
                for line in lines:
                    self._handle(line, now)
            if now - self._last_valid > self.silence_s and not self._stop.is_set():
                self._lost(f"no valid line for {now - self._last_valid:.1f} s")
                continue
            if not self._plain and now - last_beat >= self.heartbeat_s:
                last_beat = now
                self._write(encode_command(0, "BEAT"))

    def _reconnect_loop(self) -> None:
        delay = self.backoff_s[0]
        while not self._stop.is_set():
            if self._stop.wait(delay):
                return
            try:
                ser = open_port(self.url, baudrate=self.baudrate)
            except LinkError as err:
                log.debug("reconnect: %s", err)
                delay = min(delay * 2, self.backoff_s[1])
                continue
            try:
                info = self._handshake(ser)
            except LinkError as err:
                log.debug("reconnect handshake: %s", err)
                _quiet_close(ser)
                delay = min(delay * 2, self.backoff_s[1])
                continue
            if self._stop.is_set():
                _quiet_close(ser)
                return
            rebooted = self._install(ser, info, first=False)
            self.stats.reconnects += 1
            self._emit(LinkRestored(rebooted, info, self.turns, time.monotonic()))
            return

    def _handle(self, line: bytes, now: float) -> None:
        try:
            msg = parse_device_line(line, allow_plain=self._plain)
        except FrameError as err:
            if err.reason == "crc":
                self.stats.bad_crc += 1
            elif err.reason == "length":
                self.stats.too_long += 1
            else:
                self.stats.malformed += 1
            return
        self.stats.lines_ok += 1
        self._last_valid = now
        if isinstance(msg, StatusReport):
            if self._went_back(msg.count):
                self._recheck(f"count went back to {msg.count} with no HELLO", now)
                return
            self._accept_back = False
            total = self._tracker.update(msg.count)
            st = Status(
                count=msg.count, turns=total / self._tracker.counts_per_rev, rpm=msg.rpm,
                guide_mm=msg.guide_mm, state=msg.state, faults=faults_from_bits(msg.fault_bits),
                queued=msg.queued, t=now,
            )
            self._publish(st)
        elif isinstance(msg, PlainCount):
            total = self._tracker.update(msg.count)
            st = Status(
                count=msg.count, turns=total / self._tracker.counts_per_rev, rpm=float("nan"),
                guide_mm=None, state="unknown", faults=frozenset(), queued=0, t=now,
            )
            self._publish(st)
        elif isinstance(msg, (Ack, Nak)):
            with self._cond:
                p = self._pending
                if p is None or p.seq != msg.seq or p.result is not None:
                    return
                if isinstance(msg, Ack):
                    if p.on_ack is not None:
                        p.on_ack()
                    p.result = "ack"
                else:
                    self.stats.naks += 1
                    p.result, p.code = "nak", msg.code
                self._cond.notify_all()
        elif isinstance(msg, EventReport):
            self._emit(DeviceEvent(msg.kind, dict(msg.data), now))
        elif isinstance(msg, Hello):
            prev = self.info
            if prev is not None and msg.boot_id != prev.boot_id:
                info = _info_from_hello(msg, self.url)
                self._emit(LinkLost("device rebooted", now))
                self.stats.reboots += 1
                self._tracker.rebooted(info.counts_per_rev, info.wrap)
                with self._cond:
                    self.info = info
                self._emit(DeviceEvent("boot", {"boot_id": msg.boot_id}, now))
                self._emit(LinkRestored(True, info, self.turns, now))

    def _went_back(self, raw: int) -> bool:
        """A status count far below the last one: a device that restarted and whose HELLO
        was lost (a noisy line), unless a re-handshake just said the boot is the same."""
        tr = self._tracker
        if self._plain or tr._last is None or self._accept_back:
            return False
        step = (raw % tr.wrap - tr._last) % tr.wrap
        if step >= tr.wrap // 2:
            step -= tr.wrap
        return step <= -BACK_JUMP_TURNS * tr.counts_per_rev

    def _recheck(self, reason: str, now: float) -> None:
        """Handshake again on the open port (closing it may reset a microcontroller) and
        report a link loss and its restoration, with the reboot found from the boot id."""
        ser = self._ser
        with self._cond:
            was = self.connected
            self.connected = False
            self._cond.notify_all()
        if was:
            self.stats.losses += 1
            log.info("link lost: %s", reason)
            self._emit(LinkLost(reason, now))
        try:
            info = self._handshake(ser)
        except LinkError as err:
            log.debug("re-handshake: %s", err)
            self._lost(reason)
            return
        rebooted = self._install(ser, info, first=False)
        self._accept_back = not rebooted
        self.stats.reconnects += 1
        self._emit(LinkRestored(rebooted, info, self.turns, time.monotonic()))

    def _publish(self, st: Status) -> None:
        with self._cond:
            self.status = st
            self._cond.notify_all()
        self._emit(st)


def _quiet_close(ser) -> None:
    try:
        ser.close()
    except _IO_ERRORS:
        pass
