"""Session commands: ``wind``, ``resume``, ``report``, ``history``.

Heavy imports (the link, serial, the planner) happen inside the command
functions, so ``winder --help`` and the planning commands stay light.
"""

from __future__ import annotations

import argparse
import json
import sys

from winder.errors import InputError

CAUTION = ("caution: the spindle will turn. Keep hair, sleeves and fingers clear of the "
           "spindle and guide, wear eye protection, keep a hardware stop within reach. "
           "Ctrl-C stops the motor.")

KEYS_HELP = ("keys (type + Enter): p pause, c continue, r OHM [TEMP] reading (e.g. "
             "'r 812.4 ohm 23 C'), n TEXT note, b wire break, s splice, a [TURNS] accept the "
             "proposed stop point, k TURNS correct the count, q stop (resumable), x abort")


def _add_wind_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--headless", action="store_true",
                   help="no terminal UI: progress lines on stdout, keys on stdin "
                        "(without it: the plan view and the winding monitor)")
    p.add_argument("--stop-at-resistance", action="store_true",
                   help="measure as the coil grows and move the stop point to reach the "
                        "target resistance (needs a device that measures resistance)")
    p.add_argument("--auto-continue", action="store_true",
                   help="carry on by itself after a link loss or device restart "
                        "(unattended runs; by default winder waits for 'c')")
    p.add_argument("--ambient", metavar="TEMP",
                   help="room temperature for the device's own resistance readings "
                        "(e.g. '24 C'; default 20 C)")
    p.add_argument("--quiet", action="store_true", help="fewer progress lines")


def register(sub: argparse._SubParsersAction) -> None:
    w = sub.add_parser("wind", help="wind a coil on a connected winder",
                       description="Wind a coil: plan it, freeze the plan and schedule into a "
                       "new session, and drive (or follow) the winder on PORT, journaling "
                       "every step so the session can be resumed after any interruption.")
    w.add_argument("coil", metavar="COIL.yaml", help="coil profile")
    w.add_argument("--port", required=True, metavar="PORT",
                   help="serial port or pyserial URL of the winder (e.g. /dev/ttyUSB0)")
    w.add_argument("--session", metavar="DIR",
                   help="session directory (default: a new one under the data directory)")
    w.add_argument("--machine", metavar="FILE", help="machine profile (YAML)")
    _add_wind_options(w)
    w.set_defaults(func=cmd_wind)

    r = sub.add_parser("resume", help="resume an interrupted winding session",
                       description="Resume a session: rebuild its state from the journal, "
                       "reconnect, reconcile the count with the device and continue the "
                       "schedule from the right pass and guide position.")
    r.add_argument("session", metavar="SESSION", help="session directory or id")
    r.add_argument("--port", metavar="PORT", help="serial port (default: the one it used)")
    r.add_argument("--reading", metavar="OHM",
                   help="a fresh resistance reading of the coil (e.g. '812.4 ohm') to check "
                        "or correct the count after a device restart")
    r.add_argument("--temp", metavar="TEMP", help="ambient temperature of that reading "
                   "(e.g. '23 C'; default 20 C)")
    r.add_argument("--accept-correction", action="store_true",
                   help="set the count from the reading when the device restarted")
    _add_wind_options(r)
    r.set_defaults(func=cmd_resume)

    p = sub.add_parser("report", help="report of one winding session",
                       description="Report of a winding session: coil, plan, turns wound, "
                       "readings, final against predicted resistance, duration, "
                       "interruptions.")
    p.add_argument("session", metavar="SESSION", help="session directory or id (see history)")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--json", action="store_true", help="the full report as JSON")
    g.add_argument("--csv", action="store_true", help="the resistance readings as CSV")
    p.set_defaults(func=cmd_report)

    h = sub.add_parser("history", help="list winding sessions; find matched coil pairs",
                       description="List all winding sessions, oldest first, with filters; "
                       "--pairs finds finished coils whose measured resistance agrees "
                       "within a tolerance.")
    h.add_argument("--json", action="store_true", help="JSON output")
    h.add_argument("--coil", metavar="TEXT", help="coil name contains TEXT")
    h.add_argument("--state", choices=("running", "paused", "finished", "aborted",
                                       "interrupted", "unreadable"))
    h.add_argument("--since", metavar="DATE", help="started on or after DATE (YYYY-MM-DD)")
    h.add_argument("--until", metavar="DATE", help="started on or before DATE (YYYY-MM-DD)")
    h.add_argument("--pairs", action="store_true",
                   help="list matched pairs of finished coils (measured resistance)")
    h.add_argument("--tolerance", metavar="PERCENT", default="1%",
                   help="pair tolerance in percent of the mean, e.g. '0.5%%' (default 1%%)")
    h.add_argument("--same-coil", action="store_true", help="pair only coils of the same name")
    h.add_argument("--all-pairs", action="store_true",
                   help="every qualifying pair, not distinct sets")
    h.set_defaults(func=cmd_history)


