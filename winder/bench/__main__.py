"""``python -m winder.bench [--quick] [--only KEY,...] [--json] [--markdown]``.

Prints one table of figures with budgets and verdicts, and the machine line.
Exit code 0 whatever the verdicts (this is a measurement, not a test); 2 for
bad options.
"""

from __future__ import annotations

import argparse
import json
import sys
import time

from winder.bench import ROWS, format_table, machine_line, run


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m winder.bench",
                                 description="Measure winder against its performance budget.")
    ap.add_argument("--quick", action="store_true",
                    help="tiny sizes and few repeats (smoke test; figures not meaningful)")
    ap.add_argument("--only", metavar="KEYS", help=f"comma-separated rows: {', '.join(ROWS)}")
    ap.add_argument("--json", action="store_true", help="print the rows as JSON")
    ap.add_argument("--markdown", action="store_true", help="print a Markdown table")
    ap.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    args = ap.parse_args(argv)
    only = None
    if args.only:
        only = {k.strip() for k in args.only.split(",") if k.strip()}
        bad = only - set(ROWS)
        if bad:
            print(f"winder.bench: unknown row {', '.join(sorted(bad))}; rows: "
                  f"{', '.join(ROWS)}", file=sys.stderr)
            return 2
    t0 = time.perf_counter()

    def progress(title: str) -> None:
        if not args.quiet:
            print(f"[{time.perf_counter() - t0:5.1f} s] {title}", file=sys.stderr, flush=True)

    rows = run(quick=args.quick, only=only, progress=progress)
    total = time.perf_counter() - t0
    if args.json:
        json.dump({"machine": machine_line(), "quick": args.quick, "total_s": total,
                   "rows": [r.to_dict() for r in rows]}, sys.stdout, indent=2, default=str)
        sys.stdout.write("\n")
        return 0
    print(format_table(rows, markdown=args.markdown))
    print()
    print(f"machine: {machine_line()}")
    print(f"benchmark wall time {total:.1f} s" + (" (quick mode)" if args.quick else ""))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
