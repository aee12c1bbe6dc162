"""Quantities with units, parsed once at the edge into SI floats.

A deliberately small parser: the spec and the drawn labels use a closed set of
physical kinds (length, force, power, rotational speed, ...), and the trade writes
some units its own way (``RPM``, ``kW``, ``KW``, ``Nm``). Every accepted spelling is
in the tables below; anything else is an error that says what was expected.

A rotational speed must carry an angle per time (``rpm``, ``rev/s``, ``rad/s``,
``deg/s``): ``1/min`` and ``Hz`` are refused for speeds, since they lose the factor
2*pi between revolutions and radians.
"""

from __future__ import annotations

import math
import re
import reprlib
from dataclasses import dataclass
from typing import Any

__all__ = ["Kind", "KINDS", "parse_quantity", "QuantityError", "LENGTH_UNITS", "length_factor",
           "shown", "MAX_SHOWN", "MAX_TEXT"]

#: Characters of a value echoed in a message; a longer value is cut with an ellipsis.
MAX_SHOWN = 60
#: Characters of a quantity's text ("1450 rpm"); a longer text is refused before it is read.
MAX_TEXT = 200

_REPR = reprlib.Repr()
_REPR.maxlevel = 3                  # a deeply nested value is shown as [[[...]]], never recursed
_REPR.maxstring = MAX_SHOWN
_REPR.maxother = MAX_SHOWN
_REPR.maxlong = MAX_SHOWN
_REPR.maxlist = _REPR.maxtuple = 8
_REPR.maxdict = 4


def shown(value: Any) -> str:
    """``repr(value)`` as echoed in a message: at most :data:`MAX_SHOWN` characters.

    Cheap whatever the value's size or depth (a megabyte string, an array nested ten
    thousand deep): only the part shown is ever converted.

    >>> shown("x" * 1000)[-3:]
    'xx…'
    >>> len(shown("x" * 1000)) == MAX_SHOWN
    True
    """
    try:
        text = repr(value[:MAX_SHOWN]) if isinstance(value, str) else _REPR.repr(value)
    except (RecursionError, ValueError):          # ValueError: an int of over 4300 digits
        text = f"<a {type(value).__name__}>"
    return text if len(text) <= MAX_SHOWN else text[:MAX_SHOWN - 1] + "…"

# Dimension vectors: (mass, length, time, angle).
_Dim = tuple[int, int, int, int]


class QuantityError(ValueError):
    """A text that is not a quantity of the expected kind."""


@dataclass(frozen=True, slots=True)
class Kind:
    """A physical kind of quantity: its dimension, an example and its SI unit name."""

    name: str
    dim: _Dim
    example: str
    si: str


KINDS: dict[str, Kind] = {k.name: k for k in [
    Kind("length", (0, 1, 0, 0), "10 mm", "m"),
    Kind("mass_per_length", (1, -1, 0, 0), "0.12 kg/m", "kg/m"),
    Kind("force", (1, 1, -2, 0), "400 N", "N"),
    Kind("bending_stiffness", (1, 3, -2, 0), "0.02 N*m^2", "N*m^2"),
    Kind("torque", (1, 2, -2, 0), "12 N*m", "N*m"),
    Kind("power", (1, 2, -3, 0), "3 kW", "W"),
    Kind("angle", (0, 0, 0, 1), "38 deg", "rad"),
    Kind("rotational_speed", (0, 0, -1, 1), "1450 rpm", "rad/s"),
    Kind("speed", (0, 1, -1, 0), "25 m/s", "m/s"),
    Kind("frequency", (0, 0, -1, 0), "50 Hz", "Hz"),
]}

_G0 = 9.80665
_LBF = 4.4482216152605
_IN = 0.0254

