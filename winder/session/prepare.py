"""Making a session from a coil profile, and reopening what a session froze.

:func:`prepare` loads the coil, plans it, builds the schedule for the machine,
and returns the pieces :meth:`Session.create` freezes: a self-contained
``coil.yaml`` (a bobbin given by file is written inline), ``plan.json``,
``schedule.json`` and the ``started`` event, which carries the plan's
resistance-against-turns table (``curve``, ohm at 20 C) so reports and
calibration never need to re-plan. :func:`load_frozen` rebuilds the plan and
schedule a session was started with.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np
import yaml

from winder.errors import InputError
from winder.session.calibration import ResistanceCurve
from winder.session.store import COIL_FILE, SCHEDULE_FILE, read_json

CURVE_POINTS = 257
CURVE_SPAN = 1.3    # the curve covers 1.3 x the planned turns (stop points can move)


@dataclass
class Prepared:
    coil: Any
    plan: Any
    schedule: Any | None
    machine: Any
    coil_yaml: str
    curve: ResistanceCurve


def frozen_coil_yaml(path: Path) -> str:
    """The coil file as a self-contained YAML document (bobbin inlined)."""
    from winder.profile import examples_dir

    text = path.read_text()
    data = yaml.safe_load(text)
    if isinstance(data, dict) and isinstance(data.get("bobbin"), str):
        ref = data["bobbin"]
        cand = Path(ref) if Path(ref).is_absolute() else (path.parent / ref)
        if not cand.exists():
            cand = examples_dir() / "bobbins" / (ref if ref.endswith(".yaml") else f"{ref}.yaml")
        if cand.exists():
            bob = yaml.safe_load(cand.read_text())
            if isinstance(bob, dict):
                bob.setdefault("name", cand.stem)
                data["bobbin"] = bob
    head = f"# Frozen copy of {path.name} as wound (bobbin written inline).\n"
    return head + yaml.safe_dump(data, sort_keys=False, allow_unicode=True)


def curve_for(plan: Any, span: float = CURVE_SPAN) -> ResistanceCurve:
    """The plan's 20 C resistance against turns, 0 to ``span`` x the planned turns."""
    top = max(float(plan.turns) * span, 2.0)
    t = np.linspace(0.0, top, CURVE_POINTS)
    r = np.asarray(plan.model.resistance_ohm(t), dtype=float)
    r = np.maximum.accumulate(np.nan_to_num(r, nan=0.0))
    r = r + np.arange(r.size) * 1e-12   # strictly increasing for the inverse
    return ResistanceCurve(t, r)


def machine_for(machine_file: str | None, caps: frozenset[str] | None, cpr: int | None) -> Any:
    """The machine profile (``--machine``), or one that matches the device."""
    from winder.schedule import DEFAULT_MACHINE, load_machine

    if machine_file:
        m = load_machine(machine_file)
        if caps is not None and m.drives_spindle and "spindle" not in caps:
            raise InputError(f"the machine profile drives the spindle but the device on the "
                             f"port is a counter only ({', '.join(sorted(caps))})",
                             where="--machine")
        return m
    m = DEFAULT_MACHINE
    if caps is not None and "spindle" not in caps:
        m = replace(m, name="turn counter", kind="counter")
    if cpr:
        m = replace(m, counts_per_rev=int(cpr))
    return m


def prepare(coil_path: str | Path, machine: Any) -> Prepared:
    """Load, plan and schedule a coil for ``machine``."""
    from winder.planner import make_plan
    from winder.profile import load_coil
    from winder.schedule import build_schedule

    path = Path(coil_path)
    coil = load_coil(path)
    plan = make_plan(coil)
    sched = build_schedule(plan, machine)
    return Prepared(coil, plan, sched, machine, frozen_coil_yaml(path), curve_for(plan))


def started_fields(prep: Prepared, device: dict[str, Any]) -> dict[str, Any]:
    """The ``started`` event fields for a prepared coil and device info dict."""
    plan = prep.plan
    tgt = plan.coil.target
    return {
        "planned_turns": float(plan.turns), "stop_turns": float(plan.turns),
        "target": {"kind": tgt.kind, "value": tgt.value},
        "predicted_ohm": float(plan.resistance_ohm),
        "curve": prep.curve.to_pairs(),
        "machine": {"name": prep.machine.name, "kind": prep.machine.kind,
                    "counts_per_rev": prep.machine.counts_per_rev},
        "device": device, "turns": 0.0,
    }


def load_frozen(session_dir: Path) -> tuple[Any | None, Any | None]:
    """(plan, schedule) as frozen in a session (either may be None)."""
    from winder.schedule import Schedule

    plan = None
    coil_file = Path(session_dir) / COIL_FILE
    if coil_file.exists():
        try:
            from winder.planner import make_plan
            from winder.profile import load_coil

            plan = make_plan(load_coil(coil_file))
        except InputError:
            plan = None
    sd = read_json(Path(session_dir) / SCHEDULE_FILE)
    sched = Schedule.from_dict(sd) if sd else None
    return plan, sched


# ---- reattaching (what `winder wind`/`resume`, headless or in the terminal UI, share) ----
def open_link(port: str, events: Any) -> Any:
    """A :class:`winder.link.WinderLink` on ``port``, opened (handshake done), delivering
    its events into ``events`` (the runner's queue)."""
    from winder.link import WinderLink

    link = WinderLink(port, events=events)
    link.open()
    return link


def resume_port(session: Any, port: str | None) -> str:
    """The port to resume ``session`` on (``port``, else the one it used); a finished or
    aborted session, or one that does not know its port, is a one-line InputError."""
    st = session.state
    if st.state in ("finished", "aborted"):
        raise InputError(f"session {session.id} is already {st.state}; see `winder report "
                         f"{session.id}`", where="SESSION")
    port = port or st.device.get("url")
    if not port:
        raise InputError("give --port (the session does not know its port)", where="--port")
    return port


def resume_reading(runner: Any, reading: Any | None) -> Any | None:
    """The reading to reconcile a resume with, at the journal's count (turns).

    ``reading`` is the user's (ohm, degC); without one, a device that restarted
    while the host was away and can measure is asked for one (spindle still).
    """
    from winder.session.calibration import Reading

    sess = runner.session
    if reading is None and (runner.link.info.boot_id or "") != (sess.state.boot_id or "") \
            and runner.can_measure:
        ohm = runner.measure_now()
        if ohm is not None:
            reading = Reading(0.0, ohm, None, "device reading at resume")
    if reading is not None:
        reading = Reading(sess.state.turns, reading.ohm, reading.temp_c, reading.note)
    return reading
