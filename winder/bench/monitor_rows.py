"""Rows for the terminal monitor: CPU under a 50 Hz count stream, peak memory of a long wind.

Both run :mod:`winder.bench.monitor_child` in a fresh process so the figures are
that process's own (CPU time over wall time; peak RSS as ``VmHWM``, which is
``ru_maxrss`` without the parent's high-water mark that Linux carries over fork
and exec).

Memory: the long wind streams a whole 20,000-turn coil through the monitor in
``LONG_S`` seconds (2,000 count updates a second, a log line every 10 ms, a
reading every 0.25 s: far more events than an hour at the bench); the floor is
the same monitor with no stream for ``IDLE_S`` seconds. Budget (ours): the long
wind peaks at most 1.25 x the idle monitor, so memory does not grow with the
length of a wind.
"""

from __future__ import annotations

from winder.bench import Row, missing, verdict
from winder.bench.measure import run_child_json

MONITOR_PCT = 15.0      # issue budget: under 15 % of one core at 50 Hz input
MEMORY_RATIO = 1.25     # ours
LONG_S, IDLE_S = 6.0, 2.0
LONG_TURNS = 20_000


def _gone() -> str | None:
    return missing("textual", "winder.tui.app", "winder.tui.feed", "winder.tui.monitor_view",
                   "winder.schedule")


def monitor_row(quick: bool) -> Row:
    gone = _gone()
    if gone:
        return Row("monitor", "", gone, verdict="n/a")
    secs = 0.6 if quick else 5.0
    r = run_child_json(["-m", "winder.bench.monitor_child", "--hz", "50", "--seconds",
                        str(secs), "--warmup", "0.3" if quick else "1.5", "--attribute"])
    pct = 100 * r["cpu_s"] / r["wall_s"]
    fps = r["frames"] / r["wall_s"]
    per_frame = r["cpu_s"] / max(r["frames"], 1)
    hz = float(r.get("refresh_hz", 12.0))
    where = "; ".join(f"{c['what']} {c['cpu_s'] / max(r['frames'], 1) * 1e3:.1f} ms/frame "
                      f"({c['calls']} calls)" for c in r.get("costs", [])[:4])
    return Row("monitor", "", f"{pct:.1f} % of one core ({r['fed'] / r['wall_s']:.0f} counts/s "
               f"in, {fps:.1f} frames/s drawn)", f"< {MONITOR_PCT:g} %",
               verdict(pct < MONITOR_PCT),
               note=f"{r['wall_s']:.1f} s measured after warm-up; CPU of the whole process "
                    f"(UI, Textual headless driver, feeder thread): {per_frame * 1e3:.0f} ms "
                    f"per frame drawn, so the monitor's own {hz:g} Hz refresh would need "
                    f"{min(100.0, 100 * per_frame * hz):.0f} % of a core; most CPU: {where}",
               value=pct, unit="%", extra=r)


def memory_row(quick: bool) -> Row:
    gone = _gone()
    if gone:
        return Row("memory", "", gone, verdict="n/a")
    long_s = 0.6 if quick else LONG_S
    idle_s = 0.3 if quick else IDLE_S
    rpm = LONG_TURNS / long_s * 60.0
    long = run_child_json(["-m", "winder.bench.monitor_child", "--hz", "2000", "--rpm",
                           f"{rpm:.0f}", "--seconds", str(long_s), "--warmup", "0.2",
                           "--log-every", "0.01", "--reading-every", "0.25", "--turns",
                           str(LONG_TURNS)])
    idle = run_child_json(["-m", "winder.bench.monitor_child", "--hz", "0", "--seconds",
                           str(idle_s), "--warmup", "0.2", "--turns", str(LONG_TURNS)])
    peak, floor = long["hwm_kb"] / 1024, idle["hwm_kb"] / 1024
    ratio = peak / floor
    return Row("memory", "", f"{peak:.0f} MB peak = {ratio:.2f} x idle monitor ({floor:.0f} MB)",
               f"<= {MEMORY_RATIO:g} x idle (ours)", verdict(ratio <= MEMORY_RATIO),
               note=f"{long['fed_total']:,} count updates, ~{int(long_s / 0.01):,} log lines, "
                    f"~{int(long_s / 0.25)} readings over {long['plan_turns']:,} turns",
               value=peak, unit="MB", extra={"long": long, "idle": idle, "ratio": ratio})
