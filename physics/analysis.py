"""Run the physics of a whole drive: one entry point, one result object.

``analyse(drive)`` computes every loop's exact geometry, the kinematics and power flow
from the speed source through the shafts, the quasi-static tension round every loop
under its tensioning model, grip at every loaded pulley, hub loads (per pulley and the
resultant on every shared shaft), the lowest install tension (or tensioner setting)
within the grip margin, stock lengths and the field tension check. Every quantity is
evaluated at the operating speed (row 0) and over the speed range (the other rows),
vectorised.

Findings carry their numbers in SI in ``data`` (speeds of the source in rad/s as
``speed_rad_s``, lengths in m, powers in W, forces in N, frequencies in Hz) and a plain
SI message; ``layout.wording`` words them in the trade's units (rpm, mm, kW).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field, replace

import numpy as np
from numpy.typing import NDArray

from . import geometry as geo
from . import tension as ten
from .catalogue import find_section
from .findings import Finding, Severity
from . import spans as sp
from .kinematics import Kinematics, load_terms, load_torque, loop_torques, solve_kinematics
from .length import AdjustResult, nearest_stock, solve_adjust
from .model import Drive, LoadLaw, Loop, Role, Side, SpanEnds, Tensioning, choice
from .resonance import RESONANCE_MARGIN, Band, find_bands
from .tension import GripState

__all__ = ["Options", "LoopMechanics", "SpanDynamics", "TensionRule", "LoopResult", "ShaftLoad", "Results",
           "analyse", "loop_arrays", "DEFAULT_FRICTION", "GRIP_MARGIN", "RANGE_POINTS", "FRICTION_NOTE_ABOVE",
           "NEAR_CRITICAL", "SAG_LIMIT", "GripState", "Tensioning", "SpanEnds"]

#: Flat friction used when neither the spec nor a section gives one: rubber on cast iron
#: or steel, dry (common practice, from memory: 0.25 to 0.35 is used for design).
DEFAULT_FRICTION = 0.3
#: Default grip margin: install tension is sized so that no utilisation exceeds this.
GRIP_MARGIN = 0.8
#: Operating points over the speed range (plus the operating speed itself): the sweep.
RANGE_POINTS = 200
#: v/c above which a span is near its critical speed. Our choice: at v/c = 0.7 the span's
#: frequencies have fallen to about half their value at rest (f ~ 1 - (v/c)**2 with fixed
#: centres, sqrt(1 - (v/c)**2) under a constant tension), so small tension changes move them a lot.
NEAR_CRITICAL = 0.7
#: Sag (square to the chord) over span length above which a finding is raised. Our choice,
#: near the 1/64 in per inch of span (1.6 %) of the common force-deflection check.
SAG_LIMIT = 0.02
#: Span weight m g dh above this fraction of P is worth a note: the tension steps leave it out.
SPAN_WEIGHT_NOTE = 0.05
#: A groove friction derived as mu / sin(groove/2) above this is above the usual design
#: value (0.5123 for V-belts, Shigley ch. 17, from memory): a note says so.
FRICTION_NOTE_ABOVE = 0.6
#: A tensioner arm's lever under this fraction of the idler's radius is suspect.
LEVER_WARN_FRACTION = 0.1
#: A tensioner whose gain (lever or slide projection) is under this fraction of its radius
#: cannot set the belt tension.
GAIN_ZERO_FRACTION = 1e-12
#: A speed range down to standstill: loads held at constant power take, below this share of
#: the nominal speed, their torque at it (our choice; a motor runs at its torque limit there).
STANDSTILL_FRACTION = 0.1
#: Peak tension above this share of the section's durability tension K is a warning. Our
#: choice: there Shigley's durability law (K / T)**b, b about 11 to 12.6, gives a few
#: thousand belt passes, minutes of running.
TENSION_HIGH_FRACTION = 0.5
#: A tensioner wrapping less than this sets its spans' tension through 1 / (2 sin(wrap / 2)),
#: over 5.7 times its force: small errors of angle or force move the tension a lot. Our choice.
TENSIONER_MIN_WRAP_RAD = math.radians(10.0)
#: A driver's given power may differ from what its loads take by this fraction.
POWER_TOLERANCE = 0.02
#: Peak memory (bytes) the moving-beam batches of spans x speeds may take: the sweep and the
#: refinement are solved in chunks of points so a long serpentine stays within it.
SWEEP_BUDGET_BYTES = 100 * 2**20
#: Bytes per point of a beam batch at the most Galerkin terms: the ``(2n, 2n)`` complex
#: Hermitian matrix (16 bytes an entry), with room for eigvalsh's copy and workspace (3x;
#: measured peaks are about 2.5 times the matrix).
_BEAM_POINT_BYTES = 3 * 16 * (2 * sp.GALERKIN_MAX_TERMS) ** 2


@dataclass(frozen=True, slots=True)
class Options:
    """Analysis options (the spec's and the command line's).

    ``span_ends`` takes a :class:`SpanEnds` or its string (``"pinned"``, ``"clamped"``),
    checked here: anything else raises ``ValueError``.
    """

    service_factor: float = 1.0
    grip_margin: float = GRIP_MARGIN
    range_points: int = RANGE_POINTS
    modes: int = 5
    resonance_margin: float = RESONANCE_MARGIN
    near_critical: float = NEAR_CRITICAL
    sag_limit: float = SAG_LIMIT
    span_ends: SpanEnds = SpanEnds.PINNED
    gravity: tuple[float, float] | None = None          # unit vector, drawing plane

    def __post_init__(self) -> None:
        object.__setattr__(self, "span_ends", choice(SpanEnds, self.span_ends, "Options.span_ends"))


@dataclass(frozen=True, slots=True)
class TensionRule:
    """How a loop's tension level is set, so it can be re-evaluated at any speed.

    ``P = level - mean(delta) - m v**2 + delta`` (fixed), ``level - mean(delta) + delta``
    (constant), ``level - (delta[i-1] + delta[i]) / 2 + delta`` (tensioner at ``i``).
    """

    kind: Tensioning
    level: float
    weights: NDArray[np.float64]
    mass_kg_m: float
    index: int = -1

    def apply(self, delta: NDArray[np.float64], speed_m_s: NDArray[np.float64]) -> NDArray[np.float64]:
        """Quasi-static span tensions ``(K, n)`` for tension steps ``delta`` at belt speeds ``speed_m_s``."""
        if self.kind is Tensioning.TENSIONER:
            return ten.quasi_static_tension(delta, self.weights, tensioning=self.kind, install_tension_n=None,
                                            mass_kg_m=self.mass_kg_m, speed_m_s=speed_m_s,
                                            tensioner=ten.Tensioner(self.index), tensioner_p_n=self.level)
        return ten.quasi_static_tension(delta, self.weights, tensioning=self.kind, install_tension_n=self.level,
                                        mass_kg_m=self.mass_kg_m, speed_m_s=speed_m_s)


@dataclass(frozen=True, slots=True)
class SpanDynamics:
    """Moving-span results of one loop, rows as in :class:`LoopMechanics`, columns spans."""

    wave_speed_m_s: NDArray[np.float64]          # (K, n) c = sqrt(T/m)
    downstream_m_s: NDArray[np.float64]          # (K, n) v + c
    upstream_m_s: NDArray[np.float64]            # (K, n) c - v
    v_over_c: NDArray[np.float64]                # (K, n)
    frequencies_hz: NDArray[np.float64]          # (K, n, modes)
    excitations_hz: dict[str, NDArray[np.float64]]   # name -> (K,)
    bands: tuple[Band, ...]
    sag_m: NDArray[np.float64] | None = None          # (n,) at the operating speed, catenary
    static_sag_m: NDArray[np.float64] | None = None   # (n,) at rest, catenary
    parabolic_sag_m: NDArray[np.float64] | None = None          # (n,) w L^2 / 8P
    static_parabolic_sag_m: NDArray[np.float64] | None = None
    sag_ratio: NDArray[np.float64] | None = None          # (n,) sag_m / span length
    static_sag_ratio: NDArray[np.float64] | None = None   # (n,) static_sag_m / span length


@dataclass(frozen=True, slots=True)
class LoopMechanics:
    """Mechanics of one loop. Arrays have a row per operating point: row 0 is the operating
    speed, the other rows the speed range from low to high; columns follow the loop's
    travel order (pulleys, or spans: span ``k`` leaves pulley ``k``).

    Tensions are per strand; torques, powers and hub loads for the whole set.
    ``max_hub_n`` is each pulley's largest hub load over every row (the operating speed and
    the range), reached at the source speed ``max_hub_speed_rad_s`` (NaN where no hub load
    is known).
    """

    tensioning: Tensioning
    source_speed_rad_s: NDArray[np.float64]   # (K,)
    speed_m_s: NDArray[np.float64]            # (K,) belt speed
    omega_rad_s: NDArray[np.float64]          # (K, n) signed
    torque_nm: NDArray[np.float64]            # (K, n)
    power_w: NDArray[np.float64]              # (K, n)
    quasi_static_n: NDArray[np.float64]       # (K, n) per span
    tension_n: NDArray[np.float64]            # (K, n) per span, P + m v^2
    utilisation: NDArray[np.float64]          # (K, n) with the service factor on the loads
    grip_state: NDArray[np.int8]              # (K, n) GripState values
    hub_n: NDArray[np.float64]                # (K, n, 2)
    max_hub_n: NDArray[np.float64]            # (n,) largest |hub_n| over the rows
    max_hub_speed_rad_s: NDArray[np.float64]  # (n,) source speed of that largest load
    static_quasi_static_n: NDArray[np.float64]   # (n,) at rest, no torque
    static_hub_n: NDArray[np.float64]            # (n, 2)
    static_frequency_hz: NDArray[np.float64]     # (n,)
    mu: NDArray[np.float64]                      # (n,) friction used at each pulley
    mass_kg_m: float
    install_tension_n: float | None              # the setting analysed (per strand)
    min_install_tension_n: float | None          # lowest setting within the grip margin
    tensioner_setting: float | None = None       # force (N) or arm torque (N*m) analysed
    min_tensioner_setting: float | None = None
    roles: tuple[str, ...] = ()                  # effective role per pulley
    stock_nearest_m: tuple[float, ...] = ()
    unstretched_length_m: float | None = None
    adjust: tuple[str, AdjustResult] | None = None
    rule: TensionRule | None = None
    dynamics: SpanDynamics | None = None
    peak_tension_n: float | None = None          # tight side + centrifugal + bending, per strand
    peak_tension_pulley: str | None = None       # where it is reached
    bending_tension_n: NDArray[np.float64] | None = None   # (n,) Kb / d, where the section gives Kb

    def grip(self, row: int, i: int) -> GripState:
        """The grip state of pulley ``i`` at operating point ``row``."""
        return GripState(int(self.grip_state[row, i]))


@dataclass(frozen=True, slots=True)
class LoopResult:
    """Results for one loop; ``geometry`` is ``None`` when no belt path exists."""

    loop: Loop
    geometry: geo.LoopGeometry | None
    mechanics: LoopMechanics | None = None


@dataclass(frozen=True, slots=True)
class ShaftLoad:
    """The resultant load of the belts on one shaft of two or more pulleys.

    The vector sum of the hub loads of every pulley on the shaft (every loop that wraps
    them), newtons, in the drive's frame.

    Attributes
    ----------
    pulleys
        The pulley ids on the shaft.
    speed_rad_s
        The shaft's signed angular speed at the operating speed; ``None`` where no speed
        reaches it.
    hub_n
        Resultant per operating point, shape ``(K, 2)`` (row 0 the operating speed);
        ``None`` where no pulley of the shaft has mechanics.
    max_hub_n
        The largest ``|hub_n|`` over every row (NaN where none is known).
    max_hub_speed_rad_s
        The source speed at which it is reached (NaN where none is known).
    static_hub_n
        Resultant at rest, shape ``(2,)``, or ``None``.
    """

    pulleys: tuple[str, ...]
    speed_rad_s: float | None
    hub_n: NDArray[np.float64] | None
    max_hub_n: float
    max_hub_speed_rad_s: float
    static_hub_n: NDArray[np.float64] | None


@dataclass(frozen=True, slots=True)
class Results:
    """Everything computed for a drive; ``shafts`` lists every shaft of two or more pulleys."""

    drive: Drive
    loops: dict[str, LoopResult]
    findings: list[Finding] = field(default_factory=list)
    kinematics: Kinematics | None = None
    options: Options = field(default_factory=Options)
    shafts: tuple[ShaftLoad, ...] = ()


def loop_arrays(drive: Drive, loop: Loop) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Centres ``(n, 2)``, pitch radii ``(n,)`` and turns ``(n,)`` of a loop, travel order."""
    c = np.asarray([drive.pulleys[p].center_m for p in loop.pulleys], dtype=float)
    r = np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys], dtype=float)
    t = np.asarray(loop.turns, dtype=float)
    return c, r, t


