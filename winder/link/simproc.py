"""Run the simulated winder as a subprocess (for tests and demos).

>>> sim = start_sim(speedup=20)          # doctest: +SKIP
>>> sim.device                            # a path to open with WinderLink
>>> sim.truth()["coil_turns"]             # the true count, from the sim process
>>> sim.close()

The subprocess survives whatever happens to the host under test (it is only
tied to the process that called :func:`start_sim`: it exits when that process's
end of its stdin closes).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path

from winder.link.errors import LinkError

_ROOT = Path(__file__).resolve().parents[2]


class SimProcess:
    """A running ``winder sim``; ``device`` is its path or URL."""

    def __init__(self, proc: subprocess.Popen, device: str):
        self.proc = proc
        self.device = device
        self.pid = proc.pid
        self._lock = threading.Lock()

    def control(self, command: str, timeout: float = 5.0) -> dict:
        """Send one control line; return the JSON answer."""
        with self._lock:
            if self.proc.poll() is not None:
                raise LinkError(f"simulator exited with code {self.proc.returncode}")
            assert self.proc.stdin is not None and self.proc.stdout is not None
            self.proc.stdin.write(command.strip() + "\n")
            self.proc.stdin.flush()
            deadline = time.monotonic() + timeout
            while time.monotonic() < deadline:
                line = self.proc.stdout.readline()
                if not line:
                    raise LinkError("simulator closed its output")
                obj = json.loads(line)
                if obj.get("scheduled"):
                    continue
                return obj
            raise LinkError(f"simulator did not answer {command!r}")

    def truth(self) -> dict:
        return self.control("truth")

    def wait_truth(self, cond: Callable[[dict], bool], timeout: float,
                   poll_s: float = 0.05) -> dict | None:
        """The first truth (polled every ``poll_s`` s) for which ``cond`` holds, or None
        after ``timeout`` seconds."""
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            t = self.truth()
            if cond(t):
                return t
            time.sleep(poll_s)
        return None

    def close(self) -> None:
        """Stop the simulator (idempotent)."""
        if self.proc.poll() is None:
            try:
                self.proc.stdin.close()
            except OSError:
                pass
            try:
                self.proc.wait(2.0)
            except subprocess.TimeoutExpired:
                self.proc.terminate()
                try:
                    self.proc.wait(2.0)
                except subprocess.TimeoutExpired:
                    self.proc.kill()
                    self.proc.wait()
        for f in (self.proc.stdout, self.proc.stderr):
            if f is not None:
                f.close()

    def __enter__(self) -> SimProcess:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def start_sim(*, mode: str = "controller", speedup: float = 1.0, tcp: int | None = None,
              extra: list[str] | None = None, timeout: float = 10.0) -> SimProcess:
    """Start ``python -m winder sim`` and wait for its device path."""
    cmd = [sys.executable, "-m", "winder", "sim", "--mode", mode, "--speedup", str(speedup),
           "--exit-on-eof"]
    cmd += ["--tcp", str(tcp)] if tcp is not None else ["--pty"]
    cmd += list(extra or [])
    env = dict(os.environ)
    env["PYTHONPATH"] = str(_ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    proc = subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, bufsize=1, env=env)
    assert proc.stdout is not None
    first = proc.stdout.readline()
    if not first:
        err = proc.stderr.read() if proc.stderr else ""
        proc.wait(timeout)
        raise LinkError(f"simulator failed to start: {' '.join(err.split())[-300:]}")
    return SimProcess(proc, first.split()[-1])
