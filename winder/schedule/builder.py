"""Build a traverse and turn schedule from a plan and a machine.

* ``layer``: one pass per layer at pitch = wire OD, alternating outward and
  homeward, each layer starting at the flange it reversed at.
* ``orthocyclic``: as ``layer``, with odd layers offset by half a pitch so each
  turn sits in the groove between two turns below (the model gives those
  layers one turn fewer).
* ``scatter``: each pass draws its pitch from ``style.pitch_range`` (multiples
  of OD) and its reversal point from a jitter band at each end of the usable
  window; ``style.taper`` pulls both reversal bands in as the build grows (at
  full usable height the passes are ``taper`` x usable width shorter), which
  keeps the shoulders from building up. A pass holds a whole number of turns,
  so the pitch is adjusted within the range to land on its reversal point.
  The random stream is Python's ``random.Random(seed)`` (Mersenne Twister,
  reproducible across Python versions); with no seed in the coil one is picked
  and reported.

Every guide position lies inside the usable window. Pass turns add up exactly
to the plan's turns (whole turns, except a fractional plan). Positions are
millimetres from the start flange.
"""

from __future__ import annotations

import math
import random
import secrets
from typing import Any

import numpy as np

from winder.errors import InputError
from winder.schedule.machine import DEFAULT_MACHINE, Machine
from winder.schedule.passes import HOMEWARD, OUTWARD, Pass, Schedule
from winder.schedule.speed import plan_speeds

# Reversal jitter band, fraction of the usable width (common practice, no source).
JITTER_FRACTION = 0.05
MAX_TAPER = 0.8          # keeps every tapered pass at least 10 % of the usable width long
EPS_MM = 1e-9


def build_schedule(plan: Any, machine: Machine | None = None, *,
                   seed: int | None = None) -> Schedule:
    """The schedule for ``plan`` on ``machine`` (default :data:`DEFAULT_MACHINE`).

    ``seed`` overrides the coil's scatter seed. Raises
    :class:`~winder.errors.InputError` when the layer pitch would be below the
    wire OD, the scatter pitch range is unusable, or the window is wider than
    the machine's traverse travel.
    """
    machine = machine or DEFAULT_MACHINE
    bobbin, wire, model = plan.bobbin, plan.wire, plan.model
    style = plan.coil.style
    kind = getattr(model, "kind", style.kind)
    where = getattr(plan.coil, "source", None) or "coil"
    lo = bobbin.clearance_ends_m * 1e3
    hi = (bobbin.window_width_m - bobbin.clearance_ends_m) * 1e3
    od = wire.od_m * 1e3
    total = plan.turns
    if hi - lo <= od:
        raise InputError(f"usable window of {hi - lo:.3g} mm is narrower than one wire "
                         f"({od:.3g} mm)", where=where, key="bobbin")
    _check_travel(bobbin, machine)
    if total <= 0:
        raise InputError("the plan has no turns to schedule", where=where, key="target")

    used_seed: int | None = None
    picked = False
    if kind == "scatter":
        used_seed = seed if seed is not None else style.seed
        if used_seed is None:
            used_seed = secrets.randbelow(2**32)
            picked = True
        raw = _scatter(model, bobbin, style, lo, hi, od, total, used_seed, where)
    elif kind in ("layer", "orthocyclic"):
        raw = _layers(model, lo, hi, od, total, kind == "orthocyclic", where)
    else:
        raise InputError(f"no schedule for winding style {kind!r}", where=where, key="style")

    turns = [r[3] for r in raw]
    pitch_m = [r[4] * 1e-3 for r in raw]
    ends = np.cumsum(np.array(turns, dtype=float))
    ends[-1] = total           # exact: the last pass ends on the plan's turns
    build = np.asarray(model.build_height_m(ends), dtype=float) * 1e3
    ohm = np.asarray(model.resistance_ohm(ends), dtype=float)
    speeds = plan_speeds(turns, pitch_m, machine)
    passes = [
        Pass(index=i, direction=d, start_mm=s, end_mm=e, turns=float(n), pitch_mm=p,
             rpm=speeds.cruise_rpm[i], turns_end=float(ends[i]),
             build_mm_end=float(build[i]), ohm_end=float(ohm[i]),
             reversal_rpm=speeds.reversal_rpm[i], time_s=speeds.time_s[i], layer=layer)
        for i, (d, s, e, n, p, layer) in enumerate(raw)
    ]
    warnings = list(speeds.warnings)
    if picked:
        warnings.append(f"scatter seed {used_seed} picked; keep it (seed: {used_seed} in the "
                        "coil's style) to wind the same coil again")
    return Schedule(passes=passes, total_turns=float(total), est_time_s=speeds.total_s,
                    seed=used_seed, machine=machine, warnings=warnings, style=kind,
                    coil_name=getattr(plan.coil, "name", ""), seed_picked=picked,
                    window_mm=(lo, hi), od_mm=od)


