"""Schedule exports: a readable table, YAML, JSON, CSV and G-code.

JSON and YAML hold one object: the totals (``total_turns``, ``est_time_s``,
``seed``, ``machine``, ``warnings``, ...), ``passes`` (each pass as in
:class:`~winder.schedule.passes.Pass`, mm, rpm, ohm at 20 degC) and
``steps`` (each pass in machine steps, see
:class:`~winder.schedule.steps.PassSteps`). CSV has one row per pass with the
pass fields and its steps. The table is for people at the winder.
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import asdict, fields
from typing import Any

from winder.schedule.passes import Pass, Schedule
from winder.schedule.steps import PassSteps, schedule_steps

FORMATS = ("table", "yaml", "json", "csv", "gcode")


def schedule_dict(schedule: Schedule) -> dict[str, Any]:
    """:meth:`Schedule.to_dict` plus the per-pass machine steps."""
    data = schedule.to_dict()
    data["steps"] = [asdict(s) for s in schedule_steps(schedule)]
    return data


def to_json(schedule: Schedule) -> str:
    """The schedule as a JSON object (text)."""
    return json.dumps(schedule_dict(schedule), indent=2) + "\n"


def to_yaml(schedule: Schedule) -> str:
    """The schedule as YAML (the same object as the JSON)."""
    import yaml

    dumper = getattr(yaml, "CSafeDumper", yaml.SafeDumper)   # the C emitter when built
    return yaml.dump(schedule_dict(schedule), Dumper=dumper, sort_keys=False,
                     default_flow_style=None)


def to_csv(schedule: Schedule) -> str:
    """One row per pass: the pass fields, then its machine steps."""
    pass_cols = [f.name for f in fields(Pass)]
    step_cols = [f.name for f in fields(PassSteps) if f.name != "index"]
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(pass_cols + step_cols)
    for p, s in zip(schedule.passes, schedule_steps(schedule), strict=True):
        row = asdict(p)
        srow = asdict(s)
        w.writerow([_cell(row[c]) for c in pass_cols] + [srow[c] for c in step_cols])
    return out.getvalue()


def _cell(v: Any) -> Any:
    if v is None:
        return ""
    if isinstance(v, float):
        return repr(v)
    return v


def format_duration(seconds: float) -> str:
    """'1 h 02 min 05 s', '3 min 20 s', '45 s'."""
    s = int(round(seconds))
    h, rem = divmod(s, 3600)
    m, s = divmod(rem, 60)
    if h:
        return f"{h} h {m:02d} min {s:02d} s"
    if m:
        return f"{m} min {s:02d} s"
    return f"{s} s"


def to_table(schedule: Schedule) -> str:
    """A plain-text table of the passes with a header of totals."""
    m = schedule.machine
    lo, hi = schedule.window_mm
    head = [
        f"coil      {schedule.coil_name or '-'}",
        f"style     {schedule.style}" + (f", seed {schedule.seed}" if schedule.seed is not None
                                         else ""),
        f"machine   {m.name} ({m.kind})",
        f"window    {lo:.3f} to {hi:.3f} mm from the start flange; wire OD {schedule.od_mm:.4g} mm",
        f"turns     {schedule.total_turns:g} in {len(schedule.passes)} passes",
        f"time      about {format_duration(schedule.est_time_s)}",
    ]
    for wmsg in schedule.warnings:
        head.append(f"warning   {wmsg}")
    cols = ("pass", "direction", "from mm", "to mm", "turns", "pitch mm", "rpm",
            "turns end", "build mm", "ohm end")
    rows = [(str(p.index), p.direction, f"{p.start_mm:.3f}", f"{p.end_mm:.3f}", f"{p.turns:g}",
             f"{p.pitch_mm:.4f}", f"{p.rpm:.0f}", f"{p.turns_end:g}", f"{p.build_mm_end:.3f}",
             f"{p.ohm_end:.4g}") for p in schedule.passes]
    widths = [max(len(c), *(len(r[i]) for r in rows)) if rows else len(c)
              for i, c in enumerate(cols)]
    left = {1}
    def line(cells: tuple[str, ...]) -> str:
        return "  ".join(c.ljust(w) if i in left else c.rjust(w)
                         for i, (c, w) in enumerate(zip(cells, widths, strict=True))).rstrip()
    body = [line(cols)] + [line(r) for r in rows]
    return "\n".join(head + [""] + body) + "\n"


def render(schedule: Schedule, fmt: str) -> str:
    """The schedule in ``fmt`` (one of :data:`FORMATS`)."""
    if fmt == "table":
        return to_table(schedule)
    if fmt == "json":
        return to_json(schedule)
    if fmt == "yaml":
        return to_yaml(schedule)
    if fmt == "csv":
        return to_csv(schedule)
    if fmt == "gcode":
        from winder.schedule.gcode import to_gcode

        return to_gcode(schedule)
    raise ValueError(f"unknown format {fmt!r}")