# name -> (SI factor, dimension). Exact spellings first.
_UNITS: dict[str, tuple[float, _Dim]] = {
    # length
    "m": (1.0, (0, 1, 0, 0)), "mm": (1e-3, (0, 1, 0, 0)), "cm": (1e-2, (0, 1, 0, 0)),
    "dm": (0.1, (0, 1, 0, 0)), "km": (1e3, (0, 1, 0, 0)), "um": (1e-6, (0, 1, 0, 0)),
    "µm": (1e-6, (0, 1, 0, 0)), "in": (_IN, (0, 1, 0, 0)), "inch": (_IN, (0, 1, 0, 0)),
    "inches": (_IN, (0, 1, 0, 0)), '"': (_IN, (0, 1, 0, 0)), "ft": (0.3048, (0, 1, 0, 0)),
    "foot": (0.3048, (0, 1, 0, 0)), "feet": (0.3048, (0, 1, 0, 0)), "'": (0.3048, (0, 1, 0, 0)),
    "yd": (0.9144, (0, 1, 0, 0)),
    # mass
    "kg": (1.0, (1, 0, 0, 0)), "g": (1e-3, (1, 0, 0, 0)), "lb": (0.45359237, (1, 0, 0, 0)),
    "lbm": (0.45359237, (1, 0, 0, 0)),
    # time
    "s": (1.0, (0, 0, 1, 0)), "sec": (1.0, (0, 0, 1, 0)), "ms": (1e-3, (0, 0, 1, 0)),
    "min": (60.0, (0, 0, 1, 0)), "h": (3600.0, (0, 0, 1, 0)), "hr": (3600.0, (0, 0, 1, 0)),
    # angle
    "rad": (1.0, (0, 0, 0, 1)), "mrad": (1e-3, (0, 0, 0, 1)),
    "deg": (math.pi / 180, (0, 0, 0, 1)), "°": (math.pi / 180, (0, 0, 0, 1)),
    "degree": (math.pi / 180, (0, 0, 0, 1)), "degrees": (math.pi / 180, (0, 0, 0, 1)),
    "rev": (2 * math.pi, (0, 0, 0, 1)), "r": (2 * math.pi, (0, 0, 0, 1)),
    "revolution": (2 * math.pi, (0, 0, 0, 1)), "revolutions": (2 * math.pi, (0, 0, 0, 1)),
    # rotational speed
    "rpm": (2 * math.pi / 60, (0, 0, -1, 1)), "rps": (2 * math.pi, (0, 0, -1, 1)),
    # frequency
    "Hz": (1.0, (0, 0, -1, 0)), "kHz": (1e3, (0, 0, -1, 0)),
    # force
    "N": (1.0, (1, 1, -2, 0)), "kN": (1e3, (1, 1, -2, 0)), "MN": (1e6, (1, 1, -2, 0)),
    "mN": (1e-3, (1, 1, -2, 0)), "daN": (10.0, (1, 1, -2, 0)), "lbf": (_LBF, (1, 1, -2, 0)),
    "kgf": (_G0, (1, 1, -2, 0)), "kip": (1e3 * _LBF, (1, 1, -2, 0)),
    # power
    "W": (1.0, (1, 2, -3, 0)), "kW": (1e3, (1, 2, -3, 0)), "MW": (1e6, (1, 2, -3, 0)),
    "mW": (1e-3, (1, 2, -3, 0)),
    "hp": (745.69987158227022, (1, 2, -3, 0)),   # mechanical horsepower, 550 ft*lbf/s
    "PS": (735.49875, (1, 2, -3, 0)),            # metric horsepower, 75 kgf*m/s
    # energy / torque written as one word
    "J": (1.0, (1, 2, -2, 0)), "kJ": (1e3, (1, 2, -2, 0)),
    "Nm": (1.0, (1, 2, -2, 0)), "Nmm": (1e-3, (1, 2, -2, 0)), "kNm": (1e3, (1, 2, -2, 0)),
    # speed
    "fpm": (0.3048 / 60, (0, 1, -1, 0)), "mph": (0.44704, (0, 1, -1, 0)),
}

# Trade spellings accepted whatever their case (only where no other unit could be meant).
_ANY_CASE = {
    "rpm": "rpm", "kw": "kW", "hp": "hp", "deg": "deg", "rad": "rad", "kn": "kN",
    "nm": "Nm", "n": "N", "w": "W", "lbf": "lbf", "kgf": "kgf", "hz": "Hz",
    "rps": "rps", "nmm": "Nmm", "knm": "kNm", "dan": "daN", "kg": "kg", "mm": "mm",
    "in": "in", "ft": "ft", "cm": "cm",
}
# Spellings that look like a unit but lose a factor: refused with a hint.
_REFUSED = {"1/min": "rpm", "min^-1": "rpm", "min-1": "rpm", "1/s": "rad/s or rev/s"}

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
_SUPERSCRIPT = str.maketrans({"²": "^2", "³": "^3", "⁴": "^4", "·": "*", "⋅": "*", "×": "*"})
_TOKEN = re.compile(r"\s*([*/])?\s*([^\s*/^]+)(?:\s*(?:\^|\*\*)\s*([+-]?\d+))?")

#: Drawing length units accepted by the spec's ``units`` key, in metres.
LENGTH_UNITS: dict[str, float] = {"mm": 1e-3, "cm": 1e-2, "m": 1.0, "in": _IN, "ft": 0.3048,
                                  "dm": 0.1, "um": 1e-6, "yd": 0.9144, "km": 1e3}


