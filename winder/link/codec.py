"""The wire codec: bytes in, messages out. Pure (no I/O, no clocks, no threads).

Line format (see ``firmware-protocol.md``)::

    host:   <seq> <VERB> [ARG ...] *<CRC>\\n
    device: <KIND> [key=value ...] *<CRC>\\n

``CRC`` is four upper-case hex digits of CRC-16/CCITT-FALSE (polynomial 0x1021,
initial value 0xFFFF, no reflection, no final XOR; ``binascii.crc_hqx(data,
0xFFFF)``) over every byte before the space that precedes ``*``. Lines are at most
:data:`MAX_LINE` bytes including the LF; CR is ignored.
"""

from __future__ import annotations

import binascii

from winder.link.errors import FrameError
from winder.link.messages import (
    Ack,
    Command,
    EventReport,
    Hello,
    Nak,
    PlainCount,
    StatusReport,
)

MAX_LINE = 160          # bytes, including the terminating LF
PROTOCOL_VERSION = 1
HOST_VERBS = frozenset({"HI", "BEAT", "ZERO", "LOAD", "PASS", "GO", "HOLD", "HALT", "CLR", "MEAS"})
_HEX = frozenset(b"0123456789ABCDEF")


def crc16(data: bytes) -> int:
    """CRC-16/CCITT-FALSE of ``data`` (``binascii.crc_hqx`` with init 0xFFFF)."""
    return binascii.crc_hqx(data, 0xFFFF)


def _seal(body: str) -> bytes:
    raw = body.encode("ascii")
    line = b"%s *%04X\n" % (raw, crc16(raw))
    if len(line) > MAX_LINE:
        raise FrameError("length", line)
    return line


def _token(x) -> str:
    if isinstance(x, float):
        s = f"{x:.3f}".rstrip("0").rstrip(".")
        return s if s not in ("", "-0") else "0"
    s = str(x)
    if not s or any(c.isspace() for c in s) or "*" in s or not s.isascii():
        raise FrameError("syntax", s.encode("utf-8", "replace"))
    return s


def encode_command(seq: int, verb: str, *args) -> bytes:
    """One host command line. ``seq`` 1..65535, or 0 for unacknowledged (heartbeat)."""
    if not 0 <= seq <= 65535:
        raise FrameError("syntax", str(seq).encode())
    return _seal(" ".join([str(seq), _token(verb), *(_token(a) for a in args)]))


def encode_device(kind: str, *fields, **kv) -> bytes:
    """One device line: positional fields first, then ``key=value`` pairs."""
    parts = [_token(kind), *(_token(f) for f in fields)]
    parts += [f"{k}={_token(v)}" for k, v in kv.items()]
    return _seal(" ".join(parts))


def encode_hello(h: Hello) -> bytes:
    return encode_device(
        "HELLO", proto=h.protocol, boot=h.boot_id, cpr=h.counts_per_rev,
        caps=",".join(sorted(h.capabilities)) or "-", bits=h.wrap.bit_length() - 1,
        wdog_ms=h.watchdog_ms,
        qmax=h.queue_max, fw=h.firmware or "-", s=h.state,
    )


def encode_status(s: StatusReport) -> bytes:
    kv = {"c": s.count, "rpm": round(float(s.rpm), 1)}
    if s.guide_mm is not None:
        kv["g"] = round(float(s.guide_mm), 3)
    kv.update(s=s.state, f=f"{s.fault_bits:X}", q=s.queued)
    return encode_device("ST", **kv)


def unseal(line: bytes) -> str:
    """Check the CRC of one line (without LF) and return its body as text."""
    line = line.rstrip(b"\r")
    if len(line) >= MAX_LINE:
        raise FrameError("length", line)
    if len(line) < 7 or line[-6:-4] != b" *":
        raise FrameError("syntax", line)
    body, tail = line[:-6], line[-4:]
    if not set(tail) <= _HEX:
        raise FrameError("syntax", line)
    if crc16(body) != int(tail, 16):
        raise FrameError("crc", line)
    try:
        text = body.decode("ascii")
    except UnicodeDecodeError:
        raise FrameError("syntax", line) from None
    if not text.isprintable():
        raise FrameError("syntax", line)
    return text


def _kv(tokens: list[str], line: bytes) -> dict[str, str]:
    out: dict[str, str] = {}
    for t in tokens:
        k, sep, v = t.partition("=")
        if not sep or not k or not v:
            raise FrameError("syntax", line)
        out[k] = v
    return out


def _int(v: str, line: bytes, lo: int = 0, hi: int = 2**63) -> int:
    if not v.isdigit() or len(v) > 20:
        raise FrameError("syntax", line)
    n = int(v)
    if not lo <= n <= hi:
        raise FrameError("range", line)
    return n


