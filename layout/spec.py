"""The spec file (``NAME.spanwise.toml``) and the ``key=value`` words of drawn labels.

Everything is validated once, here, into SI floats. Every bad value gives one line
naming the file (or the label's place), the key and what was expected; all of them
are collected and raised together as one :class:`~layout.errors.SpecError`.
"""

from __future__ import annotations

import math
import re
import tomllib
from collections.abc import Callable
from dataclasses import dataclass, field, fields
from functools import partial
from pathlib import Path
from typing import Any

from .errors import SpecError
from .quantity import KINDS, MAX_SHOWN, QuantityError, length_factor, parse_quantity, shown

__all__ = ["Spec", "BeltSpec", "PulleySpec", "RouteSpec", "load_spec", "parse_spec",
           "pulley_values", "BELT_KEYS", "PULLEY_KEYS", "ROLES", "spec_path_for",
           "parse_label_words", "MAX_SPEC_BYTES", "MAX_SI", "MIN_SI", "MAX_POINT", "MAX_NUMBER",
           "MAX_FRICTION", "MAX_STRANDS", "MAX_MODES", "MAX_ORDER", "MAX_ORDERS",
           "MAX_STOCK_LENGTHS", "MAX_LAYERS", "MAX_ROUTE_PULLEYS", "MAX_TABLES", "MAX_ID",
           "MAX_PROBLEMS"]

# Limits. A value beyond them is refused at parse time with the limit in the message: they
# are far beyond any belt drive, and keep absurd input from costing time, memory or
# numerical warnings later.
MAX_SPEC_BYTES = 10_000_000     # size of a spec file
MAX_SI = 1e9                    # |quantity| in SI units (m, N, W, N*m, rad/s, m/s, rad, ...)
MIN_SI = 1e-9                   # smallest length, mass per length, bending stiffness (SI)
MAX_POINT = 1e12                # |coordinate| of a point or a gravity direction, drawing units
MAX_NUMBER = 100.0              # plain numbers: service_factor, margins, sag_limit, tolerances
MAX_FRICTION = 10.0             # friction, effective_friction (exp(mu*theta) stays finite)
MAX_STRANDS = 1000
MAX_MODES = 50
MAX_ORDER = 1000.0              # an excitation order
MAX_ORDERS = 64                 # entries of one pulley's orders
MAX_STOCK_LENGTHS = 10_000
MAX_LAYERS = 1000               # entries of belt_layers, keep_out_layers
MAX_ROUTE_PULLEYS = 10_000      # entries of a route's pulleys (and of back, crossed)
MAX_TABLES = 10_000             # [pulley.*], [route.*], [belt.*] tables, each
MAX_ID = 100                    # characters of a pulley or loop id
MAX_PROBLEMS = 100              # lines reported; the rest are counted in one more line

ROLES = ("driver", "driven", "idler", "tensioner")
DIRECTIONS = ("ccw", "cw")
LOAD_LAWS = ("constant-power", "constant-torque", "quadratic")
TENSIONING = ("fixed", "constant")

# key -> kind: a quantity kind of layout.quantity, or one of the special kinds below.
BELT_KEYS: dict[str, str] = {
    "section": "name", "mass_per_length": "mass_per_length", "axial_stiffness": "force",
    "bending_stiffness": "bending_stiffness", "friction": "friction", "effective_friction": "friction",
    "groove_angle": "angle", "strands": "count", "height": "length",
    "tensioning": "tensioning", "install_tension": "force", "length": "length",
    "stock_lengths": "length_list", "max_speed": "speed", "min_diameter": "length",
    "width": "length", "thickness": "length",
}
PULLEY_KEYS: dict[str, str] = {
    "role": "role", "at": "point", "diameter": "length", "speed": "rotational_speed",
    "direction": "direction", "speed_range": "speed_range", "orders": "orders",
    "adjust": "angle", "power": "power", "torque": "torque", "rating": "power",
    "groove_angle": "angle", "drag_torque": "torque", "force": "force",
    "force_direction": "angle", "pivot": "point", "arm_torque": "torque", "load": "load",
}
TOP_KEYS = {"units", "belt_layers", "gravity", "service_factor", "keep_out_layers", "clearance",
            "belt", "pulley", "route", "tolerances", "grip_margin", "modes", "resonance_margin",
            "near_critical", "sag_limit", "span_ends"}