def cmd_report(args: argparse.Namespace) -> int:
    from winder.session.report import build_report, format_text, readings_csv
    from winder.session.session import Session

    sess = Session.open(args.session)
    rep = build_report(sess)
    if args.json:
        print(json.dumps(rep, indent=2))
    elif args.csv:
        sys.stdout.write(readings_csv(rep))
    else:
        print(format_text(rep))
    return 0


def parse_percent(text: str, option: str) -> float:
    t = text.strip().rstrip("%").strip()
    try:
        v = float(t)
    except ValueError:
        raise InputError(f"expected a percentage like '1%', got {text!r}", where=option) from None
    if not (0 <= v < 100):
        raise InputError(f"expected a percentage between 0 and 100, got {text!r}", where=option)
    return v


def cmd_history(args: argparse.Namespace) -> int:
    from winder.session.history import Filters, collect, matched_pairs, parse_date, row
    from winder.session.report import fmt_ohm

    filters = Filters(coil=args.coil, state=args.state,
                      since=parse_date(args.since, "--since") if args.since else None,
                      until=parse_date(args.until, "--until") if args.until else None)
    tol = parse_percent(args.tolerance, "--tolerance")
    reps = collect(filters)
    rows = [row(r) for r in reps]
    pairs = matched_pairs(reps, tol, same_coil=args.same_coil,
                          all_pairs=args.all_pairs) if args.pairs else None
    if args.json:
        out: dict = {"sessions": rows}
        if pairs is not None:
            out["pairs"] = pairs
            out["tolerance_percent"] = tol
        print(json.dumps(out, indent=2))
        return 0
    if not rows:
        print("no sessions" + (" match" if any(vars(filters).values()) else " yet"))
    else:
        print(f"{'session':<38} {'state':<11} {'turns':>15}  {'final @20C':>12}  started")
        for r in rows:
            turns = (f"{r['turns_wound']:g}/{r['planned_turns']:g}"
                     if r.get("turns_wound") is not None else "-")
            final = fmt_ohm(r.get("final_measured_ohm_20c"))
            print(f"{r['session']:<38} {r['state']:<11} {turns:>15}  {final:>12}  "
                  f"{r.get('started') or '-'}")
    if pairs is not None:
        print(f"matched pairs within {tol:g} %:" if pairs else
              f"no matched pairs within {tol:g} %")
        for p in pairs:
            print(f"  {p['a']}  {fmt_ohm(p['a_ohm'])}  <->  {p['b']}  {fmt_ohm(p['b_ohm'])}"
                  f"  ({p['difference_percent']:.2f} %)")
    return 0


# ---- wind and resume ---------------------------------------------------------------------

def _tui():
    """The terminal UI's entry points (``run_wind``, ``run_resume``), or None."""
    import importlib.util

    if importlib.util.find_spec("winder.tui.wind") is None:
        return None
    from winder.tui import wind

    return wind


def _ui():
    """The terminal UI's entry points; without them, a one-line InputError."""
    tui = _tui()
    if tui is None:
        raise InputError("the terminal monitor is not available; add --headless",
                         where="--headless")
    return tui


def _headless_runner(args: argparse.Namespace, sess, link, events, *, schedule, machine,
                     ambient: float | None):
    """The session runner for ``wind``/``resume --headless``, printing its updates."""
    from winder.session.runner import Runner

    return Runner(sess, link, schedule=schedule, machine=machine,
                  stop_at_resistance=args.stop_at_resistance,
                  auto_continue=args.auto_continue, events=events,
                  ambient_c=ambient, on_update=_printer(args.quiet))


