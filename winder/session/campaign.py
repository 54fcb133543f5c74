"""Fault campaign: seeded random winding runs against the simulated winder on real ptys.

Each run winds a 2,000-turn job with real ``winder wind --headless`` / ``winder
resume --headless`` processes against ``winder sim --pty`` (started through
:mod:`winder.link.simproc`), and injects a random mix of faults from the
simulator's control channel and from outside the host:

``drop``            the pty vanishes for 0.3-1.5 s (host alive; the device watchdog stops)
``reboot``          the device restarts while the host is attached (count lost on the device)
``reboot_in_drop``  the device restarts during a link drop
``corrupt``         1 % of the bytes in both directions replaced, for 1-3 s or the whole run
``kill``            the host is SIGKILLed, then ``winder resume`` carries on
``kill_reboot``     SIGKILL, and the device restarts before the resume
``storm``           a burst of pause/continue keys typed into the host

Checks per run (a run with any failed check is listed with its reasons):

* the final ``turns_wound`` of ``winder report --json`` equals the device count; when no
  reboot happened, the physical turns on the simulated coil exceed it by less than one
  turn (a one-count-per-turn counter cannot see a fraction stopped mid-turn);
* when a reboot happened, every physical turn the count does not hold is covered by the
  ``unaccounted_turns`` the report states for the reboots (never silently absorbed);
* the journal replays (``replay`` + ``rebuild``) to the report's count;
* no host process wrote a traceback to stderr, every host exited as expected (the
  final one with 0, the state ``finished``);
* after each SIGKILL the motor stopped within the watchdog window: the simulator's
  ``watchdog_trip_s`` (host silence at the trip) is at most the watchdog + 0.2 s.

The simulator's ``--speedup`` compresses motion, not the protocol's clocks. Faults
whose loss a host estimates from rpm and time (reboots) are therefore injected with
the simulator at speedup 1, as a real spindle turns; the rest run accelerated.

Run: ``python -m winder.session.campaign [--runs N] [--seed S] [--jobs J]``; the
environment variable ``WINDER_SOAK=1`` makes the default 50 runs (else 8). Layer 4:
it imports the link's simulator helper and the session journal, and runs the CLI
only as subprocesses.
"""

from __future__ import annotations

import argparse
import json
import os
import random
import signal
import subprocess
import sys
import tempfile
import threading
import time
from collections import Counter
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

from winder.link.simproc import SimProcess, start_sim

ROOT = Path(__file__).resolve().parents[2]
JOB_TURNS = 2000
WATCHDOG_S = 1.0
WATCHDOG_SLACK_S = 0.2
KINDS = ("drop", "reboot", "reboot_in_drop", "corrupt", "kill", "kill_reboot", "storm")

# An invented bobbin and coil: 2,000 turns of 0.25 mm grade 2 in about 27 even layers.
COIL_YAML = """\
name: campaign coil
bobbin:
  name: campaign former
  core: {shape: round, diameter: 20 mm}
  window: {width: 20 mm, height: 10 mm}
  clearance: {ends: 0.3 mm, top: 0.5 mm}
wire: {size: 0.25 mm, insulation: grade 2}
target: {turns: 2000}
style: {kind: layer}
"""


@dataclass
class RunResult:
    """One run's outcome. Turns; seconds."""

    seed: int
    faults: Counter = field(default_factory=Counter)
    problems: list[str] = field(default_factory=list)
    turns_wound: float | None = None
    device_count: float | None = None
    coil_turns: float | None = None
    lost_survived: float = 0.0        # physical turns not counted, no reboot in the run
    lost_rebooted: float = 0.0        # physical turns not counted, run had a reboot
    stated_unaccounted: float = 0.0   # sum of the report's unaccounted_turns
    recoveries_s: list[float] = field(default_factory=list)
    watchdog_trips_s: list[float] = field(default_factory=list)
    self_stops: int = 0               # kills where the queue ran out before the watchdog
    wall_s: float = 0.0

    @property
    def ok(self) -> bool:
        return not self.problems


def plan_faults(rng: random.Random) -> tuple[list[tuple[float, str, float]], bool]:
    """A random fault mix: [(turns at which to inject, kind, parameter)], corrupt-all flag."""
    n = rng.randint(2, 4)
    kinds = [rng.choice(("drop", "reboot", "reboot_in_drop", "corrupt", "kill",
                         "kill_reboot", "storm", "kill", "drop", "storm")) for _ in range(n)]
    ats = sorted(rng.uniform(0.08, 0.85) * JOB_TURNS for _ in range(n))
    out = []
    for at, kind in zip(ats, kinds, strict=True):
        param = {"drop": rng.uniform(0.3, 1.5), "reboot_in_drop": rng.uniform(0.8, 1.5),
                 "corrupt": rng.uniform(1.0, 3.0), "storm": rng.randint(3, 8)}.get(kind, 0.0)
        out.append((round(at), kind, param))
    corrupt_all = rng.random() < 0.25
    return out, corrupt_all


