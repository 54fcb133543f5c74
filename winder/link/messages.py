"""Wire messages (what the codec produces) and consumer events (what the driver delivers).

Units: counts are sensor counts (``counts_per_rev`` per spindle revolution),
``rpm`` revolutions per minute, ``guide_mm`` millimetres from the start flange,
times ``t`` are ``time.monotonic()`` seconds on the host.
"""

from __future__ import annotations

from dataclasses import dataclass, field

# Fault flag bits in the status line's ``f=`` field (hex).
FAULT_BITS = {
    0x01: "watchdog",
    0x02: "stall",
    0x04: "estop",
    0x08: "limit",
}
STATES = ("idle", "run", "hold", "fault", "estop")
CAPABILITIES = ("count", "spindle", "traverse", "ohm", "pedal", "limits")


def faults_from_bits(bits: int) -> frozenset[str]:
    """Names of the fault flags set in ``bits``."""
    return frozenset(name for bit, name in FAULT_BITS.items() if bits & bit)


def faults_to_bits(names) -> int:
    """The ``f=`` bit field for fault flag names."""
    rev = {v: k for k, v in FAULT_BITS.items()}
    out = 0
    for n in names:
        out |= rev[n]
    return out


# ---- wire messages (device -> host) ---------------------------------------------------

@dataclass(frozen=True)
class Hello:
    """``HELLO``: sent at power-on and in answer to ``HI``."""

    protocol: int
    boot_id: str
    counts_per_rev: int
    capabilities: frozenset[str]
    wrap: int = 2**32
    watchdog_ms: int = 1000
    queue_max: int = 0
    firmware: str = ""
    state: str = "idle"


@dataclass(frozen=True)
class Ack:
    seq: int


@dataclass(frozen=True)
class Nak:
    seq: int
    code: str


@dataclass(frozen=True)
class StatusReport:
    """``ST``: raw device status."""

    count: int
    rpm: float
    guide_mm: float | None
    state: str
    fault_bits: int
    queued: int


@dataclass(frozen=True)
class EventReport:
    """``EV``: a device event; ``data`` holds the key=value fields (floats where numeric)."""

    kind: str
    data: dict = field(default_factory=dict)


@dataclass(frozen=True)
class PlainCount:
    """A line holding only an integer (fallback devices)."""

    count: int


# ---- wire messages (host -> device) ---------------------------------------------------

@dataclass(frozen=True)
class Command:
    seq: int
    verb: str
    args: tuple[str, ...] = ()


# ---- consumer events ------------------------------------------------------------------

@dataclass(frozen=True)
class DeviceInfo:
    """What the handshake told us. ``protocol`` 0 means an integer-only fallback device."""

    protocol: int
    boot_id: str
    capabilities: frozenset[str]
    counts_per_rev: int
    wrap: int = 2**32
    watchdog_s: float = 1.0
    queue_max: int = 0
    firmware: str = ""
    state: str = "idle"
    url: str = ""

    def to_dict(self) -> dict:
        return {
            "protocol": self.protocol, "boot_id": self.boot_id,
            "capabilities": sorted(self.capabilities), "counts_per_rev": self.counts_per_rev,
            "wrap": self.wrap, "watchdog_s": self.watchdog_s, "queue_max": self.queue_max,
            "firmware": self.firmware, "state": self.state, "url": self.url,
        }


@dataclass(frozen=True)
class Status:
    """A status report with the host-tracked count. ``turns`` = host counts / counts_per_rev."""

    count: int
    turns: float
    rpm: float
    guide_mm: float | None
    state: str
    faults: frozenset[str]
    queued: int
    t: float


@dataclass(frozen=True)
class DeviceEvent:
    kind: str
    data: dict
    t: float


@dataclass(frozen=True)
class LinkLost:
    reason: str
    t: float


@dataclass(frozen=True)
class LinkRestored:
    """Handshake after a loss. ``rebooted``: the boot id changed (count offset applied)."""

    rebooted: bool
    info: DeviceInfo
    turns: float
    t: float


@dataclass
class LinkStats:
    """Counters kept by the driver (link thread writes, anyone reads)."""

    lines_ok: int = 0
    bad_crc: int = 0
    malformed: int = 0
    too_long: int = 0
    naks: int = 0
    retries: int = 0
    losses: int = 0
    reconnects: int = 0
    reboots: int = 0

    @property
    def rejected(self) -> int:
        return self.bad_crc + self.malformed + self.too_long

    def to_dict(self) -> dict:
        d = dict(self.__dict__)
        d["rejected"] = self.rejected
        return d
