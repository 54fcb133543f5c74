"""A session: its directory, its open journal and its live state, kept in step.

:meth:`Session.create` makes the directory and freezes the coil, plan and
schedule; :meth:`Session.open` replays an existing one. :meth:`Session.record`
appends one journal event (fsync'ed) and applies it to :attr:`Session.state`,
so the state a front end shows is always what a replay would rebuild.
:meth:`Session.write_summary` rewrites ``summary.json`` atomically.
"""

from __future__ import annotations

import os
import time
from pathlib import Path
from typing import Any

from winder.session import store
from winder.session.journal import Journal, Replay, TornLine, replay
from winder.session.state import SessionState, effective_state, rebuild


class Session:
    """An open session directory. Not thread-safe: call from one thread."""

    def __init__(self, path: Path, state: SessionState, replayed: Replay | None = None):
        self.path = Path(path)
        self.state = state
        self.replayed = replayed
        self.journal: Journal | None = None
        self._lock: store.SessionLock | None = None

    # ---- construction ------------------------------------------------------------
    @classmethod
    def create(cls, *, coil_name: str, coil_yaml: str, plan: dict[str, Any] | None,
               schedule: dict[str, Any] | None, started: dict[str, Any],
               session_dir: str | os.PathLike | None = None,
               root: Path | None = None, fsync: bool = True) -> Session:
        """Create a session and write its frozen files and ``started`` event.

        ``started`` holds the event fields (see :data:`journal.EVENT_KINDS`);
        ``session`` and ``coil`` are filled in here. The lock is taken.
        """
        if session_dir is not None:
            sid, path = store.use_session_dir(session_dir)
        else:
            sid, path = store.new_session_dir(coil_name, root=root)
        store.write_atomic(path / store.COIL_FILE, coil_yaml.encode())
        if plan is not None:
            store.write_json_atomic(path / store.PLAN_FILE, plan)
        if schedule is not None:
            store.write_json_atomic(path / store.SCHEDULE_FILE, schedule)
        sess = cls(path, SessionState())
        sess._take_lock()
        ev = {"session": sid, "coil": coil_name, **started}
        sess.journal = Journal.create(path / store.JOURNAL_FILE, ev, fsync=fsync)
        sess.state = rebuild(replay(path / store.JOURNAL_FILE).events)
        sess.write_summary()
        return sess

    @classmethod
    def open(cls, ref: str | os.PathLike, *, writable: bool = False,
             fsync: bool = True) -> Session:
        """Open by directory or id; ``writable`` takes the lock and opens for appends."""
        path = store.resolve_session(ref)
        rep = replay(path / store.JOURNAL_FILE)
        sess = cls(path, rebuild(rep.events), rep)
        if writable:
            sess._take_lock()
            sess.journal = Journal.open_append(path / store.JOURNAL_FILE, rep, fsync=fsync)
            if rep.torn is not None and not rep.torn.acknowledged:
                sess.state.events += 1  # the torn_line event just written
        return sess

    def _take_lock(self) -> None:
        lock = store.SessionLock(self.path)
        lock.acquire()
        self._lock = lock

    # ---- recording ------------------------------------------------------------------
    def record(self, kind: str, **data: Any) -> dict[str, Any]:
        """Append an event (fsync'ed) and apply it to the state; returns the event."""
        if self.journal is None:
            raise RuntimeError("session opened read-only")
        ev = self.journal.append(kind, **data)
        self.state.apply(ev)
        return ev

    def write_summary(self) -> dict[str, Any]:
        """Rewrite ``summary.json`` atomically from the current state; returns it."""
        from winder.session.report import build_report

        rep = build_report(self, live=self._lock is not None)
        store.write_json_atomic(self.path / store.SUMMARY_FILE, rep)
        return rep

    @property
    def id(self) -> str:
        return self.state.session or self.path.name

    @property
    def torn(self) -> TornLine | None:
        return self.replayed.torn if self.replayed else None

    def effective_state(self) -> str:
        if self._lock is not None:
            return self.state.state
        return effective_state(self.state, self.path)

    def plan(self) -> dict[str, Any] | None:
        return store.read_json(self.path / store.PLAN_FILE)

    def schedule(self) -> dict[str, Any] | None:
        return store.read_json(self.path / store.SCHEDULE_FILE)

    def coil_file(self) -> Path:
        return self.path / store.COIL_FILE

    def journal_bytes(self) -> int:
        try:
            return (self.path / store.JOURNAL_FILE).stat().st_size
        except OSError:
            return 0

    def close(self) -> None:
        """Close the journal and release the lock (idempotent)."""
        if self.journal is not None:
            self.journal.close()
            self.journal = None
        if self._lock is not None:
            self._lock.release()
            self._lock = None

    def __enter__(self) -> Session:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def now() -> float:
    """Host wall-clock time, epoch seconds (one place, for tests to patch)."""
    return time.time()