def ohm_per_turn() -> float:
    """The campaign coil's planned mean ohm per turn (so the simulator's readings agree)."""
    import yaml

    from winder.planner import make_plan
    from winder.profile import coil_from_mapping

    coil = coil_from_mapping(yaml.safe_load(COIL_YAML), "campaign coil", Path("coil.yaml"))
    plan = make_plan(coil)
    return plan.resistance_ohm / plan.turns


class _Run:
    """The machinery of one run: a simulator, host processes, their stderr files."""

    def __init__(self, seed: int, work: Path, speedup: float):
        self.seed = seed
        self.work = work
        self.speedup = speedup
        self.rng = random.Random(seed)
        self.res = RunResult(seed)
        self.coil = work / "coil.yaml"
        self.coil.write_text(COIL_YAML)
        self.sdir = work / "data" / "sessions" / "campaign"
        self.env = dict(os.environ)
        self.env["PYTHONPATH"] = str(ROOT) + os.pathsep + self.env.get("PYTHONPATH", "")
        self.env["WINDER_DATA_DIR"] = str(work / "data")
        self.hosts: list[tuple[subprocess.Popen, Path, str]] = []
        self.sim: SimProcess | None = None
        self.t0 = time.monotonic()
        self.host: subprocess.Popen | None = None

    # ---- processes ------------------------------------------------------------------
    def _spawn(self, *args: str, label: str) -> subprocess.Popen:
        n = len(self.hosts)
        out = open(self.work / f"host{n}.out", "w")          # noqa: SIM115 (closed in finish)
        err_path = self.work / f"host{n}.err"
        err = open(err_path, "w")                             # noqa: SIM115
        proc = subprocess.Popen([sys.executable, "-m", "winder", *args], env=self.env,
                                cwd=self.work, stdin=subprocess.PIPE, stdout=out,
                                stderr=err, text=True)
        out.close()
        err.close()
        self.hosts.append((proc, err_path, label))
        self.host = proc
        return proc

    def _keys(self, text: str) -> None:
        assert self.host is not None and self.host.stdin is not None
        try:
            self.host.stdin.write(text)
            self.host.stdin.flush()
        except (BrokenPipeError, OSError):
            pass

    def truth(self) -> dict[str, Any]:
        assert self.sim is not None
        return self.sim.truth()

    def ctl(self, cmd: str) -> dict[str, Any]:
        assert self.sim is not None
        ans = self.sim.control(cmd)
        if not ans.get("ok"):
            raise RuntimeError(f"simulator refused {cmd!r}: {ans}")
        return ans

    def wait(self, cond, timeout: float, what: str) -> dict[str, Any] | None:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            t = self.truth()
            if cond(t):
                return t
            if self.host is not None and self.host.poll() is not None and not cond(t):
                # the host ended (finished early, or failed); the caller checks why
                return None
            time.sleep(0.02)
        self.res.problems.append(f"timed out waiting for {what}")
        return None

    def wait_running_again(self, since: float, timeout: float = 90.0,
                           stop_first: bool = True) -> None:
        """Recovery: from the fault until the motor, once stopped, runs and counts again."""
        c0 = -1
        if stop_first:
            stopped = self.wait(lambda t: not t["motor_running"], 5.0, "the motor to stop")
            c0 = stopped["count"] if stopped is not None else -1
        t = self.wait(lambda t: t["motor_running"] and t["linked"] and t["count"] > c0,
                      timeout, "the winding to go on")
        if t is not None:
            self.res.recoveries_s.append(time.monotonic() - since)
            self.note(f"recovered after {time.monotonic() - since:.2f} s at count {t['count']}")

    def wait_stopped(self, timeout: float = 5.0) -> dict[str, Any] | None:
        assert self.sim is not None
        t = self.sim.wait_truth(lambda t: not t["motor_running"], timeout, poll_s=0.02)
        if t is None:
            self.res.problems.append("the motor did not stop after the host vanished")
        return t

    def real_time(self) -> None:
        """Spindle at real speed, long enough for the host's rpm to be the real one."""
        self.ctl("speedup 1")
        time.sleep(0.4)

    def accelerate(self) -> None:
        self.ctl(f"speedup {self.speedup:g}")

    # ---- faults ---------------------------------------------------------------------
    def note(self, text: str) -> None:
        """One line of the run log (``campaign.log`` in the run directory)."""
        with open(self.work / "campaign.log", "a") as f:
            f.write(f"{time.monotonic() - self.t0:8.3f} {text}\n")

    def inject(self, kind: str, param: float) -> None:
        self.res.faults[kind] += 1
        t = self.truth()
        self.note(f"inject {kind} {param:.2f}: count {t['count']} coil {t['coil_turns']:.2f} "
                  f"rpm {t['rpm']:.0f} state {t['state']}")
        t0 = time.monotonic()
        if kind == "drop":
            self.ctl(f"drop {param:.2f}")
            self.wait_running_again(t0)
        elif kind == "reboot":
            self.real_time()
            t0 = time.monotonic()
            self.ctl("reboot")
            self.wait_running_again(t0)
            self.accelerate()
        elif kind == "reboot_in_drop":
            self.real_time()
            t0 = time.monotonic()
            self.ctl(f"drop {param:.2f}")
            time.sleep(param * self.rng.uniform(0.3, 0.7))
            self.ctl("reboot")
            self.wait_running_again(t0)
            self.accelerate()
        elif kind == "corrupt":
            self.ctl("corrupt 0.01")
            time.sleep(param)
            self.ctl("corrupt 0")
        elif kind == "storm":
            for _ in range(int(param)):
                self._keys("p\n")
                time.sleep(self.rng.uniform(0.02, 0.25))
                self._keys("c\n")
                time.sleep(self.rng.uniform(0.02, 0.25))
            self.wait_running_again(t0, stop_first=False)
        elif kind in ("kill", "kill_reboot"):
            if kind == "kill_reboot":
                self.real_time()
                time.sleep(0.8)
            assert self.host is not None
            t0 = time.monotonic()
            self.host.send_signal(signal.SIGKILL)
            self.host.wait(10)
            t = self.wait_stopped()
            if t is not None:
                trip = t.get("watchdog_trip_s")
                if "watchdog" in t["faults"] and trip is not None:
                    self.res.watchdog_trips_s.append(float(trip))
                    if trip > WATCHDOG_S + WATCHDOG_SLACK_S:
                        self.res.problems.append(f"watchdog tripped after {trip:.3f} s of "
                                                 "host silence")
                else:   # the queue ran out first: it must have stopped within the window
                    took = time.monotonic() - t0
                    self.res.self_stops += 1
                    if took > WATCHDOG_S + WATCHDOG_SLACK_S + 0.3:
                        self.res.problems.append(f"the motor ran {took:.2f} s after the kill "
                                                 "with no watchdog trip")
            if kind == "kill_reboot":
                self.ctl("reboot")
                time.sleep(0.6)
                self.accelerate()
            self._spawn("resume", str(self.sdir), "--headless", "--auto-continue",
                        label="resume")
            self.wait_running_again(t0)

    # ---- the run --------------------------------------------------------------------
    def execute(self) -> RunResult:
        start = self.t0 = time.monotonic()
        faults, corrupt_all = plan_faults(self.rng)
        self.note(f"faults {faults} corrupt_all {corrupt_all}")
        self.sim = start_sim(speedup=self.speedup, extra=[
            "--seed", str(self.seed), "--watchdog", str(WATCHDOG_S),
            "--ohm-per-turn", f"{ohm_per_turn():.9g}"])
        try:
            self._spawn("wind", str(self.coil), "--port", self.sim.device, "--headless",
                        "--session", str(self.sdir), "--auto-continue", label="wind")
            if corrupt_all:
                self.res.faults["corrupt"] += 1
                self.ctl("corrupt 0.01")
            for at, kind, param in faults:
                t = self.wait(lambda t, at=at: t["count"] >= at and t["motor_running"],
                              60.0, f"{at} turns")
                if t is None:
                    break
                self.inject(kind, param)
                if self.res.problems:
                    break
            self.finish()
        except Exception as err:   # the campaign reports a broken run, it does not stop
            self.res.problems.append(f"{type(err).__name__}: {err}")
        finally:
            for proc, _, _ in self.hosts:
                if proc.poll() is None:
                    proc.kill()
                    proc.wait()
                if proc.stdin is not None:
                    try:
                        proc.stdin.close()
                    except OSError:
                        pass
            self.sim.close()
            self.res.wall_s = time.monotonic() - start
        return self.res

    def finish(self) -> None:
        assert self.host is not None and self.host.stdin is not None
        try:
            rc = self.host.wait(120)
        except subprocess.TimeoutExpired:
            self.res.problems.append("the last host did not finish within 120 s")
            return
        self.ctl("corrupt 0")
        truth = self.truth()
        self.note(f"end: host rc {rc}; truth {json.dumps(truth)}")
        for proc, err_path, label in self.hosts:
            err = err_path.read_text(errors="replace")
            if "Traceback" in err or "Exception" in err:
                self.res.problems.append(f"{label} wrote a traceback: {err.strip()[-300:]}")
            killed = proc.returncode == -signal.SIGKILL
            if proc is self.host and rc != 0:
                self.res.problems.append(f"{label} exited {rc}: {err.strip()[-200:]}")
            elif proc is not self.host and not killed:
                self.res.problems.append(f"{label} ended with {proc.returncode} before its kill")
        rep = subprocess.run([sys.executable, "-m", "winder", "report", "--json", str(self.sdir)],
                             env=self.env, capture_output=True, text=True, timeout=60)
        if rep.returncode != 0 or rep.stderr.strip():
            self.res.problems.append(f"report exited {rep.returncode}: {rep.stderr.strip()}")
            return
        report = json.loads(rep.stdout)
        self.check(report, truth)

    def check(self, report: dict[str, Any], truth: dict[str, Any]) -> None:
        from winder.session.journal import replay
        from winder.session.state import rebuild

        r = self.res
        r.turns_wound = float(report["turns_wound"])
        r.device_count = float(truth["count"]) / float(truth.get("cpr", 1) or 1)
        r.coil_turns = float(truth["coil_turns"])
        if report["state"] != "finished":
            r.problems.append(f"state {report['state']} at the end")
        if r.turns_wound != JOB_TURNS:
            r.problems.append(f"turns_wound {r.turns_wound:g}, planned {JOB_TURNS}")
        if r.turns_wound != r.device_count:
            r.problems.append(f"turns_wound {r.turns_wound:g} but the device counted "
                              f"{r.device_count:g}")
        rebooted = [i for i in report["interruptions"] if i["kind"] == "device_rebooted"]
        r.stated_unaccounted = float(sum(i.get("unaccounted_turns") or 0 for i in rebooted))
        lost = r.coil_turns - r.turns_wound
        had_reboot = any(r.faults[k] for k in ("reboot", "reboot_in_drop", "kill_reboot"))
        if had_reboot:
            r.lost_rebooted = lost
            if lost >= 1.0 and not rebooted:
                r.problems.append(f"{lost:.2f} turns lost in a reboot and not reported")
            if lost > r.stated_unaccounted + 1.0:
                r.problems.append(f"{lost:.2f} turns lost in reboots, report states at most "
                                  f"{r.stated_unaccounted:g}")
        else:
            r.lost_survived = lost
            if not (-1e-6 <= lost < 1.0):
                r.problems.append(f"the device survived but the coil holds {lost:+.3f} turns "
                                  "more than counted")
            if rebooted:
                r.problems.append("a reboot reported that did not happen")
        if lost < -1e-6:
            r.problems.append(f"the count is {-lost:.3f} turns above the physical coil")
        try:
            rep = replay(self.sdir / "journal.jsonl")
            st = rebuild(rep.events)
            if st.turns != r.turns_wound or st.state != "finished":
                r.problems.append(f"journal replays to {st.turns:g} turns ({st.state})")
        except Exception as err:
            r.problems.append(f"journal does not replay: {type(err).__name__}: {err}")


