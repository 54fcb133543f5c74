"""``winder sim`` (the simulated winder) and ``winder probe`` (identify a device)."""

from __future__ import annotations

import argparse
import json
import sys

from winder.errors import InputError


def register(sub) -> None:
    p = sub.add_parser(
        "sim", help="run the simulated winder on a pseudo-terminal or TCP port",
        description=(
            "Run a simulated winder speaking the winder link protocol. Prints the device "
            "path (or socket URL) as the last word of its first line, then answers control "
            "lines on stdin with JSON lines (try 'help')."
        ),
    )
    where = p.add_mutually_exclusive_group()
    where.add_argument("--pty", action="store_true", help="serve on a pseudo-terminal (default)")
    where.add_argument("--tcp", type=int, metavar="PORT",
                       help="serve on 127.0.0.1:PORT (0 picks a free port)")
    p.add_argument("--speedup", type=float, default=1.0, metavar="K",
                   help="run simulated motion K times faster than real time")
    p.add_argument("--mode", choices=("controller", "counter", "plain"), default="controller",
                   help="controller: spindle+traverse; counter: hand winder; "
                        "plain: prints one integer per line")
    p.add_argument("--faults", default="", metavar="SPEC",
                   help="scheduled faults, e.g. '2:drop 1.5,5:reboot,8:corrupt 0.01,12:stall'")
    p.add_argument("--resistance-factor", type=float, default=1.0, metavar="F",
                   help="true coil resistance / nominal (hidden from the host)")
    p.add_argument("--ohm-per-turn", type=float, default=0.9, metavar="OHM",
                   help="nominal resistance per turn of the simulated coil")
    p.add_argument("--cpr", type=int, default=1, help="counts per revolution")
    p.add_argument("--watchdog", type=float, default=1.0, metavar="SECONDS",
                   help="stop the motor after this long without a valid host line")
    p.add_argument("--crank-rpm", type=float, default=150.0,
                   help="mean hand-cranking speed (counter and plain modes)")
    p.add_argument("--counter-bits", type=int, default=32, metavar="BITS",
                   help="counter width; the count wraps at 2**BITS")
    p.add_argument("--seed", type=int, default=None, help="random seed")
    p.add_argument("--exit-on-eof", action="store_true",
                   help="exit when stdin closes (used by test helpers)")
    p.set_defaults(func=cmd_sim)

    q = sub.add_parser("probe", help="connect to a winder, handshake and say what it is",
                       description="Open PORT (a device path or pyserial URL), handshake, "
                                   "print the device's identity and exit.")
    q.add_argument("port", metavar="PORT")
    q.add_argument("--json", action="store_true", help="print JSON")
    q.add_argument("--timeout", type=float, default=3.0, help="handshake timeout, seconds")
    q.set_defaults(func=cmd_probe)


def cmd_sim(args: argparse.Namespace) -> int:
    from winder.link.sim import SimDevice, SimServer, parse_faults

    if args.speedup <= 0:
        raise InputError("must be greater than 0", where="--speedup")
    if args.resistance_factor <= 0:
        raise InputError("must be greater than 0", where="--resistance-factor")
    if args.cpr < 1:
        raise InputError("must be at least 1", where="--cpr")
    if args.watchdog <= 0:
        raise InputError("must be greater than 0", where="--watchdog")
    if not 4 <= args.counter_bits <= 64:
        raise InputError("must be 4..64", where="--counter-bits")
    try:
        schedule = parse_faults(args.faults)
    except ValueError as err:
        raise InputError(str(err), where="--faults") from None
    import time

    dev = SimDevice(args.mode, cpr=args.cpr, watchdog_s=args.watchdog,
                    resistance_factor=args.resistance_factor, ohm_per_turn=args.ohm_per_turn,
                    crank_rpm=args.crank_rpm, wrap=2**args.counter_bits, seed=args.seed,
                    now=time.monotonic())
    server = SimServer(dev, transport="tcp" if args.tcp is not None else "pty",
                       tcp_port=args.tcp or 0, speedup=args.speedup, seed=args.seed,
                       exit_on_eof=args.exit_on_eof)
    for _, cmd in schedule:
        if cmd.split()[0].lower() not in {c.split()[0] for c in _control_names()}:
            raise InputError(f"unknown fault {cmd!r}", where="--faults")
    server.schedule = schedule
    try:
        path = server.start()
    except OSError as err:
        raise InputError(f"cannot serve: {err}", where="--tcp") from None
    print(f"winder sim ({args.mode}, boot {dev.boot_id}) ready on {path}", flush=True)
    print("simulated winder: no motor is driven; on a real machine keep hands and loose "
          "clothing clear of the spindle", file=sys.stderr, flush=True)
    try:
        server.run()
    except KeyboardInterrupt:
        pass
    return 0


def _control_names() -> list[str]:
    from winder.link.sim import CONTROL_COMMANDS

    return CONTROL_COMMANDS


def cmd_probe(args: argparse.Namespace) -> int:
    from winder.link.driver import WinderLink

    link = WinderLink(args.port, hello_timeout=args.timeout, reconnect=False)
    info = link.open()
    try:
        if args.json:
            print(json.dumps(info.to_dict(), indent=2))
        else:
            caps = ", ".join(sorted(info.capabilities)) or "none"
            kind = "integer-only counter (fallback)" if info.protocol == 0 else "winder"
            print(f"{info.url}: {kind}")
            print(f"  protocol         {info.protocol}")
            print(f"  boot_id          {info.boot_id or '-'}")
            print(f"  capabilities     {caps}")
            print(f"  counts per rev   {info.counts_per_rev}")
            print(f"  state            {info.state}")
            if info.protocol:
                print(f"  watchdog         {info.watchdog_s:g} s")
                print(f"  pass queue       {info.queue_max}")
                print(f"  firmware         {info.firmware or '-'}")
    finally:
        link.close()
    return 0
