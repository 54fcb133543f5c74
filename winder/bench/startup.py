"""Row for start-up: ``winder plan COIL --json`` against two interpreter floors.

The three commands run alternately (pass, numpy+pint, plan, pass, ...), each
several times after one untimed round, and the medians are compared:
``plan / (python -c 'import numpy, pint')`` has the budget 1.5 (the floor the
mandated dependencies set), ``plan / (python -c pass)`` is reported beside it.
``winder`` is the console script next to this interpreter when installed,
else ``python -m winder``. When the budget is missed the note lists the
heaviest imports of the plan command beyond numpy and pint, from
``python -X importtime``.
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


def winder_command() -> list[str]:
    script = Path(sys.executable).with_name("winder")
    if script.is_file() and os.access(script, os.X_OK):
        return [str(script)]
    return [sys.executable, "-m", "winder"]


def heavy_imports(cmd: list[str], env: dict[str, str], top: int = 5) -> list[tuple[str, float]]:
    """Top-level packages by cumulative import time (seconds) in ``cmd``, numpy/pint excluded.

    Uses ``python -X importtime`` (cumulative microseconds of each module's import,
    on stderr); only modules imported at nesting level 0 (directly by winder or the
    script) are counted, so a package is not counted twice through its submodules.
    """
    if cmd[0] != sys.executable:
        cmd = [sys.executable, "-m", "winder", *cmd[1:]]
    proc = subprocess.run([sys.executable, "-X", "importtime", *cmd[1:]], capture_output=True,
                          text=True, env=env, timeout=60)
    totals: dict[str, float] = {}
    pat = re.compile(r"import time:\s+(\d+)\s+\|\s+(\d+)\s+\|( *)(\S+)")
    for line in proc.stderr.splitlines():
        m = pat.match(line)
        if not m:
            continue
        cumulative, indent, name = int(m.group(2)), len(m.group(3)), m.group(4)
        if indent > 1:
            continue
        root = name.split(".")[0]
        if root in ("numpy", "pint", "encodings", "site") or name.startswith("winder.bench"):
            continue
        totals[name] = totals.get(name, 0.0) + cumulative / 1e6
    return sorted(totals.items(), key=lambda kv: -kv[1])[:top]


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
    if not ok:
        heavy = heavy_imports(plan, env)
        note += "; heaviest other imports: " + ", ".join(
            f"{name} {fmt_time(s)}" for name, s in heavy)
    return Row("startup", "", f"{ratio:.2f} x numpy+pint, {ratio_pass:.1f} x python -c pass",
               f"<= {STARTUP_RATIO:g} x numpy+pint", verdict(ok), note=note, value=ratio,
               unit="x", extra={"medians_s": med, "cpu_medians_s": cmed, "runs_s": runs,
                                        "vs_pass": ratio_pass})