def run_one(seed: int, *, speedup: float = 20.0, keep: Path | None = None) -> RunResult:
    """One seeded run in a temporary directory (kept under ``keep`` when given)."""
    if keep is not None:
        work = keep / f"run-{seed}"
        work.mkdir(parents=True, exist_ok=True)
        return _Run(seed, work, speedup).execute()
    with tempfile.TemporaryDirectory(prefix=f"winder-campaign-{seed}-") as d:
        res = _Run(seed, Path(d), speedup).execute()
        if res.problems:    # leave the evidence of a failed run
            dest = Path(tempfile.gettempdir()) / f"winder-campaign-failed-{seed}"
            subprocess.run(["cp", "-r", d, str(dest)], check=False)
            res.problems.append(f"files kept in {dest}")
        return res


def run_campaign(runs: int, *, seed: int = 1, jobs: int = 2, speedup: float = 20.0,
                 progress: IO[str] | None = None) -> list[RunResult]:
    """``runs`` seeded runs (seeds ``seed`` .. ``seed + runs - 1``), ``jobs`` at a time."""
    lock = threading.Lock()

    def one(s: int) -> RunResult:
        res = run_one(s, speedup=speedup)
        if progress is not None:
            with lock:
                mark = "ok" if res.ok else "FAIL " + "; ".join(res.problems)
                print(f"run {s}: {dict(res.faults)} {res.wall_s:.1f} s {mark}", file=progress,
                      flush=True)
        return res

    with ThreadPoolExecutor(max_workers=max(1, jobs)) as pool:
        return list(pool.map(one, range(seed, seed + runs)))


