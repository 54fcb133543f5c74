"""Bobbin and coil profiles: YAML files, validated, turned into planner objects (layer 2).

Bobbin (``profiles/bobbins/NAME.yaml``)::

    name: small bench solenoid
    core: {shape: round, diameter: 8 mm}   # or {shape: rect, width, length, corner_radius}
    window: {width: 6 mm, height: 3 mm}
    clearance: {ends: 0 mm, top: 0.3 mm}   # optional, default 0
    reference_inductance: {inductance: 1.2 H, turns: 5000}   # optional, measured on it
                       # (an earlier coil on this bobbin and core; scaled by turns squared)

Coil (``profiles/coils/NAME.yaml``)::

    name: ...
    bobbin: ../bobbins/NAME.yaml   # relative to this file, a shipped bobbin's name, or a mapping
    wire: {size: 42 AWG, insulation: heavy}   # optional od (measured), material,
                                              # thermal_class (155 or '155 degC');
                                              # or the shorthand: wire: 42 AWG heavy
    target: {resistance: 6.2 kohm}            # or {turns: 8000} or {fill: true}; exactly one
    style: {kind: scatter, packing: 0.8}      # optional; kind layer|orthocyclic|scatter
    drive: {voltage: 2 V, distance: 3 mm, ambient: 25 degC}   # optional; or current: 0.5 A

Every quantity is a string with units. Unknown keys are refused with a
did-you-mean; every error is one line naming the file and the key. YAML is read
with ``yaml.safe_load`` only, and files over :data:`MAX_PROFILE_BYTES` are
refused before parsing.
"""

from __future__ import annotations

import difflib
import math
from pathlib import Path
from typing import Any

from winder.bobbin import Bobbin, RectCore, RoundCore
from winder.errors import InputError
from winder.planner import DEFAULT_AMBIENT_C, Coil, Drive, Style, Target
from winder.units import parse, parse_length, parse_temperature
from winder.wire import THERMAL_CLASSES_C, make_wire

MAX_PROFILE_BYTES = 64 * 1024
MAX_DIM_M = 2.0  # no bobbin dimension over 2 m
MAX_NOTES_CHARS = 4000

BOBBIN_KEYS = {"name", "notes", "core", "window", "clearance", "reference_inductance"}
CORE_KEYS = {"round": {"shape", "diameter"}, "rect": {"shape", "width", "length", "corner_radius"}}
WINDOW_KEYS = {"width", "height"}
CLEARANCE_KEYS = {"ends", "top"}
REFERENCE_KEYS = {"inductance", "turns"}
COIL_KEYS = {"name", "notes", "bobbin", "wire", "target", "style", "drive"}
WIRE_KEYS = {"size", "insulation", "od", "material", "thermal_class"}
DRIVE_KEYS = {"voltage", "current", "distance", "ambient"}
TARGET_KEYS = {"turns", "resistance", "fill"}
STYLE_KEYS = {"kind", "packing", "pitch_range", "seed", "taper"}


def examples_dir() -> Path:
    """Directory of the shipped example profiles (``bobbins/``, ``coils/``, ``machines/``).

    A regular install ships them as the package ``winder.examples``; an editable
    install (or a source checkout) uses ``<repo>/profiles``.
    """
    import importlib.resources

    try:
        root = importlib.resources.files("winder.examples")
        paths = getattr(root, "_paths", None)  # namespace package: a MultiplexedPath
        path = Path(str(paths[0] if paths else root))
        if (path / "coils").is_dir():
            return path
    except (ModuleNotFoundError, TypeError, ValueError):
        pass
    return Path(__file__).resolve().parent.parent / "profiles"


def read_yaml(path: str | Path, what: str) -> tuple[Any, str]:
    """Read a YAML file with ``yaml.safe_load`` after a size check; returns (data, where)."""
    import yaml

    where = str(path)
    p = Path(path)
    try:
        size = p.stat().st_size
    except FileNotFoundError as err:
        raise InputError(f"no such {what} file", where=where) from err
    except OSError as err:
        raise InputError(f"cannot read the {what} file ({err.strerror})", where=where) from err
    if not p.is_file():
        raise InputError(f"not a {what} file", where=where)
    if size > MAX_PROFILE_BYTES:
        raise InputError(f"{size} bytes is too large for a {what} profile (at most "
                         f"{MAX_PROFILE_BYTES})", where=where)
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise InputError(f"cannot read the {what} file as UTF-8 text", where=where) from err
    try:
        data = yaml.safe_load(text)
    except yaml.YAMLError as err:
        mark = getattr(err, "problem_mark", None)
        pos = f" at line {mark.line + 1}, column {mark.column + 1}" if mark else ""
        problem = getattr(err, "problem", None) or "invalid YAML"
        raise InputError(f"YAML error{pos}: {problem}", where=where) from err
    return data, where