def cmd_wind(args: argparse.Namespace) -> int:
    import queue

    from winder.session.prepare import machine_for, open_link, prepare, started_fields
    from winder.session.runner import check_stop_at_resistance
    from winder.session.session import Session

    ambient = _ambient(args)
    if not args.headless:
        return _ui().run_wind(args.coil, port=args.port, machine_file=args.machine,
                              session_dir=args.session,
                              stop_at_resistance=args.stop_at_resistance,
                              auto_continue=args.auto_continue, ambient_c=ambient)
    _check_profiles(args.coil, args.machine)
    events: queue.Queue = queue.Queue(maxsize=10000)
    link = open_link(args.port, events)
    sess = None
    try:
        info = link.info
        machine = machine_for(args.machine, info.capabilities, info.counts_per_rev)
        prep = prepare(args.coil, machine)
        tgt = prep.plan.coil.target
        check_stop_at_resistance(args.stop_at_resistance,
                                 tgt.value if tgt.kind == "resistance" else None,
                                 frozenset(info.capabilities))
        sess = Session.create(coil_name=prep.coil.name, coil_yaml=prep.coil_yaml,
                              plan=prep.plan.to_dict(), schedule=prep.schedule.to_dict(),
                              started=started_fields(prep, info.to_dict()),
                              session_dir=args.session)
        runner = _headless_runner(args, sess, link, events, schedule=prep.schedule,
                                  machine=machine, ambient=ambient)
        print(f"session {sess.id}  ({sess.path})", flush=True)
        print(f"coil {prep.coil.name}: {prep.plan.turns} turns planned, "
              f"{_fmt_ohm(prep.plan.resistance_ohm)} at 20 C, "
              f"{len(prep.schedule.passes)} passes on {machine.name}", flush=True)
        if runner.motor:
            print(CAUTION, flush=True)
        print(KEYS_HELP, flush=True)
        runner.start()
        return _loop(runner, sess)
    finally:
        link.close()
        if sess is not None:
            sess.close()


def _check_profiles(coil: str, machine: str | None) -> None:
    """Refuse a bad coil or machine profile before the port is opened (one-line errors)."""
    from winder.profile import load_coil

    load_coil(coil)
    if machine:
        from winder.schedule import load_machine

        load_machine(machine)


def cmd_resume(args: argparse.Namespace) -> int:
    import queue

    from winder.session.calibration import Reading
    from winder.session.prepare import open_link, resume_port, resume_reading
    from winder.session.session import Session

    reading = None
    if args.reading:
        ohm, temp = parse_reading(args.reading, args.temp, "--reading", "--temp")
        reading = Reading(0.0, ohm, temp, "at resume")
    ambient = _ambient(args)
    if not args.headless:
        return _ui().run_resume(args.session, port=args.port, reading=reading,
                                accept_correction=args.accept_correction,
                                stop_at_resistance=args.stop_at_resistance,
                                auto_continue=args.auto_continue, ambient_c=ambient)
    sess = Session.open(args.session, writable=True)
    link = None
    try:
        st = sess.state
        port = resume_port(sess, args.port)
        sched = sess.schedule()
        schedule = machine = None
        if sched:
            from winder.schedule import Schedule

            schedule = Schedule.from_dict(sched)
            machine = schedule.machine
        events: queue.Queue = queue.Queue(maxsize=10000)
        link = open_link(port, events)
        runner = _headless_runner(args, sess, link, events, schedule=schedule,
                                  machine=machine, ambient=ambient)
        print(f"resuming {sess.id} at {st.turns:g} of {st.stop_turns:g} turns "
              f"(journal state {sess.effective_state()})", flush=True)
        if sess.torn is not None:
            print(f"note: {sess.torn.describe()}", flush=True)
        reading = resume_reading(runner, reading)
        if runner.motor:
            print(CAUTION, flush=True)
        rec = runner.resume(reading, accept_correction=args.accept_correction)
        if rec.suggested_turns is not None and not rec.same_boot and not args.accept_correction:
            print(f"the reading suggests {rec.suggested_turns:.0f} +/- "
                  f"{rec.suggested_pm:.0f} turns; type 'k {rec.suggested_turns:.0f}' to "
                  "correct the count, or resume with --accept-correction", flush=True)
        print(KEYS_HELP, flush=True)
        return _loop(runner, sess)
    finally:
        if link is not None:
            link.close()
        sess.close()


def _ambient(args: argparse.Namespace) -> float | None:
    if not args.ambient:
        return None
    return _room_temperature(args.ambient, "--ambient")


# the bounds of the terminal UI's reading dialog (winder/tui/dialogs.py)
READING_MAX_OHM = 100e6
READING_TEMP_RANGE_C = (-10.0, 80.0)


def _room_temperature(text: str, where: str) -> float:
    from winder.units import parse_temperature

    t = parse_temperature(text, where=where)
    lo, hi = READING_TEMP_RANGE_C
    if not lo <= t <= hi:
        raise InputError(f"{text!r} is outside {lo:g} to {hi:g} degC; measure the coil at "
                         "room temperature", where=where)
    return t


def parse_reading(ohm_text: str, temp_text: str | None, where: str,
                  temp_where: str | None = None) -> tuple[float, float | None]:
    """A typed resistance reading and its temperature, parsed and range-checked (ohm, degC)."""
    from winder.units import parse_resistance

    ohm = parse_resistance(ohm_text, where=where, maximum=READING_MAX_OHM)
    temp = _room_temperature(temp_text, temp_where or where) if temp_text else None
    return ohm, temp


