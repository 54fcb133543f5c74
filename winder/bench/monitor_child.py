"""A headless monitor under a count stream: ``python -m winder.bench.monitor_child``.

Runs the real :class:`~winder.tui.app.WinderApp` monitor (Textual ``run_test``,
headless, 120 x 40 cells) for the shipped 6.2 kohm sensing coil and its schedule,
fed by a thread that plays the link side: it merges a new count into the
:class:`~winder.tui.feed.Feed` at ``--hz`` (turns rising as at ``--rpm``), adds a
log line every ``--log-every`` seconds and a resistance reading every
``--reading-every`` seconds. After ``--warmup`` seconds it measures this
process's CPU time (all threads: the UI and the feeder) over ``--seconds`` of
wall time, then prints one JSON line: cpu_s, wall_s, frames rendered, updates
fed, peak RSS (``hwm_kb``, see :func:`peak_rss_kb`; ``maxrss_kb`` = ``ru_maxrss``).
"""

from __future__ import annotations

import argparse
import asyncio
import json
import resource
import sys
import threading
import time
from dataclasses import replace


class StreamControl:
    """The monitor's WindControl for the benchmark: a feed and no motor actions."""

    motor = True

    def __init__(self) -> None:
        from winder.tui.feed import Feed

        self.feed = Feed()
        self.feed.status(link="connected", state="running", rpm=0.0)

    def start(self) -> None: ...
    def pause(self) -> None: ...
    def resume(self) -> None: ...
    def stop(self) -> None: ...
    def log_reading(self, ohm: float, temp_c: float) -> None: ...
    def mark(self, kind: str, text: str = "") -> None: ...
    def close(self, reason: str = "quit") -> None: ...


def feeder(control: StreamControl, stop: threading.Event, hz: float, rpm: float,
           log_every: float, reading_every: float, ohm_per_turn: float, counter: list[int],
           turns_cap: float) -> None:
    """Push counts at ``hz`` until ``stop``; a drift-free schedule of ticks."""
    feed = control.feed
    period = 1.0 / hz
    t0 = time.perf_counter()
    next_log = next_reading = t0
    i = 0
    while not stop.is_set():
        i += 1
        due = t0 + i * period
        now = time.perf_counter()
        if due > now:
            time.sleep(due - now)
            now = time.perf_counter()
        turns = min(turns_cap, (now - t0) * rpm / 60.0)
        feed.status(turns=turns, rpm=rpm, guide_mm=2.0 + (turns * 0.07) % 8.0)
        counter[0] += 1
        if log_every > 0 and now >= next_log:
            next_log += log_every
            feed.log(f"checkpoint at {turns:.0f} turns, {rpm:.0f} rpm")
        if reading_every > 0 and now >= next_reading:
            next_reading += reading_every
            feed.reading(turns, turns * ohm_per_turn, 22.5)


def attribute() -> dict[str, list[float]]:
    """Time every widget's ``render_lines`` and the monitor's ``render_batch`` (CPU s).

    Returns the live table {name: [cpu seconds, calls]}; the wrapping costs two
    clock reads per call, which is negligible next to what it measures.
    """
    from textual.widget import Widget

    from winder.tui.monitor_view import MonitorScreen

    table: dict[str, list[float]] = {}

    def wrap(cls: type, name: str, label) -> None:
        orig = getattr(cls, name)

        def timed(self, *a, **k):
            c0 = time.process_time()
            try:
                return orig(self, *a, **k)
            finally:
                cell = table.setdefault(label(self), [0.0, 0])
                cell[0] += time.process_time() - c0
                cell[1] += 1

        setattr(cls, name, timed)

    wrap(Widget, "render_lines", lambda w: f"{type(w).__name__}#{w.id or '-'} render")
    wrap(MonitorScreen, "render_batch", lambda w: "MonitorScreen.render_batch (figures, "
                                                  "widget updates)")
    return table


async def _run(args: argparse.Namespace) -> dict:
    from winder.planner import Target, make_plan
    from winder.profile import examples_dir, load_coil
    from winder.schedule import build_schedule
    from winder.tui.app import WinderApp
    from winder.tui.monitor_view import REFRESH_HZ

    coil = load_coil(examples_dir() / "coils" / "sense-6k2.yaml")
    if args.turns:
        coil = replace(coil, target=Target("turns", float(args.turns)))
    plan = make_plan(coil, force=True)
    schedule = build_schedule(plan)
    control = StreamControl()
    costs = attribute() if args.attribute else {}
    app = WinderApp(control=control, plan=plan, schedule=schedule, cautioned=True)
    stop = threading.Event()
    fed = [0]
    ohm_per_turn = float(plan.resistance_ohm) / max(plan.turns, 1)
    rpm = args.rpm if args.rpm > 0 else 1.0
    thread = threading.Thread(
        target=feeder, args=(control, stop, args.hz, rpm, args.log_every, args.reading_every,
                             ohm_per_turn, fed, float(plan.turns)), daemon=True)
    async with app.run_test(headless=True, size=(120, 40)):
        if args.hz > 0:
            thread.start()
        await asyncio.sleep(args.warmup)
        screen = app.monitor
        frames0 = screen.frames if screen is not None else 0
        fed0 = fed[0]
        costs.clear()
        cpu0, wall0 = time.process_time(), time.perf_counter()
        await asyncio.sleep(args.seconds)
        cpu, wall = time.process_time() - cpu0, time.perf_counter() - wall0
        frames = (screen.frames if screen is not None else 0) - frames0
        top = sorted(costs.items(), key=lambda kv: -kv[1][0])[:5]
        stop.set()
    if thread.is_alive():
        thread.join(2.0)
    return {"cpu_s": cpu, "wall_s": wall, "frames": frames, "fed": fed[0] - fed0,
            "fed_total": fed[0], "maxrss_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss,
            "hwm_kb": peak_rss_kb(), "plan_turns": plan.turns, "refresh_hz": REFRESH_HZ,
            "costs": [{"what": k, "cpu_s": v[0], "calls": v[1]} for k, v in top]}


def peak_rss_kb() -> int:
    """This process's own peak resident set, kB.

    ``VmHWM`` from /proc/self/status where there is one: on Linux ``ru_maxrss`` of
    a child started by fork and exec keeps the parent's high-water mark from before
    the exec, so a child of a large parent would report the parent's peak. Else
    ``ru_maxrss`` (kB on Linux, bytes on macOS).
    """
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1])
    except OSError:
        pass
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return rss // 1024 if sys.platform == "darwin" else rss


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m winder.bench.monitor_child")
    ap.add_argument("--hz", type=float, default=50.0, help="count updates per second (0: none)")
    ap.add_argument("--rpm", type=float, default=1437.5)
    ap.add_argument("--seconds", type=float, default=5.0)
    ap.add_argument("--warmup", type=float, default=1.0)
    ap.add_argument("--log-every", type=float, default=1.0)
    ap.add_argument("--reading-every", type=float, default=0.0)
    ap.add_argument("--turns", type=int, default=0, help="planned turns (default: the coil's)")
    ap.add_argument("--attribute", action="store_true",
                    help="report the CPU cost of each widget's rendering")
    args = ap.parse_args(argv)
    print(json.dumps(asyncio.run(_run(args))), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