def summary(results: list[RunResult]) -> dict[str, Any]:
    """The campaign figures as a dict (turns, seconds)."""
    faults: Counter = Counter()
    for r in results:
        faults.update(r.faults)
    rec = [x for r in results for x in r.recoveries_s]
    trips = [x for r in results for x in r.watchdog_trips_s]
    return {
        "runs": len(results),
        "failed": sum(not r.ok for r in results),
        "faults": {k: faults.get(k, 0) for k in KINDS},
        "faults_total": sum(faults.values()),
        "turns_lost_device_survived": sum(r.lost_survived for r in results
                                          if r.lost_survived >= 1.0),
        "max_uncounted_fraction_survived": max((r.lost_survived for r in results), default=0.0),
        "turns_lost_in_reboots": sum(max(0.0, r.lost_rebooted) for r in results),
        "turns_stated_unaccounted": sum(r.stated_unaccounted for r in results),
        "longest_recovery_s": max(rec, default=0.0),
        "recoveries": len(rec),
        "max_watchdog_trip_s": max(trips, default=None),
        "host_kills": len(trips) + sum(r.self_stops for r in results),
        "stopped_before_watchdog": sum(r.self_stops for r in results),
        "wall_s_per_run_max": max((r.wall_s for r in results), default=0.0),
    }


