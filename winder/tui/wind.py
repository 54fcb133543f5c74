"""Setting up a winding for the terminal UI: link, session and runner.

:class:`WindSetup` is the ``start_wind`` the plan view calls on Enter: it opens
the link, picks the machine from the device's capabilities (or a machine
profile), schedules the plan for that machine, freezes the coil as wound into a
new session and returns a :class:`~winder.tui.runner.RunnerControl`.
:func:`resume_control` does the same for an existing session.

``winder wind`` (without ``--headless``) runs :func:`run_wind` and
``winder resume`` runs :func:`run_resume`.
"""

from __future__ import annotations

import queue
from collections.abc import Callable
from pathlib import Path
from typing import Any

import yaml

from winder.errors import InputError
from winder.tui.runner import RunnerControl


def _mm(m: float) -> str:
    return f"{m * 1e3:.6g} mm"


def coil_mapping(coil: Any) -> dict[str, Any]:
    """The coil as a coil-profile mapping (bobbin inline), the inverse of the profile loader."""
    b = coil.bobbin
    if hasattr(b.core, "diameter_m"):
        core: dict[str, Any] = {"shape": "round", "diameter": _mm(b.core.diameter_m)}
    else:
        core = {"shape": "rect", "width": _mm(b.core.width_m), "length": _mm(b.core.length_m)}
        if b.core.corner_radius_m:
            core["corner_radius"] = _mm(b.core.corner_radius_m)
    bobbin: dict[str, Any] = {"name": b.name, "core": core,
                              "window": {"width": _mm(b.window_width_m),
                                         "height": _mm(b.window_height_m)},
                              "clearance": {"ends": _mm(b.clearance_ends_m),
                                            "top": _mm(b.clearance_top_m)}}
    if b.reference_inductance is not None:
        henry, turns = b.reference_inductance
        bobbin["reference_inductance"] = {"inductance": f"{henry:.9g} H", "turns": int(turns)}
    w = coil.wire
    wire: dict[str, Any] = {"size": w.size_name, "insulation": w.insulation}
    if getattr(w, "od_source", "") == "measured":
        wire["od"] = _mm(w.od_m)
    if w.material.name != "copper":
        wire["material"] = w.material.name
    if w.thermal_class_c is not None:
        wire["thermal_class"] = _thermal_class(w.thermal_class_c)
    t = coil.target
    target: dict[str, Any]
    if t.kind == "fill":
        target = {"fill": True}
    elif t.kind == "turns":
        target = {"turns": int(t.value)}
    else:
        target = {"resistance": f"{float(t.value):.9g} ohm"}
    s = coil.style
    style: dict[str, Any] = {"kind": s.kind}
    if s.packing is not None:
        style["packing"] = float(s.packing)
    if s.kind == "scatter":
        style["pitch_range"] = [float(s.pitch_range[0]), float(s.pitch_range[1])]
        if s.taper:
            style["taper"] = float(s.taper)
    if s.seed is not None:
        style["seed"] = int(s.seed)
    out = {"name": coil.name, "bobbin": bobbin, "wire": wire, "target": target,
           "style": style}
    if coil.drive is not None:
        out["drive"] = _drive_mapping(coil.drive)
    return out


def _thermal_class(celsius: float) -> int | str:
    """A thermal class for a profile: the class number, or a temperature ('150 degC')."""
    from winder.wire import THERMAL_CLASSES_C

    return int(celsius) if celsius in THERMAL_CLASSES_C else f"{celsius:.9g} degC"


def _drive_mapping(drive: Any) -> dict[str, Any]:
    """A coil's drive (volts or amperes, distance m, ambient degC) as a profile mapping."""
    d: dict[str, Any] = ({"voltage": f"{drive.voltage_v:.12g} V"} if drive.voltage_v is not None
                         else {"current": f"{drive.current_a:.12g} A"})
    if drive.distance_m is not None:
        d["distance"] = f"{drive.distance_m * 1e3:.12g} mm"
    d["ambient"] = f"{drive.ambient_c:.12g} degC"
    return d


