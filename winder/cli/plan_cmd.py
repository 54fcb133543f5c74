"""Planning commands: ``winder plan``, ``winder wires``, ``winder gauges``.

Heavy imports (numpy, pint, yaml and the planner) happen inside the command
functions; nothing here imports textual or serial.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from winder.errors import InputError

STYLES = ("layer", "orthocyclic", "scatter")


def register(sub: Any) -> None:
    """Add the plan, wires and gauges sub-commands."""
    p = sub.add_parser(
        "plan", help="plan a coil: turns, layers, build, wire length, resistance",
        description="Plan a coil from a coil profile, or ad hoc from a bobbin profile, a wire "
                    "and one target (--turns, --resistance or --fill).")
    p.add_argument("coil", nargs="?", metavar="COIL.yaml", help="coil profile")
    p.add_argument("--bobbin", metavar="FILE", help="bobbin profile (ad-hoc plan)")
    p.add_argument("--wire", metavar="WIRE", help="wire, e.g. '42 AWG heavy' or "
                   "'0.063 mm grade 2' (ad-hoc plan)")
    goal = p.add_mutually_exclusive_group()
    goal.add_argument("--turns", metavar="N", help="wind N turns")
    goal.add_argument("--resistance", metavar="R", help="reach DC resistance R at 20 C, "
                      "e.g. '8 ohm' or '6.2 kohm'")
    goal.add_argument("--fill", action="store_true", help="the most turns that fit")
    p.add_argument("--style", choices=STYLES, help="winding style (ad-hoc default: layer)")
    p.add_argument("--packing", metavar="P", help="scatter packing factor, e.g. 0.75")
    p.add_argument("--od", metavar="LENGTH", help="measured overall wire diameter, e.g. "
                   "'0.071 mm'")
    p.add_argument("--material", default="copper", choices=("copper", "aluminium"),
                   help="conductor (ad-hoc plan; default copper)")
    p.add_argument("--temp", default="20 degC", metavar="T",
                   help="temperature for the hot resistance, e.g. '25degC' (default 20 degC)")
    p.add_argument("--force", action="store_true", help="plan an over-full coil anyway")
    p.add_argument("--drive", metavar="V_OR_A", help="drive the coil: a voltage such as '2 V' "
                   "or a current such as '0.5 A' (current, power, heating; overrides the "
                   "profile's drive)")
    p.add_argument("--distance", metavar="LENGTH", help="field point on the axis beyond the "
                   "top face, e.g. '3 mm'")
    p.add_argument("--ambient", metavar="T", help="ambient air for the drive figures "
                   "(default the profile's, else 25 degC)")
    p.add_argument("--thermal-class", metavar="CLASS", help="insulation thermal class, e.g. "
                   "155 or '155 degC' (default the wire's, else 130 C assumed)")
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_plan)

    w = sub.add_parser("wires", help="list the wire catalog",
                       description="List the wire sizes: bare diameter, copper ohm per metre "
                                   "at 20 C and overall diameter per insulation.")
    w.add_argument("--series", choices=("awg", "metric", "all"), default="all")
    w.add_argument("--json", action="store_true", help="machine-readable output")
    w.set_defaults(func=cmd_wires)

    g = sub.add_parser(
        "gauges", help="rank wire sizes for a bobbin and a target resistance",
        description="Rank the standard sizes for a bobbin: turns and fill at the target "
                    "resistance, resistance when full, ampere-turns at a drive voltage; mark "
                    "the recommended size (the thickest whose target length fits).")
    g.add_argument("--bobbin", required=True, metavar="FILE",
                   help="bobbin profile (or a coil profile: its bobbin and style are used)")
    g.add_argument("--resistance", metavar="R", help="target resistance at 20 C (with "
                   "--max-turns: the highest acceptable full resistance)")
    g.add_argument("--drive", default="1 V", metavar="V_OR_A",
                   help="drive voltage ('2 V') or current ('0.5 A') for ampere-turns, power, "
                        "heating and field (default 1 V)")
    g.add_argument("--distance", default="0 mm", metavar="LENGTH",
                   help="field point on the axis beyond the top face (default 0 mm: on it)")
    g.add_argument("--ambient", default="25 degC", metavar="T",
                   help="ambient air for the steady heating (default 25 degC)")
    g.add_argument("--max-turns", action="store_true",
                   help="rank for sensing coils: most turns when full")
    g.add_argument("--series", choices=("awg", "metric"), default="awg")
    g.add_argument("--insulation", metavar="BUILD",
                   help="single/heavy/triple (AWG) or grade 1/2/3 (metric)")
    g.add_argument("--style", choices=STYLES, help="winding style (default layer)")
    g.add_argument("--packing", metavar="P", help="scatter packing factor")
    g.add_argument("--all", action="store_true", help="show every size, not only those near "
                   "the recommendation")
    g.add_argument("--json", action="store_true", help="machine-readable output")
    g.set_defaults(func=cmd_gauges)


# ---------------------------------------------------------------- helpers


def _packing(text: str | None) -> float | None:
    if text is None:
        return None
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{text!r} is not a number (a fraction such as 0.75)",
                         where="--packing") from None
    return value


def _style(kind: str | None, packing: str | None, base: Any = None) -> Any:
    import dataclasses

    from winder.winding import Style

    try:
        if base is not None:
            changes: dict[str, Any] = {}
            if kind:
                changes["kind"] = kind
            if packing is not None:
                changes["packing"] = _packing(packing)
            return dataclasses.replace(base, **changes) if changes else base
        return Style(kind=kind or "layer", packing=_packing(packing))
    except InputError as err:
        raise InputError(err.message, where="--packing" if "packing" in (err.key or "")
                         else "--style") from None


def _emit_json(data: Any) -> None:
    json.dump(data, sys.stdout, indent=2, allow_nan=False)
    sys.stdout.write("\n")


def _table(rows: list[list[str]], header: list[str], right: set[int]) -> str:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]

    def line(r: list[str]) -> str:
        cells = [c.rjust(widths[i]) if i in right else c.ljust(widths[i])
                 for i, c in enumerate(r)]
        return "  ".join(cells).rstrip()

    return "\n".join([line(header), line(["-" * w for w in widths]), *map(line, rows)])


# ---------------------------------------------------------------- plan


def _adhoc_coil(args: argparse.Namespace) -> Any:
    from winder.planner import Coil, Target
    from winder.profile import load_bobbin
    from winder.units import parse_length, parse_resistance
    from winder.wire import make_wire, parse_wire

    if not args.bobbin or not args.wire:
        raise InputError("give a coil profile, or --bobbin FILE and --wire WIRE with one of "
                         "--turns, --resistance or --fill", where="plan")
    bobbin = load_bobbin(args.bobbin)
    size, ins = parse_wire(args.wire)
    od = parse_length(args.od, where="--od", maximum=0.02) if args.od else None
    try:
        wire = make_wire(size, ins, od_m=od, material=args.material)
    except InputError as err:
        raise InputError(err.message, where="--wire") from None
    if args.turns is not None:
        try:
            turns = int(args.turns)
        except ValueError:
            raise InputError(f"{args.turns!r} is not a whole number of turns",
                             where="--turns") from None
        target = _target("turns", float(turns), "--turns")
    elif args.resistance is not None:
        target = _target("resistance", parse_resistance(args.resistance, where="--resistance",
                                                        maximum=1e8), "--resistance")
    elif args.fill:
        target = Target("fill")
    else:
        raise InputError("give one target: --turns N, --resistance R or --fill", where="plan")
    return Coil(name=f"{wire.name} on {bobbin.name}", bobbin=bobbin, wire=wire, target=target,
                style=_style(args.style, args.packing), source=None)


def _target(kind: str, value: float, where: str) -> Any:
    from winder.planner import Target

    try:
        return Target(kind, value)
    except InputError as err:
        raise InputError(err.message, where=where) from None


def cmd_plan(args: argparse.Namespace) -> int:
    """``winder plan``: print the plan of a coil."""
    import dataclasses

    from winder.planner import make_plan
    from winder.units import parse_temperature

    temp = parse_temperature(args.temp, where="--temp")
    if args.coil:
        if args.bobbin or args.wire or args.turns or args.resistance or args.fill or args.od:
            raise InputError("give either a coil profile or the ad-hoc options (--bobbin, "
                             "--wire, a target), not both", where="plan")
        from winder.profile import load_coil

        coil = load_coil(args.coil)
        if args.style or args.packing is not None:
            coil = dataclasses.replace(coil, style=_style(args.style, args.packing, coil.style))
    else:
        coil = _adhoc_coil(args)
    coil, distance = _with_cli_drive(coil, args)
    plan = make_plan(coil, temp_c=temp, force=args.force)
    figures = plan_figures(plan, distance)
    if args.json:
        _emit_json({**plan.to_dict(), **figures})
    else:
        print(format_plan(plan, figures))
    return 0


def _with_cli_drive(coil: Any, args: argparse.Namespace) -> tuple[Any, float | None]:
    """(coil, field point in m or None): the coil with --drive, --distance, --ambient and
    --thermal-class applied over its profile's drive section and wire."""
    import dataclasses

    from winder.planner import DEFAULT_AMBIENT_C, Drive
    from winder.profile import parse_drive, parse_thermal_class
    from winder.units import parse_length, parse_temperature

    if args.thermal_class is not None:
        tc = parse_thermal_class(args.thermal_class, where="--thermal-class")
        coil = dataclasses.replace(coil, wire=dataclasses.replace(coil.wire, thermal_class_c=tc))
    base = coil.drive
    if args.drive is None and args.distance is None and args.ambient is None:
        return coil, None if base is None else base.distance_m
    volts, amps = ((base.voltage_v, base.current_a) if base is not None else (None, None))
    if args.drive is not None:
        volts, amps = parse_drive(args.drive, where="--drive")
    distance = base.distance_m if base is not None else None
    if args.distance is not None:
        distance = parse_length(args.distance, where="--distance", allow_zero=True, maximum=2.0)
    ambient = base.ambient_c if base is not None else DEFAULT_AMBIENT_C
    if args.ambient is not None:
        ambient = parse_temperature(args.ambient, where="--ambient")
    if volts is None and amps is None:
        if args.ambient is not None:
            raise InputError("--ambient needs a drive (--drive '2 V' or a profile drive)",
                             where="--ambient")
        # a field point without a drive: field per ampere only
        return coil, distance
    try:
        drive = Drive(voltage_v=volts, current_a=amps, distance_m=distance, ambient_c=ambient)
    except InputError as err:
        where = {"drive.distance": "--distance", "drive.ambient": "--ambient"}.get(
            err.key or "", "--drive")
        raise InputError(err.message, where=where) from None
    return dataclasses.replace(coil, drive=drive), distance


