"""Session reports: one dict (JSON), a readings table (CSV) and a text page.

:func:`build_report` is the one source; ``summary.json`` is the same dict.
Resistances are ohms; ``*_20c`` values are referred to 20 C (copper alpha,
see :mod:`.calibration`); times are epoch seconds plus ISO 8601 UTC strings.

Keys (stable): ``session``, ``coil``, ``path``, ``state``, ``reason``,
``planned_turns``, ``stop_turns``, ``turns_wound``, ``target``,
``readings`` (objects with ``turns``, ``ohm``, ``temp_c``, ``ohm_20c``,
``predicted_ohm_20c``, ``ratio``, ``note``, ``source``, ``t``),
``plan_final_ohm`` (the plan's 20 C resistance at the stop point),
``predicted_final_ohm`` (calibrated when there are readings, else the plan's),
``final_measured_ohm_20c`` (a reading taken at the final count, if any),
``final_error_percent`` (measured final against the plan's prediction for the
turns wound), ``calibration``, ``duration_s``, ``winding_s``, ``started``,
``ended``, ``interruptions``, ``boot_ids``, ``splices``, ``corrections``,
``stop_changes``, ``notes``, ``torn_line``, ``journal_events``,
``journal_bytes``, ``plan`` (summary of plan.json).
"""

from __future__ import annotations

import csv
import datetime as _dt
import io
from typing import TYPE_CHECKING, Any

from winder.session.calibration import to_20c

if TYPE_CHECKING:
    from winder.session.session import Session

PLAN_KEYS = ("turns", "layers", "turns_per_layer", "wire", "wire_length_m", "resistance_ohm",
             "resistance_band_ohm", "build_height_m", "fill", "mass_kg")
FINAL_READING_TURNS = 1.0   # a reading within this many turns of the end counts as final


def iso(t: float | None) -> str | None:
    if t is None:
        return None
    return _dt.datetime.fromtimestamp(t, _dt.UTC).isoformat(timespec="seconds")


def build_report(sess: Session, *, live: bool = False) -> dict[str, Any]:
    """The report of an open session (``live``: this process holds the lock)."""
    st = sess.state
    state = st.state if live else sess.effective_state()
    cal = st.calibrator()
    est = st.estimate()
    ratio = est.ratio if est else None
    readings = []
    for r in st.readings:
        r20 = to_20c(r["ohm"], r["temp_c"])
        pred = st.curve(r["turns"]) if st.curve is not None else None
        readings.append({"turns": r["turns"], "ohm": r["ohm"], "temp_c": r["temp_c"],
                         "ohm_20c": r20, "predicted_ohm_20c": pred,
                         "ratio": (r20 / pred) if pred else None,
                         "note": r.get("note", ""), "source": r.get("source", "user"),
                         "t": r["t"], "time": iso(r["t"])})
    plan_final = st.predicted_ohm()
    predicted_final = est.predicted_final_ohm if est else plan_final
    final_measured = None
    final_err = None
    if readings and st.state == "finished" \
            and abs(readings[-1]["turns"] - st.turns) <= FINAL_READING_TURNS:
        final_measured = readings[-1]["ohm_20c"]
        pred_wound = st.curve(st.turns) if st.curve is not None else None
        if pred_wound:
            final_err = (final_measured / pred_wound - 1.0) * 100.0
    plan = sess.plan() or {}
    interruptions = [dict(i, start=iso(i.get("t_start")), end=iso(i.get("t_end")))
                     for i in st.interruptions]
    return {
        "session": sess.id,
        "coil": st.coil,
        "path": str(sess.path),
        "state": state,
        "reason": st.reason,
        "planned_turns": st.planned_turns,
        "stop_turns": st.stop_turns,
        "turns_wound": st.turns,
        "target": st.target,
        "readings": readings,
        "plan_final_ohm": plan_final,
        "predicted_final_ohm": predicted_final,
        "final_measured_ohm_20c": final_measured,
        "final_error_percent": final_err,
        "calibration": est.to_dict() if est else None,
        "calibration_ratio": ratio,
        "turns_for_target": est.turns_for_target if est else None,
        "duration_s": st.duration_s,
        "winding_s": st.winding_s,
        "started": iso(st.started_t),
        "ended": iso(st.last_t) if st.state in ("finished", "aborted") else None,
        "started_t": st.started_t,
        "last_t": st.last_t,
        "interruptions": interruptions,
        "boot_ids": st.boot_ids,
        "host_runs": st.host_runs,
        "splices": st.splices,
        "corrections": st.corrections,
        "stop_changes": st.stop_changes,
        "notes": st.notes,
        "machine": st.machine,
        "torn_line": sess.torn.describe() if sess.torn else None,
        "journal_events": st.events,
        "journal_bytes": sess.journal_bytes(),
        "plan": {k: plan[k] for k in PLAN_KEYS if k in plan},
        "has_calibration_curve": cal is not None,
    }


