"""``winder demo``: the whole flow on the built-in simulated winder, no hardware.

Starts ``winder sim --pty`` in the background, loads a shipped example coil,
and opens the terminal UI on it: the plan view (Enter to wind), the safety
caution, then the monitor winding on the simulator, where readings can be
logged. The session lives in a temporary directory, removed on exit unless
``--keep``. Quitting (q) stops the motor, journals and closes the simulator.
"""

from __future__ import annotations

import argparse

DEFAULT_COIL = "sense-6k2"


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("demo", help="plan and wind an example coil on the simulated winder",
                       description="Plan a shipped example coil and wind it on the built-in "
                       "simulated winder in the terminal UI: no hardware needed.")
    p.add_argument("--coil", default=DEFAULT_COIL, metavar="NAME",
                   help=f"shipped example coil (default {DEFAULT_COIL}); "
                        "see the profiles/coils directory")
    p.add_argument("--speedup", type=float, default=1.0, metavar="K",
                   help="run the simulated winder K times faster than real time (default 1)")
    p.add_argument("--hand", action="store_true",
                   help="simulate hand winding on a turn counter (no motor): the monitor "
                        "shows where the wire should be as the count grows")
    p.add_argument("--keep", action="store_true",
                   help="keep the demo session directory (its path is printed on exit)")
    p.set_defaults(func=cmd_demo)


def cmd_demo(args: argparse.Namespace) -> int:
    from winder.tui.demo import run_demo

    return run_demo(coil=args.coil, speedup=args.speedup, keep=args.keep, hand=args.hand)
