"""A whole monitored wind: ``python -m winder.bench.wind_child [--coil NAME] [--speedup K]``.

``winder demo``'s own set-up (:func:`winder.tui.demo.demo_app`): a shipped coil,
``winder sim --pty`` in its own process, the real link driver, session runner,
fsync'ed journal and the Textual monitor, run headless at 120 x 40. Enter on
the plan view, ``y`` on the caution, then the coil is wound to the end. Prints
one JSON line: turns, wall and CPU seconds of this process (monitor, runner and
link threads; the simulator is another process), frames drawn, journal events
and the peak RSS (``hwm_kb``, see :func:`winder.bench.monitor_child.peak_rss_kb`)
at the end and when the monitor opened (``hwm_start_kb``: the whole stack loaded,
link open, session made, nothing wound yet).
"""

from __future__ import annotations

import argparse
import asyncio
import json
import tempfile
import time
from pathlib import Path

from winder.bench.monitor_child import peak_rss_kb


async def _until(pilot, cond, timeout: float, what: str) -> None:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if cond():
            return
        await pilot.pause(0.05)
    raise TimeoutError(f"timed out waiting for {what}")


async def _run(args: argparse.Namespace) -> dict:
    from winder.tui.demo import demo_app
    from winder.tui.dialogs import CautionScreen
    from winder.tui.monitor_view import MonitorScreen

    with tempfile.TemporaryDirectory(prefix="winder-bench-") as work:
        app, setup, sim = demo_app(coil=args.coil, speedup=args.speedup, workdir=Path(work))
        try:
            async with app.run_test(headless=True, size=(120, 40)) as pilot:
                await pilot.pause()
                await pilot.press("enter")
                await _until(pilot, lambda: isinstance(app.screen, CautionScreen), 30,
                             "the caution")
                await pilot.press("y")
                await _until(pilot, lambda: isinstance(app.screen, MonitorScreen), 30,
                             "the monitor")
                hwm0 = peak_rss_kb()
                cpu0, wall0 = time.process_time(), time.perf_counter()
                screen = app.screen
                await _until(pilot, lambda: app.control is not None
                             and getattr(app.control.runner, "done", False), args.timeout,
                             "the end of the wind")
                cpu, wall = time.process_time() - cpu0, time.perf_counter() - wall0
                frames = getattr(screen, "frames", 0)
                state = setup.session.state
                out = {"turns": state.turns, "planned_turns": state.planned_turns,
                       "state": state.state, "events": state.events,
                       "readings": len(state.readings), "cpu_s": cpu, "wall_s": wall,
                       "frames": frames, "true_turns": sim.truth()["coil_turns"],
                       "hwm_start_kb": hwm0}
                await pilot.press("q")
                await pilot.pause()
        finally:
            app.close_control("benchmark end")
            sim.close()
    out["hwm_kb"] = peak_rss_kb()
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m winder.bench.wind_child")
    ap.add_argument("--coil", default="sense-6k2", help="shipped example coil name")
    ap.add_argument("--speedup", type=float, default=40.0)
    ap.add_argument("--timeout", type=float, default=90.0, help="seconds for the whole wind")
    args = ap.parse_args(argv)
    print(json.dumps(asyncio.run(_run(args))), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