TOLERANCE_KEYS = {"join", "attach", "slip", "tangent_deg", "tangent_offset"}
ROUTE_KEYS = {"pulleys", "back", "crossed"}

_ID = re.compile(r"^[A-Za-z][A-Za-z0-9_.\-]*$")


@dataclass(frozen=True, slots=True)
class BeltSpec:
    """Belt properties given by the user (``None`` where not given). SI units."""

    section: str | None = None
    mass_per_length: float | None = None        # kg/m, one strand
    axial_stiffness: float | None = None        # N, EA of one strand
    bending_stiffness: float | None = None      # N*m^2
    friction: float | None = None
    effective_friction: float | None = None
    groove_angle: float | None = None           # rad
    strands: int | None = None
    height: float | None = None                 # m
    tensioning: str | None = None
    install_tension: float | None = None        # N
    length: float | None = None                 # m
    stock_lengths: tuple[float, ...] | None = None
    max_speed: float | None = None              # m/s
    min_diameter: float | None = None           # m
    width: float | None = None                  # m, flat belts
    thickness: float | None = None              # m, flat belts

    def merged(self, over: "BeltSpec") -> "BeltSpec":
        """``self`` with every value ``over`` gives replaced."""
        return BeltSpec(**{f.name: (getattr(over, f.name) if getattr(over, f.name) is not None
                                    else getattr(self, f.name)) for f in fields(self)})


@dataclass(frozen=True, slots=True)
class PulleySpec:
    """What the spec or a label says about one pulley. SI units, points in drawing units."""

    id: str
    source: str
    role: str | None = None
    at: tuple[float, float] | None = None
    diameter: float | None = None
    speed: float | None = None                  # rad/s, magnitude
    direction: str | None = None
    speed_range: tuple[float, float] | None = None
    orders: tuple[float, ...] | None = None
    adjust: float | None = None                 # rad
    power: float | None = None                  # W
    torque: float | None = None                 # N*m
    rating: float | None = None                 # W
    groove_angle: float | None = None           # rad
    drag_torque: float | None = None            # N*m
    force: float | None = None                  # N
    force_direction: float | None = None        # rad
    pivot: tuple[float, float] | None = None
    arm_torque: float | None = None             # N*m
    load: str | None = None                     # how the load follows speed (physics.model.LoadLaw)

    def given(self) -> dict[str, Any]:
        """The keys this spec sets (not ``None``), without ``id`` and ``source``."""
        return {f.name: getattr(self, f.name) for f in fields(self)
                if f.name not in ("id", "source") and getattr(self, f.name) is not None}


@dataclass(frozen=True, slots=True)
class RouteSpec:
    """A loop to route through pulleys named in travel order."""

    loop: str
    pulleys: tuple[str, ...]
    back: tuple[str, ...] = ()
    crossed: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True, slots=True)
class Spec:
    """A whole spec file. Ids are kept as written; look them up with :meth:`pulley`."""

    path: str | None = None
    units: str | None = None
    belt_layers: tuple[str, ...] = ()
    keep_out_layers: tuple[str, ...] = ()
    clearance: float = 0.0                      # m
    gravity: tuple[float, float] | None = None  # unit vector in the drawing plane
    service_factor: float = 1.0
    grip_margin: float | None = None
    modes: int | None = None
    resonance_margin: float | None = None
    near_critical: float | None = None
    sag_limit: float | None = None
    span_ends: str | None = None
    belt: BeltSpec = field(default_factory=BeltSpec)
    loop_belts: dict[str, BeltSpec] = field(default_factory=dict)   # lower-case loop id
    pulleys: dict[str, PulleySpec] = field(default_factory=dict)    # lower-case pulley id
    routes: dict[str, RouteSpec] = field(default_factory=dict)      # lower-case loop id
    tolerances: dict[str, float] = field(default_factory=dict)

    def belt_for(self, loop_id: str) -> BeltSpec:
        over = self.loop_belts.get(loop_id.lower())
        return self.belt if over is None else self.belt.merged(over)


def spec_path_for(drawing: str | Path) -> Path:
    """``NAME.spanwise.toml`` beside ``NAME.dxf``."""
    p = Path(drawing)
    return p.with_name(p.stem + ".spanwise.toml")