def coil_yaml(coil: Any, note: str = "") -> str:
    """A self-contained coil profile for ``coil`` (what a session freezes as coil.yaml)."""
    head = f"# {note}\n" if note else ""
    return head + yaml.safe_dump(coil_mapping(coil), sort_keys=False, allow_unicode=True)


def _flange_mm(machine: Any) -> float:
    """Machine position of the start flange, mm (0 without a traverse)."""
    tr = getattr(machine, "traverse", None)
    return float(getattr(tr, "start_flange_m", 0.0) or 0.0) * 1e3


class WindSetup:
    """``start_wind(coil, plan, schedule)`` for the plan view: a new session on ``port``.

    ``port`` is a port name or URL, or a callable given the plan that returns one
    (the demo starts its simulated winder for the plan actually wound).
    """

    def __init__(self, port: str | Callable[[Any], str], *, machine_file: str | None = None,
                 session_dir: str | Path | None = None, root: Path | None = None,
                 stop_at_resistance: bool = False, auto_continue: bool = False,
                 ambient_c: float | None = None,
                 original: Any = None, original_path: str | Path | None = None,
                 on_closed: list[Callable[[], None]] | None = None):
        self.port = port
        self.machine_file = machine_file
        self.session_dir = session_dir
        self.root = root
        self.stop_at_resistance = stop_at_resistance
        self.auto_continue = auto_continue
        self.ambient_c = ambient_c
        self.original = original
        self.original_path = original_path
        self.on_closed = list(on_closed or [])
        self.session: Any = None

    def frozen_yaml(self, coil: Any) -> str:
        """The file as written when the coil is unchanged, else the coil as changed."""
        if self.original_path is not None and coil == self.original:
            from winder.session.prepare import frozen_coil_yaml

            return frozen_coil_yaml(Path(self.original_path))
        return coil_yaml(coil, "Coil as wound (changed in the plan view).")

    def __call__(self, coil: Any, plan: Any, schedule: Any) -> RunnerControl:
        from winder.schedule import build_schedule
        from winder.session.prepare import (
            Prepared,
            curve_for,
            machine_for,
            open_link,
            started_fields,
        )
        from winder.session.runner import Runner, check_stop_at_resistance
        from winder.session.session import Session

        if plan.fill > 1.0:
            raise InputError("the plan does not fit the usable height", key="target")
        events: queue.Queue = queue.Queue(maxsize=10000)
        port = self.port(plan) if callable(self.port) else self.port
        link = open_link(port, events)
        try:
            info = link.info
            machine = machine_for(self.machine_file, info.capabilities, info.counts_per_rev)
            tgt = coil.target
            check_stop_at_resistance(self.stop_at_resistance,
                                     tgt.value if tgt.kind == "resistance" else None,
                                     frozenset(info.capabilities))
            sched = build_schedule(plan, machine)
            prep = Prepared(coil, plan, sched, machine, self.frozen_yaml(coil), curve_for(plan))
            sess = Session.create(coil_name=coil.name, coil_yaml=prep.coil_yaml,
                                  plan=plan.to_dict(), schedule=sched.to_dict(),
                                  started=started_fields(prep, info.to_dict()),
                                  session_dir=self.session_dir, root=self.root)
        except BaseException:
            link.close()
            raise
        self.session = sess

        def make_runner(on_update: Callable[[Any], None]) -> Any:
            return Runner(sess, link, schedule=sched, machine=machine,
                          stop_at_resistance=self.stop_at_resistance,
                          auto_continue=self.auto_continue, events=events,
                          ambient_c=self.ambient_c, on_update=on_update)

        control = RunnerControl(link=link, session=sess, make_runner=make_runner,
                                begin=lambda r: r.start(), traverse=machine.drives_traverse,
                                guide_offset_mm=_flange_mm(machine), on_closed=self.on_closed)
        control.plan, control.schedule = plan, sched  # type: ignore[attr-defined]
        control.feed.log(f"session journal: {sess.path}", "info")
        return control