def plan_figures(plan: Any, distance_m: float | None = None) -> dict[str, Any]:
    """The electromagnetic figures of a plan as JSON-ready keys (added to the plan's own).

    Always ``inductance_uH``, ``inductance_source``, ``inductance_band_pct``,
    ``air_core_inductance_uH``, ``center_field_mT_per_A``, ``thermal_class_c`` and
    ``thermal_class_assumed``; with a field point ``field_at_point_mT_per_A`` and
    ``distance_mm``; with a drive (``plan.coil.drive``) also ``drive``, ``current_a``,
    ``ampere_turns``, ``power_w``, ``temp_rise_c``, ``coil_temp_c``,
    ``resistance_hot_ohm``, ``current_density_a_mm2``, ``field_at_point_mT``,
    ``drive_warnings`` and ``cautions`` (see :func:`winder.em.coil_em`).
    """
    from winder import em

    drive = plan.coil.drive
    if drive is not None and drive.distance_m is not None:
        distance_m = drive.distance_m
    wire = plan.wire
    klass = wire.thermal_class_or_default_c
    kw: dict[str, Any] = {"distance_m": distance_m, "class_temp_c": klass}
    if drive is not None:
        kw.update(drive_v=drive.voltage_v, drive_a=drive.current_a, ambient_c=drive.ambient_c)
    out = em.em_figures(plan, **kw)
    out["thermal_class_c"] = klass
    out["thermal_class_assumed"] = wire.thermal_class_c is None
    if distance_m is not None:
        out["distance_mm"] = distance_m * 1e3
    if drive is not None:
        out["drive"] = drive.to_dict()
        out["drive_warnings"] = out.pop("warnings")  # the plan's own "warnings" stay its own
        out["cautions"] = list(em.CAUTIONS)
    return out