# --------------------------------------------------------------------------- values


class _BadValue(Exception):
    """A value that does not fit its kind: what was expected, and the value as read."""

    def __init__(self, expected: str, raw: Any) -> None:
        super().__init__(expected)
        self.expected = expected
        self.raw = raw


def _cut(text: str) -> str:
    """A key or an id as it appears in a message: at most ``MAX_SHOWN`` characters."""
    return text if len(text) <= MAX_SHOWN else text[:MAX_SHOWN - 1] + "…"


class _Problems(list):  # type: ignore[type-arg]
    """The problem lines: the first ``MAX_PROBLEMS`` are kept, the rest only counted."""

    def __init__(self) -> None:
        super().__init__()
        self.dropped = 0

    def append(self, line: str) -> None:
        if len(self) < MAX_PROBLEMS:
            super().append(line)
        else:
            self.dropped += 1


def _is_number(v: Any) -> bool:
    """A TOML integer or float (``True`` and ``False`` are not numbers here)."""
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _name(raw: Any, from_label: bool) -> str:
    if not isinstance(raw, str) or not raw.strip():
        raise _BadValue("expected a name, e.g. 'SPA'", raw)
    return raw.strip()


def _plain(raw: Any, from_label: bool, read: Callable[[str], float], expected: str) -> float:
    """A number without a unit; a label's text is read with ``read`` first."""
    if isinstance(raw, str) and from_label:
        try:
            raw = read(raw)
        except ValueError:
            raise _BadValue(expected, raw) from None
    if not _is_number(raw):
        raise _BadValue(f"{expected} (no unit)", raw)
    return raw


def _within(v: float, lo: float, hi: float) -> bool:
    """``lo <= v <= hi`` for a finite ``v``; an int of any size compares without overflow."""
    return (isinstance(v, int) or math.isfinite(v)) and lo <= v <= hi


def _number(raw: Any, from_label: bool, *, hi: float = MAX_NUMBER) -> float:
    raw = _plain(raw, from_label, float, "expected a plain number")
    if not _within(raw, 0, hi) or raw == 0:
        raise _BadValue(f"expected a number in (0, {hi:g}]", raw)
    return float(raw)


def _count(raw: Any, from_label: bool, *, hi: int = MAX_STRANDS) -> int:
    raw = _plain(raw, from_label, int, "expected a whole number")
    if not _within(raw, 1, hi) or int(raw) != raw:
        raise _BadValue(f"expected a whole number from 1 to {hi}", raw)
    return int(raw)


def _one_of(options: tuple[str, ...], expected: str) -> Callable[[Any, bool], str]:
    """A converter to one of ``options``, matched without regard to case or surrounding blanks."""

    def convert(raw: Any, from_label: bool) -> str:
        if not isinstance(raw, str) or raw.strip().lower() not in options:
            raise _BadValue(expected, raw)
        return raw.strip().lower()

    return convert


def _point(raw: Any, from_label: bool) -> tuple[float, float]:
    if (not isinstance(raw, (list, tuple)) or len(raw) != 2
            or not all(_is_number(v) and _within(v, -MAX_POINT, MAX_POINT) for v in raw)):
        raise _BadValue(f"expected a point [x, y] in drawing units, each finite within "
                        f"+-{MAX_POINT:g}", raw)
    return (float(raw[0]), float(raw[1]))


def _speed_range(raw: Any, from_label: bool) -> tuple[float, float]:
    if not isinstance(raw, (list, tuple)) or len(raw) != 2:
        raise _BadValue("expected two speeds, e.g. [\"700 rpm\", \"1800 rpm\"]", raw)
    lo = parse_quantity(raw[0], "rotational_speed")
    hi = parse_quantity(raw[1], "rotational_speed")
    if not 0 <= lo <= hi <= MAX_SI:
        raise _BadValue(f"expected a low and a high speed, 0 <= low <= high <= {MAX_SI:g} rad/s", raw)
    return (lo, hi)


