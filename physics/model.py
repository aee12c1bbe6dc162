"""The drive model: pulleys, belt loops and shafts, in SI units.

Plain frozen dataclasses. ``layout`` builds a :class:`Drive` from a drawing and a spec;
anything else (a script, a notebook, a test) can build one by hand.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum, StrEnum
from typing import TypeVar

__all__ = ["Role", "Side", "Tensioning", "SpanEnds", "LoadLaw", "choice", "Pulley", "Belt", "Loop", "Drive"]

_E = TypeVar("_E", bound=Enum)


class Role(str, Enum):
    DRIVER = "driver"
    DRIVEN = "driven"
    IDLER = "idler"
    TENSIONER = "tensioner"


class Side(str, Enum):
    """Which face of the belt touches the pulley."""

    INSIDE = "inside"
    BACK = "back"


class Tensioning(StrEnum):
    """How a loop's tension level is set.

    ``fixed``: fixed centres, the install tension set at rest (the centrifugal part
    ``m v**2`` comes out of the quasi-static tension as the belt speeds up);
    ``constant``: the textbook model, the mean quasi-static tension held at the install
    tension; ``tensioner``: a tensioner idler sets the tension of its two spans (never
    given on a :class:`Belt`: a pulley with role ``tensioner`` makes a loop one).
    """

    FIXED = "fixed"
    CONSTANT = "constant"
    TENSIONER = "tensioner"


class LoadLaw(StrEnum):
    """How a driven pulley's load follows its speed over the speed range.

    The load is given (as power or torque) at the nominal speed. ``constant-power``: the
    power stays (torque falls as 1/speed: machine tools, winders); ``constant-torque``: the
    torque stays (conveyors, hoists, positive-displacement pumps); ``quadratic``: the torque
    rises with the square of speed (fans, centrifugal pumps: the affinity laws).
    """

    CONSTANT_POWER = "constant-power"
    CONSTANT_TORQUE = "constant-torque"
    QUADRATIC = "quadratic"


class SpanEnds(StrEnum):
    """End conditions of a free span in the beam model (with bending stiffness)."""

    PINNED = "pinned"
    CLAMPED = "clamped"


def choice(kind: type[_E], value: _E | str, what: str, allowed: tuple[_E, ...] | None = None, *,
           hint: str = "") -> _E:
    """``value`` as a member of the enum ``kind``, checked once at the edge.

    Parameters
    ----------
    kind
        The enum class.
    value
        A member, or its string value (exact spelling).
    what
        The option's name, for the message (``"Belt.tensioning"``).
    allowed
        The members accepted here (default: all of ``kind``).
    hint
        Appended to the message.

    Raises
    ------
    ValueError
        Naming the value and every allowed one.

    Examples
    --------
    >>> choice(SpanEnds, "clamped", "span_ends")
    <SpanEnds.CLAMPED: 'clamped'>
    >>> choice(Tensioning, "fixd", "tensioning")
    Traceback (most recent call last):
    ...
    ValueError: tensioning = 'fixd': expected one of 'fixed', 'constant', 'tensioner'
    """
    members = tuple(kind) if allowed is None else allowed
    for m in members:
        if value is m or (isinstance(value, str) and value == m.value):
            return m
    names = ", ".join(repr(m.value) for m in members)
    raise ValueError(f"{what} = {value!r}: expected one of {names}{hint}")


@dataclass(frozen=True, slots=True)
class Pulley:
    """One pulley.

    Attributes
    ----------
    id
        From the drawing's label, the spec, or automatic (``P1``, ``P2``, ... in drawing order).
    center_m
        Centre, metres, in the drive's frame (drawing coordinates less a local origin).
    radius_m
        Pitch radius, metres.
    """

    id: str
    center_m: tuple[float, float]
    radius_m: float
    role: Role = Role.IDLER
    speed_rad_s: float | None = None          # magnitude, speed source only
    direction: int | None = None              # +1 ccw, -1 cw, speed source only
    speed_range_rad_s: tuple[float, float] | None = None
    orders: tuple[float, ...] = (1.0,)
    power_w: float | None = None              # magnitude given in the spec
    torque_nm: float | None = None            # magnitude given in the spec
    rating_w: float | None = None
    groove_angle_rad: float | None = None
    drag_torque_nm: float | None = None
    force_n: float | None = None
    force_direction: tuple[float, float] | None = None
    pivot_m: tuple[float, float] | None = None
    arm_torque_nm: float | None = None
    adjust: tuple[float, float] | None = None  # unit direction the pulley may slide along
    load_law: LoadLaw | None = None             # how a driven load follows speed; None: as given

    def __post_init__(self) -> None:
        object.__setattr__(self, "role", choice(Role, self.role, f"Pulley({self.id!r}).role"))
        if self.load_law is not None:
            object.__setattr__(self, "load_law", choice(LoadLaw, self.load_law, f"Pulley({self.id!r}).load_law"))

    @property
    def law(self) -> LoadLaw | None:
        """The law its load follows: the one given, else constant power for a load given as
        power and constant torque for one given as torque; None without a load."""
        if self.power_w is None and self.torque_nm is None:
            return None
        if self.load_law is not None:
            return self.load_law
        return LoadLaw.CONSTANT_POWER if self.power_w is not None else LoadLaw.CONSTANT_TORQUE


@dataclass(frozen=True, slots=True)
class Belt:
    """Belt properties of one loop, per strand. ``None`` where unknown."""

    section: str | None = None
    mass_per_length_kg_m: float | None = None
    axial_stiffness_n: float | None = None
    bending_stiffness_nm2: float | None = None
    friction: float | None = None
    effective_friction: float | None = None
    groove_angle_rad: float | None = None
    strands: int = 1
    height_m: float | None = None
    tensioning: Tensioning = Tensioning.FIXED   # fixed or constant; strings accepted, checked here
    install_tension_n: float | None = None
    length_m: float | None = None
    stock_lengths_m: tuple[float, ...] | None = None
    max_speed_m_s: float | None = None
    min_pitch_diameter_m: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "tensioning", choice(Tensioning, self.tensioning, "Belt.tensioning",
                                                      (Tensioning.FIXED, Tensioning.CONSTANT),
                                                      hint=" (a pulley with role 'tensioner' sets a loop's tension)"))


@dataclass(frozen=True, slots=True)
class Loop:
    """One belt loop, pulleys in travel order.

    ``turns[i]`` is +1 where the belt goes counter-clockwise round pulley ``i`` (so the
    pulley turns counter-clockwise), -1 clockwise. ``crossed[k]`` marks span ``k`` (from
    pulley ``k`` to ``k + 1``) as carrying a half twist.
    """

    id: str
    pulleys: tuple[str, ...]
    turns: tuple[int, ...]
    sides: tuple[Side, ...]
    crossed: tuple[bool, ...]
    belt: Belt = field(default_factory=Belt)

    def __post_init__(self) -> None:
        what = f"Loop({self.id!r}).sides"
        object.__setattr__(self, "sides", tuple(choice(Side, s, what) for s in self.sides))

    @property
    def span_ids(self) -> tuple[str, ...]:
        n = len(self.pulleys)
        return tuple(f"{self.pulleys[k]}-{self.pulleys[(k + 1) % n]}" for k in range(n))


@dataclass(frozen=True, slots=True)
class Drive:
    """Pulleys by id, loops, and shafts (groups of concentric pulley ids)."""

    pulleys: dict[str, Pulley]
    loops: tuple[Loop, ...]
    shafts: tuple[tuple[str, ...], ...] = ()