def _held_at_constant_power(drive: Drive, kin: Kinematics) -> list[str]:
    """Pulleys of the driven loops whose load (or second driver) is held at constant power."""
    out = []
    for lid in kin.order:
        lk = kin.loops[lid]
        for i, pid in enumerate(lk.loop.pulleys):
            p = drive.pulleys[pid]
            if i != lk.driver and p.power_w is not None and (p.role is Role.DRIVER or p.law is LoadLaw.CONSTANT_POWER):
                out.append(pid)
    return out


def _standstill(drive: Drive, kin: Kinematics, findings: list[Finding]) -> Kinematics:
    """A speed range down to standstill with loads held at constant power: their torque would be
    unbounded, so below :data:`STANDSTILL_FRACTION` of the nominal speed it is taken at that
    speed (a ``standstill-load`` warning), whatever the number of range points."""
    rng, nominal = kin.speed_range_rad_s, kin.source_speed_rad_s
    if rng is None or nominal is None or min(rng) > 0:
        return kin
    held = _held_at_constant_power(drive, kin)
    if not held:
        return kin
    floor = STANDSTILL_FRACTION * nominal
    findings.append(Finding(Severity.WARNING, "standstill-load",
                            f"the speed range reaches standstill, where {', '.join(held)} held at constant "
                            f"power would need an unbounded torque; below {STANDSTILL_FRACTION:.0%} of the "
                            f"nominal speed their torque is taken at that speed",
                            refs=tuple(held), data={"floor_rad_s": floor, "fraction": STANDSTILL_FRACTION,
                                                    "pulleys": held}))
    return replace(kin, torque_floor_rad_s=floor)


def _source_findings(drive: Drive, kin: Kinematics) -> list[Finding]:
    """A speed given on a loaded driven pulley that nothing drives, and a nominal speed outside
    the source's own range."""
    out: list[Finding] = []
    src = drive.pulleys.get(kin.source) if kin.source else None
    if src is None:
        return out
    lk = next((kin.loops[lid] for lid in kin.order if src.id in kin.loops[lid].loop.pulleys), None)
    if lk is not None and src.role is not Role.DRIVER and src.law is not None \
            and lk.loop.pulleys[lk.driver] == src.id:
        out.append(Finding(Severity.ERROR, "driver-missing",
                           f"pulley {src.id} gives the speed and carries a load, but no pulley of loop "
                           f"{lk.loop.id} is marked driver: the load cannot be balanced and is left out; "
                           f"mark the driving pulley role = driver", refs=(src.id, lk.loop.id)))
    rng = kin.speed_range_rad_s
    if rng is not None and kin.source_speed_rad_s is not None and not (
            min(rng) * (1 - 1e-9) <= kin.source_speed_rad_s <= max(rng) * (1 + 1e-9)):
        out.append(Finding(Severity.WARNING, "speed-outside-range",
                           f"pulley {src.id}: its nominal speed lies outside its own speed range",
                           refs=(src.id,), data={"speed_rad_s": kin.source_speed_rad_s,
                                                 "range_rad_s": [float(rng[0]), float(rng[1])]}))
    return out


