"""The performance budget: ``python -m winder.bench`` measures and prints one table.

Every figure is measured in this run, side by side, and reported as a median
(wall seconds unless the row says otherwise) next to its budget and a verdict:
``pass``, ``short`` (budget missed) or ``-`` (no budget). Ratios are taken to
floors that do not move with the machine's load: the 115200-baud line rate of
the real status line, ``python -c 'import numpy, pint'`` and ``python -c pass``
run alternately with the command they are compared to, an idle monitor.

A row whose code is not in this checkout says ``not available: <module>
missing`` instead of a number. Nothing here asserts a timing; the smoke test
(tests/test_bench.py) only checks that ``--quick`` produces every row.

Rows (key: what is measured)

``planner``    ``make_plan`` of the shipped 8 ohm driver coil with a fill target
``resist``     ``resistance_ohm`` of the layer model over 20,000 turn counts at once
``gauges``     ``rank_gauges`` over every AWG and metric size, in all three styles
``schedule``   ``build_schedule`` of a 10,000-turn scatter coil (``winder.schedule.bench``)
``codec``      framer + ``parse_device_line`` on real ``ST`` lines, / 115200-baud line rate
``ingest``     a host process (``WinderLink`` + session ``Runner`` + fsync'ed journal)
               reading a flood of status lines from ``winder sim --pty``: lines per
               host CPU-second, / 115200-baud line rate
``wind``       a whole ``winder wind --headless`` against the simulator at 1000 x
               speed-up: turns per second of winding / a 3000 rpm spindle, with the
               command's CPU time and peak RSS
``replay``     ``Session.open`` (journal replay + state rebuild) of 100,000 events
``monitor``    CPU time / wall time of a headless monitor under a 50 Hz count stream
``startup``    ``winder plan COIL --json`` / ``python -c 'import numpy, pint'`` (and
               / ``python -c pass``), alternating runs
``memory``     peak RSS of a child running ``winder demo``'s whole stack (simulator,
               link, runner, journal, monitor) through the 8,613-turn coil, / its
               own peak when the wind began

Public API: :class:`Row`, :data:`ROWS`, :func:`run` (``quick``: tiny sizes for
the smoke test), :func:`format_table`, :func:`machine_line`.
"""

from __future__ import annotations

import importlib.util
import os
import platform
import sys
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from typing import Any

__all__ = ["ROWS", "Row", "format_table", "machine_line", "missing", "run"]


@dataclass
class Row:
    """One line of the table. ``value`` is the headline number in ``unit`` (None if absent)."""

    key: str
    title: str
    figure: str
    budget: str = "-"
    verdict: str = "-"          # "pass" | "short" | "-" (no budget) | "n/a" (not measured)
    note: str = ""
    value: float | None = None
    unit: str = ""
    extra: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


def missing(*modules: str) -> str | None:
    """``'not available: <module> missing'`` for the first module not importable, else None."""
    for mod in modules:
        try:
            found = importlib.util.find_spec(mod) is not None
        except ModuleNotFoundError:
            found = False
        if not found:
            return f"not available: {mod} missing"
    return None


def verdict(ok: bool) -> str:
    return "pass" if ok else "short"


def _rows() -> list[tuple[str, str, Callable[[bool], Row]]]:
    from winder.bench import core_rows, link_rows, monitor_rows, session_rows, startup

    return [
        ("planner", "planner fill-solve", core_rows.planner_row),
        ("resist", "resistance vs turns, 20,000 turns", core_rows.resistance_row),
        ("gauges", "gauge chooser, every size x style", core_rows.gauges_row),
        ("schedule", "schedule, 10,000-turn scatter", core_rows.schedule_row),
        ("codec", "codec parse rate", link_rows.codec_row),
        ("ingest", "driver + journal ingest (pty, sim)", link_rows.ingest_row),
        ("wind", "headless wind at full speed-up", link_rows.wind_row),
        ("replay", "replay, 100,000-event journal", session_rows.replay_row),
        ("monitor", "monitor at 50 Hz counts", monitor_rows.monitor_row),
        ("startup", "start-up, winder plan --json", startup.startup_row),
        ("memory", "peak memory, long monitored wind", monitor_rows.memory_row),
    ]


#: Row keys in table order.
ROWS = ("planner", "resist", "gauges", "schedule", "codec", "ingest", "wind", "replay",
        "monitor", "startup", "memory")


def run(quick: bool = False, only: set[str] | None = None,
        progress: Callable[[str], None] | None = None) -> list[Row]:
    """Measure every row (or those in ``only``); a row that fails says so in its figure."""
    out: list[Row] = []
    for key, title, fn in _rows():
        if only and key not in only:
            continue
        if progress:
            progress(title)
        try:
            row = fn(quick)
        except Exception as err:  # one broken part must not hide the other figures
            row = Row(key, title, f"failed: {type(err).__name__}: {' '.join(str(err).split())}"
                      [:160], verdict="n/a")
        row.key, row.title = key, title
        out.append(row)
    return out


def format_table(rows: list[Row], *, markdown: bool = False) -> str:
    """The table as aligned text (or a Markdown table)."""
    head = ["row", "figure (median)", "budget", "verdict"]
    body = [[r.title, r.figure, r.budget, r.verdict] for r in rows]
    if markdown:
        lines = ["| " + " | ".join(head) + " |", "|" + "|".join("---" for _ in head) + "|"]
        lines += ["| " + " | ".join(c.replace("|", "\\|") for c in b) + " |" for b in body]
        notes = [f"- {r.title}: {r.note}" for r in rows if r.note]
        return "\n".join(lines + ([""] + notes if notes else []))
    widths = [max(len(x[i]) for x in [head, *body]) for i in range(len(head))]
    lines = ["  ".join(c.ljust(widths[i]) for i, c in enumerate(b)).rstrip()
             for b in [head, ["-" * w for w in widths], *body]]
    notes = [f"  {r.title}: {r.note}" for r in rows if r.note]
    return "\n".join(lines + (["", "notes:", *notes] if notes else []))


def machine_line() -> str:
    """One line about the machine the figures come from."""
    cpu = platform.processor() or platform.machine()
    try:
        with open("/proc/cpuinfo") as fh:
            for line in fh:
                if line.startswith("model name"):
                    cpu = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    vers = []
    for mod in ("numpy", "pint", "textual"):
        try:
            from importlib.metadata import version

            vers.append(f"{mod} {version(mod)}")
        except Exception:
            pass
    load = ""
    if hasattr(os, "getloadavg"):
        load = f", load average {os.getloadavg()[0]:.1f} at the end"
    return (f"{cpu}, {cores} cores available, {platform.system()} {platform.release()}, "
            f"Python {platform.python_version()} ({sys.implementation.name}), "
            + ", ".join(vers) + load)