def _orders(raw: Any, from_label: bool) -> tuple[float, ...]:
    items = raw if isinstance(raw, (list, tuple)) else [raw]
    if len(items) > MAX_ORDERS:
        raise _BadValue(f"expected at most {MAX_ORDERS} orders, got {len(items)}", raw)
    out = []
    for v in items:
        if isinstance(v, str) and from_label:
            v = float(v)        # a ValueError here is reported by _value
        if not _is_number(v) or not _within(v, 0, MAX_ORDER) or v == 0:
            raise _BadValue(f"expected numbers in (0, {MAX_ORDER:g}], e.g. [1, 2]", raw)
        out.append(float(v))
    if not out:
        raise _BadValue("expected at least one order, e.g. [1]", raw)
    return tuple(out)


def _length_list(raw: Any, from_label: bool) -> tuple[float, ...]:
    if not isinstance(raw, (list, tuple)) or not raw:
        raise _BadValue("expected a list of lengths, e.g. [\"1600 mm\", \"1700 mm\"]", raw)
    if len(raw) > MAX_STOCK_LENGTHS:
        raise _BadValue(f"expected at most {MAX_STOCK_LENGTHS} lengths, got {len(raw)}", raw)
    return tuple(_quantity("length", v) for v in raw)


_POSITIVE_KINDS = ("length", "mass_per_length", "bending_stiffness")
_SPEED_KINDS = ("rotational_speed", "speed")


def _quantity(kind: str, raw: Any) -> float:
    """A quantity of a :mod:`layout.quantity` kind, in SI, within the limits above."""
    value = parse_quantity(raw, kind)
    si = KINDS[kind].si
    if kind in _POSITIVE_KINDS and not MIN_SI <= value <= MAX_SI:
        raise _BadValue(f"expected a value from {MIN_SI:g} to {MAX_SI:g} {si}", raw)
    if kind in _SPEED_KINDS and not 0 < value <= MAX_SI:
        sense = "; the sense is `direction`" if kind == "rotational_speed" else ""
        raise _BadValue(f"expected a speed greater than 0, at most {MAX_SI:g} {si}{sense}", raw)
    if kind == "force" and not 0 <= value <= MAX_SI:
        raise _BadValue(f"expected a force from 0 to {MAX_SI:g} N", raw)
    if abs(value) > MAX_SI:
        raise _BadValue(f"expected a value within +-{MAX_SI:g} {si}", raw)
    return value


# kind -> converter(raw, from_label); any other kind is a quantity kind (_quantity).
_CONVERTERS: dict[str, Callable[[Any, bool], Any]] = {
    "name": _name,
    "number+": _number,
    "friction": partial(_number, hi=MAX_FRICTION),
    "count": _count,
    "modes": partial(_count, hi=MAX_MODES),
    "role": _one_of(ROLES, f"expected one of {', '.join(ROLES)}"),
    "direction": _one_of(DIRECTIONS, "expected 'ccw' (counter-clockwise) or 'cw' (clockwise)"),
    "tensioning": _one_of(TENSIONING, "expected 'fixed' (fixed centres) or 'constant'"),
    "load": _one_of(LOAD_LAWS, "expected 'constant-power', 'constant-torque' (conveyors, hoists) or "
                               "'quadratic' (fans, centrifugal pumps)"),
    "point": _point,
    "speed_range": _speed_range,
    "orders": _orders,
    "length_list": _length_list,
}


def _value(kind: str, raw: Any, where: str, problems: list[str], *, from_label: bool = False) -> Any:
    """Convert ``raw`` of ``kind``; on failure add one line to ``problems`` and return None."""
    convert = _CONVERTERS.get(kind)
    try:
        return _quantity(kind, raw) if convert is None else convert(raw, from_label)
    except _BadValue as bad:
        problems.append(f"{where} = {shown(bad.raw)}: {bad.expected}")
    except QuantityError as err:
        problems.append(f"{where}: {err}")
    except (TypeError, ValueError):
        problems.append(f"{where} = {shown(raw)}: expected a {kind.replace('_', ' ')}")
    return None