def _source_speeds(kin: Kinematics, points: int) -> NDArray[np.float64]:
    if kin.source_speed_rad_s is None:
        return np.zeros(1)
    rows = [kin.source_speed_rad_s]
    if kin.speed_range_rad_s is not None:
        lo, hi = kin.speed_range_rad_s
        grid = np.linspace(lo, hi, max(points, 2))
        if lo < kin.torque_floor_rad_s < hi:          # the stated lowest speed is always a point
            grid = np.sort(np.append(grid, kin.torque_floor_rad_s))
        rows.extend(grid.tolist())
    return np.asarray(rows, dtype=float)


def _peak(mag: NDArray[np.float64], w_src: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Largest finite value of each column of ``mag`` ``(K, ...)`` and the source speed of
    its row; NaN for both where a column has no finite value."""
    finite = np.isfinite(mag)
    k = np.argmax(np.where(finite, mag, -np.inf), axis=0)
    top = np.take_along_axis(mag, k[None, ...], axis=0)[0]
    known = finite.any(axis=0)
    return np.where(known, top, np.nan), np.where(known, w_src[k], np.nan)


def _friction(drive: Drive, loop: Loop, findings: list[Finding]) -> NDArray[np.float64]:
    """Friction at each pulley: the groove's for inside contact on a grooved belt, the flat
    one for back contact and flat belts (back contact never wedges)."""
    b = loop.belt
    mu = b.friction
    if mu is None:
        mu = DEFAULT_FRICTION
        findings.append(Finding(Severity.NOTE, "friction-assumed",
                                f"loop {loop.id}: no friction or belt section given; flat friction "
                                f"{DEFAULT_FRICTION} assumed (rubber on cast iron, common practice)",
                                refs=(loop.id,), data={"friction": DEFAULT_FRICTION}))
    out = []
    for pid, side in zip(loop.pulleys, loop.sides):
        p = drive.pulleys[pid]
        groove = p.groove_angle_rad if p.groove_angle_rad is not None else b.groove_angle_rad
        if side is Side.BACK or groove is None:
            out.append(mu)
            continue
        if b.effective_friction is not None:        # the section's (or the spec's) groove friction
            out.append(b.effective_friction)
            continue
        eff = ten.wedge_friction(mu, groove)
        if eff > FRICTION_NOTE_ABOVE:
            findings.append(Finding(Severity.WARNING, "friction-derived",
                                    f"loop {loop.id}, pulley {pid}: groove friction {eff:.3f} derived as "
                                    f"{mu:g} / sin({groove / 2:.4g} rad), above the usual design "
                                    f"value; give effective_friction to set it", refs=(loop.id, pid),
                                    data={"effective_friction": eff, "friction": mu, "groove_angle_rad": groove}))
        out.append(eff)
    return np.asarray(out, dtype=float)


def _tensioner(drive: Drive, loop: Loop, findings: list[Finding]) -> ten.Tensioner | None:
    idx = [i for i, p in enumerate(loop.pulleys) if drive.pulleys[p].role is Role.TENSIONER]
    if not idx:
        return None
    if len(idx) > 1:
        findings.append(Finding(Severity.ERROR, "tensioner-count",
                                f"loop {loop.id}: {len(idx)} tensioners ({', '.join(loop.pulleys[i] for i in idx)}); "
                                f"at most one per loop; the first is used", refs=(loop.id,)))
    i = idx[0]
    p = drive.pulleys[loop.pulleys[i]]
    if p.arm_torque_nm is not None and p.pivot_m is not None:
        return ten.Tensioner(i, pivot_m=p.pivot_m, arm_torque_nm=p.arm_torque_nm)
    return ten.Tensioner(i, force_n=p.force_n, direction=p.force_direction)


def _effective_roles(drive: Drive, kin: Kinematics, loop: Loop) -> tuple[str, ...]:
    lk = kin.loops.get(loop.id)
    roles = [drive.pulleys[p].role.value for p in loop.pulleys]
    if lk is None:
        return tuple(roles)
    roles[lk.driver] = Role.DRIVER.value
    for i, down in enumerate(lk.downstream):
        if down and i != lk.driver and roles[i] == Role.IDLER.value:
            roles[i] = Role.DRIVEN.value
    return tuple(roles)


@dataclass(frozen=True, slots=True)
class _Setting:
    """How a loop is tensioned: the rule, the tension at rest and the settings."""

    rule: TensionRule
    static_P: NDArray[np.float64]
    install: float | None
    min_install: float | None
    setting: float | None = None
    min_setting: float | None = None


def _motion(loop: Loop, kin: Kinematics, torques: dict[str, NDArray[np.float64]], w_src: NDArray[np.float64]
            ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Belt speed ``(K,)``, pulley speeds ``(K, n)`` and torques ``(K, n)``; zero where the
    loop is not driven."""
    n = len(loop.pulleys)
    lk = kin.loops.get(loop.id)
    if lk is not None and loop.id in torques:
        return lk.speed_per_source * w_src, lk.omega_per_source[None, :] * w_src[:, None], torques[loop.id]
    return np.zeros(w_src.size), np.zeros((w_src.size, n)), np.zeros((w_src.size, n))


def _fixed_setting(loop: Loop, weights: NDArray[np.float64], delta_sf: NDArray[np.float64],
                   x_req: NDArray[np.float64], speed: NDArray[np.float64], active: bool,
                   findings: list[Finding]) -> _Setting:
    """Fixed-centre or constant tensioning: the install tension given, else the lowest
    within the grip margin."""
    b = loop.belt
    mass = b.mass_per_length_kg_m or 0.0
    mean_sf = delta_sf @ weights / weights.sum()
    t0_req = x_req + mean_sf + (mass * speed * speed if b.tensioning is Tensioning.FIXED else 0.0)
    min_install = float(max(t0_req.max(), 0.0))
    install = b.install_tension_n
    if install is None and active:
        install = min_install
        findings.append(Finding(Severity.NOTE, "install-tension-assumed",
                                f"loop {loop.id}: no install_tension given; analysed at the lowest "
                                f"setting within the grip margin, {min_install:.1f} N per strand",
                                refs=(loop.id,), data={"install_tension_n": min_install}))
    level = install if install is not None else 0.0
    rule = TensionRule(b.tensioning, level, weights, mass)
    return _Setting(rule, np.full(len(loop.pulleys), level, dtype=float), install, min_install)


def _tensioner_gain(loop: Loop, g: geo.LoopGeometry, c: NDArray[np.float64], r: NDArray[np.float64],
                    tensioner: ten.Tensioner, findings: list[Finding]) -> float:
    """The tensioner's gain (NaN where it cannot set the tension), with its findings."""
    i = tensioner.index
    pid = loop.pulleys[i]
    gain = ten.tensioner_gain(g, c, tensioner)
    arm = tensioner.arm_torque_nm is not None
    if gain <= GAIN_ZERO_FRACTION * r[i]:
        findings.append(Finding(Severity.ERROR, "tensioner-lever" if arm else "tensioner-slide",
                                f"loop {loop.id}: tensioner {pid} " + (
                                    "has its pivot on the line of the belt's force" if arm else
                                    "slides square to the resultant of its spans") +
                                "; it cannot set the belt tension", refs=(loop.id, pid)))
        gain = float("nan")
    if arm:
        e = -g.span_dir[i - 1] + g.span_dir[i]
        lever = gain / max(float(np.hypot(*e)), 1e-300)
        if lever < LEVER_WARN_FRACTION * r[i]:
            findings.append(Finding(Severity.WARNING, "tensioner-lever",
                                    f"loop {loop.id}: tensioner {pid}'s arm acts through a lever of "
                                    f"{lever:.4g} m, under a tenth of the idler's radius; its "
                                    f"force on the belt is ill-defined", refs=(loop.id, pid),
                                    data={"lever_m": lever, "radius_m": float(r[i])}))
    return gain


def _tensioner_setting(loop: Loop, g: geo.LoopGeometry, c: NDArray[np.float64], r: NDArray[np.float64],
                       tensioner: ten.Tensioner, weights: NDArray[np.float64], delta_sf: NDArray[np.float64],
                       x_req: NDArray[np.float64], active: bool, findings: list[Finding]) -> _Setting:
    """A tensioner idler: its force or arm torque given, else the lowest within the grip margin."""
    s = loop.belt.strands
    i = tensioner.index
    pid = loop.pulleys[i]
    gain = _tensioner_gain(loop, g, c, r, tensioner, findings)
    if g.wrap_rad[i] < TENSIONER_MIN_WRAP_RAD:
        findings.append(Finding(Severity.WARNING, "tensioner-wrap",
                                f"loop {loop.id}: tensioner {pid} wraps only {math.degrees(g.wrap_rad[i]):.3g} deg; "
                                f"its force sets the belt tension through 1 / (2 sin(wrap / 2)) = "
                                f"{1 / (2 * math.sin(g.wrap_rad[i] / 2)):.3g} times itself, so small errors of "
                                f"angle or force move the tension a lot", refs=(loop.id, pid),
                                data={"wrap_rad": float(g.wrap_rad[i])}))
    p_req = x_req + 0.5 * (delta_sf[:, i - 1] + delta_sf[:, i])
    min_p = float(max(p_req.max(), 0.0))
    min_setting = min_p * s * gain
    arm = tensioner.arm_torque_nm is not None
    setting = tensioner.arm_torque_nm if arm else tensioner.force_n
    if setting is None and active:
        setting = min_setting
        unit, key = ("N*m", "arm_torque_nm") if arm else ("N", "force_n")
        findings.append(Finding(Severity.NOTE, "install-tension-assumed",
                                f"loop {loop.id}: tensioner {pid} has no force or arm torque; analysed "
                                f"at the lowest setting within the grip margin, {min_setting:.1f} {unit}",
                                refs=(loop.id, pid), data={key: min_setting}))
    p_t = (setting if setting is not None else 0.0) / (s * gain)
    rule = TensionRule(Tensioning.TENSIONER, p_t, weights, loop.belt.mass_per_length_kg_m or 0.0, i)
    return _Setting(rule, np.full(len(loop.pulleys), p_t, dtype=float), p_t, min_p, setting, min_setting)


def _stock(drive: Drive, loop: Loop, g: geo.LoopGeometry, install: float | None, findings: list[Finding]
           ) -> tuple[tuple[float, ...], float, tuple[str, AdjustResult] | None]:
    """Nearest stock lengths, the unstretched path length and the adjustable pulley's position."""
    b = loop.belt
    c, r, _ = loop_arrays(drive, loop)
    stretch = 1.0 + (install / b.axial_stiffness_n if (b.axial_stiffness_n and install) else 0.0)
    unstretched = g.length_m / stretch
    series = b.stock_lengths_m
    if series is None and b.section:
        sec = find_section(b.section)
        series = sec.stock_lengths_m if sec else None
    nearest = tuple(nearest_stock(unstretched, series)) if series else ()
    adj = [(i, p) for i, p in enumerate(loop.pulleys) if drive.pulleys[p].adjust is not None]
    if b.length_m is None or not adj:
        return nearest, unstretched, None
    i, pid = adj[0]
    target = b.length_m * stretch
    res = solve_adjust(c, r, np.asarray(loop.turns, float), i, drive.pulleys[pid].adjust, target,
                       unstretched_m=b.length_m)
    if res is not None:
        return nearest, unstretched, (pid, res)
    findings.append(Finding(Severity.ERROR, "length-unreachable",
                            f"loop {loop.id}: no position of {pid} along its slide gives the "
                            f"{b.length_m:.4f} m belt a path of {target:.4f} m", refs=(loop.id, pid),
                            data={"belt_length_m": b.length_m, "path_length_m": target}))
    return nearest, unstretched, None


def _peak_tension(loop: Loop, r: NDArray[np.float64], T: NDArray[np.float64], findings: list[Finding]
                  ) -> dict[str, object]:
    """The belt's peak tension: the tight side's tension (with its centrifugal part) plus the
    bending tension ``Kb / d`` at that pulley where the section gives ``Kb`` (Shigley's
    Mechanical Engineering Design, 9th ed., Sec. 17-3, from memory); a ``tension-high``
    warning above :data:`TENSION_HIGH_FRACTION` of the section's durability tension ``K``."""
    sec = find_section(loop.belt.section) if loop.belt.section else None
    bending = np.zeros(len(r)) if sec is None or sec.bending_kb_nm is None else sec.bending_kb_nm / (2.0 * r)
    total = np.maximum(np.roll(T, 1, axis=1), T) + bending[None, :]
    if not np.isfinite(total).any():
        return {"bending_tension_n": bending}
    k, i = np.unravel_index(int(np.nanargmax(np.where(np.isfinite(total), total, -np.inf))), total.shape)
    peak, pid = float(total[k, i]), loop.pulleys[i]
    if sec is not None and sec.fatigue_k_n and peak > TENSION_HIGH_FRACTION * sec.fatigue_k_n:
        passes = (sec.fatigue_k_n / peak) ** sec.fatigue_b
        findings.append(Finding(Severity.WARNING, "tension-high",
                                f"loop {loop.id}: peak belt tension {peak:.0f} N at pulley {pid} (tight side, "
                                f"centrifugal and bending) is over {TENSION_HIGH_FRACTION:.0%} of the "
                                f"section's durability tension K = {sec.fatigue_k_n:.0f} N: about "
                                f"{passes:.3g} belt passes of life ({sec.tension_source})",
                                refs=(loop.id, pid), data={"peak_tension_n": peak, "fatigue_k_n": sec.fatigue_k_n,
                                                           "passes": passes}))
    return {"peak_tension_n": peak, "peak_tension_pulley": pid, "bending_tension_n": bending}


def _span_rise_weight(g: geo.LoopGeometry, mass: float, gravity: tuple[float, float] | None) -> NDArray[np.float64]:
    """Each span's weight times its rise, ``m g (z_end - z_start)`` (N; z up, against gravity)."""
    if gravity is None or not mass:
        return np.zeros(len(g.span_length_m))
    up = -np.asarray(gravity, dtype=float)
    return mass * sp.G0 * ((g.span_end_m - g.span_start_m) @ up)


def _end_tensions(g: geo.LoopGeometry, P: NDArray[np.float64], mass: float, gravity: tuple[float, float] | None
                  ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Tensions where the belt arrives at and leaves each pulley, ``(K, n)`` each.

    A span's tension grows with height by its weight per length (cable statics: dT = w dz,
    Irvine, *Cable Structures*, 1981, ch. 1, from memory); with ``P`` the span's mean
    tension, its ends carry ``P -+ w dz / 2``. Where no span's weight over its rise reaches
    :data:`SPAN_WEIGHT_NOTE` of its tension, the spans' mean tensions are used as they are.
    """
    rise = _span_rise_weight(g, mass, gravity)                    # (n,)
    P_start = P_end = P
    with np.errstate(invalid="ignore"):
        heavy = np.any(np.abs(rise)[None, :] > SPAN_WEIGHT_NOTE * np.abs(P))
    if heavy:
        P_start, P_end = P - rise[None, :] / 2.0, P + rise[None, :] / 2.0
    return np.roll(P_end, 1, axis=1), P_start


def _span_frequencies(P: NDArray[np.float64], T: NDArray[np.float64], mass: float, L: NDArray[np.float64],
                      v: NDArray[np.float64], modes: int, *, bending_nm2: float | None, ends: SpanEnds
                      ) -> NDArray[np.float64]:
    """:func:`physics.spans.span_frequencies` over broadcast points, in chunks of at most
    :data:`SWEEP_BUDGET_BYTES` of beam batch (each point is solved alone, so the numbers do
    not depend on the chunks); one :class:`~physics.spans.GalerkinCapWarning` for them all."""
    if not bending_nm2:
        return sp.span_frequencies(P, T, mass, L, v, modes, bending_nm2=bending_nm2, ends=ends)
    Pb, Lb, vb = np.broadcast_arrays(np.asarray(P, float), np.asarray(L, float), np.asarray(v, float))
    shape = Pb.shape
    Pf, Lf, vf = Pb.reshape(-1), Lb.reshape(-1), vb.reshape(-1)
    step = max(1, SWEEP_BUDGET_BYTES // _BEAM_POINT_BYTES)
    out = np.zeros((Pf.size, modes))
    capped, change = 0, []
    for a in range(0, Pf.size, step):
        f, conv = sp.beam_frequencies(Pf[a:a + step], mass, Lf[a:a + step], bending_nm2, vf[a:a + step], modes,
                                      ends=ends, full_output=True)
        out[a:a + step] = f
        if conv.capped.any():
            capped += int(conv.capped.sum())
            change.append(float(np.nanmax(conv.change[conv.capped])))
    if capped:
        cap = max(sp.GALERKIN_MAX_TERMS, 2 * max(modes, 5) + 10)
        warnings.warn(sp.GalerkinCapWarning(
            f"moving beam ({ends.value} ends): {capped} of {Pf.size} points did not converge to "
            f"rtol {sp.BEAM_RTOL:g} within {cap} Galerkin terms (estimated relative error up to "
            f"{max(change):.1e}); pass full_output=True to see which"), stacklevel=2)
    return out.reshape(*shape, modes)


def _loop_mechanics(drive: Drive, loop: Loop, g: geo.LoopGeometry, kin: Kinematics,
                    torques: dict[str, NDArray[np.float64]], w_src: NDArray[np.float64], opts: Options,
                    findings: list[Finding], fed: dict[str, _FedPower] | None = None) -> LoopMechanics:
    c, r, _ = loop_arrays(drive, loop)
    n = len(loop.pulleys)
    b = loop.belt
    m = b.mass_per_length_kg_m
    mass = m or 0.0
    speed, omega, Q = _motion(loop, kin, torques, w_src)
    tensioner = _tensioner(drive, loop, findings)
    # tensions need a setting (install tension, tensioner) or a load to size one for
    given = b.install_tension_n is not None or (tensioner is not None and (
        tensioner.force_n is not None or tensioner.arm_torque_nm is not None))
    active = given or bool(np.any(Q))
    mu = _friction(drive, loop, findings if active else [])
    if m is None and active:
        findings.append(Finding(Severity.NOTE, "mass-unknown",
                                f"loop {loop.id}: no mass per length or section given; centrifugal "
                                f"tension and span frequencies are left out", refs=(loop.id,)))
    weights = ten.span_weights(g)
    delta = ten.tension_steps(Q, r, b.strands)
    delta_sf = ten.tension_steps(Q * opts.service_factor, r, b.strands)
    # lowest level X (P = X + delta) within the grip margin, per operating point
    x_req = ten.required_level(delta_sf, Q * opts.service_factor, r, mu, g.wrap_rad, b.strands, opts.grip_margin)
    if tensioner is None:
        st = _fixed_setting(loop, weights, delta_sf, x_req, speed, active, findings)
    else:
        st = _tensioner_setting(loop, g, c, r, tensioner, weights, delta_sf, x_req, active, findings)
    rule: TensionRule | None = st.rule
    P = st.rule.apply(delta, speed)
    P_sf = st.rule.apply(delta_sf, speed)
    static_P, install, min_install = st.static_P, st.install, st.min_install
    if not active:
        # nothing sets or loads this belt: its tensions are unknown, not zero
        P = P_sf = np.full_like(P, np.nan)
        static_P = np.full(n, np.nan)
        install = min_install = rule = None
    T = P + mass * (speed * speed)[:, None]
    util, state = ten.grip_at_ends(*_end_tensions(g, P_sf, mass, opts.gravity), Q, mu, g.wrap_rad)
    hub = ten.hub_loads(P, g, b.strands)
    max_hub, max_hub_at = _peak(np.hypot(hub[..., 0], hub[..., 1]), w_src)
    static_hub = ten.hub_loads(static_P[None, :], g, b.strands)[0]
    # the field pluck check: the same span model at rest (string, or beam with EI)
    freq = _span_frequencies(static_P, static_P, mass, g.span_length_m, np.zeros(1), 1,
                             bending_nm2=b.bending_stiffness_nm2, ends=opts.span_ends)[:, 0] if m else np.full(n, np.nan)
    freq = np.where(static_P > 0, freq, np.nan)
    nearest, unstretched, adjust = _stock(drive, loop, g, install, findings)
    dynamics = None
    if m and rule is not None:
        dynamics = _dynamics(drive, loop, g, kin, rule, w_src, speed, omega, P, T, static_P, opts, fed)
    return LoopMechanics(
        tensioning=st.rule.kind, source_speed_rad_s=w_src, speed_m_s=speed,
        omega_rad_s=omega, torque_nm=Q, power_w=Q * np.abs(omega), quasi_static_n=P, tension_n=T,
        utilisation=util, grip_state=state, hub_n=hub, max_hub_n=max_hub, max_hub_speed_rad_s=max_hub_at,
        static_quasi_static_n=static_P, static_hub_n=static_hub, static_frequency_hz=freq, mu=mu, mass_kg_m=mass,
        install_tension_n=install, min_install_tension_n=min_install, tensioner_setting=st.setting,
        min_tensioner_setting=st.min_setting, roles=_effective_roles(drive, kin, loop), stock_nearest_m=nearest,
        unstretched_length_m=unstretched, adjust=adjust, rule=rule, dynamics=dynamics,
        **_peak_tension(loop, r, T, findings))


def _excitations(drive: Drive, loop: Loop, omega: NDArray[np.float64], speed: NDArray[np.float64],
                 length_m: float) -> dict[str, NDArray[np.float64]]:
    """Excitation frequencies (Hz) per operating point: each pulley's orders times its
    rotation frequency, and the belt-pass frequency ``v / length``."""
    out: dict[str, NDArray[np.float64]] = {}
    for i, pid in enumerate(loop.pulleys):
        for order in drive.pulleys[pid].orders:
            out[f"{pid} x{order:g}"] = order * np.abs(omega[..., i]) / (2 * math.pi)
    out["belt pass"] = np.abs(speed) / length_m
    return out


@dataclass(frozen=True, slots=True)
class _FedPower:
    """The power a loop's balancing driver takes in, as a function of the source speed ``s``:
    ``a + b wf + c x**2 wf`` with ``wf = max(s, torque floor)`` and ``x = s / nominal``.

    Every load law is one of ``power / w``, ``torque`` and ``torque (w / w_nominal)**2``
    (:func:`physics.kinematics.loop_torques`), and a shaft passes on ``power / w`` of what
    its downstream loops take, so these three terms are closed under the solve from the far
    loops back: each loop's coefficients follow from its own loads and the coefficients of
    the loops it feeds, once per analysis, and a loop is then evaluated at any speed alone.
    """

    a: float
    b: float
    c: float

    def at(self, wf: float, x2: float) -> float:
        """The power (W) at floored source speed ``wf`` and ``x2 = (s / nominal)**2``."""
        return self.a + self.b * wf + self.c * x2 * wf


def _fed_powers(drive: Drive, kin: Kinematics) -> dict[str, _FedPower]:
    """Every reached loop's :class:`_FedPower`, solved once from the far loops back."""
    nominal = kin.source_speed_rad_s or 0.0
    out: dict[str, _FedPower] = {}
    for lid in reversed(kin.order):
        lk = kin.loops[lid]
        pulleys = lk.loop.pulleys
        per_source = np.abs(lk.omega_per_source)
        r = [drive.pulleys[p].radius_m for p in pulleys]
        sa = sb = sc = 0.0
        for i, pid in enumerate(pulleys):
            if i == lk.driver:
                continue
            a, b, c = load_terms(drive.pulleys[pid], float(per_source[i]), nominal)
            for down in lk.downstream[i]:
                f = out[down]
                a, b, c = a - f.a / per_source[i], b - f.b / per_source[i], c - f.c / per_source[i]
            sa, sb, sc = sa + a / r[i], sb + b / r[i], sc + c / r[i]
        k = -r[lk.driver] * float(per_source[lk.driver])
        out[lid] = _FedPower(k * sa, k * sb, k * sc)
    return out


def _loop_torques_at(drive: Drive, kin: Kinematics, lid: str, fed: dict[str, _FedPower], w: float
                     ) -> NDArray[np.float64]:
    """Torques ``(1, n)`` of loop ``lid`` alone at source speed ``w``: its own loads as
    :func:`physics.kinematics.loop_torques` computes them, what its shafts pass on from
    ``fed``. Where the floored speed is not positive (a constant power is unbounded there)
    the whole drive is solved as before."""
    wf = max(w, kin.torque_floor_rad_s)
    nominal = kin.source_speed_rad_s or 0.0
    if not (wf > 0 and math.isfinite(wf)):
        return loop_torques(drive, kin, np.array([w]))[lid]
    lk = kin.loops[lid]
    lp = lk.loop
    n = len(lp.pulleys)
    per_source = np.abs(lk.omega_per_source)
    x2 = (w / nominal) ** 2 if nominal > 0 else 0.0
    w_src, w_floor = np.array([w]), np.array([wf])
    Q = np.zeros((1, n))
    with np.errstate(divide="ignore", invalid="ignore"):
        for i, pid in enumerate(lp.pulleys):
            if i == lk.driver:
                continue
            w_i = per_source[i] * w_floor
            q = load_torque(drive.pulleys[pid], float(per_source[i]), w_src, w_floor, nominal)
            for down in lk.downstream[i]:
                q = q - fed[down].at(wf, x2) / w_i
            Q[:, i] = np.where(np.isfinite(q), q, 0.0)
    r = np.asarray([drive.pulleys[p].radius_m for p in lp.pulleys])
    others = np.delete(np.arange(n), lk.driver)
    Q[:, lk.driver] = -r[lk.driver] * np.sum(Q[:, others] / r[others], axis=1)
    return Q


def _bands(drive: Drive, loop: Loop, g: geo.LoopGeometry, kin: Kinematics, rule: TensionRule,
           w_src: NDArray[np.float64], freqs: NDArray[np.float64], exc: dict[str, NDArray[np.float64]],
           opts: Options, fed: dict[str, _FedPower] | None = None) -> tuple[Band, ...]:
    """Resonance bands over the sweep, refined on the continuous model of this one loop:
    each evaluation solves this loop's torques alone (``fed``: what the loops it drives take,
    :func:`_fed_powers`), so the refinement costs the same in a drive of any number of loops."""
    lk = kin.loops.get(loop.id)
    if lk is None or kin.source_speed_rad_s is None:
        return ()
    if fed is None:
        fed = _fed_powers(drive, kin)
    b = loop.belt
    m = b.mass_per_length_kg_m
    L = g.span_length_m
    r = np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys])

    def evaluate(w: float) -> tuple[NDArray[np.float64], dict[str, float]]:
        Q = _loop_torques_at(drive, kin, loop.id, fed, w)
        v = np.array([lk.speed_per_source * w])
        Pw = rule.apply(ten.tension_steps(Q, r, b.strands), v)
        Tw = Pw + m * v[:, None] ** 2
        f = _span_frequencies(Pw, Tw, m, L[None, :], v[:, None], opts.modes,
                              bending_nm2=b.bending_stiffness_nm2, ends=opts.span_ends)[0]
        ex = _excitations(drive, loop, lk.omega_per_source[None, :] * w, v, g.length_m)
        return f, {k: float(x[0]) for k, x in ex.items()}

    sweep = slice(1, None) if w_src.size > 1 else slice(0, 1)
    return tuple(find_bands(w_src[sweep], freqs[sweep], {k: x[sweep] for k, x in exc.items()}, evaluate,
                            margin=opts.resonance_margin))