def _mapping(data: Any, where: str, key: str | None, allowed: set[str],
             required: set[str] = frozenset()) -> dict[str, Any]:  # type: ignore[assignment]
    if not isinstance(data, dict):
        kind = type(data).__name__ if data is not None else "nothing"
        raise InputError(f"expected a mapping of keys, got {kind}", where=where, key=key)
    for k in data:
        if not isinstance(k, str):
            raise InputError(f"key {k!r} is not text", where=where, key=key)
        if k not in allowed:
            close = difflib.get_close_matches(k, sorted(allowed), n=1, cutoff=0.6)
            hint = f"; did you mean {close[0]!r}?" if close else \
                f"; known keys: {', '.join(sorted(allowed))}"
            raise InputError(f"unknown key{hint}", where=where, key=_join(key, k))
    for k in sorted(required - set(data)):
        raise InputError("missing", where=where, key=_join(key, k))
    return data


def _join(prefix: str | None, key: str) -> str:
    return f"{prefix}.{key}" if prefix else key


def _length(data: dict[str, Any], k: str, where: str, prefix: str, *, zero: bool = False,
            default: float | None = None) -> float:
    key = _join(prefix, k)
    if k not in data:
        if default is None:
            raise InputError("missing", where=where, key=key)
        return default
    return parse_length(data[k], where=where, key=key, allow_zero=zero, maximum=MAX_DIM_M)


def _text(data: dict[str, Any], k: str, where: str, default: str) -> str:
    v = data.get(k, default)
    if not isinstance(v, str) or not v.strip() or len(v) > 200:
        raise InputError("must be a short line of text", where=where, key=k)
    return v.strip()


def _notes(data: dict[str, Any], where: str, key: str) -> None:
    """``notes`` is free text (any other structure could be an alias bomb when re-dumped)."""
    v = data.get("notes")
    if v is not None and (not isinstance(v, str) or len(v) > MAX_NOTES_CHARS):
        raise InputError(f"must be text of at most {MAX_NOTES_CHARS} characters", where=where,
                         key=key)


def bobbin_from_mapping(data: Any, where: str, prefix: str | None = None,
                        default_name: str = "bobbin") -> Bobbin:
    """Validate a bobbin mapping (as in a bobbin file or inline in a coil) into a Bobbin."""
    d = _mapping(data, where, prefix, BOBBIN_KEYS, {"core", "window"})
    name = _text(d, "name", where, default_name) if "name" in d else default_name
    _notes(d, where, _join(prefix, "notes"))
    ck = _join(prefix, "core")
    core_d = d["core"]
    if not isinstance(core_d, dict):
        raise InputError("expected a mapping such as {shape: round, diameter: 8 mm}",
                         where=where, key=ck)
    shape = core_d.get("shape")
    if not isinstance(shape, str) or shape not in CORE_KEYS:
        raise InputError(f"shape must be round or rect, got {shape!r}", where=where,
                         key=_join(ck, "shape"))
    _mapping(core_d, where, ck, CORE_KEYS[shape], CORE_KEYS[shape] - {"corner_radius"})
    wk = _join(prefix, "window")
    win = _mapping(d["window"], where, wk, WINDOW_KEYS, WINDOW_KEYS)
    clk = _join(prefix, "clearance")
    clear = _mapping(d.get("clearance", {}) or {}, where, clk, CLEARANCE_KEYS)
    ref = None
    if d.get("reference_inductance") is not None:
        rk = _join(prefix, "reference_inductance")
        r = _mapping(d["reference_inductance"], where, rk, REFERENCE_KEYS, REFERENCE_KEYS)
        henry = parse(r["inductance"], "inductance", where=where, key=_join(rk, "inductance"))
        turns = r["turns"]
        if isinstance(turns, bool) or not isinstance(turns, int) or turns <= 0:
            raise InputError("must be a positive whole number", where=where,
                             key=_join(rk, "turns"))
        ref = (henry, turns)
    try:
        if shape == "round":
            core: RoundCore | RectCore = RoundCore(_length(core_d, "diameter", where, ck))
        else:
            core = RectCore(_length(core_d, "width", where, ck),
                            _length(core_d, "length", where, ck),
                            _length(core_d, "corner_radius", where, ck, zero=True, default=0.0))
        return Bobbin(name=name, core=core,
                      window_width_m=_length(win, "width", where, wk),
                      window_height_m=_length(win, "height", where, wk),
                      clearance_ends_m=_length(clear, "ends", where, clk, zero=True,
                                               default=0.0),
                      clearance_top_m=_length(clear, "top", where, clk, zero=True, default=0.0),
                      reference_inductance=ref)
    except InputError as err:
        key = _join(prefix, err.key) if (prefix and err.key and not err.key.startswith(prefix))\
            else err.key
        raise InputError(err.message, where=err.where or where, key=key) from None