def _check_travel(bobbin: Any, machine: Machine) -> None:
    if not machine.drives_traverse:
        return
    t = machine.traverse
    need = t.start_flange_m + bobbin.window_width_m
    if need > t.travel_m + 1e-12:
        raise InputError(
            f"the {bobbin.window_width_m * 1e3:.3g} mm window starting at "
            f"{t.start_flange_m * 1e3:.3g} mm needs {need * 1e3:.3g} mm of guide travel; "
            f"the machine has {t.travel_m * 1e3:.3g} mm",
            where=machine.source or f"machine {machine.name!r}", key="traverse.travel")


# direction, start mm, end mm, turns, pitch mm, layer
Raw = tuple[str, float, float, float, float, int | None]


def _layers(model: Any, lo: float, hi: float, od: float, total: float, ortho: bool,
            where: str) -> list[Raw]:
    """One pass per layer at pitch = OD (orthocyclic: odd layers offset half a pitch)."""
    tpl = model.turns_per_layer
    width = hi - lo
    if not tpl or tpl < 1:
        raise InputError("the winding model gives no turns per layer", where=where, key="style")
    if tpl * od > width * (1 + 1e-9):
        raise InputError(f"{tpl} turns per layer in {width:.4g} mm need a pitch of "
                         f"{width / tpl:.4g} mm, below the wire OD {od:.4g} mm",
                         where=where, key="style")
    out: list[Raw] = []
    done = 0.0
    i = 0
    while done < total:
        full = int(model.layer_turns(i))
        if full < 1:
            raise InputError(f"layer {i} holds no turns", where=where, key="style")
        offset = 0.5 * od if (ortho and i % 2 == 1 and lo + 0.5 * od + full * od
                              <= hi + EPS_MM) else 0.0
        n = min(float(full), total - done)
        a = lo + offset
        b = a + full * od
        if i % 2 == 0:
            start, end, d = a, a + n * od, OUTWARD
        else:
            start, end, d = b, b - n * od, HOMEWARD
        out.append((d, _clamp(start, lo, hi), _clamp(end, lo, hi), n, od, i))
        done += n
        i += 1
    return out


def _scatter(model: Any, bobbin: Any, style: Any, lo: float, hi: float, od: float,
             total: float, seed: int, where: str) -> list[Raw]:
    """Scatter passes: pitch drawn per pass, reversal points jittered, optional end taper."""
    k0, k1 = (float(x) for x in style.pitch_range)
    width = hi - lo
    if not (math.isfinite(k0) and math.isfinite(k1)) or k0 < 1.0:
        raise InputError(f"scatter pitch {k0:g} x OD is below the wire OD (at least 1.0)",
                         where=where, key="style.pitch_range")
    if k1 < k0:
        raise InputError(f"pitch range ({k0:g}, {k1:g}) runs backwards", where=where,
                         key="style.pitch_range")
    pmin, pmax = k0 * od, k1 * od
    if 10 * pmax > width:
        raise InputError(f"a pitch of up to {pmax:.3g} mm is too coarse for a {width:.3g} mm "
                         "window (at most 1/10 of it)", where=where, key="style.pitch_range")
    taper = float(style.taper or 0.0)
    if not 0.0 <= taper <= MAX_TAPER:
        raise InputError(f"taper {taper:g} is outside 0 to {MAX_TAPER:g}", where=where,
                         key="style.taper")
    rng = random.Random(seed)
    jitter = JITTER_FRACTION * width
    height = bobbin.usable_height_m * 1e3
    # Build height (mm) against turns, for the taper: a table, interpolated.
    grid = np.linspace(0.0, float(total), 129)
    grid_h = np.asarray(model.build_height_m(grid), dtype=float) * 1e3
    out: list[Raw] = []
    done = 0.0
    pos = lo + rng.uniform(0.0, jitter)
    outward = True
    while done < total:
        inset = 0.0
        if taper:
            f = min(max(float(np.interp(done, grid, grid_h)) / height, 0.0), 1.0)
            inset = 0.5 * taper * f * width
        if outward:
            target = hi - inset - rng.uniform(0.0, jitter)
        else:
            target = lo + inset + rng.uniform(0.0, jitter)
        travel = abs(target - pos)
        p = rng.uniform(pmin, pmax)
        n_lo, n_hi = math.ceil(travel / pmax), math.floor(travel / pmin)
        if n_lo <= n_hi:
            n = min(max(round(travel / p), n_lo), n_hi)
            pitch = travel / n
        else:                                    # short travel: keep p, stop a little early
            n = max(1, math.floor(travel / p))
            pitch = p
        n = min(float(n), total - done)
        sign = 1.0 if outward else -1.0
        end = _clamp(pos + sign * n * pitch, lo, hi)
        pitch = abs(end - pos) / n if n > 0 else pitch
        out.append((OUTWARD if outward else HOMEWARD, pos, end, n, pitch, None))
        done += n
        pos = end
        outward = not outward
    return out


def _clamp(x: float, lo: float, hi: float) -> float:
    return min(max(x, lo), hi)