def figure_rows(f: dict[str, Any]) -> tuple[list[tuple[str, str]], list[str]]:
    """The electromagnetic part of the human plan: (table rows, warning and caution
    lines) from :func:`plan_figures`."""
    from winder.units import format_si

    if f["inductance_source"] == "reference":
        ind = (f"{format_si(f['inductance_uH'] * 1e-6, 'H')}  (scaled by turns squared from "
               f"the bobbin's reference; air core would be "
               f"{format_si(f['air_core_inductance_uH'] * 1e-6, 'H')})")
    else:
        lo, hi = f["inductance_band_pct"]
        ind = (f"{format_si(f['inductance_uH'] * 1e-6, 'H')}  ({f['inductance_source']}, "
               f"{lo:+.1f} % to {hi:+.1f} %; a steel or magnet core raises it)")
    rows = [("inductance", ind),
            ("field at centre", f"{f['center_field_mT_per_A']:.4g} mT per A (on the axis)")]
    at = None
    if "distance_mm" in f:
        at = f"{f['distance_mm']:g} mm beyond the face"
        rows.append((f"field {at}", f"{f['field_at_point_mT_per_A']:.4g} mT per A (on the axis)"))
    klass = (f"{f['thermal_class_c']:g} C" + (", assumed: set wire.thermal_class"
                                            if f["thermal_class_assumed"] else ""))
    lines: list[str] = []
    if "drive" in f:
        d = f["drive"]
        given = (format_si(d["voltage_v"], "V") if d["voltage_v"] is not None
                 else format_si(d["current_a"], "A"))

        def opt(x: float | None, fmt: str, unit: str = "") -> str:
            return "no steady state" if x is None else f"{x:{fmt}}{unit}"

        rows += [
            ("drive", f"{given}, ambient {d['ambient_c']:g} C (steady state, still air)"),
            ("current", f"{format_si(f['current_a'], 'A')}  (hot resistance "
                        f"{opt(f['resistance_hot_ohm'], '.4g', ' ohm')})"),
            ("ampere-turns", f"{f['ampere_turns']:.4g}"),
            ("power", opt(f["power_w"], ".4g", " W")),
            ("current density", f"{f['current_density_a_mm2']:.3g} A/mm2"),
            ("temperature rise", f"{opt(f['temp_rise_c'], '.1f', ' C')}  (coil "
                                 f"{opt(f['coil_temp_c'], '.1f', ' C')}, insulation class "
                                 f"{klass})"),
        ]
        if f.get("field_at_point_mT") is not None:
            rows.append(("field there, driven", f"{f['field_at_point_mT']:.4g} mT"))
        lines = [f"warning: {w}" for w in f["drive_warnings"]]
        lines += [f"caution: {c}" for c in f["cautions"]]
    return rows, lines