def load_bobbin(path: str | Path) -> Bobbin:
    """Load and validate a bobbin profile file."""
    data, where = read_yaml(path, "bobbin")
    return bobbin_from_mapping(data, where, default_name=Path(path).stem)


def _resolve_bobbin(ref: Any, coil_path: Path, where: str) -> Bobbin:
    if isinstance(ref, dict):
        return bobbin_from_mapping(ref, where, "bobbin", default_name=f"{coil_path.stem} bobbin")
    if not isinstance(ref, str) or not ref.strip():
        raise InputError("expected a bobbin file path (relative to this file), a shipped "
                         "bobbin's name, or a mapping", where=where, key="bobbin")
    candidate = (coil_path.parent / ref).resolve() if not Path(ref).is_absolute() else Path(ref)
    if not candidate.exists() and "/" not in ref and "\\" not in ref:
        shipped = examples_dir() / "bobbins" / (ref if ref.endswith(".yaml") else f"{ref}.yaml")
        if shipped.exists():
            candidate = shipped
    if not candidate.exists():
        raise InputError(f"bobbin file {ref!r} not found (looked in {coil_path.parent})",
                         where=where, key="bobbin")
    return load_bobbin(candidate)


def _wire(data: Any, where: str) -> Any:
    if isinstance(data, str):  # shorthand: wire: 42 AWG heavy
        from winder.wire import parse_wire

        size, ins = parse_wire(data)
        data = {"size": size} if ins is None else {"size": size, "insulation": ins}
    w = _mapping(data, where, "wire", WIRE_KEYS, {"size"})
    size = w["size"]
    if not isinstance(size, str):
        raise InputError("write the size as text such as '42 AWG' or '0.063 mm'", where=where,
                         key="wire.size")
    ins = w.get("insulation")
    if ins is not None and not isinstance(ins, str):
        raise InputError("must be text such as heavy or grade 2", where=where,
                         key="wire.insulation")
    od = None
    if w.get("od") is not None:
        od = parse_length(w["od"], where=where, key="wire.od", maximum=0.02)
    material = w.get("material", "copper")
    thermal = None
    if w.get("thermal_class") is not None:
        thermal = parse_thermal_class(w["thermal_class"], where=where, key="wire.thermal_class")
    try:
        return make_wire(size, ins, od_m=od, material=material, thermal_class_c=thermal)
    except InputError as err:
        raise InputError(err.message, where=where,
                         key=_join("wire", err.key) if err.key else "wire") from None


def parse_thermal_class(value: Any, *, where: str | None = None,
                        key: str | None = None) -> float:
    """An insulation thermal class, degC: a class number (``155``, ``'class 155'``) or a
    temperature with its unit (``'155 degC'``)."""
    text = value
    if isinstance(value, str):
        text = value.strip()
        named = text.lower().startswith("class")
        if named:
            text = text[5:].strip()
        try:
            text = int(text)
        except ValueError:
            if named:
                raise InputError(f"{value!r} is not a thermal class; use one of "
                                 f"{', '.join(map(str, THERMAL_CLASSES_C))}", where=where,
                                 key=key) from None
    if isinstance(text, bool):
        raise InputError("must be a thermal class such as 155 or '155 degC'", where=where,
                         key=key)
    if isinstance(text, (int, float)):
        if text not in THERMAL_CLASSES_C:
            raise InputError(f"{value!r} is not a thermal class; use one of "
                             f"{', '.join(map(str, THERMAL_CLASSES_C))} or a temperature "
                             "such as '150 degC'", where=where, key=key)
        return float(text)
    celsius = parse_temperature(text, where=where, key=key)
    if not 90.0 <= celsius <= 300.0:
        raise InputError(f"{value!r} is not a plausible thermal class (90 to 300 C)",
                         where=where, key=key)
    return celsius