def resume_control(session_ref: str | Path, *, port: str | None = None,
                   reading: Any = None, accept_correction: bool = False,
                   stop_at_resistance: bool = False, auto_continue: bool = False,
                   ambient_c: float | None = None) -> tuple[RunnerControl, Any, Any]:
    """(control, plan, schedule) for resuming a session; the runner resumes on start()."""
    from winder.session.prepare import load_frozen, open_link, resume_port, resume_reading
    from winder.session.runner import Runner
    from winder.session.session import Session

    sess = Session.open(session_ref, writable=True)
    link = None
    try:
        port = resume_port(sess, port)
        plan, sched = load_frozen(sess.path)
        if plan is None:
            raise InputError("the session's coil cannot be planned again for the monitor; "
                             "resume with --headless", where="SESSION")
        machine = sched.machine if sched is not None else None
        events: queue.Queue = queue.Queue(maxsize=10000)
        link = open_link(port, events)
    except BaseException:
        if link is not None:
            link.close()
        sess.close()
        raise

    def make_runner(on_update: Callable[[Any], None]) -> Any:
        return Runner(sess, link, schedule=sched, machine=machine,
                      stop_at_resistance=stop_at_resistance, auto_continue=auto_continue,
                      events=events, ambient_c=ambient_c, on_update=on_update)

    def begin(runner: Any) -> None:
        got = resume_reading(runner, reading)
        rec = runner.resume(got, accept_correction=accept_correction)
        if rec.suggested_turns is not None and not rec.same_boot and not accept_correction:
            control.feed.log(f"the reading suggests {rec.suggested_turns:.0f} +/- "
                             f"{rec.suggested_pm:.0f} turns; resume with --accept-correction "
                             "to adopt it", "warn")

    traverse = bool(getattr(machine, "drives_traverse", True))
    control = RunnerControl(link=link, session=sess, make_runner=make_runner, begin=begin,
                            traverse=traverse, guide_offset_mm=_flange_mm(machine))
    control.feed.log(f"resuming {sess.id} at {sess.state.turns:g} of "
                     f"{sess.state.stop_turns:g} turns; space continues", "info")
    return control, plan, sched


def run_wind(coil_path: str | Path, *, port: str, machine_file: str | None = None,
             session_dir: str | Path | None = None, stop_at_resistance: bool = False,
             auto_continue: bool = False, ambient_c: float | None = None) -> int:
    """``winder wind COIL --port PORT``: the plan view, then the caution and the monitor."""
    from winder.profile import load_coil
    from winder.tui import run_plan

    coil = load_coil(coil_path)
    if machine_file:
        from winder.schedule import load_machine

        load_machine(machine_file)          # a bad profile is refused before the UI opens
    setup = WindSetup(port, machine_file=machine_file, session_dir=session_dir,
                      stop_at_resistance=stop_at_resistance, auto_continue=auto_continue,
                      ambient_c=ambient_c, original=coil, original_path=coil_path)
    rc = run_plan(coil, start_wind=setup)
    if setup.session is not None:
        _farewell(setup.session)
    return rc


def run_resume(session_ref: str | Path, *, port: str | None = None, reading: Any = None,
               accept_correction: bool = False, stop_at_resistance: bool = False,
               auto_continue: bool = False, ambient_c: float | None = None) -> int:
    """``winder resume SESSION``: the monitor; space (after the caution) resumes."""
    from winder.tui import run_monitor

    control, plan, sched = resume_control(session_ref, port=port, reading=reading,
                                          accept_correction=accept_correction,
                                          stop_at_resistance=stop_at_resistance,
                                          auto_continue=auto_continue, ambient_c=ambient_c)
    rc = run_monitor(control, plan, sched, title=f"{plan.coil.name} · resume")
    _farewell(control.session)
    return rc


def _farewell(session: Any) -> None:
    st = session.state
    if st.state == "finished":
        print(f"session {session.id}: finished at {st.turns:g} turns; "
              f"`winder report {session.id}`")
    else:
        print(f"session {session.id}: {st.state} at {st.turns:g} turns, motor stopped. "
              f"Resume with: winder resume {session.path}")