def format_plan(plan: Any, figures: dict[str, Any] | None = None) -> str:
    """The human plan: an aligned two-column table with units; with ``figures``
    (:func:`plan_figures`) its electromagnetic rows, drive warnings and cautions."""
    from winder.units import format_si

    c, w, b = plan.coil, plan.wire, plan.bobbin
    lo, hi = plan.resistance_band_ohm
    style = c.style.kind + (f", packing {c.style.packing_value:g}"
                            if c.style.kind == "scatter" else "")
    if plan.turns_per_layer is not None:
        layers = f"{plan.layers} ({plan.turns_per_layer} turns per full layer)"
    else:
        layers = f"{plan.layers:.1f} (equivalent, build / OD)"
    target = c.target
    goal = {"turns": lambda: f"{int(target.value)} turns",
            "resistance": lambda: f"{format_si(target.value, 'ohm')} at 20 C",
            "fill": lambda: "fill the bobbin"}[target.kind]()
    rows = [
        ("coil", c.name + (f"  ({c.source})" if c.source else "")),
        ("target", goal),
        ("bobbin", f"{b.name}: usable {b.usable_width_m * 1e3:.3f} x "
                   f"{b.usable_height_m * 1e3:.3f} mm"),
        ("wire", f"{w.name}, {w.material.name}: bare {w.bare_m * 1e3:.4f} mm, OD "
                 f"{w.od_m * 1e3:.4f} mm (max {w.od_max_m * 1e3:.4f} mm)"),
        ("style", style),
        ("turns", f"{plan.turns}  (at most {plan.capacity_turns} fit)"),
        ("layers", layers),
        ("build height", f"{plan.build_height_m * 1e3:.3f} mm of "
                         f"{b.usable_height_m * 1e3:.3f} mm ({plan.fill * 100:.1f} % fill)"),
        ("wire length", f"{plan.wire_length_m:.2f} m"),
        ("resistance 20 C", f"{format_si(plan.resistance_ohm, 'ohm')}  (tolerance band "
                            f"{format_si(lo, 'ohm')} to {format_si(hi, 'ohm')})"),
        (f"resistance {plan.temp_c:g} C", format_si(plan.resistance_at_temp_ohm, "ohm")),
        (f"{w.material.name} mass", f"{plan.mass_kg * 1e3:.2f} g"),
    ]
    if plan.temp_c == 20.0:
        del rows[-2]
    extra: list[str] = []
    if figures is not None:
        more, extra = figure_rows(figures)
        rows += more
    width = max(len(k) for k, _ in rows)
    lines = [f"{k.ljust(width)}  {v}" for k, v in rows]
    lines += [f"warning: {msg}" for msg in plan.warnings]
    return "\n".join(lines + extra)


