"""Quantities at the edges: the one pint registry and the parsers built on it.

Inside winder everything is an SI float (metres, ohms, volts, amperes,
kilograms, seconds) or a numpy array of them; temperatures are degrees Celsius.
Users write quantities as strings with units ('0.063 mm', '2.5 mil', '8 ohm',
'6.2 kohm', '25 degC'); this module turns such a string into a float and
refuses, with a one-line :class:`~winder.errors.InputError`, anything that is
ambiguous or wrong:

* a bare number where units are required (``8`` as a resistance);
* the wrong dimension (``'8 mm'`` as a resistance);
* NaN, infinity, zero or negative sizes (where the caller asks for positive);
* a decimal comma (pint would read ``'1,5 mm'`` as 15 mm).

Trade spellings are mapped before pint sees them: ``mil``/``mils`` is the
thousandth of an inch (pint's own ``mil`` is an angle), ``Ohm``/``Ω`` is ohm,
``°C``/``C`` after a temperature is degree Celsius.

The registry is built once per process, lazily, from winder's own small
definitions file (``winder/units.txt``: SI prefixes, metre, inch, thou, foot,
second, ampere, kilogram, gram, kelvin, degC, degF, hertz, watt, volt, ohm,
henry) with pint's on-disk cache, so a planning command pays about 10 ms for it
instead of pint's 0.4 s uncached (0.1 s cached) parse of its full default set.
"""

from __future__ import annotations

import math
import re
from functools import lru_cache
from typing import Any

from winder.errors import InputError

# Dimension names accepted by :func:`parse`; values are pint dimensionality strings.
DIMENSIONS = {
    "length": "[length]",
    "resistance": "[mass] * [length] ** 2 / [current] ** 2 / [time] ** 3",
    "voltage": "[mass] * [length] ** 2 / [current] / [time] ** 3",
    "current": "[current]",
    "inductance": "[mass] * [length] ** 2 / [current] ** 2 / [time] ** 2",
    "time": "[time]",
    "mass": "[mass]",
    "frequency": "1 / [time]",
    "power": "[mass] * [length] ** 2 / [time] ** 3",
    "speed": "[length] / [time]",
    "acceleration": "[length] / [time] ** 2",
    "spindle speed": "[rotation] / [time]",
    "spindle acceleration": "[rotation] / [time] ** 2",
}

# SI value -> the unit callers want for spindle kinds (rev/s -> rpm, rev/s^2 -> rpm/s).
_SI_TO_CALLER = {"spindle speed": 60.0, "spindle acceleration": 60.0}

# Example strings used in messages, so the user sees what is expected.
EXAMPLES = {
    "length": "'0.063 mm', '2.5 mil' or '0.0025 in'",
    "resistance": "'8 ohm' or '6.2 kohm'",
    "voltage": "'2 V'",
    "current": "'0.25 A'",
    "inductance": "'2.5 H' or '400 uH'",
    "time": "'1.5 s'",
    "mass": "'12 g'",
    "frequency": "'50 Hz'",
    "power": "'2 W'",
    "speed": "'25 mm/s'",
    "acceleration": "'250 mm/s^2'",
    "spindle speed": "'1500 rpm' or '25 rev/s'",
    "spindle acceleration": "'600 rpm/s'",
    "temperature": "'25 degC'",
}

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_QUANTITY_RE = re.compile(rf"^\s*(?P<num>{_NUMBER}|[-+]?(?:nan|inf|infinity))\s*(?P<unit>.*?)\s*$",
                          re.IGNORECASE)
_DECIMAL_COMMA_RE = re.compile(r"\d,\d")
# Trade spellings -> pint spellings. Applied to the unit part only.
_UNIT_ALIASES = [
    (re.compile(r"\bmils?\b"), "thou"),
    (re.compile(r"(?<![A-Za-z])([kMmµu]?)(?:Ohms?|OHMS?|ohms?|Ω)(?![A-Za-z])"), r"\1ohm"),
    (re.compile(r"µ"), "u"),
    (re.compile(r"\^"), "**"),
    (re.compile(r"(?<=[A-Za-z])(\d)\b"), r"**\1"),  # 's2' -> 's**2'
]
_TEMP_ALIASES = {"c": "degC", "°c": "degC", "degc": "degC", "celsius": "degC",
                 "k": "kelvin", "kelvin": "kelvin", "f": "degF", "°f": "degF", "degf": "degF"}

MAX_TEXT = 200  # characters; longer "quantities" are refused before parsing


@lru_cache(maxsize=1)
def registry() -> Any:
    """The package's one pint ``UnitRegistry``, built on first use and cached on disk."""
    from importlib.resources import files

    import pint

    definitions = str(files("winder").joinpath("units.txt"))
    try:
        ureg = pint.UnitRegistry(definitions, cache_folder=":auto:")
    except Exception:  # pragma: no cover - unwritable cache directory: build uncached
        ureg = pint.UnitRegistry(definitions)
    return ureg


def _where(where: str | None, key: str | None) -> dict[str, str | None]:
    return {"where": where, "key": key}