def _sags(loop: Loop, g: geo.LoopGeometry, P0: NDArray[np.float64], static_P: NDArray[np.float64],
          gravity: tuple[float, float]) -> dict[str, NDArray[np.float64]]:
    """Sag of every span, running (``P0``) and at rest: the largest deflection from the chord,
    square to it in the drawing plane, under the gravity component across the span (exact
    catenary; the parabola ``w cos(beta) L**2 / (8 P)`` beside it), and over the span's length."""
    chord = g.span_end_m - g.span_start_m
    gv = np.asarray(gravity, dtype=float)
    side = np.array([gv[1], -gv[0]])
    chord_len = np.hypot(chord[:, 0], chord[:, 1])
    cosb = np.abs(chord @ side) / chord_len
    weight = (loop.belt.mass_per_length_kg_m or 0.0) * sp.G0
    # the catenary's largest distance from the chord along gravity, times cos(beta): the same
    # point's distance square to the chord (the deflection a fitter sees)
    sag = sp.catenary_sag(chord, gv, weight, P0 * cosb) * cosb
    static_sag = sp.catenary_sag(chord, gv, weight, static_P * cosb) * cosb
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio, static_ratio = sag / g.span_length_m, static_sag / g.span_length_m
    return {"sag_m": sag, "static_sag_m": static_sag,
            "parabolic_sag_m": sp.parabolic_sag(weight * cosb, chord_len, P0),
            "static_parabolic_sag_m": sp.parabolic_sag(weight * cosb, chord_len, static_P),
            "sag_ratio": ratio, "static_sag_ratio": static_ratio}


