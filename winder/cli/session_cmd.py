"""Session commands: ``wind``, ``resume``, ``report``, ``history``.

Heavy imports (the link, serial, the planner) happen inside the command
functions, so ``winder --help`` and the planning commands stay light.
"""

from __future__ import annotations

import argparse
import json
import sys

from winder.errors import InputError


def register(sub: argparse._SubParsersAction) -> None:
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
