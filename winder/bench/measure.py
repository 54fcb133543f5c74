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
    matter. Returns ``median_s``, ``best_s``, ``worst_s`` and ``loops``.
    """
    t0 = time.perf_counter()
    fn()                                   # warm-up: imports, caches
    one = max(time.perf_counter() - t0, 1e-7)
    loops = int(min(max_loops, max(1, min_sample_s / one)))
    samples = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        for _ in range(loops):
            fn()
        samples.append((time.perf_counter() - t0) / loops)
    return {"median_s": statistics.median(samples), "best_s": min(samples),
            "worst_s": max(samples), "loops": float(loops)}


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


def time_command(cmd: Sequence[str], env: dict[str, str]) -> float:
    """Wall seconds of one run of ``cmd`` (output discarded); raises on a non-zero exit."""
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env,
                          timeout=60)
    dt = time.perf_counter() - t0
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} exited {proc.returncode}: "
                           f"{' '.join(proc.stderr.decode(errors='replace').split())[-200:]}")
    return dt


def alternating(cmds: dict[str, Sequence[str]], runs: int, env: dict[str, str], *,
                warmup: bool = True) -> dict[str, list[float]]:
    """Run every command once per round, in the same order, ``runs`` rounds (A B C A B C ...).

    With ``warmup``, one untimed round first fills the OS file cache and any on-disk caches.
    Returns the wall seconds of each timed run, per command.
    """
    for cmd in cmds.values() if warmup else ():
        time_command(cmd, env)
    out: dict[str, list[float]] = {k: [] for k in cmds}
    for _ in range(runs):
        for k, cmd in cmds.items():
            out[k].append(time_command(cmd, env))
    return out