def pulley_values(items: dict[str, Any], where: str, problems: list[str], *,
                  from_label: bool = False, tag_case: bool = False) -> dict[str, Any]:
    """Validate pulley keys; unknown keys are problems. ``where`` prefixes every message."""
    out: dict[str, Any] = {}
    for key, raw in items.items():
        k = key.lower() if tag_case else key
        if k not in PULLEY_KEYS:
            problems.append(f"{where}: unknown key {shown(key)}; expected one of {', '.join(PULLEY_KEYS)}")
            continue
        if from_label and PULLEY_KEYS[k] in ("orders", "speed_range", "point"):
            raw = [v.strip() for v in raw.split(",")] if isinstance(raw, str) else raw
            if PULLEY_KEYS[k] == "point":
                try:
                    raw = [float(v) for v in raw]
                except ValueError:
                    problems.append(f"{where}.{_cut(k)} = {shown(items[key])}: expected a point x,y")
                    continue
        elif from_label and isinstance(raw, str) and "," in raw and PULLEY_KEYS[k] not in ("role", "direction"):
            problems.append(f"{where}.{k} = {shown(raw)}: a comma inside a quantity; use a point for decimals")
            continue
        v = _value(PULLEY_KEYS[k], raw, f"{where}.{k}", problems, from_label=from_label)
        if v is not None:
            out[k] = v
    return out


def _check_pulley(p: dict[str, Any], where: str, problems: list[str]) -> None:
    if "power" in p and "torque" in p:
        problems.append(f"{where}: gives both power and torque; give one")
    if p.get("role") == "tensioner":
        ways = [k for k in ("force", "arm_torque") if k in p]
        if len(ways) > 1:
            problems.append(f"{where}: a tensioner takes force (with optional force_direction) or "
                            f"pivot with arm_torque, not both")
        if "arm_torque" in p and "pivot" not in p:
            problems.append(f"{where}: arm_torque needs the arm's pivot = [x, y]")
    if "diameter" in p and "at" not in p:
        problems.append(f"{where}: diameter picks one of several pulleys at a point; give at = [x, y] too")


def parse_label_words(words: list[str], where: str, problems: list[str]) -> dict[str, Any]:
    """``key=value`` words of a drawn label into pulley values."""
    items: dict[str, str] = {}
    for w in words:
        if "=" not in w:
            problems.append(f"{where}: word {shown(w)} is not key=value")
            continue
        k, v = w.split("=", 1)
        items[k.strip().lower()] = v.strip()
    out = pulley_values(items, where, problems, from_label=True)
    _check_pulley(out, where, problems)
    return out


def _belt(table: dict[str, Any], where: str, problems: list[str]) -> BeltSpec:
    vals: dict[str, Any] = {}
    for key, raw in table.items():
        if key not in BELT_KEYS:
            problems.append(f"{where}: unknown key {shown(key)}; expected one of {', '.join(BELT_KEYS)}")
            continue
        v = _value(BELT_KEYS[key], raw, f"{where}.{key}", problems)
        if v is not None:
            vals[key] = v
    if "section" in vals:
        from physics.catalogue import find_section
        if find_section(vals["section"]) is None:
            problems.append(f"{where}.section = {shown(vals['section'])}: not in the catalogue "
                            f"(`spanwise catalog` lists it); give the belt's properties instead")
    return BeltSpec(**vals)


def _case_unique(table: dict[str, Any], where: str, problems: list[str]) -> dict[str, str]:
    seen: dict[str, str] = {}
    for key in table:
        low = key.lower()
        if low in seen:
            problems.append(f"{where}: [{_cut(seen[low])}] and [{_cut(key)}] differ only in case; ids are "
                            f"matched case-insensitively")
        else:
            seen[low] = key
    return seen


def _layers(raw: Any, where: str, problems: list[str]) -> tuple[str, ...]:
    if isinstance(raw, str):
        raw = [raw]
    if isinstance(raw, list) and len(raw) > MAX_LAYERS:
        problems.append(f"{where}: {len(raw)} entries; expected at most {MAX_LAYERS} layer names "
                        f"or patterns")
        return ()
    if not isinstance(raw, list) or not all(isinstance(v, str) and v for v in raw):
        problems.append(f"{where} = {shown(raw)}: expected a list of layer names or patterns, e.g. [\"BELT*\"]")
        return ()
    return tuple(raw)


