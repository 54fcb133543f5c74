"""Load figures: headless monitoring of a 3,000 rpm job with 50 status lines per second.

A real ``winder wind --headless`` process winds a long job against the simulated winder
on a pty whose firmware model (:class:`FastStatusDevice`) sends a status line every
1/50 s of *simulated* time, so at speed-up K the host reads 50 K lines per real second,
each with its own count. While it runs, the host's resident memory is sampled from
``/proc/PID/status`` (``VmRSS``, and ``VmHWM`` for the peak) and the journal's size
is read.

Figures (printed by ``python -m winder.session.load [--minutes M] [--speedup K]``):
simulated minutes and turns, status lines sent by the device, host peak and final
resident memory, memory growth over the second half, journal bytes and checkpoint
lines, bytes per simulated hour at this speed-up, and the journal growth per hour of
real (unaccelerated) winding that the checkpoint policy allows (at most one checkpoint
per ``interval_s`` or per ``every_turns`` turns, whichever comes first; see
:class:`winder.session.journal.CheckpointPolicy`).

Correctness (checked by ``tests/test_reliability_load.py``): the final ``turns_wound``
equals the device's count and the physical turns, the journal replays, and the
checkpoint count stays within what the policy allows for the run.

Layer 4; the host under test is only ever a subprocess.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from winder.link.sim import SimDevice, SimServer
from winder.link.simproc import SimProcess

ROOT = Path(__file__).resolve().parents[2]
RPM = 3000.0
STATUS_HZ = 50.0

MACHINE_YAML = """\
name: load-test spindle and traverse
kind: spindle+traverse
counts_per_rev: 1
spindle: {steps_per_rev: 3200, max_speed: 3000 rpm, acceleration: 3000 rpm/s,
          slow_speed: 600 rpm, slow_start_turns: 20, slow_finish_turns: 20}
traverse: {lead: 2 mm, steps_per_rev: 400, travel: 100 mm, start_flange_at: 5 mm,
           max_speed: 25 mm/s, acceleration: 250 mm/s^2, backlash: 0 mm, reversal_turns: 0.5}
"""


def coil_yaml(turns: int) -> str:
    """An invented long-window bobbin: ~590 turns of 0.1 mm grade 1 per layer."""
    return f"""\
name: load coil
bobbin:
  name: load former
  core: {{shape: round, diameter: 20 mm}}
  window: {{width: 70 mm, height: 20 mm}}
  clearance: {{ends: 0.5 mm, top: 0.5 mm}}
