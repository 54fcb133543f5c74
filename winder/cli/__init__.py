"""Command-line entry point: a thin dispatcher over command modules.

Each module named in :data:`COMMAND_MODULES` (under ``winder.cli``) has a
``register(subparsers)`` function that adds its sub-commands and sets
``func`` on them. Modules import their heavy dependencies inside the command
functions, never at import time, so ``winder plan`` never loads textual or
pyserial.

Errors: a :class:`~winder.errors.WinderError` becomes one line on stderr and
its exit code (2 for bad input); Ctrl-C exits 130.
"""

from __future__ import annotations

import argparse
import importlib
import importlib.util
import sys
from collections.abc import Sequence

from winder.errors import WinderError

# One module per area; a module that does not exist yet is skipped.
COMMAND_MODULES = (
    "plan_cmd",      # plan, wires, gauges
    "schedule_cmd",  # schedule
    "link_cmd",      # sim, probe
    "session_cmd",   # wind, resume, report, history
    "demo_cmd",      # demo
)


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser with every available sub-command."""
    from winder import __version__

    parser = argparse.ArgumentParser(
        prog="winder",
        description="Plan, wind, monitor and record coils.",
    )
    parser.add_argument("--version", action="version", version=f"winder {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in COMMAND_MODULES:
        modname = f"{__name__}.{name}"
        if importlib.util.find_spec(modname) is None:
            continue
        importlib.import_module(modname).register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run winder with ``argv`` (default ``sys.argv[1:]``); return the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        rc = args.func(args)
    except WinderError as err:
        print(f"winder: {err}", file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt:
        print("winder: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # `winder wires | head`
        return 0
    return int(rc or 0)