# ---------------------------------------------------------------- wires


def wire_rows(series: str = "all") -> list[dict[str, Any]]:
    """The catalog as JSON-ready dicts (copper, 20 C)."""
    from winder.wire import (
        AWG_INSULATIONS,
        METRIC_INSULATIONS,
        awg_sizes,
        make_wire,
        metric_sizes,
    )

    out: list[dict[str, Any]] = []
    groups = []
    if series in ("awg", "all"):
        groups.append(("awg", awg_sizes(), AWG_INSULATIONS))
    if series in ("metric", "all"):
        groups.append(("metric", metric_sizes(), METRIC_INSULATIONS))
    for name, sizes, insulations in groups:
        for size in sizes:
            wires = [make_wire(size, ins) for ins in insulations]
            first = wires[0]
            out.append({
                "name": first.size_name, "series": name, "bare_mm": first.bare_m * 1e3,
                "bare_tol_mm": first.bare_tol_m * 1e3, "ohm_per_m": first.ohm_per_m(),
                "od_mm": {wi.insulation: wi.od_m * 1e3 for wi in wires},
                "od_max_mm": {wi.insulation: wi.od_max_m * 1e3 for wi in wires},
                "od_source": {wi.insulation: wi.od_source for wi in wires},
            })
    return out


def cmd_wires(args: argparse.Namespace) -> int:
    """``winder wires``: the wire catalog."""
    rows = wire_rows(args.series)
    if args.json:
        _emit_json(rows)
        return 0
    table = []
    for r in rows:
        ods = "  ".join(f"{ins} {od:.4f}/{r['od_max_mm'][ins]:.4f}"
                        for ins, od in r["od_mm"].items())
        table.append([r["name"], f"{r['bare_mm']:.4f}", f"{r['bare_tol_mm']:.4f}",
                      f"{r['ohm_per_m']:.5g}", ods])
    print(_table(table, ["size", "bare mm", "+/- mm", "ohm/m 20C", "OD nominal/max mm"],
                 {1, 2, 3}))
    print("OD sources: IEC 60317-0-1 table where published; NEMA MW 1000 30-44 AWG values "
          "from memory; elsewhere an approximation (see `winder wires --json` od_source).")
    return 0


# ---------------------------------------------------------------- gauges


def _load_bobbin_or_coil(path: str) -> tuple[Any, Any]:
    """(bobbin, style or None) from a bobbin profile or a coil profile."""
    from winder.profile import load_bobbin, load_coil, read_yaml

    data, _ = read_yaml(path, "bobbin")
    if isinstance(data, dict) and "core" not in data and "bobbin" in data:
        coil = load_coil(path)
        return coil.bobbin, coil.style
    return load_bobbin(path), None