def _float(v: str, line: bytes) -> float:
    if len(v) > 24:
        raise FrameError("syntax", line)
    try:
        x = float(v)
    except ValueError:
        raise FrameError("syntax", line) from None
    if x != x or x in (float("inf"), float("-inf")):
        raise FrameError("syntax", line)
    return x


def _plain(line: bytes):
    s = line.strip()
    if s.startswith(b"-"):
        s2 = s[1:]
    else:
        s2 = s
    if s2.isdigit() and 0 < len(s2) <= 19:
        return PlainCount(int(s))
    return None


def parse_device_line(line: bytes, *, allow_plain: bool = False):
    """Decode one device line (no LF) into a message; raise :class:`FrameError`.

    With ``allow_plain`` a line holding only an integer becomes :class:`PlainCount`.
    """
    if allow_plain:
        p = _plain(line)
        if p is not None:
            return p
    text = unseal(line)
    tokens = text.split(" ")
    if any(not t for t in tokens):
        raise FrameError("syntax", line)
    kind, rest = tokens[0], tokens[1:]
    if kind == "ST":
        kv = _kv(rest, line)
        try:
            return StatusReport(
                count=_int(kv["c"], line),
                rpm=_float(kv["rpm"], line),
                guide_mm=_float(kv["g"], line) if "g" in kv else None,
                state=kv["s"],
                fault_bits=int(kv["f"], 16) if set(kv["f"]) <= set("0123456789ABCDEFabcdef")
                and len(kv["f"]) <= 8 else _bad(line),
                queued=_int(kv["q"], line, 0, 65535),
            )
        except KeyError:
            raise FrameError("syntax", line) from None
    if kind == "ACK":
        if len(rest) != 1:
            raise FrameError("syntax", line)
        return Ack(_int(rest[0], line, 0, 65535))
    if kind == "NAK":
        if len(rest) != 2:
            raise FrameError("syntax", line)
        return Nak(_int(rest[0], line, 0, 65535), rest[1])
    if kind == "EV":
        if not rest:
            raise FrameError("syntax", line)
        kv = _kv(rest[1:], line)
        data: dict = {}
        for k, v in kv.items():
            try:
                data[k] = _float(v, line)
            except FrameError:
                data[k] = v
        return EventReport(rest[0], data)
    if kind == "HELLO":
        kv = _kv(rest, line)
        try:
            caps = kv["caps"]
            return Hello(
                protocol=_int(kv["proto"], line, 1, 999),
                boot_id=kv["boot"],
                counts_per_rev=_int(kv["cpr"], line, 1, 10**6),
                capabilities=frozenset() if caps == "-" else frozenset(caps.split(",")),
                wrap=2 ** _int(kv.get("bits", "32"), line, 4, 64),
                watchdog_ms=_int(kv.get("wdog_ms", "1000"), line, 0, 10**6),
                queue_max=_int(kv.get("qmax", "0"), line, 0, 65535),
                firmware="" if kv.get("fw", "-") == "-" else kv["fw"],
                state=kv.get("s", "idle"),
            )
        except KeyError:
            raise FrameError("syntax", line) from None
    raise FrameError("unknown", line)


def _bad(line: bytes):
    raise FrameError("syntax", line)


def parse_host_line(line: bytes) -> Command:
    """Decode one host command line (no LF); raise :class:`FrameError`.

    ``FrameError.reason`` is ``crc``/``syntax``/``length``; an unknown verb still
    parses (the device answers ``NAK seq UNK``).
    """
    text = unseal(line)
    tokens = text.split(" ")
    if len(tokens) < 2 or any(not t for t in tokens):
        raise FrameError("syntax", line)
    seq = _int(tokens[0], line, 0, 65535)
    return Command(seq, tokens[1], tuple(tokens[2:]))


class LineFramer:
    """Split a byte stream into lines of at most :data:`MAX_LINE` bytes.

    ``feed(data)`` returns the complete lines (LF and CR stripped, empty lines
    dropped). A line longer than the bound is discarded up to its LF and counted in
    ``overlong``; the partial tail is kept for the next call. Never raises.
    """

    def __init__(self, max_line: int = MAX_LINE):
        self.max_line = max_line
        self._buf = bytearray()
        self._skipping = False
        self.overlong = 0

    def reset(self) -> None:
        self._buf.clear()
        self._skipping = False

    def feed(self, data: bytes) -> list[bytes]:
        out: list[bytes] = []
        buf = self._buf
        buf += data
        start = 0
        while True:
            i = buf.find(b"\n", start)
            if i < 0:
                break
            if self._skipping:
                self._skipping = False
            elif i - start < self.max_line:
                line = bytes(buf[start:i]).rstrip(b"\r")
                if line:
                    out.append(line)
            else:
                self.overlong += 1
            start = i + 1
        del buf[:start]
        if len(buf) >= self.max_line:
            if not self._skipping:
                self.overlong += 1
            self._skipping = True
            buf.clear()
        return out
