"""Row for start-up: ``winder plan COIL --json`` against two interpreter floors.

The three commands run alternately (pass, numpy+pint, plan, pass, ...), each
several times after one untimed round, and the medians are compared:
``plan / (python -c 'import numpy, pint')`` has the budget 1.5 (the floor the
mandated dependencies set), ``plan / (python -c pass)`` is reported beside it.
``winder`` is the console script next to this interpreter when installed,
else ``python -m winder``. The note says whether the plan command imported
textual, serial or rich (it must not); when the budget is missed it also gives
the cost of building the pint registry and the heaviest imports of the plan
command that ``import numpy, pint`` does not make (``python -X importtime``,
self times summed per package).
"""

from __future__ import annotations

import os
import re
import statistics
import subprocess
import sys
from pathlib import Path

from winder.bench import Row, missing, verdict
from winder.bench.measure import alternating, child_env, fmt_time

STARTUP_RATIO = 1.5  # issue budget
_IMPORT_LINE = re.compile(r"import time:\s+(\d+)\s+\|\s+(\d+)\s+\|( *)(\S+)")


def winder_command() -> list[str]:
    script = Path(sys.executable).with_name("winder")
    if script.is_file() and os.access(script, os.X_OK):
        return [str(script)]
    return [sys.executable, "-m", "winder"]


def _imports(args: list[str], env: dict[str, str]) -> dict[str, float]:
    """{module: self import seconds} of ``python -X importtime ARGS...``."""
    proc = subprocess.run([sys.executable, "-X", "importtime", *args], capture_output=True,
                          text=True, env=env, timeout=60)
    out: dict[str, float] = {}
    for line in proc.stderr.splitlines():
        m = _IMPORT_LINE.match(line)
        if m:
            out[m.group(4)] = int(m.group(1)) / 1e6
    return out


def beyond_floor(coil: str, env: dict[str, str]) -> tuple[list[tuple[str, float]], set[str]]:
    """What ``winder plan`` imports that ``import numpy, pint`` does not.

    Returns (packages, winder modules by name, with summed self import seconds,
    heaviest first) and the set of every module the plan command imported.
    """
    floor = _imports(["-c", "import numpy, pint"], env)
    plan = _imports(["-m", "winder", "plan", coil, "--json"], env)
    totals: dict[str, float] = {}
    for name, secs in plan.items():
        if name in floor:
            continue
        parts = name.split(".")
        key = ".".join(parts[:3]) if parts[0] == "winder" else parts[0]
        totals[key] = totals.get(key, 0.0) + secs
    return sorted(totals.items(), key=lambda kv: -kv[1]), set(plan)


def registry_build_s(env: dict[str, str]) -> float:
    """Wall seconds to build winder's pint registry after ``import numpy, pint``."""
    code = ("import numpy, pint, time; t = time.perf_counter(); "
            "from winder.units import registry; registry(); print(time.perf_counter() - t)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env=env, timeout=60)
    try:
        return float(proc.stdout.strip())
    except ValueError:
        return float("nan")


def startup_row(quick: bool) -> Row:
    gone = missing("winder.cli.plan_cmd", "winder.planner", "winder.profile")
    if gone:
        return Row("startup", "", gone, verdict="n/a")
    from winder.profile import examples_dir

    coil = str(examples_dir() / "coils" / "driver-8ohm.yaml")
    plan = [*winder_command(), "plan", coil, "--json"]
    cmds = {
        "pass": [sys.executable, "-c", "pass"],
        "numpy_pint": [sys.executable, "-c", "import numpy, pint"],
        "plan": plan,
    }
    env = child_env()
    runs, cpu = alternating(cmds, 1 if quick else 5, env, warmup=not quick)
    med = {k: statistics.median(v) for k, v in runs.items()}
    cmed = {k: statistics.median(v) for k, v in cpu.items()}
    ratio = med["plan"] / med["numpy_pint"]
    ratio_pass = med["plan"] / med["pass"]
    note = (f"wall medians of {len(runs['plan'])} alternating runs: plan "
            f"{fmt_time(med['plan'])}, numpy+pint {fmt_time(med['numpy_pint'])}, pass "
            f"{fmt_time(med['pass'])}; by CPU time plan / numpy+pint = "
            f"{cmed['plan'] / cmed['numpy_pint']:.2f}")
    ok = ratio <= STARTUP_RATIO
    extra_imports, imported = beyond_floor(coil, env)
    heavy = sorted(m for m in ("textual", "serial", "rich") if m in imported)
    note += "; textual/serial/rich imported: " + (", ".join(heavy) if heavy else "none")
    if not ok:
        note += (f"; beyond the floor: pint registry build {fmt_time(registry_build_s(env))}, "
                 "imports " + ", ".join(f"{n} {fmt_time(t)}" for n, t in extra_imports[:6]))
    return Row("startup", "", f"{ratio:.2f} x numpy+pint, {ratio_pass:.1f} x python -c pass",
               f"<= {STARTUP_RATIO:g} x numpy+pint", verdict(ok and not heavy), note=note,
               value=ratio, unit="x",
               extra={"medians_s": med, "cpu_medians_s": cmed, "runs_s": runs,
                      "vs_pass": ratio_pass, "imports_beyond_floor": extra_imports[:12],
                      "heavy_imported": heavy})
