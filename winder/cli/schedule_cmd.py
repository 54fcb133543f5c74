"""``winder schedule``: the traverse and turn schedule of a coil, for a machine."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

FORMAT_CHOICES = ("table", "yaml", "json", "csv", "gcode")


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``schedule`` sub-command."""
    p = subparsers.add_parser(
        "schedule",
        help="pass-by-pass traverse and turn schedule of a coil",
        description=(
            "Plan the coil, then lay it out pass by pass: where the wire guide goes "
            "(mm from the start flange), pitch per turn, spindle speed, and the turns, "
            "build and resistance at the end of each pass. Without --machine the generic "
            "spindle-and-traverse machine is used."),
    )
    p.add_argument("coil", metavar="COIL.yaml", help="coil profile")
    p.add_argument("--machine", metavar="FILE",
                   help="machine profile (a YAML file, or the name of a shipped one, "
                        "e.g. hand-counter)")
    p.add_argument("--format", choices=FORMAT_CHOICES, default="table",
                   help="output format (default: table)")
    p.add_argument("-o", "--output", metavar="FILE", help="write to FILE instead of stdout")
    p.add_argument("--seed", type=int, metavar="N",
                   help="scatter seed (overrides the coil's seed)")
    p.add_argument("--force", action="store_true",
                   help="schedule even when the plan overfills the bobbin")
    p.set_defaults(func=run)


def resolve_machine(text: str) -> Path:
    """A machine profile path: ``text`` itself, or a shipped profile of that name."""
    path = Path(text)
    if path.exists() or path.suffix in (".yaml", ".yml") or len(path.parts) > 1:
        return path
    try:
        from winder.profile import examples_dir

        shipped = examples_dir() / "machines" / f"{text}.yaml"
    except ImportError:  # pragma: no cover - planner not installed
        return path
    return shipped if shipped.exists() else path


def run(args: argparse.Namespace) -> int:
    """Build and print (or write) the schedule; exit code 0, or 2 on bad input."""
    from winder.errors import InputError
    from winder.planner import make_plan
    from winder.profile import load_coil
    from winder.schedule import build_schedule, load_machine, render

    machine = load_machine(resolve_machine(args.machine)) if args.machine else None
    if args.seed is not None and not 0 <= args.seed < 2**63:
        raise InputError("the seed must be a whole number from 0", where="--seed")
    coil = load_coil(args.coil)
    plan = make_plan(coil, force=args.force)
    schedule = build_schedule(plan, machine, seed=args.seed)
    text = render(schedule, args.format)
    if args.output:
        out = Path(args.output)
        try:
            out.write_text(text, encoding="utf-8")
        except OSError as err:
            raise InputError(f"cannot write ({err.strerror or err})", where="-o") from err
        print(f"schedule written to {out} ({len(schedule.passes)} passes)", file=sys.stderr)
    else:
        sys.stdout.write(text)
    if args.format != "table":
        for w in schedule.warnings:
            print(f"warning: {w}", file=sys.stderr)
    return 0