def parse_drive(value: Any, *, where: str | None = None,
                key: str | None = None) -> tuple[float | None, float | None]:
    """A drive as a voltage ('2 V') or a current ('0.5 A'): (volts, None) or (None, amps)."""
    try:
        return parse(value, "voltage", where=where, key=key, maximum=1e4), None
    except InputError as err:
        if " is not a voltage " not in err.message:
            raise
    try:
        return None, parse(value, "current", where=where, key=key, maximum=1e3)
    except InputError as err:
        if " is not a current " not in err.message:
            raise
    raise InputError(f"{value!r} is neither a voltage nor a current; write e.g. '2 V' or "
                     "'0.5 A'", where=where, key=key)


def drive_from_mapping(data: Any, where: str, prefix: str = "drive") -> Drive:
    """Validate a coil's ``drive`` mapping into a :class:`~winder.planner.Drive`."""
    d = _mapping(data, where, prefix, DRIVE_KEYS)
    if ("voltage" in d) == ("current" in d):
        raise InputError("give exactly one of voltage or current", where=where, key=prefix)
    volts = amps = distance = None
    if "voltage" in d:
        volts = parse(d["voltage"], "voltage", where=where, key=_join(prefix, "voltage"),
                      maximum=1e4)
    else:
        amps = parse(d["current"], "current", where=where, key=_join(prefix, "current"),
                     maximum=1e3)
    if d.get("distance") is not None:
        distance = parse_length(d["distance"], where=where, key=_join(prefix, "distance"),
                                allow_zero=True, maximum=MAX_DIM_M)
    ambient = DEFAULT_AMBIENT_C
    if d.get("ambient") is not None:
        ambient = parse_temperature(d["ambient"], where=where, key=_join(prefix, "ambient"))
    try:
        return Drive(voltage_v=volts, current_a=amps, distance_m=distance, ambient_c=ambient)
    except InputError as err:
        raise InputError(err.message, where=where, key=err.key) from None


def _target(data: Any, where: str) -> Target:
    t = _mapping(data, where, "target", TARGET_KEYS)
    if len(t) != 1:
        raise InputError("give exactly one of turns, resistance or fill", where=where,
                         key="target")
    (kind, value), = t.items()
    if kind == "fill":
        if value is not True:
            raise InputError("write fill: true", where=where, key="target.fill")
        return Target("fill", None)
    if kind == "turns":
        if isinstance(value, bool) or not isinstance(value, int) or not 0 < value <= 10 ** 8:
            raise InputError("must be a whole number of turns, 1 to 100000000", where=where,
                             key="target.turns")
        return Target("turns", float(value))
    return Target("resistance", parse(value, "resistance", where=where, key="target.resistance",
                                      maximum=1e8))


def _style(data: Any, where: str) -> Style:
    s = _mapping(data if data is not None else {}, where, "style", STYLE_KEYS)
    kw: dict[str, Any] = {}
    if "kind" in s:
        kw["kind"] = s["kind"]
    for key in ("packing", "taper"):
        if key in s:
            v = s[key]
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise InputError("must be a plain number", where=where, key=f"style.{key}")
            kw[key] = float(v)
    if "pitch_range" in s:
        v = s["pitch_range"]
        if (not isinstance(v, list) or len(v) != 2
                or not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in v)):
            raise InputError("must be two numbers [low, high], multiples of the wire OD",
                             where=where, key="style.pitch_range")
        kw["pitch_range"] = (float(v[0]), float(v[1]))
    if "seed" in s and s["seed"] is not None:
        if isinstance(s["seed"], bool) or not isinstance(s["seed"], int) or s["seed"] < 0:
            raise InputError("must be a whole number, 0 or more", where=where, key="style.seed")
        kw["seed"] = s["seed"]
    try:
        return Style(**kw)
    except InputError as err:
        raise InputError(err.message, where=where, key=err.key) from None


def coil_from_mapping(data: Any, where: str, base: Path) -> Coil:
    """Validate a coil mapping; ``base`` is the coil file's path (for relative bobbins)."""
    d = _mapping(data, where, None, COIL_KEYS, {"bobbin", "wire", "target"})
    name = _text(d, "name", where, base.stem)
    _notes(d, where, "notes")
    bobbin = _resolve_bobbin(d["bobbin"], base, where)
    drive = drive_from_mapping(d["drive"], where) if d.get("drive") is not None else None
    return Coil(name=name, bobbin=bobbin, wire=_wire(d["wire"], where),
                target=_target(d["target"], where), style=_style(d.get("style"), where),
                source=where, drive=drive)


def load_coil(path: str | Path) -> Coil:
    """Load and validate a coil profile file (its bobbin resolved relative to it)."""
    data, where = read_yaml(path, "coil")
    return coil_from_mapping(data, where, Path(path))
