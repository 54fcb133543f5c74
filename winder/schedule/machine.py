"""Machine profiles: what the winder can count, turn and traverse.

A machine profile is a small YAML file (``profiles/machines/*.yaml``)::

    name: generic spindle and traverse
    kind: spindle+traverse        # counter | spindle | spindle+traverse
    counts_per_rev: 1             # counter pulses per spindle revolution
    spindle:
      steps_per_rev: 3200         # motor steps (microsteps) per spindle revolution
      max_speed: 1500 rpm
      acceleration: 600 rpm/s
      slow_speed: 300 rpm         # slow start and slow finish
      slow_start_turns: 20
      slow_finish_turns: 20
    traverse:
      lead: 2 mm                  # guide travel per lead-screw revolution
      steps_per_rev: 400          # motor steps per lead-screw revolution
      travel: 100 mm              # usable guide travel
      start_flange_at: 5 mm       # guide position (machine coordinates) of the start flange
      max_speed: 25 mm/s
      acceleration: 250 mm/s^2
      backlash: 0.02 mm
      reversal_turns: 0.5         # spindle turns allowed for one traverse reversal

Kinds: ``counter`` counts turns only (a hand winder, or a motor without
control); ``spindle`` also sets the spindle speed (the wire is guided by hand);
``spindle+traverse`` drives both axes. Sections a kind does not use may be left
out; their defaults only feed the time estimate.

Inside, lengths are metres, linear speeds m/s, linear accelerations m/s^2,
spindle speeds rpm (revolutions per minute) and spindle accelerations rpm/s.
Unknown keys are refused with a did-you-mean suggestion; every error is one
line naming the file and the key.
"""

from __future__ import annotations

import difflib
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from winder.errors import InputError
from winder.units import parse

KINDS = ("counter", "spindle", "spindle+traverse")


@dataclass(frozen=True)
class Spindle:
    """The spindle axis. Speeds in rpm, acceleration in rpm per second."""

    steps_per_rev: int = 3200
    max_rpm: float = 1500.0
    accel_rpm_s: float = 600.0
    slow_rpm: float = 300.0
    slow_start_turns: int = 20
    slow_finish_turns: int = 20


@dataclass(frozen=True)
class Traverse:
    """The wire-guide axis. Lengths in metres, speed m/s, acceleration m/s^2."""

    lead_m: float = 0.002
    steps_per_rev: int = 400
    travel_m: float = 0.100
    start_flange_m: float = 0.005
    max_speed_m_s: float = 0.025
    accel_m_s2: float = 0.25
    backlash_m: float = 0.0
    reversal_turns: float = 0.5

    @property
    def steps_per_m(self) -> float:
        """Traverse motor steps per metre of guide travel."""
        return self.steps_per_rev / self.lead_m