def _dynamics(drive: Drive, loop: Loop, g: geo.LoopGeometry, kin: Kinematics, rule: TensionRule,
              w_src: NDArray[np.float64], speed: NDArray[np.float64], omega: NDArray[np.float64],
              P: NDArray[np.float64], T: NDArray[np.float64], static_P: NDArray[np.float64],
              opts: Options, fed: dict[str, _FedPower] | None = None) -> SpanDynamics:
    b = loop.belt
    m = b.mass_per_length_kg_m
    L = g.span_length_m
    c, down, up = sp.wave_speeds(T, m, speed[:, None])
    with np.errstate(invalid="ignore", divide="ignore"):
        voc = np.abs(speed)[:, None] / c
    freqs = _span_frequencies(P, T, m, L[None, :], speed[:, None], opts.modes, bending_nm2=b.bending_stiffness_nm2,
                              ends=opts.span_ends)
    exc = _excitations(drive, loop, omega, speed, g.length_m)
    bands = _bands(drive, loop, g, kin, rule, w_src, freqs, exc, opts, fed)
    sags = _sags(loop, g, P[0], static_P, opts.gravity) if opts.gravity is not None else {}
    return SpanDynamics(c, down, up, voc, freqs, exc, bands, **sags)


def _grip_findings(drive: Drive, loop: Loop, mech: LoopMechanics, opts: Options, findings: list[Finding]) -> None:
    """``slip`` (the first operating point where grip fails), else ``grip-low`` (the
    worst utilisation above the margin), and ``load-missing``, per pulley."""
    w = mech.source_speed_rad_s
    laws = {pid: drive.pulleys[pid].law.value for pid in loop.pulleys
            if drive.pulleys[pid].role is not Role.DRIVER and drive.pulleys[pid].law is not None}
    for i, pid in enumerate(loop.pulleys):
        st = mech.grip_state[:, i]
        u = np.where(np.isnan(mech.utilisation[:, i]), -np.inf, mech.utilisation[:, i])
        if (st >= GripState.SLIP).any():
            k = int(np.argmax(st >= GripState.SLIP))
            state = mech.grip(k, i)
            util = None if state is GripState.SLACK else float(mech.utilisation[k, i])
            what = "its slack side goes slack" if util is None else f"grip utilisation {util:.2f} > 1"
            findings.append(Finding(Severity.ERROR, "slip",
                                    f"loop {loop.id}: pulley {pid} slips: {what} at {w[k]:.1f} rad/s "
                                    f"of the source", refs=(loop.id, pid),
                                    data={"speed_rad_s": float(w[k]), "grip": state.label,
                                          "grip_utilisation": util, "load_laws": laws}))
        elif (u > opts.grip_margin).any():
            k = int(np.argmax(u))
            findings.append(Finding(Severity.WARNING, "grip-low",
                                    f"loop {loop.id}: pulley {pid} uses {u[k]:.2f} of its grip at "
                                    f"{w[k]:.1f} rad/s of the source (margin {opts.grip_margin:g})",
                                    refs=(loop.id, pid),
                                    data={"speed_rad_s": float(w[k]), "grip_utilisation": float(u[k]),
                                          "grip_margin": opts.grip_margin, "load_laws": laws}))
        p = drive.pulleys[pid]
        if (p.role is Role.DRIVEN and p.power_w is None and p.torque_nm is None
                and mech.roles[i] == Role.DRIVEN.value and not np.any(mech.torque_nm[:, i])):
            findings.append(Finding(Severity.WARNING, "load-missing",
                                    f"loop {loop.id}: driven pulley {pid} has no power or torque; "
                                    f"taken as unloaded", refs=(loop.id, pid)))


