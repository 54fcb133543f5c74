"""The session journal: append-only JSON Lines, one event per line, fsync'ed.

File ``journal.jsonl`` in a session directory. Every line is one JSON object
with at least ``"kind"`` (see :data:`EVENT_KINDS`), ``"seq"`` (0, 1, 2, ... in
file order) and ``"t"`` (host wall-clock time, seconds since the Unix epoch).
The first line is always a ``started`` event carrying ``"format"``
(:data:`FORMAT_VERSION`). Each line is written with one ``write`` call, then
flushed and ``os.fsync``'ed before :meth:`Journal.append` returns, so an event
the caller has seen written survives a host crash or power cut.

Replay (:func:`replay`) tolerates a *torn last line* (a crash in the middle
of a write leaves a line without its newline, or half a JSON object): the
fragment is reported in :attr:`Replay.torn` and left in the file untouched.
If a host later appends to such a journal it first terminates the fragment
with a newline and writes a ``torn_line`` event naming the fragment's line
number, so the fragment stays in the file, is never rewritten, and replay
knows it was acknowledged. Any other unreadable line is an error. A journal
whose ``format`` is newer than this version is refused with a one-line
:class:`~winder.errors.InputError`. Lines longer than :data:`MAX_LINE_BYTES`
are refused when reading (the reader never holds more than that in memory
for one line).

Checkpoint policy (:class:`CheckpointPolicy`): while winding, a ``checkpoint``
event (turns, speed) is written when the count has changed and either
``interval_s`` (default 1 s) has passed since the last one or the count has
moved ``every_turns`` (default 100) turns since it, but never more often than
``min_gap_s`` (0.1 s). A host crash therefore loses at most one second or 100
turns of *host* record, and nothing of the count itself while the device keeps
counting (resume adopts the device's count).
"""

from __future__ import annotations

import json
import math
import os
import time
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from winder.errors import InputError

FORMAT_VERSION = 1
MAX_LINE_BYTES = 64 * 1024

#: Event kinds and what each carries (besides kind, seq, t). Units: turns as
#: floats (whole turns for a counter), seconds, rpm, ohms, degC.
EVENT_KINDS: dict[str, str] = {
    "started": "format, session, coil, planned_turns, target, curve, machine, device",
    "checkpoint": "turns, rpm, elapsed_s (winding time so far)",
    "reading": "turns, ohm (as measured), temp_c (ambient, or null = 20 C assumed), note, source",
    "paused": "turns, reason (user, pedal, signal, fault, ...)",
    "continued": "turns",
    "link_lost": "turns (last known), reason",
    "link_back": "turns, rebooted (bool), device_turns",
    "device_rebooted": "boot_id (new), old_boot_id, turns (preloaded), unaccounted_turns",
    "wire_break": "turns, note",
    "splice": "turns, note",
    "note": "text, turns",
    "target_changed": "stop_turns, reason, target_ohm, ratio",
    "count_corrected": "turns (new), old_turns, reason, ohm",
    "resumed": "turns, device_turns, boot_id, same_boot (bool), pid",
    "torn_line": "line (1-based line number of the fragment), bytes",
    "finished": "turns, reason",
    "aborted": "turns, reason",
}


def _now() -> float:
    return time.time()