@dataclass(frozen=True)
class Machine:
    """A winding machine: its kind, counter resolution and the two axes."""

    name: str = "generic spindle and traverse"
    kind: str = "spindle+traverse"
    counts_per_rev: int = 1
    spindle: Spindle = Spindle()
    traverse: Traverse = Traverse()
    source: str | None = None

    @property
    def drives_spindle(self) -> bool:
        """True when the machine sets the spindle speed."""
        return self.kind in ("spindle", "spindle+traverse")

    @property
    def drives_traverse(self) -> bool:
        """True when the machine moves the wire guide itself."""
        return self.kind == "spindle+traverse"

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dict (SI units, rpm); inverse of :func:`machine_from_dict`."""
        return asdict(self)


DEFAULT_MACHINE = Machine()
"""Used when no machine profile is given: a generic stepper spindle and traverse."""


def machine_from_dict(data: dict[str, Any]) -> Machine:
    """Rebuild a :class:`Machine` from :meth:`Machine.to_dict` output (e.g. a stored schedule)."""
    d = dict(data)
    sp = Spindle(**d.pop("spindle", {}))
    tr = Traverse(**d.pop("traverse", {}))
    return Machine(spindle=sp, traverse=tr, **d)


# --- parsing ---------------------------------------------------------------------------------

MAX_SPINDLE_RPM = 100_000.0
MAX_SPINDLE_RPM_S = 1_000_000.0

TOP_KEYS = ("name", "kind", "counts_per_rev", "spindle", "traverse")
SPINDLE_KEYS = ("steps_per_rev", "max_speed", "acceleration", "slow_speed", "slow_start_turns",
                "slow_finish_turns")
TRAVERSE_KEYS = ("lead", "steps_per_rev", "travel", "start_flange_at", "max_speed",
                 "acceleration", "backlash", "reversal_turns")


def _unknown(keys: Any, allowed: tuple[str, ...], where: str, prefix: str) -> None:
    for k in keys:
        if k not in allowed:
            close = difflib.get_close_matches(str(k), allowed, n=1)
            hint = (f"; did you mean {close[0]!r}?" if close
                    else f"; known keys: {', '.join(allowed)}")
            raise InputError(f"unknown key{hint}", where=where, key=f"{prefix}{k}")


def _spindle_rate(value: Any, kind: str, where: str, key: str) -> float:
    """Parse '1500 rpm' / '25 rev/s' ('spindle speed', rpm) or '600 rpm/s' (rpm/s)."""
    # generous bounds (ours): bench winder spindles turn a few thousand rpm
    limit = MAX_SPINDLE_RPM if kind == "spindle speed" else MAX_SPINDLE_RPM_S
    return parse(value, kind, where=where, key=key, maximum=limit)


def _linear(value: Any, kind: str, where: str, key: str, allow_zero: bool = False) -> float:
    """Parse a linear quantity ('2 mm', '25 mm/s', '250 mm/s^2') of ``kind`` into SI."""
    return parse(value, kind, where=where, key=key, allow_zero=allow_zero)


def _mm(metres: float) -> str:
    return f"{metres!r} m"


def _count(value: Any, where: str, key: str, minimum: int = 1) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError(f"expected a whole number, got {value!r}", where=where, key=key)
    if value < minimum or value > 10_000_000:
        raise InputError(f"{value} is out of range (at least {minimum})", where=where, key=key)
    return value


def _section(data: dict[str, Any], name: str, where: str) -> dict[str, Any]:
    sec = data.get(name, {})
    if sec is None:
        return {}
    if not isinstance(sec, dict):
        raise InputError("expected a mapping of keys", where=where, key=name)
    return sec


def machine_from_mapping(data: Any, where: str = "machine profile") -> Machine:
    """Validate a parsed YAML mapping into a :class:`Machine` (defaults fill missing keys)."""
    if not isinstance(data, dict):
        raise InputError("a machine profile must be a mapping of keys", where=where)
    _unknown(data, TOP_KEYS, where, "")
    name = data.get("name", Path(where).stem)
    if not isinstance(name, str) or not name.strip():
        raise InputError("expected a non-empty name", where=where, key="name")
    kind = data.get("kind", DEFAULT_MACHINE.kind)
    if kind not in KINDS:
        close = difflib.get_close_matches(str(kind), KINDS, n=1)
        hint = f"; did you mean {close[0]!r}?" if close else ""
        raise InputError(f"{kind!r} is not a machine kind ({', '.join(KINDS)}){hint}",
                         where=where, key="kind")
    counts = _count(data.get("counts_per_rev", 1), where, "counts_per_rev")

    sp = _section(data, "spindle", where)
    _unknown(sp, SPINDLE_KEYS, where, "spindle.")
    d = DEFAULT_MACHINE.spindle
    k = "spindle."
    spindle = Spindle(
        steps_per_rev=_count(sp.get("steps_per_rev", d.steps_per_rev), where, k + "steps_per_rev"),
        max_rpm=_spindle_rate(sp.get("max_speed", f"{d.max_rpm} rpm"), "spindle speed",
                              where, k + "max_speed"),
        accel_rpm_s=_spindle_rate(sp.get("acceleration", f"{d.accel_rpm_s} rpm/s"),
                                  "spindle acceleration", where, k + "acceleration"),
        slow_rpm=_spindle_rate(sp.get("slow_speed", f"{d.slow_rpm} rpm"), "spindle speed",
                               where, k + "slow_speed"),
        slow_start_turns=_count(sp.get("slow_start_turns", d.slow_start_turns), where,
                                k + "slow_start_turns", minimum=0),
        slow_finish_turns=_count(sp.get("slow_finish_turns", d.slow_finish_turns), where,
                                 k + "slow_finish_turns", minimum=0),
    )
    if spindle.slow_rpm > spindle.max_rpm:
        raise InputError(f"slow speed {spindle.slow_rpm:g} rpm is above max_speed "
                         f"{spindle.max_rpm:g} rpm", where=where, key=k + "slow_speed")

    tr = _section(data, "traverse", where)
    _unknown(tr, TRAVERSE_KEYS, where, "traverse.")
    t = DEFAULT_MACHINE.traverse
    k = "traverse."
    rev = tr.get("reversal_turns", t.reversal_turns)
    if isinstance(rev, bool) or not isinstance(rev, (int, float)) or not 0 < rev <= 100:
        raise InputError(f"expected a number of turns above 0, got {rev!r}", where=where,
                         key=k + "reversal_turns")
    traverse = Traverse(
        lead_m=_linear(tr.get("lead", _mm(t.lead_m)), "length", where, k + "lead"),
        steps_per_rev=_count(tr.get("steps_per_rev", t.steps_per_rev), where,
                             k + "steps_per_rev"),
        travel_m=_linear(tr.get("travel", _mm(t.travel_m)), "length", where,
                         k + "travel"),
        start_flange_m=_linear(tr.get("start_flange_at", _mm(t.start_flange_m)), "length",
                               where, k + "start_flange_at", allow_zero=True),
        max_speed_m_s=_linear(tr.get("max_speed", f"{t.max_speed_m_s!r} m/s"), "speed",
                              where, k + "max_speed"),
        accel_m_s2=_linear(tr.get("acceleration", f"{t.accel_m_s2!r} m/s^2"), "acceleration",
                           where, k + "acceleration"),
        backlash_m=_linear(tr.get("backlash", _mm(t.backlash_m)), "length",
                           where, k + "backlash", allow_zero=True),
        reversal_turns=float(rev),
    )
    if traverse.start_flange_m >= traverse.travel_m:
        raise InputError(f"start flange at {traverse.start_flange_m * 1e3:g} mm is beyond the "
                         f"travel of {traverse.travel_m * 1e3:g} mm", where=where,
                         key=k + "start_flange_at")
    if traverse.backlash_m > 0.005:
        raise InputError(f"backlash of {traverse.backlash_m * 1e3:g} mm is implausible "
                         "(at most 5 mm)", where=where, key=k + "backlash")
    return Machine(name=name.strip(), kind=kind, counts_per_rev=counts, spindle=spindle,
                   traverse=traverse, source=where)


def load_machine(path: str | Path) -> Machine:
    """Load and validate a machine profile YAML file (``yaml.safe_load`` only)."""
    import yaml

    from winder.profile import MAX_PROFILE_BYTES

    where = str(path)
    try:
        size = Path(path).stat().st_size
        if not Path(path).is_file():
            raise InputError("not a machine profile file", where=where)
        if size > MAX_PROFILE_BYTES:
            raise InputError(f"{size} bytes is too large for a machine profile (at most "
                             f"{MAX_PROFILE_BYTES})", where=where)
        text = Path(path).read_text(encoding="utf-8")
    except FileNotFoundError as err:
        raise InputError("no such machine profile", where=where) from err
    except (OSError, UnicodeDecodeError) as err:
        raise InputError(f"cannot read the machine profile ({err.__class__.__name__})",
                         where=where) from err
    try:
        data = yaml.safe_load(text)
    except yaml.YAMLError as err:
        mark = getattr(err, "problem_mark", None)
        at = f" at line {mark.line + 1}" if mark is not None else ""
        raise InputError(f"not valid YAML{at}", where=where) from err
    return machine_from_mapping(data, where)