def _speed_findings(loop: Loop, mech: LoopMechanics, findings: list[Finding]) -> None:
    """``belt-speed``: the belt's top speed over the section's usual limit."""
    vmax = loop.belt.max_speed_m_s
    if vmax is None or mech.speed_m_s.max() <= vmax:
        return
    k = int(np.argmax(mech.speed_m_s))
    w = float(mech.source_speed_rad_s[k])
    findings.append(Finding(Severity.WARNING, "belt-speed",
                            f"loop {loop.id}: belt speed {mech.speed_m_s[k]:.1f} m/s at {w:.1f} rad/s of the "
                            f"source, above the {vmax:g} m/s usual for {loop.belt.section or 'this belt'}",
                            refs=(loop.id,),
                            data={"speed_m_s": float(mech.speed_m_s[k]), "max_speed_m_s": vmax,
                                  "speed_rad_s": w, "section": loop.belt.section}))


def _slack_findings(loop: Loop, mech: LoopMechanics, findings: list[Finding]) -> None:
    """``slack-span``: a span's quasi-static tension reaches zero (at its lowest point)."""
    w = mech.source_speed_rad_s
    for k_span, sid in enumerate(loop.span_ids):
        col = mech.quasi_static_n[:, k_span]
        if np.isnan(col).all() or not (col <= 0).any():
            continue
        k = int(np.argmin(col))
        findings.append(Finding(Severity.ERROR, "slack-span",
                                f"loop {loop.id}: span {sid} goes slack (quasi-static tension "
                                f"{col[k]:.1f} N) at {w[k]:.1f} rad/s of the source",
                                refs=(loop.id, sid),
                                data={"speed_rad_s": float(w[k]), "quasi_static_tension_n": float(col[k])}))


