"""Rows for the link: codec parse rate and driver + journal ingest, both as ratios
to what a 115200-baud line carries.

Line rate: 115200 baud with 8N1 framing is 10 bits per byte, 11,520 bytes/s;
divided by the mean length of the status lines used (``ST`` lines made by the
codec itself, as a running controller sends them) it gives status lines per
second, the floor both rows are divided by.
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys
import tempfile
import time

from winder.bench import Row, missing, verdict
from winder.bench.measure import child_env

BAUD = 115200
BITS_PER_BYTE = 10          # 8N1: start bit, 8 data bits, stop bit
CODEC_RATIO = 20.0          # issue budget: parse at least 20 x the line rate
INGEST_RATIO = 1.0          # ours: the host keeps up with a saturated line


def status_lines(n: int, start: int = 1234, step: int = 1) -> list[bytes]:
    """``n`` running-controller status lines from the codec, counts ``start + step * i``.

    Shaped like the example in firmware-protocol.md section 3.3
    (``ST c=1234 rpm=1500 g=12.5 s=run f=0 q=2 *DDD8``, 46 bytes with the LF): short
    lines are the conservative choice, since they make the line rate higher.
    """
    from winder.link.codec import encode_status
    from winder.link.messages import StatusReport

    out = []
    for i in range(n):
        out.append(encode_status(StatusReport(
            count=start + step * i, rpm=1500.0, guide_mm=round(2.0 + (i % 80) * 0.1, 1),
            state="run", fault_bits=0, queued=2)))
    return out


def line_rate(lines: list[bytes]) -> tuple[float, float]:
    """(status lines per second at 115200 baud 8N1, mean line length in bytes incl. LF)."""
    mean = statistics.fmean(len(x) for x in lines)
    return BAUD / BITS_PER_BYTE / mean, mean


def codec_row(quick: bool) -> Row:
    """Bytes -> LineFramer -> parse_device_line, fed in 64-byte reads like a USB serial port.

    Rate in lines per CPU-second of this process (median of several passes).
    """
    gone = missing("winder.link.codec")
    if gone:
        return Row("codec", "", gone, verdict="n/a")
    from winder.link.codec import LineFramer, parse_device_line

    n = 2_000 if quick else 5_000
    lines = status_lines(n)
    floor, mean = line_rate(lines)
    stream = b"".join(lines)
    chunks = [stream[i:i + 64] for i in range(0, len(stream), 64)]

    def once() -> float:
        framer = LineFramer()
        t0 = time.process_time()
        got = 0
        for c in chunks:
            for line in framer.feed(c):
                parse_device_line(line)
                got += 1
        dt = time.process_time() - t0
        assert got == n, (got, n)
        return dt

    once()
    samples = [once() for _ in range(3 if quick else 11)]
    rate = n / statistics.median(samples)
    ratio = rate / floor
    return Row("codec", "", f"{rate:,.0f} lines/s = {ratio:,.0f} x line rate",
               f">= {CODEC_RATIO:g} x", verdict(ratio >= CODEC_RATIO),
               note=f"ST lines of {mean:.1f} bytes; 115200 baud 8N1 carries {floor:.0f} lines/s",
               value=ratio, unit="x", extra={"lines_per_s": rate, "line_bytes": mean,
                                             "line_rate": floor})


def ingest_row(quick: bool) -> Row:
    """A host child (link + runner + journal) under a flood of status lines from the sim."""
    gone = missing("winder.link.driver", "winder.link.simproc", "winder.session.runner",
                   "winder.session.prepare")
    if gone:
        return Row("ingest", "", gone, verdict="n/a")
    from winder.link.simproc import start_sim

    n = 300 if quick else 4_000
    offered = 1_000.0                    # lines/s the flood is paced at (3.5 x line rate)
    batch = 20
    # The flood carries the idle simulator's own count (0): counts that ran ahead of the
    # device's would read, at the device's next own status, as a count that fell back,
    # which the driver rightly treats as an unannounced reboot (a new handshake).
    lines = status_lines(n, start=0, step=0)
    floor, mean = line_rate(lines)
    with tempfile.TemporaryDirectory(prefix="winder-bench-") as data, \
            start_sim(mode="counter", speedup=1000.0, extra=["--crank-rpm", "0"]) as sim:
        host = subprocess.Popen(
            [sys.executable, "-m", "winder.bench.ingest_host", sim.device],
            stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
            env=child_env(data))
        try:
            assert host.stdout is not None and host.stdin is not None
            ready = host.stdout.readline()
            if not ready.startswith("ready"):
                err = host.stderr.read() if host.stderr else ""
                raise RuntimeError(f"ingest host did not start: {' '.join(err.split())[-300:]}")
            t0 = time.perf_counter()
            for i in range(0, n, batch):
                due = t0 + i / offered
                wait = due - time.perf_counter()
                if wait > 0:
                    time.sleep(wait)
                sim.control("inject " + b"".join(lines[i:i + batch]).hex())
            flood_s = time.perf_counter() - t0
            time.sleep(0.5)                  # let the host drain what is in the pty
            out, err = host.communicate("stop\n", timeout=30)
        finally:
            if host.poll() is None:
                host.kill()
                host.wait()
    res = json.loads([ln for ln in out.splitlines() if ln.strip()][-1])
    got = res["lines"]
    per_cpu = got / res["cpu_s"] if res["cpu_s"] > 0 else float("inf")
    ratio = per_cpu / floor
    cpu_pct = 100 * res["cpu_s"] / res["wall_s"]
    lost = n - res["status_injected_seen"]
    return Row("ingest", "", f"{per_cpu:,.0f} lines per host CPU-s = {ratio:,.1f} x line rate",
               f">= {INGEST_RATIO:g} x (ours)", verdict(ratio >= INGEST_RATIO and lost == 0),
               note=(f"{got} lines in {res['wall_s']:.1f} s offered at {n / flood_s:,.0f}/s; host "
                     f"CPU {cpu_pct:.0f} % of one core; {res['checkpoints']} fsync'ed "
                     f"checkpoints; {lost} injected lines not seen, "
                     f"{res['dropped_events']} events dropped"),
               value=ratio, unit="x", extra={**res, "offered_per_s": n / flood_s,
                                             "line_rate": floor, "line_bytes": mean})


SPINDLE_RPM = 3000.0        # the fastest spindle the simulator (and its PASS check) accepts
WIND_SPEEDUP = 1000.0


def wind_row(quick: bool) -> Row:
    """A whole ``winder wind --headless`` against the controller simulator at full speed-up.

    The shipped 6.2 kohm sensing coil, as a maker would run it; the sim runs its
    motion ``WIND_SPEEDUP`` times faster than real time (its status clock stays
    real). Figure: turns tracked and journaled per second of winding (from the
    session's own report) as a ratio to a 3000 rpm spindle (50 turns/s), with
    the host command's CPU time and peak RSS (``ru_maxrss`` via
    :func:`~winder.bench.measure.run_with_rusage`).
    """
    gone = missing("winder.cli.session_cmd", "winder.session.runner", "winder.link.simproc")
    if gone:
        return Row("wind", "", gone, verdict="n/a")
    from winder.bench.measure import run_with_rusage
    from winder.link.simproc import start_sim
    from winder.profile import examples_dir
    from winder.session.report import build_report
    from winder.session.session import Session

    coil = examples_dir() / "coils" / ("driver-8ohm.yaml" if quick else "sense-6k2.yaml")
    with tempfile.TemporaryDirectory(prefix="winder-bench-") as data, \
            start_sim(mode="controller", speedup=WIND_SPEEDUP) as sim:
        sdir = f"{data}/wind"
        proc, use = run_with_rusage(
            [sys.executable, "-m", "winder", "wind", str(coil), "--port", sim.device,
             "--headless", "--quiet", "--session", sdir], child_env(data))
        if use["rc"] != 0:
            raise RuntimeError(f"winder wind exited {use['rc']}: "
                               f"{' '.join((proc.stderr or proc.stdout).split())[-300:]}")
        truth = sim.truth()
        sess = Session.open(sdir)
        rep = build_report(sess)
        events = sess.state.events
        sess.close()
    turns = float(rep["turns_wound"])
    winding = float(rep["winding_s"]) or float("nan")
    rate = turns / winding
    floor = SPINDLE_RPM / 60.0
    ratio = rate / floor
    ok = ratio >= 1.0 and turns == truth["coil_turns"]
    return Row("wind", "", f"{rate:,.0f} turns/s = {ratio:.0f} x a {SPINDLE_RPM:.0f} rpm "
               f"spindle; host {use['cpu_s']:.1f} CPU-s, peak {use['maxrss_kb'] / 1024:.0f} MB",
               ">= 1 x (ours)", verdict(ok),
               note=f"{turns:,.0f} turns ({truth['coil_turns']:,.0f} on the simulated coil) in "
                    f"{winding:.1f} s of winding, {use['wall_s']:.1f} s for the whole command "
                    f"(start-up, readings); {events} journal events",
               value=ratio, unit="x", extra={"report_turns": turns, "winding_s": winding,
                                             **use})