class Journal:
    """An open journal for appending. Use :meth:`create` or :meth:`open_append`.

    ``append`` writes one line, flushes and fsyncs; it returns the event dict
    as written (with ``seq`` and ``t``).
    """

    def __init__(self, path: Path, fh, next_seq: int, *, fsync: bool = True):
        self.path = Path(path)
        self._fh = fh
        self.next_seq = next_seq
        self.fsync = fsync

    @classmethod
    def create(cls, path: str | os.PathLike, started: dict[str, Any], *,
               fsync: bool = True) -> Journal:
        """Create a new journal whose first line is ``started`` (format added)."""
        path = Path(path)
        fh = open(path, "xb")  # noqa: SIM115 - kept open for appends
        j = cls(path, fh, 0, fsync=fsync)
        j.append("started", format=FORMAT_VERSION, **started)
        _fsync_dir(path.parent)
        return j

    @classmethod
    def open_append(cls, path: str | os.PathLike, replayed: Replay | None = None, *,
                    fsync: bool = True) -> Journal:
        """Open an existing journal for appending after replaying it.

        A torn last line is terminated with a newline (its bytes are kept) and
        acknowledged by a ``torn_line`` event.
        """
        path = Path(path)
        rep = replayed if replayed is not None else replay(path)
        fh = open(path, "ab")  # noqa: SIM115
        j = cls(path, fh, rep.next_seq, fsync=fsync)
        if rep.torn is not None and not rep.torn.acknowledged:
            fh.write(b"\n")
            j.append("torn_line", line=rep.torn.line, bytes=rep.torn.size)
        return j

    def append(self, kind: str, **data: Any) -> dict[str, Any]:
        """Write one event; flushed and fsync'ed before returning."""
        if kind not in EVENT_KINDS:
            raise ValueError(f"unknown journal event kind {kind!r}")
        event: dict[str, Any] = {"seq": self.next_seq, "t": data.pop("t", None) or _now(),
                                 "kind": kind}
        event.update(data)
        line = json.dumps(event, separators=(",", ":"), allow_nan=False,
                          default=_json_default).encode() + b"\n"
        if len(line) > MAX_LINE_BYTES:
            raise ValueError(f"journal event {kind} is {len(line)} bytes, over {MAX_LINE_BYTES}")
        self._fh.write(line)
        self._fh.flush()
        if self.fsync:
            os.fsync(self._fh.fileno())
        self.next_seq += 1
        return event

    def close(self) -> None:
        if not self._fh.closed:
            self._fh.close()

    def __enter__(self) -> Journal:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def _json_default(obj: Any) -> Any:
    if hasattr(obj, "item"):  # numpy scalars
        return obj.item()
    if isinstance(obj, (set, frozenset, tuple)):
        return list(obj)
    raise TypeError(f"not JSON serialisable: {type(obj).__name__}")


def _fsync_dir(path: Path) -> None:
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


@dataclass(frozen=True)
class TornLine:
    """An unreadable fragment (a crash mid-write). ``line`` is 1-based."""

    line: int
    size: int
    acknowledged: bool   # a later ``torn_line`` event names it

    def describe(self) -> str:
        state = "acknowledged" if self.acknowledged else "left as is"
        return (f"journal line {self.line} is a torn fragment of {self.size} bytes "
                f"(an interrupted write; {state}, not part of the record)")


@dataclass
class Replay:
    """What :func:`replay` read: the events in order and any torn fragment."""

    events: list[dict[str, Any]] = field(default_factory=list)
    torn: TornLine | None = None
    fragments: list[TornLine] = field(default_factory=list)  # all, incl. acknowledged
    format: int = FORMAT_VERSION
    size_bytes: int = 0

    @property
    def next_seq(self) -> int:
        return (self.events[-1]["seq"] + 1) if self.events else 0


CHUNK_BYTES = 1 << 20


def _chunks(path: Path) -> Iterator[tuple[int, list[str], bool]]:
    """(number of the first line, lines without newline, last line had a newline).

    Reads 1 MiB at a time. Memory per line is bounded: a line longer than
    :data:`MAX_LINE_BYTES` is refused as soon as that many bytes have been read
    without a newline. Bytes that are not UTF-8 are replaced (such a line then
    fails to parse as an event). Only the final item can have ``False``.
    """
    n = 1
    rest = b""
    with open(path, "rb") as fh:
        while True:
            chunk = fh.read(CHUNK_BYTES)
            if not chunk:
                break
            data = rest + chunk if rest else chunk
            cut = data.rfind(b"\n") + 1
            rest = data[cut:]
            if cut:
                lines = data[:cut - 1].decode("utf-8", "replace").split("\n")
                for i, line in enumerate(lines):
                    if len(line) > MAX_LINE_BYTES // 4 and len(line.encode()) > MAX_LINE_BYTES:
                        raise InputError(f"line {n + i} is longer than {MAX_LINE_BYTES} bytes; "
                                         "this is not a winder journal", where=str(path))
                yield n, lines, True
                n += len(lines)
            if len(rest) > MAX_LINE_BYTES:
                raise InputError(f"line {n} is longer than {MAX_LINE_BYTES} bytes; "
                                 "this is not a winder journal", where=str(path))
    if rest:
        yield n, [rest.decode("utf-8", "replace")], False


