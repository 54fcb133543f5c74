"""Timing helpers for the benchmark: medians of repeated runs, child processes.

Seconds throughout. Nothing here decides pass or short; the row modules do.
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import time
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[2]


def per_call(fn: Callable[[], Any], *, repeats: int = 7, min_sample_s: float = 0.02,
             max_loops: int = 10_000) -> dict[str, float]:
    """Median seconds per call of ``fn`` over ``repeats`` samples.

    Each sample runs ``fn`` enough times to last about ``min_sample_s`` (the loop
    count is found once, after one warm-up call), so timer resolution does not
    matter. ``median_s`` (also ``best_s``, ``worst_s``) is CPU time of this
    process (:func:`time.process_time`), which on a shared, loaded machine stays
    close to what the call costs; ``wall_median_s`` is the wall clock beside it.
    """
    t0 = time.perf_counter()
    fn()                                   # warm-up: imports, caches
    one = max(time.perf_counter() - t0, 1e-7)
    loops = int(min(max_loops, max(1, min_sample_s / one)))
    cpu, wall = [], []
    for _ in range(repeats):
        c0, w0 = time.process_time(), time.perf_counter()
        for _ in range(loops):
            fn()
        cpu.append((time.process_time() - c0) / loops)
        wall.append((time.perf_counter() - w0) / loops)
    return {"median_s": statistics.median(cpu), "best_s": min(cpu), "worst_s": max(cpu),
            "wall_median_s": statistics.median(wall), "loops": float(loops)}


def timed(fn: Callable[[], Any]) -> tuple[float, float, Any]:
    """(CPU seconds, wall seconds, result) of one call of ``fn``."""
    c0, w0 = time.process_time(), time.perf_counter()
    out = fn()
    return time.process_time() - c0, time.perf_counter() - w0, out


def fmt_time(s: float) -> str:
    """'1.23 ms', '456 us', '2.1 s'."""
    if s >= 1.0:
        return f"{s:.2f} s"
    if s >= 1e-3:
        return f"{s * 1e3:.3g} ms"
    return f"{s * 1e6:.3g} us"


def child_env(data_dir: str | None = None) -> dict[str, str]:
    """Environment for a child python: this checkout first on the path, no animations."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env["TEXTUAL_ANIMATIONS"] = "none"
    if data_dir is not None:
        env["WINDER_DATA_DIR"] = data_dir
    return env


def run_child_json(args: Sequence[str], *, timeout: float = 120.0,
                   env: dict[str, str] | None = None, input: str | None = None) -> dict:
    """Run ``python ARGS...``; return the JSON object on its last stdout line."""
    proc = subprocess.run([sys.executable, *args], capture_output=True, text=True,
                          timeout=timeout, env=env or child_env(), input=input)
    lines = [ln for ln in proc.stdout.splitlines() if ln.strip()]
    if proc.returncode != 0 or not lines:
        tail = " ".join((proc.stderr or proc.stdout).split())[-300:]
        raise RuntimeError(f"child {' '.join(args[:3])} exited {proc.returncode}: {tail}")
    return json.loads(lines[-1])


def time_command(cmd: Sequence[str], env: dict[str, str]) -> tuple[float, float]:
    """(wall seconds, CPU seconds) of one run of ``cmd``, output discarded.

    CPU is user + system time of the child (``RUSAGE_CHILDREN`` before and after;
    the benchmark runs one child at a time here). Raises on a non-zero exit.
    """
    import resource

    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env,
                          timeout=60)
    dt = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} exited {proc.returncode}: "
                           f"{' '.join(proc.stderr.decode(errors='replace').split())[-200:]}")
    cpu = (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)
    return dt, cpu


def alternating(cmds: dict[str, Sequence[str]], runs: int, env: dict[str, str], *,
                warmup: bool = True) -> tuple[dict[str, list[float]], dict[str, list[float]]]:
    """Run every command once per round, in the same order, ``runs`` rounds (A B C A B C ...).

    With ``warmup``, one untimed round first fills the OS file cache and any on-disk
    caches. Returns (wall seconds, CPU seconds) of each timed run, per command.
    """
    for cmd in cmds.values() if warmup else ():
        time_command(cmd, env)
    wall: dict[str, list[float]] = {k: [] for k in cmds}
    cpu: dict[str, list[float]] = {k: [] for k in cmds}
    for _ in range(runs):
        for k, cmd in cmds.items():
            w, c = time_command(cmd, env)
            wall[k].append(w)
            cpu[k].append(c)
    return wall, cpu


_WRAPPER = (
    "import json, resource, subprocess, sys, time\n"
    "t0 = time.perf_counter()\n"
    "p = subprocess.run(sys.argv[2:], stdin=subprocess.DEVNULL)\n"
    "wall = time.perf_counter() - t0\n"
    "r = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
    "json.dump({'rc': p.returncode, 'wall_s': wall, 'cpu_s': r.ru_utime + r.ru_stime,\n"
    "           'maxrss_kb': r.ru_maxrss}, open(sys.argv[1], 'w'))\n"
)


def run_with_rusage(cmd: Sequence[str], env: dict[str, str], *, timeout: float = 120.0
                    ) -> tuple[subprocess.CompletedProcess, dict[str, float]]:
    """Run ``cmd`` under a small wrapper python; return its output and its own rusage.

    The wrapper reads ``ru_maxrss`` (kB), user + system CPU seconds and wall
    seconds of ``cmd`` from ``RUSAGE_CHILDREN``. Linux carries a parent's RSS
    high-water mark into a child over fork and exec, so measuring the child of
    this (large) benchmark process directly would report the benchmark's peak; the
    wrapper's own peak is a bare interpreter's, below any winder command's.
    """
    import tempfile

    with tempfile.NamedTemporaryFile("r", suffix=".json") as out:
        proc = subprocess.run([sys.executable, "-c", _WRAPPER, out.name, *cmd],
                              capture_output=True, text=True, env=env, timeout=timeout)
        text = out.read()
    if not text:
        raise RuntimeError(f"wrapper failed: {' '.join(proc.stderr.split())[-300:]}")
    return proc, json.loads(text)