wire: {{size: 0.1 mm, insulation: grade 1}}
target: {{turns: {turns}}}
style: {{kind: layer}}
"""


class FastStatusDevice(SimDevice):
    """The simulator's firmware with a status line every ``1 / status_hz`` simulated
    seconds while the spindle turns (motion advanced in those steps, so every line
    carries its own count). ``statuses_sent`` counts every status line."""

    def __init__(self, *a: Any, status_hz: float = STATUS_HZ, **kw: Any):
        super().__init__(*a, **kw)
        self.status_period = 1.0 / status_hz
        self.statuses_sent = 0
        self._carry = 0.0

    def step(self, dt: float, now: float) -> list[bytes]:
        out: list[bytes] = []
        self._carry += dt
        if self.rpm <= 0 and self.state != "run":
            self._carry = 0.0
            out = super().step(dt, now)
        else:
            while self._carry >= self.status_period:
                self._carry -= self.status_period
                out += [ln for ln in super().step(self.status_period, now)
                        if not ln.startswith(b"ST ")]
                out.append(self.status_line())
        self.statuses_sent += sum(1 for ln in out if ln.startswith(b"ST "))
        return out

    def truth(self, now: float) -> dict:
        d = super().truth(now)
        d["statuses_sent"] = self.statuses_sent
        return d


def serve(speedup: float, status_hz: float) -> int:
    """Child process: the fast-status simulator on a pty, control lines on stdin."""
    dev = FastStatusDevice("controller", seed=11, now=time.monotonic(), status_hz=status_hz,
                           travel_mm=100.0)
    server = SimServer(dev, transport="pty", speedup=speedup, seed=11, exit_on_eof=True)
    path = server.start()
    print(f"load sim ready on {path}", flush=True)
    server.run()
    return 0


def start_fast_sim(speedup: float, status_hz: float = STATUS_HZ) -> SimProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    proc = subprocess.Popen([sys.executable, "-m", "winder.session.load", "--serve",
                             "--speedup", str(speedup), "--status-hz", str(status_hz)],
                            stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, bufsize=1, env=env)
    assert proc.stdout is not None
    first = proc.stdout.readline()
    if not first:
        raise RuntimeError("load simulator failed to start: " + (proc.stderr.read()
                                                                 if proc.stderr else ""))
    return SimProcess(proc, first.split()[-1])


def _proc_kb(pid: int, key: str) -> int | None:
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith(key + ":"):
                return int(line.split()[1])
    except OSError:
        return None
    return None


@dataclass
class LoadResult:
    """Figures of one load run. Seconds, turns, bytes, kB."""

    sim_minutes: float
    turns_wound: float
    device_count: float
    coil_turns: float
    statuses_sent: int
    real_s: float
    peak_rss_kb: int | None
    rss_half_kb: int | None
    rss_end_kb: int | None
    journal_bytes: int
    journal_events: int
    checkpoints: int
    checkpoint_bound: int
    mean_checkpoint_bytes: float
    bytes_per_sim_hour: float
    bytes_per_hour_real_winding: float
    replayed_turns: float
    state: str
    host_rc: int
    host_stderr: str

    @property
    def lines_per_real_s(self) -> float:
        return self.statuses_sent / self.real_s if self.real_s else 0.0


def run_load(minutes: float = 10.0, speedup: float = 10.0, *, work: Path | None = None,
             status_hz: float = STATUS_HZ) -> LoadResult:
    """Wind ``minutes`` of simulated time at 3,000 rpm; return the figures."""
    from winder.session.journal import CheckpointPolicy, replay
    from winder.session.state import rebuild

    own = work is None
    tmp = tempfile.TemporaryDirectory(prefix="winder-load-") if own else None
    work = Path(tmp.name) if tmp is not None else Path(work)  # type: ignore[arg-type]
    try:
        turns = int(RPM * minutes)
        coil = work / "coil.yaml"
        coil.write_text(coil_yaml(turns))
        machine = work / "machine.yaml"
        machine.write_text(MACHINE_YAML)
        sdir = work / "session"
        env = dict(os.environ)
        env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
        env["WINDER_DATA_DIR"] = str(work / "data")
        with start_fast_sim(speedup, status_hz) as sim:
            err_path = work / "host.err"
            with open(work / "host.out", "w") as out, open(err_path, "w") as err:
                t0 = time.monotonic()
                host = subprocess.Popen(
                    [sys.executable, "-m", "winder", "wind", str(coil), "--port", sim.device,
                     "--headless", "--quiet", "--session", str(sdir), "--machine",
                     str(machine)], env=env, cwd=work, stdin=subprocess.DEVNULL, stdout=out,
                    stderr=err)
                samples: list[tuple[float, int]] = []
                peak = None
                while host.poll() is None:
                    rss = _proc_kb(host.pid, "VmRSS")
                    hwm = _proc_kb(host.pid, "VmHWM")
                    if rss is not None:
                        samples.append((time.monotonic() - t0, rss))
                    if hwm is not None:
                        peak = hwm
                    if time.monotonic() - t0 > max(120.0, 6 * minutes * 60 / speedup):
                        host.kill()
                    time.sleep(0.25)
                real_s = time.monotonic() - t0
            truth = sim.truth()
        rep = subprocess.run([sys.executable, "-m", "winder", "report", "--json", str(sdir)],
                             env=env, capture_output=True, text=True, timeout=60)
        report = json.loads(rep.stdout) if rep.returncode == 0 else {}
        events = replay(sdir / "journal.jsonl").events
        st = rebuild(events)
        cks = [e for e in events if e["kind"] == "checkpoint"]
        lines = (sdir / "journal.jsonl").read_bytes().splitlines()
        ck_bytes = [len(ln) + 1 for ln in lines if b'"kind":"checkpoint"' in ln]
        mean_ck = sum(ck_bytes) / len(ck_bytes) if ck_bytes else 0.0
        pol = CheckpointPolicy()
        bound = math.ceil(real_s / pol.interval_s + turns / pol.every_turns) + 2
        jbytes = (sdir / "journal.jsonl").stat().st_size
        sim_h = float(truth.get("sim_time_s", 0.0)) / 3600.0
        # real-time winding at 3000 rpm: 50 turns/s, so the 1 s rule comes first
        per_s = max(1.0 / pol.interval_s, RPM / 60.0 / pol.every_turns)
        half = [r for t, r in samples if t >= real_s / 2]
        return LoadResult(
            sim_minutes=sim_h * 60.0, turns_wound=float(report.get("turns_wound", st.turns)),
            device_count=float(truth["count"]), coil_turns=float(truth["coil_turns"]),
            statuses_sent=int(truth.get("statuses_sent", 0)), real_s=real_s,
            peak_rss_kb=peak, rss_half_kb=half[0] if half else None,
            rss_end_kb=samples[-1][1] if samples else None, journal_bytes=jbytes,
            journal_events=len(events), checkpoints=len(cks), checkpoint_bound=bound,
            mean_checkpoint_bytes=mean_ck,
            bytes_per_sim_hour=jbytes / sim_h if sim_h else 0.0,
            bytes_per_hour_real_winding=per_s * 3600.0 * mean_ck,
            replayed_turns=st.turns, state=report.get("state", st.state),
            host_rc=host.returncode, host_stderr=err_path.read_text()[-2000:])
    finally:
        if tmp is not None:
            tmp.cleanup()


def format_figures(r: LoadResult) -> str:
    rows = [
        ("simulated winding", f"{r.sim_minutes:.1f} min at up to {RPM:.0f} rpm, "
                              f"{r.turns_wound:g} turns ({r.state})"),
        ("device count / physical", f"{r.device_count:g} / {r.coil_turns:.3f} turns"),
        ("status lines", f"{r.statuses_sent} sent ({STATUS_HZ:g} per simulated second; "
                         f"{r.lines_per_real_s:.0f} per real second over {r.real_s:.1f} s)"),
        ("host peak memory", f"{(r.peak_rss_kb or 0) / 1024:.1f} MiB (VmHWM)"),
        ("host memory, half-way -> end", f"{(r.rss_half_kb or 0) / 1024:.1f} -> "
                                         f"{(r.rss_end_kb or 0) / 1024:.1f} MiB (VmRSS)"),
        ("journal", f"{r.journal_bytes} bytes, {r.journal_events} events, {r.checkpoints} "
                    f"checkpoints (policy allows at most {r.checkpoint_bound} here)"),
        ("journal per simulated hour", f"{r.bytes_per_sim_hour / 1e6:.2f} MB at this speed-up"),
        ("journal per hour, real time", f"{r.bytes_per_hour_real_winding / 1e6:.2f} MB at "
                                        f"{RPM:.0f} rpm (one {r.mean_checkpoint_bytes:.0f}-byte"
                                        " checkpoint a second)"),
    ]
    w = max(len(a) for a, _ in rows)
    return "\n".join(f"{a:<{w}}  {b}" for a, b in rows)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m winder.session.load",
                                 description="Load figures for headless monitoring.")
    ap.add_argument("--minutes", type=float, default=10.0, help="simulated minutes")
    ap.add_argument("--speedup", type=float, default=10.0)
    ap.add_argument("--status-hz", type=float, default=STATUS_HZ,
                    help="status lines per simulated second")
    ap.add_argument("--json", action="store_true")
    ap.add_argument("--serve", action="store_true", help=argparse.SUPPRESS)
    a = ap.parse_args(argv)
    if a.serve:
        return serve(a.speedup, a.status_hz)
    r = run_load(a.minutes, a.speedup, status_hz=a.status_hz)
    print(json.dumps(asdict(r), indent=2) if a.json else format_figures(r))
    ok = r.turns_wound == r.device_count and 0 <= r.coil_turns - r.turns_wound < 1
    return 0 if ok and r.host_rc == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
