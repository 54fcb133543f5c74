"""The simulated winder: the whole protocol on a real pseudo-terminal or a TCP port.

:class:`SimDevice` is the firmware (protocol, counting, spindle and guide
physics, watchdog); :class:`SimServer` is the wire (pty or TCP), fault injection
and the control channel on stdin/stdout (one JSON object per line).

Timing: ``speedup`` scales simulated motion (spindle, guide, hand cranking); the
protocol's clocks (status rate, watchdog, boot time, link drops) run in real time,
exactly as a real host would see them.
"""

from __future__ import annotations

import json
import math
import os
import random
import selectors
import socket
import sys
import tempfile
import time
import tty
from collections import OrderedDict
from dataclasses import dataclass

from winder.link.codec import (
    MAX_LINE,
    PROTOCOL_VERSION,
    LineFramer,
    encode_device,
    encode_hello,
    encode_status,
    parse_host_line,
)
from winder.link.errors import FrameError
from winder.link.messages import Hello, StatusReport, faults_from_bits

CAPS = {
    "controller": frozenset({"count", "spindle", "traverse", "ohm", "pedal", "limits"}),
    "counter": frozenset({"count", "pedal"}),
    "plain": frozenset({"count"}),
}
F_WDOG, F_STALL, F_ESTOP, F_LIMIT = 0x01, 0x02, 0x04, 0x08


@dataclass
class SimPass:
    start_mm: float
    end_mm: float
    turns: float
    rpm: float
    done: float = 0.0   # turns wound in this pass