def _fmt_ohm(x: float) -> str:
    from winder.session.report import fmt_ohm

    return fmt_ohm(x)


def _printer(quiet: bool):
    import time as _time

    last = [0.0]

    def show(u) -> None:
        if u.kind == "progress":
            now = _time.monotonic()
            if now - last[0] < (5.0 if quiet else 1.0):
                return
            last[0] = now
        prefix = {"warn": "warning: ", "error": "error: "}.get(u.kind, "")
        print(prefix + u.text, flush=True)

    return show


def _loop(runner, sess) -> int:
    """Poll the runner; keys from stdin; SIGINT/SIGTERM stop the motor and exit."""
    import signal
    import threading

    from winder.session.report import build_report, format_text

    got: list[int] = []

    def on_signal(signum, frame) -> None:
        got.append(signum)

    old = {s: signal.signal(s, on_signal) for s in (signal.SIGINT, signal.SIGTERM)}
    stdin_thread = threading.Thread(target=_read_keys, args=(runner,), daemon=True,
                                    name="winder-keys")
    stdin_thread.start()
    try:
        while not got and runner.poll(0.1):
            pass
        if got:
            name = signal.Signals(got[0]).name
            runner.halt(f"signal {name}")
            print(f"stopped by {name}: motor stopped, {runner.turns:g} turns journaled. "
                  f"Resume with: winder resume {sess.path} --headless", flush=True)
            return 128 + got[0]
        if sess.state.state == "paused":   # 'q'
            print(f"Resume with: winder resume {sess.path} --headless", flush=True)
            return 0
    finally:
        for s, h in old.items():
            signal.signal(s, h)
    print(format_text(build_report(sess, live=True)), flush=True)
    return 0 if sess.state.state == "finished" else 1


def _read_keys(runner) -> None:
    import sys as _sys

    stream = _sys.stdin
    if stream is None:
        return
    for line in stream:
        try:
            handle_key(runner, line)
        except InputError as err:
            print(f"winder: {err}", flush=True)


def handle_key(runner, line: str) -> None:
    """One typed command (see KEYS_HELP) to a runner action."""

    text = line.strip()
    if not text:
        return
    cmd, _, rest = text.partition(" ")
    rest = rest.strip()
    cmd = cmd.lower()
    if cmd in ("p", "pause"):
        runner.pause()
    elif cmd in ("c", "continue"):
        runner.cont()
    elif cmd in ("r", "reading"):
        ohm_text, temp_text = split_reading(rest)
        ohm, temp = parse_reading(ohm_text, temp_text, "reading")
        runner.reading(ohm, temp)
    elif cmd in ("n", "note"):
        runner.note(rest)
    elif cmd in ("b", "break"):
        runner.wire_break(rest)
    elif cmd in ("s", "splice"):
        runner.splice(rest)
    elif cmd in ("a", "accept"):
        runner.accept_stop(typed_turns(rest, "a [TURNS], e.g. 'a 1234'") if rest else None)
    elif cmd in ("k", "count"):
        runner.correct_count(typed_turns(rest, "k needs a turn count, e.g. 'k 1234'"), "user")
    elif cmd in ("q", "quit", "stop"):
        runner.stop("quit")
    elif cmd in ("x", "abort"):
        runner.abort("user")
    else:
        raise InputError(f"unknown key {cmd!r}; {KEYS_HELP}", where="keys")


MAX_TYPED_TURNS = 10 ** 8   # the profile loader's limit on target turns


def typed_turns(text: str, usage: str) -> float:
    """A turn count typed at the keys: a finite number from 0 to 100,000,000."""
    try:
        v = float(text)
    except ValueError:
        raise InputError(usage, where="keys") from None
    if not (0 <= v <= MAX_TYPED_TURNS):   # also refuses nan and inf
        raise InputError(f"{text!r} is not a turn count from 0 to {MAX_TYPED_TURNS}; {usage}",
                         where="keys")
    return v


def split_reading(text: str) -> tuple[str, str | None]:
    """'812.4 ohm 23 C' -> ('812.4 ohm', '23 C'); '6.2 kohm' -> ('6.2 kohm', None)."""
    import re

    m = re.match(r"^\s*([-+0-9.eE]+\s*[A-Za-z\u03a9]+)\s*(?:@|at)?\s*(.*)$", text)
    if not m:
        raise InputError(f"expected a reading like '812.4 ohm 23 C', got {text!r}",
                         where="reading")
    temp = m.group(2).strip() or None
    return m.group(1), temp