CSV_COLUMNS = ("time", "turns", "ohm", "temp_c", "ohm_20c", "predicted_ohm_20c", "ratio",
               "source", "note")


def readings_csv(report: dict[str, Any]) -> str:
    """The readings as CSV (header row first), one row per reading."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for r in report["readings"]:
        w.writerow(["" if r.get(c) is None else
                    (f"{r[c]:.6g}" if isinstance(r[c], float) else r[c]) for c in CSV_COLUMNS])
    return buf.getvalue()


def fmt_ohm(x: float | None) -> str:
    if x is None:
        return "-"
    if x >= 1000:
        return f"{x / 1000:.4g} kohm"
    return f"{x:.4g} ohm"


def fmt_duration(s: float | None) -> str:
    if s is None:
        return "-"
    s = int(round(s))
    h, rem = divmod(s, 3600)
    m, sec = divmod(rem, 60)
    return f"{h}:{m:02d}:{sec:02d}" if h else f"{m}:{sec:02d}"


def format_text(rep: dict[str, Any]) -> str:
    """A human-readable report page."""
    lines = [f"session   {rep['session']}  ({rep['path']})",
             f"coil      {rep['coil']}",
             f"state     {rep['state']}" + (f" ({rep['reason']})" if rep["reason"] else "")]
    plan = rep.get("plan") or {}
    if plan:
        bits = []
        if "wire" in plan:
            w = plan["wire"]
            bits.append(w.get("name") if isinstance(w, dict) else str(w))
        if "resistance_ohm" in plan:
            bits.append(f"planned {fmt_ohm(plan['resistance_ohm'])} at 20 C")
        if "layers" in plan:
            bits.append(f"{plan['layers']} layers")
        lines.append("plan      " + ", ".join(str(b) for b in bits if b))
    lines.append(f"turns     {rep['turns_wound']:g} wound of {rep['stop_turns']:g}"
                 + (f" (planned {rep['planned_turns']:g})"
                    if rep["stop_turns"] != rep["planned_turns"] else ""))
    lines.append(f"time      {fmt_duration(rep['duration_s'])} in all, "
                 f"{fmt_duration(rep['winding_s'])} winding; started {rep['started']}")
    lines.append(f"predicted {fmt_ohm(rep['predicted_final_ohm'])} at 20 C at the stop point"
                 + (f" (plan said {fmt_ohm(rep['plan_final_ohm'])})"
                    if rep["calibration"] else ""))
    cal = rep["calibration"]
    if cal:
        lines.append(f"calibr.   measured/predicted {cal['ratio']:.4f} "
                     f"+/- {cal['ratio_std']:.4f} from {cal['readings']} reading(s)"
                     + (f"; target reached at {cal['turns_for_target']:.0f} turns"
                        if cal["turns_for_target"] else ""))
    if rep["final_measured_ohm_20c"] is not None:
        lines.append(f"final     measured {fmt_ohm(rep['final_measured_ohm_20c'])} at 20 C, "
                     f"{rep['final_error_percent']:+.2f} % against the plan")
    if rep["readings"]:
        lines.append("readings  turns      ohm        degC   ohm@20C    ratio")
        for r in rep["readings"]:
            ratio = f"{r['ratio']:.4f}" if r["ratio"] else "-"
            temp = "-" if r["temp_c"] is None else f"{r['temp_c']:g}"
            lines.append(f"          {r['turns']:<10g} {r['ohm']:<10.5g} {temp:<6} "
                         f"{r['ohm_20c']:<10.5g} {ratio}" + (f"  {r['note']}" if r["note"] else ""))
    if rep["interruptions"]:
        lines.append("interruptions")
        for i in rep["interruptions"]:
            extra = ""
            if i.get("turns_after") is not None:
                extra += f", count then {i['turns_after']:g}"
            if i.get("unaccounted_turns") is not None:
                extra += f", up to {i['unaccounted_turns']:g} turns unaccounted"
            dur = fmt_duration(i["duration_s"]) if i.get("duration_s") is not None else "open"
            lines.append(f"          {i['kind']} at {i['turns']:g} turns, {dur}{extra}"
                         + (f" ({i['reason']})" if i.get("reason") else ""))
    for c in rep["corrections"]:
        lines.append(f"corrected count {c['old_turns']:g} -> {c['turns']:g} ({c['reason']})")
    for n in rep["notes"]:
        lines.append(f"note      at {n['turns']:g} turns: {n['text']}")
    if rep["torn_line"]:
        lines.append(f"journal   {rep['torn_line']}")
    return "\n".join(lines)