def _loop_findings(drive: Drive, loop: Loop, mech: LoopMechanics, opts: Options, kin: Kinematics,
                   findings: list[Finding]) -> None:
    """Grip, slack, speed and load findings of one loop, each at its worst operating point."""
    if kin.source_speed_rad_s is not None:
        _grip_findings(drive, loop, mech, opts, findings)
        _speed_findings(loop, mech, findings)
    _slack_findings(loop, mech, findings)


def _near_critical_findings(loop: Loop, mech: LoopMechanics, dyn: SpanDynamics, opts: Options,
                            findings: list[Finding]) -> None:
    """``near-critical``: a span's ``v/c`` over the threshold, at its highest, with what its
    string frequencies have fallen to under the loop's own tensioning model."""
    w = mech.source_speed_rad_s
    for k, sid in enumerate(loop.span_ids):
        col = np.where(np.isfinite(dyn.v_over_c[:, k]), dyn.v_over_c[:, k], -np.inf)
        if not (col > opts.near_critical).any() or not (mech.quasi_static_n[:, k] > 0).all():
            continue
        j = int(np.argmax(col))
        # What the string frequencies have fallen to at v/c, against their value at rest
        # under the same setting. Moving string (Wickert and Mote, "Classical vibration
        # analysis of axially moving continua", J. Appl. Mech. 57, 1990, from memory):
        # f_n = n (c^2 - v^2) / (2 L c), c^2 = T / m, T = P + m v^2, so c^2 - v^2 = P / m.
        # - fixed centres (TensionRule: P = level - mean(delta) - m v^2 + delta): T = P + m v^2
        #   keeps its value at rest while P falls by m v^2; c is fixed, and
        #   f_n / f_n(0) = (c^2 - v^2) / c^2 = 1 - (v/c)^2;
        # - constant tension or a tensioner (P = level - ... + delta, no m v^2): P keeps its
        #   value at rest and T grows; f_n = n P / (2 L sqrt(m T)) against n P / (2 L sqrt(m P)):
        #   f_n / f_n(0) = sqrt(P / T) = sqrt(1 - m v^2 / T) = sqrt(1 - (v/c)^2).
        drop = max(1.0 - float(col[j]) ** 2, 0.0)
        fallen = drop if mech.tensioning is Tensioning.FIXED else math.sqrt(drop)
        findings.append(Finding(Severity.WARNING, "near-critical",
                                f"loop {loop.id}: span {sid} runs at {col[j]:.2f} of its wave speed at "
                                f"{w[j]:.1f} rad/s of the source (above {opts.near_critical:g}); its "
                                f"frequencies have fallen to {fallen:.0%} of their value at rest "
                                f"({mech.tensioning.value} tensioning)",
                                refs=(loop.id, sid),
                                data={"v_over_c": float(col[j]), "speed_rad_s": float(w[j]),
                                      "near_critical": opts.near_critical, "frequency_fraction": fallen,
                                      "tensioning": mech.tensioning.value}))


def _resonance_findings(loop: Loop, dyn: SpanDynamics, findings: list[Finding]) -> None:
    """``resonance``: one finding per band, ranked closest relative gap first, then lower
    mode. A band of several equal excitation lines (equal pulleys) names them all and
    refers to each of their pulleys (a band of one line refers to its loop and span only,
    its pulley is in ``data["pulleys"]``). A band where the excitation never meets the span's
    frequency (it only touches an end of the range) claims no crossing: ``speed_rad_s``
    is its closest approach and ``gap`` the relative gap there."""
    sids = loop.span_ids
    ranked = sorted(dyn.bands, key=lambda b: (b.margin_left, b.mode, b.span, b.kind, b.speed_lo, b.excitation))
    for band in ranked:
        sid = sids[band.span]
        names = band.excitations or (band.excitation,)
        # pulley excitations are named "<pulley> x<order>" by _excitations
        pulleys = tuple(dict.fromkeys(p for p in (nm.rsplit(" x", 1)[0] for nm in names) if p in loop.pulleys))
        what = ", ".join(names)
        span_f = (f"{band.frequency_hz:.2f} Hz" if band.kind == "direct"
                  else f"2 x {band.frequency_hz:.2f} Hz")
        if band.crosses:
            where = f"crossing at {band.nearest:.2f} rad/s ({band.frequency_hz:.2f} Hz)"
        else:
            where = (f"closest at {band.nearest:.2f} rad/s, {band.margin_left:.1%} apart (span {span_f}, "
                     f"excitation {band.excitation_hz:.2f} Hz); they do not cross in the speed range")
        findings.append(Finding(
            Severity.WARNING, "resonance",
            f"loop {loop.id}: span {sid} mode {band.mode} meets {what} ({band.kind}) from "
            f"{band.speed_lo:.1f} to {band.speed_hi:.1f} rad/s of the source, {where}",
            refs=(loop.id, sid, *(pulleys if len(names) > 1 else ())),
            data={"speed_rad_s": band.nearest, "speed_range_rad_s": [band.speed_lo, band.speed_hi],
                  "crosses": band.crosses, "gap": band.margin_left,
                  "mode": band.mode, "kind": band.kind, "excitation": what, "excitations": list(names),
                  "pulleys": list(pulleys), "frequency_hz": band.frequency_hz,
                  "excitation_hz": band.excitation_hz, "margin_left": band.margin_left}))