def _split(text: Any, kind: str, where: str | None, key: str | None) -> tuple[float, str]:
    """Split '6.2 kohm' into (6.2, 'kohm'), refusing bare numbers and decimal commas."""
    loc = _where(where, key)
    if isinstance(text, bool) or text is None:
        raise InputError(f"expected a {kind} with units, e.g. {EXAMPLES[kind]}", **loc)
    if isinstance(text, (int, float)):
        raise InputError(f"got the bare number {text!r}; a {kind} needs units, "
                         f"e.g. {EXAMPLES[kind]}", **loc)
    if not isinstance(text, str):
        raise InputError(f"expected a {kind} as text with units, e.g. {EXAMPLES[kind]}, "
                         f"got a {type(text).__name__}", **loc)
    if len(text) > MAX_TEXT:
        raise InputError(f"a {kind} of {len(text)} characters is not a quantity", **loc)
    if _DECIMAL_COMMA_RE.search(text):
        raise InputError(f"{text!r} has a decimal comma; write a point, e.g. '1.5 mm'", **loc)
    m = _QUANTITY_RE.match(text)
    if not m:
        raise InputError(f"{text!r} is not a number followed by a unit, e.g. {EXAMPLES[kind]}",
                         **loc)
    num, unit = float(m.group("num")), m.group("unit")
    if not unit:
        raise InputError(f"{text!r} has no unit; write e.g. {EXAMPLES[kind]}", **loc)
    if not math.isfinite(num):
        raise InputError(f"{text!r} is not a finite number", **loc)
    return num, unit


def parse(text: Any, kind: str, *, where: str | None = None, key: str | None = None,
          positive: bool = True, allow_zero: bool = False, maximum: float | None = None) -> float:
    """Parse a quantity string of the given ``kind`` into an SI float.

    ``kind`` is a key of :data:`DIMENSIONS` ('length' gives metres, 'resistance'
    ohms, 'voltage' volts, 'current' amperes, 'speed' m/s, 'acceleration' m/s²,
    ...), except 'spindle speed' (rpm) and 'spindle acceleration' (rpm/s). ``positive`` refuses
    negatives (and zero unless ``allow_zero``); ``maximum`` (SI) refuses absurd
    values. ``where``/``key`` locate the value in messages.
    """
    if kind == "temperature":
        return parse_temperature(text, where=where, key=key)
    loc = _where(where, key)
    num, unit = _split(text, kind, where, key)
    for pattern, repl in _UNIT_ALIASES:
        unit = pattern.sub(repl, unit)
    try:
        factor = _si_factor(unit, kind)
    except Exception as err:  # pint raises several families; all mean "not a unit"
        raise InputError(f"{text!r}: unknown unit {unit!r}; expected a {kind} such as "
                         f"{EXAMPLES[kind]}", **loc) from err
    if factor is None:
        raise InputError(f"{text!r} is not a {kind} (its unit is {unit!r}); expected e.g. "
                         f"{EXAMPLES[kind]}", **loc)
    value = num * factor
    _check_range(value, text, positive, allow_zero, maximum, loc)
    return value


@lru_cache(maxsize=512)
def _si_factor(unit: str, kind: str) -> float | None:
    """SI value of one ``unit`` for ``kind`` (None: wrong dimension); raises for no unit.

    Cached: pint's unit parsing costs about 1 ms a call, and planners and gauge rankings
    parse the same few units many times. Only multiplicative units come here
    (temperatures go through :func:`parse_temperature`).
    """
    ureg = registry()
    q = ureg.Quantity(1.0, ureg.parse_units(unit))
    if not q.check(DIMENSIONS[kind]):
        return None
    return float(q.to_base_units().magnitude) * _SI_TO_CALLER.get(kind, 1.0)


def _check_range(value: float, text: Any, positive: bool, allow_zero: bool,
                 maximum: float | None, loc: dict[str, str | None]) -> None:
    if not math.isfinite(value):
        raise InputError(f"{text!r} is not a finite value", **loc)
    if positive and (value < 0 or (value == 0 and not allow_zero)):
        need = "zero or more" if allow_zero else "more than zero"
        raise InputError(f"{text!r} must be {need}", **loc)
    if maximum is not None and abs(value) > maximum:
        raise InputError(f"{text!r} is out of range (at most {maximum:g} in SI units)", **loc)


def parse_temperature(text: Any, *, where: str | None = None, key: str | None = None) -> float:
    """Parse '25 degC', '25 °C', '25 C', '298.15 K' or '77 degF' into degrees Celsius.

    Refuses temperatures below absolute zero and above 1000 degC.
    """
    loc = _where(where, key)
    num, unit = _split(text, "temperature", where, key)
    name = _TEMP_ALIASES.get(unit.replace(" ", "").lower())
    if name is None:
        raise InputError(f"{text!r}: unknown temperature unit {unit!r}; expected e.g. "
                         f"{EXAMPLES['temperature']}", **loc)
    ureg = registry()
    celsius = float(ureg.Quantity(num, ureg.parse_units(name)).to("degC").magnitude)
    if celsius < -273.15 or celsius > 1000:
        raise InputError(f"{text!r} is not a plausible temperature", **loc)
    return celsius


def parse_length(text: Any, **kw: Any) -> float:
    """A length in metres (positive by default)."""
    return parse(text, "length", **kw)


def parse_resistance(text: Any, **kw: Any) -> float:
    """A resistance in ohms (positive by default)."""
    return parse(text, "resistance", **kw)


def parse_voltage(text: Any, **kw: Any) -> float:
    """A voltage in volts (positive by default)."""
    return parse(text, "voltage", **kw)


def parse_current(text: Any, **kw: Any) -> float:
    """A current in amperes (positive by default)."""
    return parse(text, "current", **kw)


def format_si(value: float, unit: str, digits: int = 4) -> str:
    """Format an SI value with an engineering prefix: format_si(6200, 'ohm') -> '6.2 kohm'."""
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}"
    prefixes = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"),
                (1e-9, "n")]
    for scale, prefix in prefixes:
        if abs(value) >= scale * 0.9999999:
            return f"{value / scale:.{digits}g} {prefix}{unit}"
    return f"{value:.{digits}g} {unit}"
