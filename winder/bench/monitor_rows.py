"""Rows for the terminal monitor: CPU under a 50 Hz count stream, peak memory of a long wind.

Both run :mod:`winder.bench.monitor_child` in a fresh process so the figures are
that process's own (CPU time over wall time; peak RSS as ``VmHWM``, which is
``ru_maxrss`` without the parent's high-water mark that Linux carries over fork
and exec).

Memory: the long wind is ``winder demo``'s whole stack (simulator process, link,
session runner, journal and monitor) winding the shipped 8,613-turn sensing coil
to the end at 100 x speed-up (:mod:`winder.bench.wind_child`); the floor is the
same process's peak when the monitor opened (stack loaded, link open, session
made, nothing wound). Budget (ours): the peak at the end is at most 1.25 x the
floor, so memory does not grow with the length of a wind. Quick mode winds the
157-turn driver coil instead.
"""

from __future__ import annotations

from winder.bench import Row, missing, verdict
from winder.bench.measure import run_child_json

MONITOR_PCT = 15.0      # issue budget: under 15 % of one core at 50 Hz input
MEMORY_RATIO = 1.25     # ours
WIND_COIL, SHORT_COIL, WIND_SPEEDUP = "sense-6k2", "driver-8ohm", 100.0


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
    """Peak RSS of a whole monitored wind against the same process when the wind began."""
    gone = _gone() or missing("winder.tui.demo", "winder.tui.runner", "winder.link.simproc")
    if gone:
        return Row("memory", "", gone, verdict="n/a")
    coil = SHORT_COIL if quick else WIND_COIL
    wind = run_child_json(["-m", "winder.bench.wind_child", "--coil", coil, "--speedup",
                           f"{WIND_SPEEDUP:g}"], timeout=180)
    peak, floor = wind["hwm_kb"] / 1024, wind["hwm_start_kb"] / 1024
    ratio = peak / floor
    ok = ratio <= MEMORY_RATIO and wind["state"] == "finished"
    return Row("memory", "", f"{peak:.0f} MB peak = {ratio:.2f} x at the start of the wind "
               f"({floor:.0f} MB)",
               f"<= {MEMORY_RATIO:g} x start (ours)", verdict(ok),
               note=f"{coil}: {wind['turns']:,.0f} of {wind['planned_turns']:,.0f} turns "
                    f"({wind['state']}; {wind['true_turns']:,.0f} on the simulated coil) at "
                    f"{WIND_SPEEDUP:g} x speed-up, {wind['wall_s']:.1f} s on the monitor, "
                    f"{wind['readings']} readings, {wind['events']} journal events; process "
                    f"CPU {100 * wind['cpu_s'] / max(wind['wall_s'], 1e-9):.0f} % of a core "
                    "while winding",
               value=peak, unit="MB", extra={"wind": wind, "ratio": ratio})