def _sag_findings(loop: Loop, dyn: SpanDynamics, opts: Options, findings: list[Finding]) -> None:
    """``sag``: a span's sag over ``sag_limit`` of its length, running or else at rest."""
    if dyn.sag_m is None or dyn.static_sag_m is None or dyn.sag_ratio is None or dyn.static_sag_ratio is None:
        return
    for k, sid in enumerate(loop.span_ids):
        for state, sag, ratio in (("running", dyn.sag_m[k], dyn.sag_ratio[k]),
                                  ("at rest", dyn.static_sag_m[k], dyn.static_sag_ratio[k])):
            if np.isfinite(sag) and ratio > opts.sag_limit:
                findings.append(Finding(Severity.WARNING, "sag",
                                        f"loop {loop.id}: span {sid} sags {sag:.4g} m {state}, "
                                        f"{ratio:.1%} of its length (limit {opts.sag_limit:.1%})",
                                        refs=(loop.id, sid),
                                        data={"sag_m": float(sag), "sag_ratio": float(ratio), "state": state,
                                              "sag_limit": opts.sag_limit}))
                break


def _span_weight_findings(loop: Loop, g: geo.LoopGeometry, mech: LoopMechanics, gravity: tuple[float, float],
                          findings: list[Finding]) -> None:
    """``span-weight``: a span's weight over its rise above a fraction of its tension."""
    gv = np.asarray(gravity, dtype=float)
    dh = np.abs((g.span_end_m - g.span_start_m) @ gv)
    weight = mech.mass_kg_m * sp.G0 * dh
    for k, sid in enumerate(loop.span_ids):
        P0 = mech.quasi_static_n[0, k]
        if np.isfinite(P0) and P0 > 0 and weight[k] > SPAN_WEIGHT_NOTE * P0:
            findings.append(Finding(Severity.NOTE, "span-weight",
                                    f"loop {loop.id}: span {sid} weighs {weight[k]:.1f} N over its rise, "
                                    f"over {SPAN_WEIGHT_NOTE:.0%} of its tension; the grip check takes the "
                                    f"tensions at its ends with the weight", refs=(loop.id, sid),
                                    data={"weight_n": float(weight[k]), "quasi_static_tension_n": float(P0)}))


def _dynamics_findings(drive: Drive, loop: Loop, g: geo.LoopGeometry, mech: LoopMechanics, opts: Options,
                       findings: list[Finding]) -> None:
    """Near-critical spans, resonance bands and sag of one loop."""
    dyn = mech.dynamics
    if dyn is None:
        return
    _near_critical_findings(loop, mech, dyn, opts, findings)
    _resonance_findings(loop, dyn, findings)
    if opts.gravity is not None and dyn.sag_m is not None:
        _sag_findings(loop, dyn, opts, findings)
        _span_weight_findings(loop, g, mech, opts.gravity, findings)


def _power_findings(drive: Drive, kin: Kinematics, results: dict[str, LoopResult],
                    findings: list[Finding]) -> None:
    if kin.source is None or not kin.order:
        return
    src = drive.pulleys[kin.source]
    for lid in kin.order:
        lr = results[lid]
        mech = lr.mechanics
        lk = kin.loops[lid]
        if mech is None:
            continue
        pid = lr.loop.pulleys[lk.driver]
        p = drive.pulleys[pid]
        delivered = float(mech.power_w[0, lk.driver])
        if p.power_w is not None and abs(delivered - p.power_w) > POWER_TOLERANCE * max(p.power_w, 1e-9):
            findings.append(Finding(Severity.WARNING, "power-mismatch",
                                    f"loop {lid}: driver {pid} is given {p.power_w:.4g} W but its loads "
                                    f"take {delivered:.4g} W", refs=(lid, pid),
                                    data={"given_w": p.power_w, "loads_w": delivered}))
        rating = p.rating_w if p.rating_w is not None else (src.rating_w if pid == src.id else None)
        peak = float(mech.power_w[:, lk.driver].max())
        if rating is not None and peak > rating * (1 + 1e-9):
            findings.append(Finding(Severity.WARNING, "power-mismatch",
                                    f"loop {lid}: driver {pid} must deliver {peak:.4g} W, above its "
                                    f"rating of {rating:.4g} W", refs=(lid, pid),
                                    data={"rating_w": rating, "loads_w": peak}))


def _shaft_load(shaft: tuple[str, ...], kin: Kinematics, loops: dict[str, LoopResult],
                w_src: NDArray[np.float64]) -> ShaftLoad:
    """The vector sum of the hub loads on the pulleys of one shaft, per operating point and at rest."""
    hub = static = None
    speed: float | None = None
    for lid, lr in loops.items():
        mech = lr.mechanics
        if mech is None:
            continue
        for i, pid in enumerate(lr.loop.pulleys):
            if pid not in shaft:
                continue
            hub = mech.hub_n[:, i, :] if hub is None else hub + mech.hub_n[:, i, :]
            static = mech.static_hub_n[i] if static is None else static + mech.static_hub_n[i]
            if speed is None and kin.source is not None and lid in kin.loops:
                speed = float(mech.omega_rad_s[0, i])
    if hub is None:
        return ShaftLoad(shaft, speed, None, math.nan, math.nan, None)
    top, at = _peak(np.hypot(hub[:, 0], hub[:, 1]), w_src)
    return ShaftLoad(shaft, speed, hub, float(top), float(at), static)


def _shaft_loads(drive: Drive, kin: Kinematics, loops: dict[str, LoopResult],
                 w_src: NDArray[np.float64]) -> tuple[ShaftLoad, ...]:
    """A :class:`ShaftLoad` for every shaft of two or more pulleys, in the drive's order."""
    return tuple(_shaft_load(tuple(s), kin, loops, w_src) for s in drive.shafts if len(s) > 1)


def _geometries(drive: Drive, findings: list[Finding]) -> dict[str, geo.LoopGeometry]:
    """Every loop's exact geometry; ``no-tangent`` where two pulleys overlap."""
    geoms: dict[str, geo.LoopGeometry] = {}
    for loop in drive.loops:
        c, r, t = loop_arrays(drive, loop)
        try:
            geoms[loop.id] = geo.loop_geometry(c, r, t)
        except geo.GeometryError as err:
            k = err.span_index or 0
            n = len(loop.pulleys)
            findings.append(Finding(
                Severity.ERROR, "no-tangent",
                f"loop {loop.id}: no belt span can join {loop.pulleys[k]} and "
                f"{loop.pulleys[(k + 1) % n]} with these contact sides (the circles overlap)",
                refs=(loop.id, loop.pulleys[k], loop.pulleys[(k + 1) % n])))
    return geoms


def analyse(drive: Drive, options: Options = Options()) -> Results:
    """Compute the results of ``drive``.

    Parameters
    ----------
    drive
        The drive, SI units.
    options
        Analysis options.

    Returns
    -------
    Results
        Per loop its geometry and mechanics, the resultant load on every shared shaft,
        and the physics findings (numbers in SI in their ``data``).

    Examples
    --------
    >>> from physics.model import Drive, Loop, Pulley, Side
    >>> d = Drive({"A": Pulley("A", (0.0, 0.0), 0.2), "B": Pulley("B", (0.5, 0.0), 0.05)},
    ...           (Loop("L1", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False, False)),))
    >>> round(analyse(d).loops["L1"].geometry.length_m, 6)
    1.830745
    """
    findings: list[Finding] = []
    loops: dict[str, LoopResult] = {}
    geoms = _geometries(drive, findings)
    kin = solve_kinematics(drive)
    findings.extend(kin.findings)
    kin = _standstill(drive, kin, findings)
    findings.extend(_source_findings(drive, kin))
    w_src = _source_speeds(kin, options.range_points)
    torques = loop_torques(drive, kin, w_src) if kin.source is not None and kin.order else {}
    fed = _fed_powers(drive, kin)
    if kin.source is None and drive.loops:
        findings.append(Finding(Severity.NOTE, "no-speed-source",
                                "no pulley gives a speed: speeds, torques and running tensions are left "
                                "out; tensions at rest are reported"))
    for loop in drive.loops:
        g = geoms.get(loop.id)
        mech = None
        if g is not None:
            mech = _loop_mechanics(drive, loop, g, kin, torques, w_src, options, findings, fed)
            _loop_findings(drive, loop, mech, options, kin, findings)
            _dynamics_findings(drive, loop, g, mech, options, findings)
        loops[loop.id] = LoopResult(loop, g, mech)
    _power_findings(drive, kin, loops, findings)
    return Results(drive, loops, findings, kin, options, _shaft_loads(drive, kin, loops, w_src))