def _tables(data: dict[str, Any], key: str, name: str, problems: list[str]
            ) -> list[tuple[str, dict[str, Any], str]]:
    """The sub-tables ``[key.ID]`` as ``(ID, table, where)``; ids unique regardless of case."""
    group = data.get(key, {})
    if not isinstance(group, dict):
        problems.append(f"{name}: {key}: expected tables [{key}.ID]")
        return []
    if len(group) > MAX_TABLES:
        problems.append(f"{name}: {key}: {len(group)} tables [{key}.ID]; expected at most {MAX_TABLES}")
        return []
    _case_unique(group, f"{name}: {key}", problems)
    out = []
    for ident, table in group.items():
        where = f"{name}: {key}.{_cut(ident)}"
        if len(ident) > MAX_ID:
            problems.append(f"{where}: an id of {len(ident)} characters; expected at most {MAX_ID}")
            continue
        if not isinstance(table, dict):
            problems.append(f"{where}: expected a table [{key}.{ident}]")
            continue
        out.append((ident, table, where))
    return out


# --------------------------------------------------------------------------- top-level settings
# Each reader takes (raw, where, problems) and returns the value, or None after adding a problem.


def _units(raw: Any, where: str, problems: list[str]) -> str | None:
    try:
        if not isinstance(raw, str):
            raise ValueError
        length_factor(raw)
    except (ValueError, QuantityError):
        problems.append(f"{where} = {shown(raw)}: expected a drawing unit: mm, cm, m, in or ft")
        return None
    unit = raw.strip().lower()
    return {"inch": "in", "inches": "in"}.get(unit, unit)


def _gravity(raw: Any, where: str, problems: list[str]) -> tuple[float, float] | None:
    if (isinstance(raw, list) and len(raw) == 2
            and all(_is_number(v) and _within(v, -MAX_POINT, MAX_POINT) for v in raw)
            and math.hypot(raw[0], raw[1]) > 0):
        n = math.hypot(raw[0], raw[1])
        return (raw[0] / n, raw[1] / n)
    problems.append(f"{where} = {shown(raw)}: expected a direction [x, y] in the drawing plane, "
                    f"not [0, 0], each finite within +-{MAX_POINT:g}, e.g. [0, -1]")
    return None


def _fraction(raw: Any, where: str, problems: list[str]) -> float | None:
    v = _value("number+", raw, where, problems)
    if v is not None and v > 1:
        problems.append(f"{where} = {v}: expected a fraction in (0, 1]")
        return None
    return v


def _span_ends(raw: Any, where: str, problems: list[str]) -> str | None:
    if raw not in ("pinned", "clamped"):
        problems.append(f"{where} = {shown(raw)}: expected 'pinned' or 'clamped'")
        return None
    return raw


def _tolerances(raw: Any, where: str, problems: list[str]) -> dict[str, float] | None:
    if not isinstance(raw, dict):
        problems.append(f"{where}: expected a table")
        return None
    vals = {}
    for k, v in raw.items():
        if k not in TOLERANCE_KEYS:
            problems.append(f"{where}.{_cut(k)}: unknown key; expected one of "
                            f"{', '.join(sorted(TOLERANCE_KEYS))}")
            continue
        tol = _value("number+", v, f"{where}.{k}", problems)
        if tol is not None:
            vals[k] = tol
    return vals


# The top-level settings in the order their problems are reported.
_SETTINGS: tuple[tuple[str, Callable[[Any, str, list[str]], Any]], ...] = (
    ("units", _units),
    ("belt_layers", _layers),
    ("keep_out_layers", _layers),
    ("clearance", partial(_value, "length")),
    ("gravity", _gravity),
    ("service_factor", partial(_value, "number+")),
    ("grip_margin", _fraction),
    ("resonance_margin", partial(_value, "number+")),
    ("near_critical", _fraction),
    ("sag_limit", partial(_value, "number+")),
    ("modes", partial(_value, "modes")),
    ("span_ends", _span_ends),
    ("tolerances", _tolerances),
)


def _settings(data: dict[str, Any], name: str, problems: list[str]) -> dict[str, Any]:
    """The top-level keys other than the tables ``[belt]``, ``[pulley.*]`` and ``[route.*]``."""
    for key in data:
        if key not in TOP_KEYS:
            problems.append(f"{name}: unknown key {shown(key)}; expected one of {', '.join(sorted(TOP_KEYS))}")
    kw: dict[str, Any] = {}
    for key, read in _SETTINGS:
        if key in data:
            v = read(data[key], f"{name}: {key}", problems)
            if v is not None:
                kw[key] = v
    return kw


# --------------------------------------------------------------------------- tables


