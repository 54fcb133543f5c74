"""Session benchmarks: journal replay speed and the cost of one checkpoint.

Run ``python -m winder.session.bench [--events N] [--checkpoints N] [--dir DIR]``.
Figures are measured on the machine it runs on (they are not test assertions):

* replay: a synthetic journal of ``N`` events shaped like a real session
  (mostly checkpoints, a reading every 500, link losses, pauses), read with
  :func:`~winder.session.journal.replay` and folded with
  :func:`~winder.session.state.rebuild`; seconds for each and events per second;
* checkpoint: seconds per :meth:`Journal.append` of a checkpoint, with the
  per-line ``fsync`` and without it (so the fsync's share is visible), median
  and 95th percentile, on the file system of ``--dir`` (default: a temporary
  directory; pass a directory on the disk sessions really live on).
"""

from __future__ import annotations

import argparse
import json
import statistics
import tempfile
import time
from pathlib import Path

from winder.session.journal import Journal, replay
from winder.session.state import rebuild


def write_synthetic(path: Path, events: int) -> None:
    """A journal of ``events`` events (one ``started`` first), written without fsync."""
    curve = [[i * 100.0, i * 82.5] for i in range(129)]
    j = Journal.create(path, {"session": "bench", "coil": "bench coil", "planned_turns": 12800,
                              "target": {"kind": "turns", "value": 12800}, "curve": curve,
                              "device": {"boot_id": "b0"}}, fsync=False)
    t = 1.7e9
    turns = 0.0
    for i in range(1, events):
        t += 0.5
        if i % 500 == 0:
            j.append("reading", turns=turns, ohm=turns * 0.0825, temp_c=22.5, note="",
                     source="device", t=t)
        elif i % 2000 == 0:
            j.append("link_lost", turns=turns, reason="bench", t=t)
        elif i % 2000 == 1 and i > 1:
            j.append("link_back", turns=turns, rebooted=False, device_turns=turns, t=t)
        elif i % 5000 == 7:
            j.append("paused", turns=turns, reason="user", t=t)
        elif i % 5000 == 8:
            j.append("continued", turns=turns, t=t)
        else:
            turns += 12.5
            j.append("checkpoint", turns=turns, rpm=1500.0, elapsed_s=i * 0.5, t=t)
    j.close()


def bench_replay(events: int = 100_000, directory: Path | None = None) -> dict:
    """Seconds to replay and to rebuild the state of an ``events``-event journal."""
    with tempfile.TemporaryDirectory(dir=directory) as d:
        path = Path(d) / "journal.jsonl"
        write_synthetic(path, events)
        size = path.stat().st_size
        best_read = best_fold = float("inf")
        for _ in range(3):
            t0 = time.perf_counter()
            rep = replay(path)
            t1 = time.perf_counter()
            st = rebuild(rep.events)
            t2 = time.perf_counter()
            best_read = min(best_read, t1 - t0)
            best_fold = min(best_fold, t2 - t1)
        assert len(rep.events) == events and st.events == events
    total = best_read + best_fold
    return {"events": events, "bytes": size, "replay_s": best_read, "rebuild_s": best_fold,
            "total_s": total, "events_per_s": events / total, "budget_s": 1.0}


def bench_checkpoint(count: int = 300, directory: Path | None = None) -> dict:
    """Seconds per checkpoint append, with and without the per-line fsync."""
    out: dict = {"count": count}
    with tempfile.TemporaryDirectory(dir=directory) as d:
        for fsync in (True, False):
            path = Path(d) / f"journal-{fsync}.jsonl"
            j = Journal.create(path, {"session": "bench"}, fsync=fsync)
            times = []
            for i in range(count):
                t0 = time.perf_counter()
                j.append("checkpoint", turns=float(i), rpm=1500.0, elapsed_s=float(i))
                times.append(time.perf_counter() - t0)
            j.close()
            times.sort()
            key = "fsync" if fsync else "no_fsync"
            out[key] = {"median_s": statistics.median(times),
                        "p95_s": times[int(0.95 * (len(times) - 1))],
                        "max_s": times[-1], "mean_s": statistics.fmean(times)}
        out["bytes_per_checkpoint"] = len(path.read_bytes()) // (count + 1)
        out["directory"] = str(directory or tempfile.gettempdir())
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m winder.session.bench")
    ap.add_argument("--events", type=int, default=100_000)
    ap.add_argument("--checkpoints", type=int, default=300)
    ap.add_argument("--dir", type=Path, default=None, help="where to write the test files")
    ap.add_argument("--json", action="store_true")
    a = ap.parse_args(argv)
    r = bench_replay(a.events, a.dir)
    c = bench_checkpoint(a.checkpoints, a.dir)
    if a.json:
        print(json.dumps({"replay": r, "checkpoint": c}, indent=2))
        return 0
    print(f"replay of {r['events']} events ({r['bytes'] / 1e6:.1f} MB): "
          f"read {r['replay_s']:.3f} s + rebuild {r['rebuild_s']:.3f} s = {r['total_s']:.3f} s "
          f"({r['events_per_s']:,.0f} events/s; budget {r['budget_s']:g} s)")
    for key, label in (("fsync", "with fsync"), ("no_fsync", "without fsync")):
        s = c[key]
        print(f"checkpoint append {label}: median {s['median_s'] * 1e3:.3f} ms, "
              f"p95 {s['p95_s'] * 1e3:.3f} ms, max {s['max_s'] * 1e3:.3f} ms "
              f"({c['bytes_per_checkpoint']} bytes/line, {c['directory']})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