class SimDevice:
    """Firmware model. Real times ``now`` in seconds (monotonic); ``dt`` simulated seconds."""

    def __init__(self, mode: str = "controller", *, cpr: int = 1, watchdog_s: float = 1.0,
                 resistance_factor: float = 1.0, ohm_per_turn: float = 0.9,
                 accel_rpm_s: float = 3000.0, travel_mm: float = 60.0, queue_max: int = 32,
                 wrap: int = 2**32, crank_rpm: float = 150.0, seed: int | None = None,
                 now: float = 0.0):
        if mode not in CAPS:
            raise ValueError(mode)
        self.mode = mode
        self.cpr = cpr
        self.watchdog_s = watchdog_s
        self.resistance_factor = resistance_factor
        self.ohm_per_turn = ohm_per_turn
        self.accel = accel_rpm_s
        self.travel_mm = travel_mm
        self.queue_max = queue_max
        self.wrap = wrap
        self.crank_rpm = crank_rpm
        self.rng = random.Random(seed)
        self.coil_turns = 0.0      # physical turns on the coil since the last host ZERO
        self.sim_time = 0.0
        self.boot_count = 0
        self.guide_mm = 0.0
        self.boot(now)

    # ---- lifecycle ------------------------------------------------------------------
    def boot(self, now: float) -> None:
        """Power-on: new boot id, counter 0, motor stopped, queue empty."""
        self.boot_count += 1
        self.boot_id = f"{self.rng.getrandbits(32):08x}"
        self.count_base = 0
        self.revs = 0.0            # revolutions since the counter base
        self.rpm = 0.0
        self.state = "idle"
        self.faults = 0
        self.queue: list[SimPass] = []
        self.replies: OrderedDict[int, bytes] = OrderedDict()
        self.last_host = now
        self.last_status = 0.0
        self._last_sent_state: tuple | None = None
        self._crank_phase = self.rng.random() * 6.28
        self._rest_until = 0.0
        self.bad_lines = 0
        self.watchdog_trip_s: float | None = None   # host silence when the watchdog tripped

    @property
    def has_motor(self) -> bool:
        return self.mode == "controller"

    @property
    def count(self) -> int:
        return (self.count_base + math.floor(self.revs * self.cpr + 1e-9)) % self.wrap

    def hello(self) -> bytes:
        return encode_hello(Hello(
            protocol=PROTOCOL_VERSION, boot_id=self.boot_id, counts_per_rev=self.cpr,
            capabilities=CAPS[self.mode], wrap=self.wrap,
            watchdog_ms=round(self.watchdog_s * 1000) if self.has_motor else 0,
            queue_max=self.queue_max if self.has_motor else 0,
            firmware=f"sim{PROTOCOL_VERSION}-{self.mode[:4]}", state=self.state,
        ))

    def status_line(self) -> bytes:
        if self.mode == "plain":
            return b"%d\r\n" % self.count
        return encode_status(StatusReport(
            count=self.count, rpm=self.rpm,
            guide_mm=self.guide_mm if self.has_motor else None,
            state=self.state, fault_bits=self.faults, queued=len(self.queue),
        ))

    def true_ohm(self) -> float:
        return self.coil_turns * self.ohm_per_turn * self.resistance_factor

    def reading(self) -> tuple[float, bytes]:
        """A noisy resistance reading of the coil so far (0.3 % + 0.05 ohm, 1 sigma)."""
        r = self.true_ohm()
        noisy = max(0.0, r * (1 + self.rng.gauss(0, 0.003)) + self.rng.gauss(0, 0.05))
        return noisy, encode_device("EV", "reading", ohm=round(noisy, 3),
                                    c=self.count)

    # ---- host lines -----------------------------------------------------------------
    def handle(self, line: bytes, now: float) -> list[bytes]:
        if self.mode == "plain":
            return []
        try:
            cmd = parse_host_line(line)
        except FrameError:
            self.bad_lines += 1
            return []                     # bad CRC or syntax: dropped, host retries
        self.last_host = now              # any valid line feeds the watchdog
        if cmd.seq == 0:
            return []                     # unacknowledged: heartbeat only
        if cmd.verb == "HI":              # a new host session: forget remembered replies
            self.replies.clear()
        elif cmd.seq in self.replies:       # repeated sequence number: same answer, no action
            return [self.replies[cmd.seq]]
        out, reply = self._execute(cmd.verb, cmd.args)
        reply_line = (encode_device("ACK", cmd.seq) if reply == "ACK"
                      else encode_device("NAK", cmd.seq, reply))
        self.replies[cmd.seq] = reply_line
        while len(self.replies) > 8:
            self.replies.popitem(last=False)
        return out + [reply_line]

    def _execute(self, verb: str, args: tuple[str, ...]) -> tuple[list[bytes], str]:
        motor = {"PASS", "GO", "HOLD", "MEAS"}
        if verb == "HI":
            return [self.hello()], "ACK"
        if verb == "BEAT":
            return [], "ACK"
        if verb in motor and not self.has_motor:
            return [], "CAP"
        if verb == "ZERO":
            if args:
                return [], "ARG"
            self.count_base, self.revs, self.coil_turns = 0, 0.0, 0.0
            return [], "ACK"
        if verb == "LOAD":
            if len(args) != 1 or not args[0].isdigit() or int(args[0]) >= self.wrap:
                return [], "ARG"
            self.count_base, self.revs = int(args[0]), 0.0
            return [], "ACK"
        if verb == "HALT":
            self.queue.clear()
            self.rpm = 0.0
            if self.state in ("run", "hold"):
                self.state = "idle"
            return [], "ACK"
        if verb == "CLR":
            self.faults = 0
            if self.state in ("fault", "estop"):
                self.state = "hold" if self.queue else "idle"
            return [], "ACK"
        if verb == "PASS":
            try:
                a, b, n, r = (float(x) for x in args)
            except ValueError:
                return [], "ARG"
            if len(args) != 4 or n <= 0 or not 0 < r <= 3000:
                return [], "ARG"
            if not (0 <= a <= self.travel_mm and 0 <= b <= self.travel_mm):
                return [], "ARG"
            if len(self.queue) >= self.queue_max:
                return [], "FUL"
            if self.state in ("fault", "estop"):
                return [], "FLT"
            self.queue.append(SimPass(a, b, n, r))
            return [], "ACK"
        if verb == "GO":
            if self.state in ("fault", "estop"):
                return [], "FLT"
            if not self.queue:
                return [], "STA"
            self.faults &= ~F_WDOG
            self.state = "run"
            return [], "ACK"
        if verb == "HOLD":
            if self.state == "run":
                self.state = "hold"
            return [], "ACK"
        if verb == "MEAS":
            if "ohm" not in CAPS[self.mode]:
                return [], "CAP"
            return [self.reading()[1]], "ACK"
        return [], "UNK"

    # ---- physics --------------------------------------------------------------------
    def step(self, dt: float, now: float) -> list[bytes]:
        """Advance ``dt`` simulated seconds; return lines to send (status, events)."""
        out: list[bytes] = []
        self.sim_time += dt
        if self.has_motor:
            if (now - self.last_host > self.watchdog_s
                    and (self.state == "run" or self.rpm > 0)):
                self.rpm = 0.0                        # drive disabled at once
                self.state = "hold"
                self.faults |= F_WDOG
                self.watchdog_trip_s = now - self.last_host
            self._motor(dt)
        else:
            self._crank(dt)
        period = 0.1 if (self.rpm > 0 or self.state == "run") else 0.25
        key = (self.state, self.faults, len(self.queue))
        if now - self.last_status >= period or key != self._last_sent_state:
            self.last_status = now
            self._last_sent_state = key
            out.append(self.status_line())
        return out

    def _advance(self, revs: float) -> None:
        self.revs += revs
        self.coil_turns += revs

    def _motor(self, dt: float) -> None:
        if self.state != "run" or not self.queue:
            if self.state == "run":
                self.state = "idle"
            self.rpm = max(0.0, self.rpm - self.accel * dt)   # hold: decelerate
            if self.rpm > 0 and self.queue:
                self._wind(dt)
            elif self.rpm > 0:
                self._advance(self.rpm / 60 * dt)
            return
        p = self.queue[0]
        remaining = sum(q.turns - q.done for q in self.queue)
        # fastest rpm from which we can still stop on the last turn
        stop_rpm = math.sqrt(max(0.0, 2 * (self.accel / 60) * remaining)) * 60
        target = min(p.rpm, stop_rpm)
        if self.rpm < target:
            self.rpm = min(target, self.rpm + self.accel * dt)
        else:
            self.rpm = max(target, self.rpm - self.accel * dt)
        if self.rpm < 1.0 and remaining > 0:
            self.rpm = min(p.rpm, 30.0)   # creep the last fraction of a turn
        self._wind(dt)

    def _wind(self, dt: float) -> None:
        revs = self.rpm / 60 * dt
        while revs > 1e-12 and self.queue:
            p = self.queue[0]
            take = min(revs, p.turns - p.done)
            p.done += take
            self._advance(take)
            revs -= take
            self.guide_mm = p.start_mm + (p.end_mm - p.start_mm) * (p.done / p.turns)
            if p.done >= p.turns - 1e-9:
                self.queue.pop(0)
        if not self.queue and self.state == "run":
            self.state = "idle"
            self.rpm = 0.0

    def _crank(self, dt: float) -> None:
        """Hand winding: irregular speed around ``crank_rpm`` with short rests."""
        t = self.sim_time
        if self.crank_rpm <= 0:
            self.rpm = 0.0
            return
        if t < self._rest_until:
            self.rpm = 0.0
            return
        if self.rng.random() < dt / 20.0:          # a rest about every 20 s of cranking
            self._rest_until = t + self.rng.uniform(0.5, 2.0)
        wobble = (0.25 * math.sin(2 * math.pi * t / 1.7 + self._crank_phase)
                  + 0.12 * math.sin(2 * math.pi * t / 0.43) + self.rng.gauss(0, 0.05))
        self.rpm = max(0.0, self.crank_rpm * (1 + wobble))
        self._advance(self.rpm / 60 * dt)

    # ---- faults ---------------------------------------------------------------------
    def _motor_fault(self, bit: int) -> bool:
        """Stop the spindle and latch fault ``bit``; False (nothing done) without a motor."""
        if not self.has_motor:
            return False
        self.rpm = 0.0
        self.state = "fault"
        self.faults |= bit
        return True

    def stall(self) -> list[bytes]:
        if not self._motor_fault(F_STALL):
            return []
        return [encode_device("EV", "stall", c=self.count)]

    def estop(self) -> list[bytes]:
        self.rpm = 0.0 if self.has_motor else self.rpm
        self.queue.clear()
        if self.mode == "plain":
            return []
        self.state = "estop" if self.has_motor else self.state
        self.faults |= F_ESTOP
        return [encode_device("EV", "estop", c=self.count)]

    def limit(self) -> list[bytes]:
        if not self._motor_fault(F_LIMIT):
            return []
        side = "end" if self.guide_mm > self.travel_mm / 2 else "start"
        return [encode_device("EV", "limit", side=side, g=round(self.guide_mm, 3))]

    def pedal(self, down: bool) -> list[bytes]:
        if self.mode == "plain":
            return []
        return [encode_device("EV", "pedal", state="down" if down else "up")]

    def truth(self, now: float) -> dict:
        return {
            "count": self.count, "turns": self.count / self.cpr,
            "coil_turns": round(self.coil_turns, 6), "state": self.state,
            "boot_id": self.boot_id, "boots": self.boot_count, "rpm": round(self.rpm, 3),
            "motor_running": self.rpm > 0, "since_host_s": round(now - self.last_host, 3),
            "queued": len(self.queue), "guide_mm": round(self.guide_mm, 4),
            "faults": sorted(faults_from_bits(self.faults)), "true_ohm": round(self.true_ohm(), 4),
            "mode": self.mode, "cpr": self.cpr, "sim_time_s": round(self.sim_time, 3),
            "bad_lines": self.bad_lines, "watchdog_trip_s": self.watchdog_trip_s,
        }