class _Replayer:
    """Line-by-line verdicts for :func:`replay` (the slow path, and the first line)."""

    def __init__(self, path: Path, rep: Replay):
        self.path = path
        self.rep = rep
        self.pending: tuple[int, int] | None = None   # an unreadable line awaiting its verdict
        self.decode = json.JSONDecoder().decode

    def damaged(self) -> InputError:
        assert self.pending is not None
        return InputError(f"line {self.pending[0]} is not a journal event; the journal is "
                          "damaged beyond a torn last line", where=str(self.path))

    def line(self, n: int, raw: str, had_nl: bool) -> None:
        rep = self.rep
        try:
            ev = self.decode(raw)
            if type(ev) is not dict or "kind" not in ev:
                raise ValueError("not an event")
        except ValueError:
            if self.pending is not None:
                raise self.damaged() from None
            self.pending = (n, len(raw.encode("utf-8", "replace")))
            return
        if self.pending is not None:
            if ev.get("kind") == "torn_line" and ev.get("line") == self.pending[0]:
                rep.fragments.append(TornLine(self.pending[0], self.pending[1], True))
                self.pending = None
            else:
                raise self.damaged()
        if not had_nl:
            # complete JSON but no newline: the write stopped just before "\n"
            self.pending = (n, len(raw.encode("utf-8", "replace")))
            return
        if not rep.events:
            self.first(ev)
        rep.events.append(ev)

    def first(self, ev: dict) -> None:
        where = str(self.path)
        if ev.get("kind") != "started":
            raise InputError("the first journal line is not a 'started' event", where=where)
        fmt = ev.get("format")
        if not isinstance(fmt, int) or isinstance(fmt, bool):
            raise InputError("the 'started' event has no format version", where=where)
        if fmt > FORMAT_VERSION:
            raise InputError(f"journal format {fmt} is newer than this winder reads "
                             f"(format {FORMAT_VERSION}); upgrade winder to open it",
                             where=where)
        self.rep.format = fmt


def replay(path: str | os.PathLike) -> Replay:
    """Read a journal. Raises InputError for a missing, newer-format or corrupt file.

    Fast path: the complete lines of each 1 MiB chunk are decoded as one JSON array;
    a chunk that does not decode cleanly into one event per line is judged line by line.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError("no journal here (journal.jsonl missing)", where=str(path.parent))
    rep = Replay(size_bytes=path.stat().st_size)
    r = _Replayer(path, rep)
    decode = r.decode
    for n0, lines, had_nl in _chunks(path):
        if not rep.events and r.pending is None and len(lines) > 1:
            r.line(n0, lines[0], True)       # the started event, checked on its own
            n0, lines = n0 + 1, lines[1:]
        if had_nl and rep.events and r.pending is None:
            try:
                batch = decode("[" + ",".join(lines) + "]")
            except ValueError:
                batch = None
            if batch is not None and len(batch) == len(lines) and all(
                    type(ev) is dict and "kind" in ev for ev in batch):
                rep.events.extend(batch)
                continue
        last = len(lines) - 1
        for i, raw in enumerate(lines):
            r.line(n0 + i, raw, had_nl or i < last)
    if r.pending is not None:
        rep.torn = TornLine(r.pending[0], r.pending[1], False)
        rep.fragments.append(rep.torn)
    if not rep.events:
        raise InputError("the journal holds no complete event", where=str(path))
    return rep


@dataclass
class CheckpointPolicy:
    """When to write a ``checkpoint`` (see the module docstring). Seconds, turns."""

    interval_s: float = 1.0
    every_turns: float = 100.0
    min_gap_s: float = 0.1
    _last_t: float = -math.inf
    _last_turns: float | None = None

    def due(self, turns: float, now: float) -> bool:
        """True if a checkpoint at ``turns`` and host time ``now`` (s) should be written."""
        if self._last_turns is not None and turns == self._last_turns:
            return False
        gap = now - self._last_t
        if gap < self.min_gap_s:
            return False
        if gap >= self.interval_s:
            return True
        return self._last_turns is None or abs(turns - self._last_turns) >= self.every_turns

    def mark(self, turns: float, now: float) -> None:
        """Record that a checkpoint (or any event carrying the count) was written."""
        self._last_t = now
        self._last_turns = turns