def length_factor(name: str) -> float:
    """Metres per drawing unit for a unit name (``mm``, ``in``, ...)."""
    key = name.strip()
    aliases = {"inch": "in", "inches": "in", "millimeters": "mm", "millimetres": "mm",
               "meters": "m", "metres": "m", "feet": "ft", "foot": "ft",
               "centimeters": "cm", "centimetres": "cm"}
    key = aliases.get(key.lower(), key.lower())
    if key not in LENGTH_UNITS:
        raise QuantityError(f"unknown drawing unit {shown(name)}: expected one of {', '.join(LENGTH_UNITS)}")
    return LENGTH_UNITS[key]


def _lookup(name: str) -> tuple[float, _Dim]:
    if name in _UNITS:
        return _UNITS[name]
    alias = _ANY_CASE.get(name.lower())
    if alias is not None:
        return _UNITS[alias]
    raise QuantityError(f"unknown unit {shown(name)}")


def _parse_units(expr: str) -> tuple[float, _Dim]:
    factor = 1.0
    dim = [0, 0, 0, 0]
    pos = 0
    text = expr.translate(_SUPERSCRIPT).replace("**", "^")
    # "N.m" and "N-m" for newton metre
    text = re.sub(r"(?<=[A-Za-z])[.\-](?=[A-Za-z])", "*", text)
    first = True
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m or m.end() == pos:
            raise QuantityError("cannot read the unit")
        op, name, power = m.group(1), m.group(2), m.group(3)
        if first and op == "/":
            raise QuantityError("cannot read the unit")
        if name == "1" and first:
            f, d = 1.0, (0, 0, 0, 0)
        else:
            f, d = _lookup(name)
        p = int(power) if power else 1
        if op == "/":
            p = -p
        try:
            factor *= f ** p
        except OverflowError:
            raise QuantityError(f"the power {p} of {shown(name)} is out of range") from None
        for k in range(4):
            dim[k] += d[k] * p
        pos = m.end()
        first = False
    return factor, (dim[0], dim[1], dim[2], dim[3])


def parse_quantity(text: str, kind: str) -> float:
    """Parse ``text`` (e.g. ``"1450 rpm"``) as a quantity of ``kind``; return SI float.

    Parameters
    ----------
    text
        A number followed by a unit. No comma (decimal commas and thousands separators
        are refused: ``5,5 kW`` is ambiguous).
    kind
        A key of :data:`KINDS`.

    Raises
    ------
    QuantityError
        With a message naming what was expected.

    Examples
    --------
    >>> round(parse_quantity("1450 rpm", "rotational_speed"), 4)
    151.8436
    >>> parse_quantity("3kW", "power")
    3000.0
    """
    k = KINDS[kind]
    expected = f"expected a {kind.replace('_', ' ')} with a unit, e.g. '{k.example}'"
    if not isinstance(text, str):
        raise QuantityError(f"got {_what(text)} {shown(text)}: {expected}")
    seen = shown(text)
    if len(text) > MAX_TEXT:
        raise QuantityError(f"{seen} is {len(text)} characters long: {expected} "
                            f"(at most {MAX_TEXT} characters)")
    if "," in text:
        raise QuantityError(f"{seen} holds a comma: {expected} (use a point for decimals)")
    m = _NUMBER.match(text)
    if not m:
        raise QuantityError(f"{seen} does not start with a number: {expected}")
    value = float(m.group(1))
    unit = m.group(2)
    if not unit:
        raise QuantityError(f"{seen} has no unit: {expected}")
    compact = unit.replace(" ", "")
    if compact in _REFUSED and kind == "rotational_speed":
        raise QuantityError(f"{seen}: '{compact}' is ambiguous for a speed; write '{_REFUSED[compact]}'")
    try:
        factor, dim = _parse_units(unit)
    except QuantityError as err:
        raise QuantityError(f"{seen}: {err}; {expected}") from err
    if kind == "rotational_speed" and dim == (0, 0, -1, 0):
        raise QuantityError(f"{seen}: a frequency is not a rotational speed; write rpm, rev/s or rad/s")
    if dim != k.dim:
        # an angle is dimensionless in SI: accept a missing angle only for torque/energy-like kinds
        raise QuantityError(f"{seen} is not a {kind.replace('_', ' ')}: {expected}")
    try:
        result = value * factor
    except OverflowError:
        result = math.inf
    if not math.isfinite(result):
        raise QuantityError(f"{seen} is not finite: {expected}")
    return result


def _what(value: Any) -> str:
    """How a value that is not a text is named: "the bare number", "a list", ..."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return "the bare number"
    return {list: "the list", dict: "the table", bool: "the boolean"}.get(type(value), "the value")
