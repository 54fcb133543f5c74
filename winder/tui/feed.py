"""The bridge between the winding threads and the screen.

Serial I/O runs in the link's reader thread (and the session runner that
consumes its events); the Textual app runs in its own event loop. Nothing in a
thread touches a widget or a reactive. Instead the thread side calls the
``Feed`` methods, which only update the latest state under a lock and append to
a bounded queue of events; the monitor's fixed-rate refresh timer calls
:meth:`Feed.take` and renders whatever is newest. However fast counts arrive,
the screen redraws at the timer's rate, and a burst of device events becomes
one batch.

:class:`WindControl` is what the monitor calls to act on the winder; the
adapter for the session runner implements it (see :mod:`winder.tui.runner`).
"""

from __future__ import annotations

import threading
import time
from collections import deque
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Protocol

LINK_STATES = ("offline", "connecting", "connected", "reconnecting", "rebooted", "lost")
RUN_STATES = ("idle", "running", "paused", "stopped", "done", "fault")


@dataclass(frozen=True)
class Status:
    """The latest machine state, as the monitor shows it.

    ``turns`` is the host-tracked count (monotonic across reconnects); ``rpm``
    spindle speed in rev/min; ``guide_mm`` the traverse position the device
    reports (mm from the start flange), None without a traverse; ``state`` one of
    :data:`RUN_STATES`; ``link`` one of :data:`LINK_STATES`.
    """

    turns: float = 0.0
    rpm: float = 0.0
    guide_mm: float | None = None
    state: str = "idle"
    link: str = "offline"
    link_detail: str = ""
    faults: tuple[str, ...] = ()
    stop_turns: float | None = None   # where the session stops (None: the plan's turns)


@dataclass(frozen=True)
class LogLine:
    """One line for the event log: wall time (s since epoch), kind, text."""

    at: float
    kind: str        # "info" | "warn" | "error" | "reading" | "mark" | "link"
    text: str


@dataclass(frozen=True)
class ReadingIn:
    """A resistance reading recorded (by the session) at a count: turns, ohm, degC."""

    turns: float
    ohm: float
    temp_c: float


@dataclass
class Batch:
    """What changed since the last :meth:`Feed.take`."""

    status: Status
    changed: bool
    lines: list[LogLine] = field(default_factory=list)
    readings: list[ReadingIn] = field(default_factory=list)
    dropped: int = 0


class Feed:
    """Thread-safe latest-state mailbox with a bounded event queue.

    Any thread may call :meth:`status`, :meth:`log` and :meth:`reading`; only the
    UI calls :meth:`take`. ``clock`` gives wall time for log lines (tests freeze it).
    """

    MAX_LINES = 500

    def __init__(self, clock: Callable[[], float] = time.time):
        self._lock = threading.Lock()
        self._status = Status()
        self._changed = True
        self._lines: deque[LogLine] = deque()
        self._readings: list[ReadingIn] = []
        self._dropped = 0
        self.clock = clock

    def status(self, **changes: object) -> None:
        """Merge ``changes`` (fields of :class:`Status`) into the latest state."""
        with self._lock:
            self._status = replace(self._status, **changes)  # type: ignore[arg-type]
            self._changed = True

    def current(self) -> Status:
        """The latest state (any thread)."""
        with self._lock:
            return self._status

    def log(self, text: str, kind: str = "info") -> None:
        """Queue a line for the event log; the oldest lines go first past MAX_LINES."""
        line = LogLine(self.clock(), kind, text)
        with self._lock:
            self._lines.append(line)
            while len(self._lines) > self.MAX_LINES:
                self._lines.popleft()
                self._dropped += 1

    def reading(self, turns: float, ohm: float, temp_c: float) -> None:
        """Queue a resistance reading that has been recorded (journalled)."""
        with self._lock:
            self._readings.append(ReadingIn(turns, ohm, temp_c))

    def take(self) -> Batch:
        """Everything since the last call (UI thread)."""
        with self._lock:
            batch = Batch(self._status, self._changed, list(self._lines),
                          self._readings, self._dropped)
            self._lines.clear()
            self._readings = []
            self._changed = False
            self._dropped = 0
        return batch


class WindControl(Protocol):
    """Actions the monitor takes on the winder. Every call returns promptly.

    Methods may raise :class:`winder.errors.WinderError` with a one-line message,
    which the monitor shows in the log. ``close`` must stop the motor before
    anything else and be safe to call twice.
    """

    feed: Feed
    motor: bool          # True when the machine has a motor (a caution is due before it runs)

    def start(self) -> None: ...
    def pause(self) -> None: ...
    def resume(self) -> None: ...
    def stop(self) -> None: ...
    def log_reading(self, ohm: float, temp_c: float) -> None: ...
    def mark(self, kind: str, text: str = "") -> None: ...
    def close(self, reason: str = "quit") -> None: ...