def format_table(results: list[RunResult], wall_s: float | None = None) -> str:
    s = summary(results)
    rows = [("runs (2,000-turn job)", f"{s['runs']}  ({s['failed']} failed)")]
    for k in KINDS:
        rows.append((f"faults: {k}", str(s["faults"][k])))
    rows += [
        ("faults in all", str(s["faults_total"])),
        ("turns lost, device survived", f"{s['turns_lost_device_survived']:g}  (must be 0; "
         f"largest uncounted part-turn {s['max_uncounted_fraction_survived']:.3f})"),
        ("turns lost in reboots", f"{s['turns_lost_in_reboots']:.2f}  (report stated up to "
         f"{s['turns_stated_unaccounted']:g})"),
        ("longest recovery", f"{s['longest_recovery_s']:.2f} s  (of {s['recoveries']})"),
        ("watchdog trip after host kill",
         "-" if s["max_watchdog_trip_s"] is None else
         f"max {s['max_watchdog_trip_s']:.3f} s of host silence ({s['host_kills']} kills, "
         f"{s['stopped_before_watchdog']} ran out of passes first; window {WATCHDOG_S:g} + "
         f"{WATCHDOG_SLACK_S:g} s)"),
        ("longest run", f"{s['wall_s_per_run_max']:.1f} s"),
    ]
    if wall_s is not None:
        rows.append(("campaign wall time", f"{wall_s:.1f} s"))
    w = max(len(a) for a, _ in rows)
    lines = [f"{a:<{w}}  {b}" for a, b in rows]
    for r in results:
        if not r.ok:
            lines.append(f"FAILED run {r.seed}: " + "; ".join(r.problems))
    return "\n".join(lines)


def default_runs() -> int:
    return 50 if os.environ.get("WINDER_SOAK") == "1" else 8


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m winder.session.campaign",
                                 description="Fault campaign against the simulated winder.")
    ap.add_argument("--runs", type=int, default=default_runs())
    ap.add_argument("--seed", type=int, default=1, help="first seed")
    ap.add_argument("--jobs", type=int, default=2, help="runs at a time")
    ap.add_argument("--speedup", type=float, default=20.0, help="simulator motion speed-up")
    ap.add_argument("--json", action="store_true", help="print the figures as JSON")
    ap.add_argument("--quiet", action="store_true", help="no per-run lines on stderr")
    a = ap.parse_args(argv)
    t0 = time.monotonic()
    results = run_campaign(a.runs, seed=a.seed, jobs=a.jobs, speedup=a.speedup,
                           progress=None if a.quiet else sys.stderr)
    wall = time.monotonic() - t0
    if a.json:
        print(json.dumps(dict(summary(results), wall_s=wall), indent=2))
    else:
        print(format_table(results, wall))
    return 0 if all(r.ok for r in results) else 1


if __name__ == "__main__":
    sys.exit(main())