def _belts(data: dict[str, Any], name: str, problems: list[str]
           ) -> tuple[BeltSpec, dict[str, BeltSpec]]:
    """``[belt]`` and its per-loop sub-tables ``[belt.LOOP]`` (keyed by lower-case loop id)."""
    belt = data.get("belt", {})
    if not isinstance(belt, dict):
        problems.append(f"{name}: belt: expected a table [belt]")
        belt = {}
    flat = {k: v for k, v in belt.items() if not isinstance(v, dict)}
    subs = {k: v for k, v in belt.items() if isinstance(v, dict)}
    common = _belt(flat, f"{name}: belt", problems)
    if len(subs) > MAX_TABLES:
        problems.append(f"{name}: belt: {len(subs)} tables [belt.LOOP]; expected at most {MAX_TABLES}")
        subs = {}
    _case_unique(subs, f"{name}: belt", problems)
    loop_belts = {}
    for lid, table in subs.items():
        if len(lid) > MAX_ID:
            problems.append(f"{name}: belt.{_cut(lid)}: an id of {len(lid)} characters; expected "
                            f"at most {MAX_ID}")
            continue
        if lid.lower() in BELT_KEYS:
            problems.append(f"{name}: [belt.{lid}]: a loop id may not be a belt key ({lid!r})")
            continue
        loop_belts[lid.lower()] = _belt(table, f"{name}: belt.{lid}", problems)
    return common, loop_belts


def _pulleys(data: dict[str, Any], name: str, problems: list[str]) -> dict[str, PulleySpec]:
    """``[pulley.ID]`` tables, keyed by lower-case pulley id."""
    ps: dict[str, PulleySpec] = {}
    for pid, table, where in _tables(data, "pulley", name, problems):
        vals = pulley_values(table, where, problems)
        _check_pulley(vals, where, problems)
        ps[pid.lower()] = PulleySpec(id=pid, source=where, **vals)
    return ps


def _spans_of(seq: list[str]) -> dict[str, tuple[str, str]]:
    """Spans of consecutive pulleys (last to first too) by ``"from-to"`` in lower case; first wins."""
    spans: dict[str, tuple[str, str]] = {}
    for a, b in zip(seq, seq[1:] + seq[:1]):
        spans.setdefault(f"{a.lower()}-{b.lower()}", (a, b))
    return spans


def _crossed(raw: Any, seq: list[str], where: str, problems: list[str]) -> list[tuple[str, str]]:
    """A route's ``crossed = ["FROM-TO", ...]``, each a span of consecutive pulleys of ``seq``."""
    if not isinstance(raw, list):
        problems.append(f"{where}.crossed: expected a list of spans \"FROM-TO\"")
        return []
    if len(raw) > MAX_ROUTE_PULLEYS:
        problems.append(f"{where}.crossed: {len(raw)} entries; expected at most {MAX_ROUTE_PULLEYS}")
        return []
    spans = _spans_of(seq)
    crossed = []
    for c in raw:
        span = spans.get(c.lower()) if isinstance(c, str) else None
        if span is None:
            problems.append(f"{where}.crossed: {shown(c)} is not a span FROM-TO of consecutive pulleys "
                            f"of this route")
        else:
            crossed.append(span)
    return crossed


def _route(lid: str, table: dict[str, Any], where: str, problems: list[str]) -> RouteSpec | None:
    """One ``[route.LOOP]`` table; None when it names no usable pulleys."""
    for k in table:
        if k not in ROUTE_KEYS:
            problems.append(f"{where}: unknown key {shown(k)}; expected pulleys, back, crossed")
    seq = table.get("pulleys")
    if isinstance(seq, list) and len(seq) > MAX_ROUTE_PULLEYS:
        problems.append(f"{where}.pulleys: {len(seq)} entries; expected at most {MAX_ROUTE_PULLEYS} "
                        f"pulley ids")
        return None
    if not isinstance(seq, list) or len(seq) < 2 or not all(_is_id(v) for v in seq):
        problems.append(f"{where}.pulleys: expected at least two pulley ids (of at most {MAX_ID} "
                        f"characters) in travel order")
        return None
    back = table.get("back", [])
    if isinstance(back, list) and len(back) > MAX_ROUTE_PULLEYS:
        problems.append(f"{where}.back: {len(back)} entries; expected at most {MAX_ROUTE_PULLEYS}")
        back = []
    if not isinstance(back, list) or not all(isinstance(v, str) for v in back):
        problems.append(f"{where}.back: expected a list of pulley ids")
        back = []
    crossed = _crossed(table.get("crossed", []), seq, where, problems)
    lower_seq = {v.lower() for v in seq}
    for b in back:
        if b.lower() not in lower_seq:
            problems.append(f"{where}.back: {shown(b)} is not in the route's pulleys")
    if lid.lower() in BELT_KEYS:
        problems.append(f"{where}: a loop id may not be a belt key ({lid!r})")
    return RouteSpec(lid, tuple(seq), tuple(back), tuple(crossed))