class SimServer:
    """The wire side: pty (behind a stable symlink) or loopback TCP, faults, control."""

    def __init__(self, device: SimDevice, *, transport: str = "pty", tcp_port: int = 0,
                 speedup: float = 1.0, seed: int | None = None, exit_on_eof: bool = False,
                 out=None):
        self.dev = device
        self.transport = transport
        self.speedup = speedup
        self.rng = random.Random(None if seed is None else seed + 1)
        self.exit_on_eof = exit_on_eof
        self.out = out or sys.stdout
        self.sel = selectors.DefaultSelector()
        self.corrupt = 0.0
        self.drop_until = 0.0
        self.boot_until = 0.0
        self.pending_hello = False
        self.framer = LineFramer(MAX_LINE)
        self.running = True
        self.master: int | None = None
        self.slave: int | None = None
        self.pts = ""
        self.client: socket.socket | None = None
        self.listener: socket.socket | None = None
        self.dir = ""
        self.path = ""
        self.tcp_port = tcp_port
        self.bytes_out = 0
        self.schedule: list[tuple[float, str]] = []   # (real seconds after start, control)

    # ---- wire -----------------------------------------------------------------------
    def start(self) -> str:
        if self.transport == "pty":
            self.dir = tempfile.mkdtemp(prefix="winder-sim-")
            self.path = os.path.join(self.dir, "ttySIM0")
            self._open_pty()
        else:
            ls = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
            ls.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
            ls.bind(("127.0.0.1", self.tcp_port))
            ls.listen(1)
            ls.setblocking(False)
            self.listener = ls
            self.sel.register(ls, selectors.EVENT_READ, "accept")
            self.path = f"socket://127.0.0.1:{ls.getsockname()[1]}"
        return self.path

    def _open_pty(self) -> None:
        master, slave = os.openpty()
        tty.setraw(master)
        tty.setraw(slave)            # no echo, no line editing before the host opens it
        os.set_blocking(master, False)
        self.master, self.slave = master, slave
        self.pts = os.ttyname(slave)
        tmp = self.path + ".new"
        if os.path.lexists(tmp):
            os.unlink(tmp)
        os.symlink(self.pts, tmp)
        os.replace(tmp, self.path)
        self.sel.register(master, selectors.EVENT_READ, "pty")
        self.framer.reset()
        self.send(self.dev.hello())   # the power-on greeting waits in the pty buffer

    def _close_pty(self) -> None:
        if self.master is not None:
            self.sel.unregister(self.master)
            os.close(self.master)
            os.close(self.slave)
            self.master = self.slave = None
        if os.path.lexists(self.path):
            os.unlink(self.path)

    def _close_client(self) -> None:
        if self.client is not None:
            self.sel.unregister(self.client)
            self.client.close()
            self.client = None

    def _corrupted(self, data: bytes) -> bytes:
        """``data`` with each byte replaced by a random one with probability ``corrupt``."""
        if self.corrupt <= 0:
            return data
        b = bytearray(data)
        for i in range(len(b)):
            if self.rng.random() < self.corrupt:
                b[i] = self.rng.randrange(256)
        return bytes(b)

    def send(self, data: bytes) -> None:
        if not data or time.monotonic() < self.drop_until:
            return
        data = self._corrupted(data)
        try:
            if self.master is not None:
                os.write(self.master, data)
            elif self.client is not None:
                self.client.sendall(data)
            self.bytes_out += len(data)
        except BlockingIOError:
            pass                       # host not reading; a real UART drops bytes too
        except OSError:
            if self.client is not None:
                self._close_client()

    def _on_bytes(self, data: bytes, now: float) -> None:
        if now < self.boot_until:
            return                     # booting: the UART is not listening yet
        data = self._corrupted(data)
        for line in self.framer.feed(data):
            for out in self.dev.handle(line, now):
                self.send(out)

    # ---- control --------------------------------------------------------------------
    def reply(self, obj: dict) -> None:
        self.out.write(json.dumps(obj) + "\n")
        self.out.flush()

    def control(self, text: str) -> dict:
        parts = text.split()
        if not parts:
            return {"ok": True}
        cmd, args = parts[0].lower(), parts[1:]
        now = time.monotonic()
        dev = self.dev

        def num(i: int = 0) -> float:
            return float(args[i])

        try:
            if cmd == "truth":
                d = dev.truth(now)
                d.update(linked=now >= self.drop_until, corrupt=self.corrupt,
                         speedup=self.speedup, pts=self.pts)
                return {"ok": True, "cmd": "truth", **d}
            if cmd == "drop":
                secs = num()
                self.drop_until = now + secs
                if self.transport == "pty":
                    self._close_pty()
                else:
                    self._close_client()
                return {"ok": True, "cmd": "drop", "seconds": secs}
            if cmd == "reboot":
                dev.boot(now)
                self.boot_until = now + (num() if args else 0.3)
                self.pending_hello = True
                self.framer.reset()
                return {"ok": True, "cmd": "reboot", "boot_id": dev.boot_id}
            if cmd == "corrupt":
                f = num()
                if not 0 <= f <= 1:
                    raise ValueError("fraction must be 0..1")
                self.corrupt = f
                return {"ok": True, "cmd": "corrupt", "fraction": f}
            if cmd in ("stall", "estop", "limit"):
                for line in getattr(dev, cmd)():
                    self.send(line)
                return {"ok": True, "cmd": cmd, "state": dev.state}
            if cmd == "pedal":
                down = not args or args[0] != "up"
                for line in dev.pedal(down):
                    self.send(line)
                return {"ok": True, "cmd": "pedal", "down": down}
            if cmd == "reading":
                if "ohm" not in CAPS[dev.mode]:
                    raise ValueError("this mode has no resistance capability")
                val, line = dev.reading()
                self.send(line)
                return {"ok": True, "cmd": "reading", "true_ohm": dev.true_ohm(),
                        "reported_ohm": val}
            if cmd == "crank":
                dev.crank_rpm = num()
                return {"ok": True, "cmd": "crank", "rpm": dev.crank_rpm}
            if cmd == "speedup":
                if num() <= 0:
                    raise ValueError("speedup must be > 0")
                self.speedup = num()
                return {"ok": True, "cmd": "speedup", "speedup": self.speedup}
            if cmd == "factor":
                dev.resistance_factor = num()
                return {"ok": True, "cmd": "factor", "factor": dev.resistance_factor}
            if cmd == "inject":
                raw = bytes.fromhex("".join(args))
                if self.master is not None:
                    os.write(self.master, raw)
                elif self.client is not None:
                    self.client.sendall(raw)
                return {"ok": True, "cmd": "inject", "bytes": len(raw)}
            if cmd == "quit":
                self.running = False
                return {"ok": True, "cmd": "quit"}
            if cmd == "help":
                return {"ok": True, "cmd": "help", "commands": CONTROL_COMMANDS}
        except (ValueError, IndexError) as err:
            return {"ok": False, "cmd": cmd, "error": str(err) or "bad argument"}
        return {"ok": False, "cmd": cmd, "error": f"unknown control command {cmd!r}"}

    # ---- main loop ------------------------------------------------------------------
    def run(self, control_in=None) -> None:
        stdin_buf = b""
        cin = control_in if control_in is not None else sys.stdin
        try:
            fd = cin.fileno()
            self.sel.register(fd, selectors.EVENT_READ, "control")
        except (OSError, ValueError, AttributeError):
            fd = None
        last = t_start = time.monotonic()
        try:
            while self.running:
                while self.schedule and time.monotonic() - t_start >= self.schedule[0][0]:
                    self.reply({"scheduled": True, **self.control(self.schedule.pop(0)[1])})
                for key, _ in self.sel.select(timeout=0.005):
                    now = time.monotonic()
                    tag = key.data
                    if tag == "control":
                        chunk = os.read(fd, 4096)
                        if not chunk:
                            self.sel.unregister(fd)
                            if self.exit_on_eof:
                                self.running = False
                            continue
                        stdin_buf += chunk
                        while b"\n" in stdin_buf:
                            line, stdin_buf = stdin_buf.split(b"\n", 1)
                            if line.strip():
                                self.reply(self.control(line.decode("utf-8", "replace")))
                    elif tag == "pty":
                        try:
                            data = os.read(self.master, 4096)
                        except BlockingIOError:
                            continue
                        except OSError:
                            data = b""   # EIO: no host has the slave open; harmless
                        if data:
                            self._on_bytes(data, now)
                    elif tag == "accept":
                        conn, _ = self.listener.accept()
                        if now < self.drop_until:
                            conn.close()
                            continue
                        self._close_client()
                        conn.setblocking(True)
                        conn.settimeout(0.5)
                        conn.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
                        self.client = conn
                        self.sel.register(conn, selectors.EVENT_READ, "client")
                        self.framer.reset()
                        self.send(self.dev.hello())
                    elif tag == "client":
                        try:
                            data = self.client.recv(4096)
                        except OSError:
                            data = b""
                        if not data:
                            self._close_client()
                        else:
                            self._on_bytes(data, now)
                now = time.monotonic()
                if self.transport == "pty" and self.master is None and now >= self.drop_until:
                    self._open_pty()             # cable back in: same path, new pts
                if self.pending_hello and now >= self.boot_until:
                    self.pending_hello = False
                    self.send(self.dev.hello())
                dt = (now - last) * self.speedup
                last = now
                if now >= self.boot_until:
                    for line in self.dev.step(dt, now):
                        self.send(line)
        finally:
            self.close()

    def close(self) -> None:
        if self.transport == "pty":
            self._close_pty()
            try:
                os.rmdir(self.dir)
            except OSError:
                pass
        else:
            self._close_client()
            if self.listener is not None:
                self.listener.close()


CONTROL_COMMANDS = [
    "truth", "drop SECONDS", "reboot [BOOT_SECONDS]", "corrupt FRACTION", "stall",
    "estop", "limit", "pedal [down|up]", "reading", "crank RPM", "speedup K", "factor F",
    "inject HEX",
    "help", "quit",
]


def parse_faults(spec: str) -> list[tuple[float, str]]:
    """``--faults`` spec: comma-separated ``AT:COMMAND`` items, AT in real seconds.

    Example: ``"2:drop 1.5,5:reboot,8:corrupt 0.01,12:stall"``.
    """
    out = []
    for item in filter(None, (s.strip() for s in spec.split(","))):
        at, sep, cmd = item.partition(":")
        if not sep:
            raise ValueError(f"fault {item!r}: expected AT:COMMAND")
        out.append((float(at), cmd.strip()))
    return sorted(out)
