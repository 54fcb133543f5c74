"""Where sessions live and what a session directory holds.

Sessions are directories under ``<data dir>/sessions`` where the data dir is
``$WINDER_DATA_DIR`` if set, else ``platformdirs.user_data_dir("winder")``;
``--session DIR`` puts one anywhere. A session id is readable:
``<coil-name-slug>-<YYYYMMDD>-<counter>`` (e.g. ``driver-8-ohm-20261201-002``).
The slug keeps only ``a-z``, ``0-9`` and ``-``, so no coil name (``../..``,
``/etc``, a drive letter, NUL bytes) can make a path leave the sessions dir;
ids given on the command line are checked against the same pattern.

A session directory holds:

* ``coil.yaml``     - the coil profile as wound (frozen copy, self-contained)
* ``plan.json``     - the plan (``Plan.to_dict()``), frozen
* ``schedule.json`` - the pass schedule, frozen (absent for hand winding)
* ``journal.jsonl`` - the append-only event journal (:mod:`.journal`)
* ``summary.json``  - the latest summary, rewritten atomically
  (temporary file in the same directory, fsync, ``os.replace``, fsync dir)
* ``lock``          - held (``flock``) by the host process winding it
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import re
import tempfile
import unicodedata
from pathlib import Path
from typing import Any

from winder.errors import InputError
from winder.session.journal import _fsync_dir

COIL_FILE = "coil.yaml"
PLAN_FILE = "plan.json"
SCHEDULE_FILE = "schedule.json"
JOURNAL_FILE = "journal.jsonl"
SUMMARY_FILE = "summary.json"
LOCK_FILE = "lock"

_ID_RE = re.compile(r"^[a-z0-9][a-z0-9-]{0,80}$")
SLUG_MAX = 40


def data_dir() -> Path:
    """The user data directory (``$WINDER_DATA_DIR`` overrides platformdirs)."""
    env = os.environ.get("WINDER_DATA_DIR")
    if env:
        return Path(env).expanduser()
    import platformdirs

    return Path(platformdirs.user_data_dir("winder"))


def sessions_dir() -> Path:
    """``<data dir>/sessions`` (not created here)."""
    return data_dir() / "sessions"


def slugify(name: str) -> str:
    """A coil name as a safe path component: lowercase ``a-z0-9`` words joined by ``-``."""
    text = unicodedata.normalize("NFKD", str(name)).encode("ascii", "ignore").decode()
    slug = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    slug = slug[:SLUG_MAX].rstrip("-")
    return slug or "coil"


def new_session_dir(coil_name: str, *, root: Path | None = None,
                    today: _dt.date | None = None) -> tuple[str, Path]:
    """Create and return ``(id, path)`` of a fresh session directory under ``root``."""
    root = Path(root) if root is not None else sessions_dir()
    root.mkdir(parents=True, exist_ok=True)
    day = (today or _dt.date.today()).strftime("%Y%m%d")
    base = f"{slugify(coil_name)}-{day}"
    for counter in range(1, 10000):
        sid = f"{base}-{counter:03d}"
        path = root / sid
        if path.resolve().parent != root.resolve():  # belt and braces
            raise InputError("coil name makes an unsafe session path", key="name")
        try:
            path.mkdir()
        except FileExistsError:
            continue
        return sid, path
    raise InputError(f"too many sessions named {base}", where=str(root))


def use_session_dir(path: str | os.PathLike) -> tuple[str, Path]:
    """An explicit ``--session DIR`` for a new session: must be absent or empty."""
    path = Path(path).expanduser()
    if path.exists():
        if not path.is_dir():
            raise InputError("not a directory", where="--session", key=str(path))
        if any(path.iterdir()):
            raise InputError(f"{path} is not empty; use `winder resume {path}` to continue "
                             "a session there", where="--session")
    else:
        path.mkdir(parents=True)
    return path.resolve().name, path


def resolve_session(ref: str | os.PathLike) -> Path:
    """A session given as a directory path or as an id under the sessions dir."""
    text = str(ref)
    p = Path(text).expanduser()
    if (p / JOURNAL_FILE).is_file():
        return p
    if _ID_RE.match(text):
        cand = sessions_dir() / text
        if (cand / JOURNAL_FILE).is_file():
            return cand
        root = sessions_dir()
        if root.is_dir():  # a unique prefix is enough
            hits = sorted(d for d in root.iterdir()
                          if d.name.startswith(text) and (d / JOURNAL_FILE).is_file())
            if len(hits) == 1:
                return hits[0]
            if len(hits) > 1:
                raise InputError(f"{len(hits)} sessions start with {text!r}: "
                                 + ", ".join(h.name for h in hits[:5]), where="SESSION")
    raise InputError(f"no session {text!r} (give a session directory or an id from "
                     "`winder history`)", where="SESSION")


def list_sessions(root: Path | None = None) -> list[Path]:
    """All session directories (those holding a journal) under ``root``, by name."""
    root = Path(root) if root is not None else sessions_dir()
    if not root.is_dir():
        return []
    return sorted(d for d in root.iterdir() if (d / JOURNAL_FILE).is_file())


def write_atomic(path: str | os.PathLike, data: bytes) -> None:
    """Replace ``path`` with ``data``: temp file in the same dir, fsync, os.replace."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    _fsync_dir(path.parent)


def write_json_atomic(path: str | os.PathLike, obj: Any) -> None:
    """Atomically write ``obj`` as indented JSON."""
    write_atomic(path, (json.dumps(obj, indent=2, allow_nan=False) + "\n").encode())


def read_json(path: str | os.PathLike) -> Any | None:
    """A JSON file's content, or None when it does not exist."""
    path = Path(path)
    try:
        return json.loads(path.read_text())
    except FileNotFoundError:
        return None
    except ValueError as err:
        raise InputError(f"not valid JSON ({err})", where=str(path)) from None


class SessionLock:
    """An exclusive advisory lock on ``<session>/lock`` held while a host winds.

    ``held_elsewhere(path)`` tells a reader whether another live process holds
    it (so a report can say *running* rather than *interrupted*).
    """

    def __init__(self, session_dir: Path):
        self.path = Path(session_dir) / LOCK_FILE
        self._fd: int | None = None

    def acquire(self) -> None:
        try:
            import fcntl
        except ImportError:  # not POSIX: no advisory lock (a report cannot tell running
            return           # from interrupted there)
        fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            os.close(fd)
            raise InputError("another winder process is winding this session",
                             where=str(self.path.parent)) from None
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode())
        self._fd = fd

    def release(self) -> None:
        if self._fd is not None:
            os.close(self._fd)
            self._fd = None

    @staticmethod
    def held_elsewhere(session_dir: Path) -> bool:
        try:
            import fcntl
        except ImportError:
            return False
        path = Path(session_dir) / LOCK_FILE
        try:
            fd = os.open(path, os.O_RDONLY)
        except OSError:
            return False
        try:
            fcntl.flock(fd, fcntl.LOCK_SH | fcntl.LOCK_NB)
        except OSError:
            return True
        else:
            fcntl.flock(fd, fcntl.LOCK_UN)
            return False
        finally:
            os.close(fd)