def _is_id(v: Any) -> bool:
    return isinstance(v, str) and len(v) <= MAX_ID


def _routes(data: dict[str, Any], name: str, problems: list[str]) -> dict[str, RouteSpec]:
    """``[route.LOOP]`` tables, keyed by lower-case loop id."""
    rs: dict[str, RouteSpec] = {}
    for lid, table, where in _tables(data, "route", name, problems):
        route = _route(lid, table, where, problems)
        if route is not None:
            rs[lid.lower()] = route
    return rs


def parse_spec(data: dict[str, Any], name: str) -> Spec:
    """Validate a parsed TOML document; ``name`` is how messages refer to the file.

    Every problem is collected, in the order: unknown top-level keys, the settings (in the
    order of ``_SETTINGS``), ``[belt]``, ``[pulley.*]``, ``[route.*]``; then all are raised
    together as one :class:`~layout.errors.SpecError` (at most ``MAX_PROBLEMS`` lines and
    one more counting the rest).
    """
    problems = _Problems()
    settings = _settings(data, name, problems)
    belt, loop_belts = _belts(data, name, problems)
    pulleys = _pulleys(data, name, problems)
    routes = _routes(data, name, problems)
    if problems.dropped:
        list.append(problems, f"{name}: {problems.dropped} more problems not shown (the first "
                              f"{MAX_PROBLEMS} are listed)")
    if problems:
        raise SpecError(list(problems))
    return Spec(path=name, belt=belt, loop_belts=loop_belts, pulleys=pulleys, routes=routes,
                **settings)


def load_spec(path: str | Path) -> Spec:
    """Read and validate a spec file.

    Raises
    ------
    SpecError
        Listing every problem, one line each, each naming the file and the key.
    """
    p = Path(path)
    if p.is_dir() or (p.exists() and not p.is_file()):
        raise SpecError(f"{p}: is not a regular file (a folder, a pipe or a device); expected a spec "
                        f"file (TOML)")
    try:
        with p.open("rb") as f:
            raw = f.read(MAX_SPEC_BYTES + 1)
        if len(raw) > MAX_SPEC_BYTES:
            raise SpecError(f"{p}: the spec file is over {MAX_SPEC_BYTES:,} bytes; expected a spec "
                            f"file of at most {MAX_SPEC_BYTES:,} bytes")
        text = raw.decode("utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise SpecError(f"{p}: cannot read the spec file ({_cut(str(err))})") from err
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise SpecError(f"{p}: not valid TOML ({_cut(str(err))})") from err
    except RecursionError:
        raise SpecError(f"{p}: {_deepest(text)}: tables or arrays nested too deeply for the TOML "
                        f"reader; expected a spec nested a few levels") from None
    except ValueError as err:               # e.g. an integer of over 4300 digits
        raise SpecError(f"{p}: not valid TOML ({_cut(str(err))})") from err
    return parse_spec(data, str(p))


_KEY_AT = re.compile(r"^\s*\[*\s*([^=\[\]{}]*?)\s*(?:=|\.|\]|$)")


def _deepest(text: str) -> str:
    """Where a spec nests deepest: "line N (key K)", the line with the most brackets."""
    lines = text.splitlines() or [""]
    n = max(range(len(lines)), key=lambda i: lines[i].count("[") + lines[i].count("{"))
    m = _KEY_AT.match(lines[n][:MAX_SPEC_BYTES])
    key = m.group(1) if m and m.group(1) else "?"
    return f"line {n + 1} (key {shown(key)})"


def valid_id(text: str) -> bool:
    """Whether ``text`` can be a pulley id written in a drawing label."""
    return bool(_ID.match(text))
