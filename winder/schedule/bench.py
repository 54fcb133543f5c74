"""Benchmark: building a 10,000-turn scatter schedule (budget 50 ms).

Run ``python -m winder.schedule.bench`` (optionally ``--turns N --repeats R``).
The coil is the shipped 6.2 kohm sensing coil (42 AWG heavy, scatter, flat
bobbin) with its target set to the given turn count and end taper 0.3; the
figure is the median wall time of :func:`~winder.schedule.build_schedule`
alone (the plan is made once beforehand), with the best and worst runs and the
time to convert the schedule to machine steps. A measurement, not a test.
"""

from __future__ import annotations

import argparse
import statistics
import time
from dataclasses import replace
from typing import Any

BUDGET_S = 0.050


def bench_scatter(turns: int = 10_000, repeats: int = 30) -> dict[str, Any]:
    """Time ``build_schedule`` on a ``turns``-turn scatter coil; returns figures in seconds."""
    from winder.planner import Target, make_plan
    from winder.profile import examples_dir, load_coil
    from winder.schedule import build_schedule, schedule_steps

    coil = load_coil(examples_dir() / "coils" / "sense-6k2.yaml")
    coil = replace(coil, target=Target("turns", float(turns)),
                   style=replace(coil.style, taper=0.3, seed=12345))
    plan = make_plan(coil, force=True)
    build_schedule(plan)                      # warm-up (imports, caches)
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        sched = build_schedule(plan)
        times.append(time.perf_counter() - t0)
    t0 = time.perf_counter()
    schedule_steps(sched)
    steps_s = time.perf_counter() - t0
    return {"turns": plan.turns, "passes": len(sched.passes), "repeats": repeats,
            "median_s": statistics.median(times), "best_s": min(times), "worst_s": max(times),
            "steps_s": steps_s, "budget_s": BUDGET_S}


def main(argv: list[str] | None = None) -> int:
    """Print the benchmark figures; exit 0 within budget, 1 over it."""
    ap = argparse.ArgumentParser(prog="python -m winder.schedule.bench")
    ap.add_argument("--turns", type=int, default=10_000)
    ap.add_argument("--repeats", type=int, default=30)
    args = ap.parse_args(argv)
    r = bench_scatter(args.turns, args.repeats)
    print(f"scatter schedule, {r['turns']} turns, {r['passes']} passes, {r['repeats']} runs: "
          f"median {r['median_s'] * 1e3:.1f} ms (best {r['best_s'] * 1e3:.1f}, worst "
          f"{r['worst_s'] * 1e3:.1f}); steps {r['steps_s'] * 1e3:.1f} ms; budget "
          f"{r['budget_s'] * 1e3:.0f} ms")
    return 0 if r["median_s"] <= r["budget_s"] else 1


if __name__ == "__main__":
    raise SystemExit(main())