def cmd_gauges(args: argparse.Namespace) -> int:
    """``winder gauges``: rank wire sizes for a bobbin."""
    from winder.gauges import rank_gauges
    from winder.profile import parse_drive
    from winder.units import format_si, parse_length, parse_resistance, parse_temperature

    bobbin, style = _load_bobbin_or_coil(args.bobbin)
    style = _style(args.style, args.packing, style)
    ohm = (parse_resistance(args.resistance, where="--resistance", maximum=1e8)
           if args.resistance is not None else None)
    if ohm is None and not args.max_turns:
        raise InputError("give the target resistance, e.g. --resistance '8 ohm' (or use "
                         "--max-turns)", where="--resistance")
    volts, amps = parse_drive(args.drive, where="--drive")
    distance = parse_length(args.distance, where="--distance", allow_zero=True, maximum=2.0)
    ambient = parse_temperature(args.ambient, where="--ambient")
    if not -60.0 <= ambient <= 200.0:
        raise InputError(f"ambient {args.ambient!r} is not plausible (-60 to 200 C)",
                         where="--ambient")
    try:
        options = rank_gauges(bobbin, ohm, drive_v=volts if volts is not None else 1.0,
                              drive_a=amps, distance_m=distance, ambient_c=ambient,
                              series=args.series, insulation=args.insulation, style=style,
                              max_turns=args.max_turns)
    except InputError as err:
        where = {"insulation": "--insulation", "material": "--material"}.get(err.key or "",
                                                                           err.key or "gauges")
        raise InputError(err.message, where=where) from None
    if not options:
        raise InputError("no size of this series can be wound on the bobbin", where=args.bobbin)
    if args.json:
        mode = "max-turns" if args.max_turns else "resistance"
        _emit_json([{**o.to_dict(), "bobbin": bobbin.name, "target_ohm": ohm, "drive_v": volts,
                     "drive_a": amps, "distance_mm": distance * 1e3, "ambient_c": ambient,
                     "mode": mode, "style": style.kind} for o in options])
        return 0
    best = next((i for i, o in enumerate(options) if o.recommended), None)
    shown = range(len(options))
    if not args.all and best is not None:
        shown = range(max(0, best - 4), min(len(options), best + 5))
    rows = []
    for i in shown:
        o = options[i]
        rows.append([
            "*" if o.recommended else "", o.wire, f"{o.od_mm:.4f}",
            "-" if o.turns is None else str(o.turns),
            "-" if o.fill is None else f"{o.fill * 100:.1f} %",
            "yes" if o.fits else "no", str(o.full_turns),
            format_si(o.full_resistance_ohm, "ohm"),
            "-" if o.ampere_turns is None else f"{o.ampere_turns:.4g}",
            "runaway" if o.power_w is None else f"{o.power_w:.3g}",
            "runaway" if o.temp_rise_c is None else f"{o.temp_rise_c:.1f}",
            "-" if o.field_at_point_mT is None else f"{o.field_at_point_mT:.3g}",
        ])
    given = format_si(volts, "V") if volts is not None else format_si(amps or 0.0, "A")
    print(_table(rows, ["", "wire", "OD mm", "turns", "fill", "fits", "full turns",
                        "full R", f"A-turns @ {given}", "power W", "rise C",
                        f"B mT @ {distance * 1e3:g} mm"], {2, 3, 4, 6, 7, 8, 9, 10, 11}))
    print(f"power, rise and field: steady hot state at {given} in {ambient:g} C still air; "
          f"field on the axis {distance * 1e3:g} mm beyond the top face")
    if best is None:
        print("no size qualifies: the target length of every size overfills the bobbin"
              if not args.max_turns else "no size keeps its full resistance under the limit")
    elif args.max_turns:
        print(f"recommended: {options[best].wire} (most turns when full"
              + (f" with full resistance at most {format_si(ohm, 'ohm')})" if ohm else ")"))
    else:
        print(f"recommended: {options[best].wire}, the thickest size whose "
              f"{format_si(ohm, 'ohm')} length fits ({options[best].fill * 100:.1f} % fill)")
    return 0
