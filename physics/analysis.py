"""Run the physics of a whole drive: one entry point, one result object.

``analyse(drive)`` computes every loop's exact geometry, the kinematics and power flow
from the speed source through the shafts, the quasi-static tension round every loop
under its tensioning model, grip at every loaded pulley, hub loads, the lowest install
tension (or tensioner setting) within the grip margin, stock lengths and the field
tension check. Every quantity is evaluated at the operating speed (row 0) and over the
speed range (the other rows), vectorised.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from . import geometry as geo
from . import tension as ten
from .catalogue import find_section
from .findings import Finding, Severity
from . import spans as sp
from .kinematics import Kinematics, loop_torques, solve_kinematics
from .length import AdjustResult, nearest_stock, solve_adjust
from .model import Drive, Loop, Role, Side
from .resonance import RESONANCE_MARGIN, Band, find_bands

__all__ = ["Options", "LoopMechanics", "SpanDynamics", "TensionRule", "LoopResult", "Results", "analyse",
           "loop_arrays", "DEFAULT_FRICTION", "GRIP_MARGIN", "RANGE_POINTS", "FRICTION_NOTE_ABOVE",
           "NEAR_CRITICAL", "SAG_LIMIT", "GRIP_STATES"]

#: Flat friction used when neither the spec nor a section gives one: rubber on cast iron
#: or steel, dry (common practice, from memory: 0.25 to 0.35 is used for design).
DEFAULT_FRICTION = 0.3
#: Default grip margin: install tension is sized so that no utilisation exceeds this.
GRIP_MARGIN = 0.8
#: Operating points over the speed range (plus the operating speed itself): the sweep.
RANGE_POINTS = 200
#: v/c above which a span is near its critical speed. Our choice: at v/c = 0.7 the span's
#: frequencies have fallen to about half their value at rest (f ~ 1 - (v/c)**2 under
#: constant tension), so small tension changes move them a lot.
NEAR_CRITICAL = 0.7
#: Sag (along gravity) over span length above which a finding is raised. Our choice,
#: near the 1/64 in per inch of span (1.6 %) of the common force-deflection check.
SAG_LIMIT = 0.02
#: Span weight m g dh above this fraction of P is worth a note: the tension steps leave it out.
SPAN_WEIGHT_NOTE = 0.05
#: A groove friction derived as mu / sin(groove/2) above this is above the usual design
#: value (0.5123 for V-belts, Shigley ch. 17, from memory): a note says so.
FRICTION_NOTE_ABOVE = 0.6
#: A tensioner arm's lever under this fraction of the idler's radius is suspect.
LEVER_WARN_FRACTION = 0.1

GRIP_STATES = ("no-torque", "ok", "slip", "slack")


@dataclass(frozen=True, slots=True)
class Options:
    """Analysis options (the spec's and the command line's)."""

    service_factor: float = 1.0
    grip_margin: float = GRIP_MARGIN
    range_points: int = RANGE_POINTS
    modes: int = 5
    resonance_margin: float = RESONANCE_MARGIN
    near_critical: float = NEAR_CRITICAL
    sag_limit: float = SAG_LIMIT
    span_ends: str = "pinned"
    gravity: tuple[float, float] | None = None          # unit vector, drawing plane


@dataclass(frozen=True, slots=True)
class TensionRule:
    """How a loop's tension level is set, so it can be re-evaluated at any speed.

    ``P = level - mean(delta) - m v**2 + delta`` (fixed), ``level - mean(delta) + delta``
    (constant), ``level - (delta[i-1] + delta[i]) / 2 + delta`` (tensioner at ``i``).
    """

    kind: str
    level: float
    weights: NDArray[np.float64]
    mass_kg_m: float
    index: int = -1

    def apply(self, delta: NDArray[np.float64], speed_m_s: NDArray[np.float64]) -> NDArray[np.float64]:
        if self.kind == "tensioner":
            t = ten.Tensioner(self.index)
            return ten.quasi_static_tension(delta, self.weights, tensioning="tensioner", install_tension_n=None,
                                            mass_kg_m=self.mass_kg_m, speed_m_s=speed_m_s, tensioner=t,
                                            tensioner_p_n=self.level)
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

@dataclass(frozen=True, slots=True)
class LoopMechanics:
    """Mechanics of one loop. Arrays have a row per operating point: row 0 is the operating
    speed, the other rows the speed range from low to high; columns follow the loop's
    travel order (pulleys, or spans: span ``k`` leaves pulley ``k``).

    Tensions are per strand; torques, powers and hub loads for the whole set.
    """

    tensioning: str                      # fixed | constant | tensioner
    source_speed_rad_s: NDArray[np.float64]   # (K,)
    speed_m_s: NDArray[np.float64]            # (K,) belt speed
    omega_rad_s: NDArray[np.float64]          # (K, n) signed
    torque_nm: NDArray[np.float64]            # (K, n)
    power_w: NDArray[np.float64]              # (K, n)
    quasi_static_n: NDArray[np.float64]       # (K, n) per span
    tension_n: NDArray[np.float64]            # (K, n) per span, P + m v^2
    utilisation: NDArray[np.float64]          # (K, n) with the service factor on the loads
    grip_state: NDArray[np.int8]              # (K, n) index into GRIP_STATES
    hub_n: NDArray[np.float64]                # (K, n, 2)
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


@dataclass(frozen=True, slots=True)
class LoopResult:
    """Results for one loop; ``geometry`` is ``None`` when no belt path exists."""

    loop: Loop
    geometry: geo.LoopGeometry | None
    mechanics: LoopMechanics | None = None


@dataclass(frozen=True, slots=True)
class Results:
    """Everything computed for a drive."""

    drive: Drive
    loops: dict[str, LoopResult]
    findings: list[Finding] = field(default_factory=list)
    kinematics: Kinematics | None = None
    options: Options = field(default_factory=Options)


def loop_arrays(drive: Drive, loop: Loop) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Centres ``(n, 2)``, pitch radii ``(n,)`` and turns ``(n,)`` of a loop, travel order."""
    c = np.asarray([drive.pulleys[p].center_m for p in loop.pulleys], dtype=float)
    r = np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys], dtype=float)
    t = np.asarray(loop.turns, dtype=float)
    return c, r, t


def _rpm(w: float) -> float:
    return w * 30.0 / math.pi


def _source_speeds(kin: Kinematics, points: int) -> NDArray[np.float64]:
    if kin.source_speed_rad_s is None:
        return np.zeros(1)
    rows = [kin.source_speed_rad_s]
    if kin.speed_range_rad_s is not None:
        lo, hi = kin.speed_range_rad_s
        rows.extend(np.linspace(lo, hi, max(points, 2)).tolist())
    return np.asarray(rows, dtype=float)


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
                                refs=(loop.id,)))
    out = []
    for pid, side in zip(loop.pulleys, loop.sides):
        p = drive.pulleys[pid]
        groove = p.groove_angle_rad if p.groove_angle_rad is not None else b.groove_angle_rad
        if side is Side.BACK or groove is None:
            out.append(mu)
            continue
        if p.groove_angle_rad is None and b.effective_friction is not None:
            out.append(b.effective_friction)
            continue
        eff = ten.wedge_friction(mu, groove)
        if eff > FRICTION_NOTE_ABOVE:
            findings.append(Finding(Severity.NOTE, "friction-derived",
                                    f"loop {loop.id}, pulley {pid}: groove friction {eff:.3f} derived as "
                                    f"{mu:g} / sin({math.degrees(groove) / 2:g} deg), above the usual design "
                                    f"value; give effective_friction to set it", refs=(loop.id, pid)))
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


def _loop_mechanics(drive: Drive, loop: Loop, g: geo.LoopGeometry, kin: Kinematics,
                    torques: dict[str, NDArray[np.float64]], w_src: NDArray[np.float64], opts: Options,
                    findings: list[Finding]) -> LoopMechanics:
    c, r, _ = loop_arrays(drive, loop)
    n = len(loop.pulleys)
    b = loop.belt
    s = b.strands
    m = b.mass_per_length_kg_m
    mass = m or 0.0
    lk = kin.loops.get(loop.id)
    if lk is not None and loop.id in torques:
        speed = lk.speed_per_source * w_src
        omega = lk.omega_per_source[None, :] * w_src[:, None]
        Q = torques[loop.id]
    else:
        speed = np.zeros(w_src.size)
        omega = np.zeros((w_src.size, n))
        Q = np.zeros((w_src.size, n))
    tensioner = _tensioner(drive, loop, findings)
    # tensions need a setting (install tension, tensioner) or a load to size one for
    given = b.install_tension_n is not None or (tensioner is not None and (
        tensioner.force_n is not None or tensioner.arm_torque_nm is not None))
    active = given or bool(np.any(Q))
    quiet: list[Finding] = []
    mu = _friction(drive, loop, findings if active else quiet)
    if m is None and active:
        findings.append(Finding(Severity.NOTE, "mass-unknown",
                                f"loop {loop.id}: no mass per length or section given; centrifugal "
                                f"tension and span frequencies are left out", refs=(loop.id,)))
    weights = ten.span_weights(g)
    delta = ten.tension_steps(Q, r, s)
    delta_sf = ten.tension_steps(Q * opts.service_factor, r, s)
    tensioning = "tensioner" if tensioner is not None else b.tensioning
    # lowest level X (P = X + delta) within the grip margin, per operating point
    x_req = ten.required_level(delta_sf, Q * opts.service_factor, r, mu, g.wrap_rad, s, opts.grip_margin)
    min_install = None
    min_setting = None
    setting = None
    install = b.install_tension_n
    if tensioner is None:
        mean_sf = delta_sf @ weights / weights.sum()
        t0_req = x_req + mean_sf + (mass * speed * speed if b.tensioning == "fixed" else 0.0)
        min_install = float(max(t0_req.max(), 0.0))
        if install is None and active:
            install = min_install
            findings.append(Finding(Severity.NOTE, "install-tension-assumed",
                                    f"loop {loop.id}: no install_tension given; analysed at the lowest "
                                    f"setting within the grip margin, {min_install:.1f} N per strand",
                                    refs=(loop.id,), data={"install_tension_n": min_install}))
        level = install if install is not None else 0.0
        rule = TensionRule(b.tensioning, level, weights, mass)
        static_P = np.full(n, level, dtype=float)
    else:
        i = tensioner.index
        gain = ten.tensioner_gain(g, c, tensioner)
        pid = loop.pulleys[i]
        if gain <= 1e-12 * r[i]:
            arm = tensioner.arm_torque_nm is not None
            findings.append(Finding(Severity.ERROR, "tensioner-lever" if arm else "tensioner-slide",
                                    f"loop {loop.id}: tensioner {pid} " + (
                                        "has its pivot on the line of the belt's force" if arm else
                                        "slides square to the resultant of its spans") +
                                    "; it cannot set the belt tension", refs=(loop.id, pid)))
            gain = float("nan")
        if tensioner.arm_torque_nm is not None:
            e = -g.span_dir[i - 1] + g.span_dir[i]
            lever = gain / max(float(np.hypot(*e)), 1e-300)
            if lever < LEVER_WARN_FRACTION * r[i]:
                findings.append(Finding(Severity.WARNING, "tensioner-lever",
                                        f"loop {loop.id}: tensioner {pid}'s arm acts through a lever of "
                                        f"{lever * 1e3:.2f} mm, under a tenth of the idler's radius; its "
                                        f"force on the belt is ill-defined", refs=(loop.id, pid),
                                        data={"lever_m": lever}))
        p_req = x_req + 0.5 * (delta_sf[:, i - 1] + delta_sf[:, i])
        min_p = float(max(p_req.max(), 0.0))
        min_setting = min_p * s * gain
        min_install = min_p
        setting = tensioner.arm_torque_nm if tensioner.arm_torque_nm is not None else tensioner.force_n
        if setting is None and active:
            setting = min_setting
            findings.append(Finding(Severity.NOTE, "install-tension-assumed",
                                    f"loop {loop.id}: tensioner {pid} has no force or arm torque; analysed "
                                    f"at the lowest setting within the grip margin, {min_setting:.1f}",
                                    refs=(loop.id, pid)))
        p_t = (setting if setting is not None else 0.0) / (s * gain)
        rule = TensionRule("tensioner", p_t, weights, mass, i)
        static_P = np.full(n, p_t, dtype=float)
        install = p_t
    P = rule.apply(delta, speed)
    P_sf = rule.apply(delta_sf, speed)
    if not active:
        # nothing sets or loads this belt: its tensions are unknown, not zero
        P = np.full_like(P, np.nan)
        P_sf = P
        static_P = np.full(n, np.nan)
        install = min_install = None
        rule = None
    T = P + mass * (speed * speed)[:, None]
    util, state = ten.grip(P_sf, Q, mu, g.wrap_rad)
    hub = ten.hub_loads(P, g, s)
    static_hub = ten.hub_loads(static_P[None, :], g, s)[0]
    # the field pluck check: the same span model at rest (string, or beam with EI)
    freq = sp.span_frequencies(static_P, static_P, mass, g.span_length_m, 0.0, 1, bending_nm2=b.bending_stiffness_nm2,
                               ends=opts.span_ends)[:, 0] if m else np.full(n, np.nan)
    freq = np.where(static_P > 0, freq, np.nan)
    power = Q * np.abs(omega)
    # stock length and the adjustable pulley
    stretch = 1.0 + (install / b.axial_stiffness_n if (b.axial_stiffness_n and install) else 0.0)
    unstretched = g.length_m / stretch
    series = b.stock_lengths_m
    if series is None and b.section:
        sec = find_section(b.section)
        series = sec.stock_lengths_m if sec else None
    nearest = tuple(nearest_stock(unstretched, series)) if series else ()
    adjust = None
    adj = [(i, p) for i, p in enumerate(loop.pulleys) if drive.pulleys[p].adjust is not None]
    if b.length_m is not None and adj:
        i, pid = adj[0]
        target = b.length_m * stretch
        res = solve_adjust(c, r, np.asarray(loop.turns, float), i, drive.pulleys[pid].adjust, target)
        if res is None:
            findings.append(Finding(Severity.ERROR, "length-unreachable",
                                    f"loop {loop.id}: no position of {pid} along its slide gives the "
                                    f"{b.length_m * 1e3:.1f} mm belt a path of {target * 1e3:.1f} mm",
                                    refs=(loop.id, pid)))
        else:
            adjust = (pid, res)
    dynamics = None
    if m and rule is not None:
        dynamics = _dynamics(drive, loop, g, kin, rule, w_src, speed, omega, P, T, static_P, opts)
    return LoopMechanics(tensioning, w_src, speed, omega, Q, power, P, T, util, state, hub, static_P, static_hub,
                         freq, mu, mass, install, min_install, setting, min_setting,
                         _effective_roles(drive, kin, loop), nearest, unstretched, adjust, rule, dynamics)


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


def _dynamics(drive: Drive, loop: Loop, g: geo.LoopGeometry, kin: Kinematics, rule: TensionRule,
              w_src: NDArray[np.float64], speed: NDArray[np.float64], omega: NDArray[np.float64],
              P: NDArray[np.float64], T: NDArray[np.float64], static_P: NDArray[np.float64],
              opts: Options) -> SpanDynamics:
    b = loop.belt
    m = b.mass_per_length_kg_m
    L = g.span_length_m
    c, down, up = sp.wave_speeds(T, m, speed[:, None])
    with np.errstate(invalid="ignore", divide="ignore"):
        voc = np.abs(speed)[:, None] / c
    freqs = sp.span_frequencies(P, T, m, L[None, :], speed[:, None], opts.modes, bending_nm2=b.bending_stiffness_nm2,
                                ends=opts.span_ends)
    exc = _excitations(drive, loop, omega, speed, g.length_m)
    bands: tuple[Band, ...] = ()
    lk = kin.loops.get(loop.id)
    if lk is not None and kin.source_speed_rad_s is not None:
        r = np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys])

        def evaluate(w: float) -> tuple[NDArray[np.float64], dict[str, float]]:
            Q = loop_torques(drive, kin, np.array([w]))[loop.id]
            v = np.array([lk.speed_per_source * w])
            Pw = rule.apply(ten.tension_steps(Q, r, b.strands), v)
            Tw = Pw + m * v[:, None] ** 2
            f = sp.span_frequencies(Pw, Tw, m, L[None, :], v[:, None], opts.modes,
                                    bending_nm2=b.bending_stiffness_nm2, ends=opts.span_ends)[0]
            ex = _excitations(drive, loop, lk.omega_per_source[None, :] * w, v, g.length_m)
            return f, {k: float(x[0]) for k, x in ex.items()}

        sweep = slice(1, None) if w_src.size > 1 else slice(0, 1)
        bands = tuple(find_bands(w_src[sweep], freqs[sweep], {k: x[sweep] for k, x in exc.items()}, evaluate,
                                 margin=opts.resonance_margin))
    sag = static_sag = para = static_para = None
    if opts.gravity is not None:
        chord = g.span_end_m - g.span_start_m
        gv = np.asarray(opts.gravity, dtype=float)
        side = np.array([gv[1], -gv[0]])
        cosb = np.abs(chord @ side) / np.hypot(chord[:, 0], chord[:, 1])
        weight = m * sp.G0
        sag = sp.catenary_sag(chord, gv, weight, P[0] * cosb)
        static_sag = sp.catenary_sag(chord, gv, weight, static_P * cosb)
        chord_len = np.hypot(chord[:, 0], chord[:, 1])
        para = sp.parabolic_sag(weight, chord_len, P[0])
        static_para = sp.parabolic_sag(weight, chord_len, static_P)
    return SpanDynamics(c, down, up, voc, freqs, exc, bands, sag, static_sag, para, static_para)


def _loop_findings(drive: Drive, loop: Loop, mech: LoopMechanics, opts: Options, kin: Kinematics,
                   findings: list[Finding]) -> None:
    """Grip, slack, speed and load findings of one loop, each at its worst operating point."""
    n = len(loop.pulleys)
    w = mech.source_speed_rad_s
    moving = kin.source_speed_rad_s is not None

    def at_rpm(k: int) -> float:
        return _rpm(float(w[k]))

    if moving:
        for i, pid in enumerate(loop.pulleys):
            st = mech.grip_state[:, i]
            u = np.where(np.isnan(mech.utilisation[:, i]), -np.inf, mech.utilisation[:, i])
            if (st >= 2).any():
                k = int(np.argmax(st >= 2))
                what = "its slack side goes slack" if st[k] == 3 else \
                    f"grip utilisation {mech.utilisation[k, i]:.2f} > 1"
                findings.append(Finding(Severity.ERROR, "slip",
                                        f"loop {loop.id}: pulley {pid} slips: {what} at {at_rpm(k):.0f} rpm "
                                        f"of the source", refs=(loop.id, pid),
                                        data={"speed_rpm": at_rpm(k), "grip": GRIP_STATES[st[k]]}))
            elif (u > opts.grip_margin).any():
                k = int(np.argmax(u))
                findings.append(Finding(Severity.WARNING, "grip-low",
                                        f"loop {loop.id}: pulley {pid} uses {u[k]:.2f} of its grip at "
                                        f"{at_rpm(k):.0f} rpm of the source (margin {opts.grip_margin:g})",
                                        refs=(loop.id, pid),
                                        data={"speed_rpm": at_rpm(k), "grip_utilisation": float(u[k])}))
            p = drive.pulleys[pid]
            if (p.role is Role.DRIVEN and p.power_w is None and p.torque_nm is None
                    and mech.roles[i] == Role.DRIVEN.value and not np.any(mech.torque_nm[:, i])):
                findings.append(Finding(Severity.WARNING, "load-missing",
                                        f"loop {loop.id}: driven pulley {pid} has no power or torque; "
                                        f"taken as unloaded", refs=(loop.id, pid)))
        vmax = loop.belt.max_speed_m_s
        if vmax is not None and mech.speed_m_s.max() > vmax:
            k = int(np.argmax(mech.speed_m_s))
            findings.append(Finding(Severity.WARNING, "belt-speed",
                                    f"loop {loop.id}: belt speed {mech.speed_m_s[k]:.1f} m/s at "
                                    f"{at_rpm(k):.0f} rpm of the source, above the {vmax:g} m/s usual for "
                                    f"{loop.belt.section or 'this belt'}", refs=(loop.id,),
                                    data={"speed_m_s": float(mech.speed_m_s[k]), "max_speed_m_s": vmax}))
    for k_span in range(n):
        col = mech.quasi_static_n[:, k_span]
        if np.isnan(col).all():
            continue
        if (col <= 0).any():
            k = int(np.argmin(col))
            sid = f"{loop.pulleys[k_span]}-{loop.pulleys[(k_span + 1) % n]}"
            findings.append(Finding(Severity.ERROR, "slack-span",
                                    f"loop {loop.id}: span {sid} goes slack (quasi-static tension "
                                    f"{col[k]:.1f} N) at {at_rpm(k):.0f} rpm of the source",
                                    refs=(loop.id, sid),
                                    data={"speed_rpm": at_rpm(k), "quasi_static_tension_n": float(col[k])}))


def _dynamics_findings(drive: Drive, loop: Loop, g: geo.LoopGeometry, mech: LoopMechanics, opts: Options,
                       findings: list[Finding]) -> None:
    """Near-critical spans, resonance bands and sag of one loop."""
    dyn = mech.dynamics
    if dyn is None:
        return
    n = len(loop.pulleys)
    sids = [f"{loop.pulleys[k]}-{loop.pulleys[(k + 1) % n]}" for k in range(n)]
    w = mech.source_speed_rad_s
    for k in range(n):
        col = np.where(np.isfinite(dyn.v_over_c[:, k]), dyn.v_over_c[:, k], -np.inf)
        if (col > opts.near_critical).any() and (mech.quasi_static_n[:, k] > 0).all():
            j = int(np.argmax(col))
            findings.append(Finding(Severity.WARNING, "near-critical",
                                    f"loop {loop.id}: span {sids[k]} runs at {col[j]:.2f} of its wave speed at "
                                    f"{_rpm(w[j]):.0f} rpm of the source (above {opts.near_critical:g}); its "
                                    f"frequencies have fallen to {1 - col[j] ** 2:.0%} of their value at rest",
                                    refs=(loop.id, sids[k]),
                                    data={"v_over_c": float(col[j]), "speed_rpm": _rpm(float(w[j]))}))
    for band in dyn.bands:
        sid = sids[band.span]
        findings.append(Finding(
            Severity.WARNING, "resonance",
            f"loop {loop.id}: span {sid} mode {band.mode} meets {band.excitation} ({band.kind}) from "
            f"{_rpm(band.speed_lo):.0f} to {_rpm(band.speed_hi):.0f} rpm of the source, "
            f"crossing at {_rpm(band.crossing):.1f} rpm ({band.frequency_hz:.2f} Hz)",
            refs=(loop.id, sid),
            data={"speed_rpm": _rpm(band.crossing), "speed_range_rpm": [_rpm(band.speed_lo), _rpm(band.speed_hi)],
                  "mode": band.mode, "kind": band.kind, "excitation": band.excitation,
                  "frequency_hz": band.frequency_hz, "margin_left": band.margin_left}))
    if dyn.sag_m is not None and opts.gravity is not None:
        L = g.span_length_m
        for k in range(n):
            for label, sag in (("running", dyn.sag_m[k]), ("at rest", dyn.static_sag_m[k])):
                if np.isfinite(sag) and sag > opts.sag_limit * L[k]:
                    findings.append(Finding(Severity.WARNING, "sag",
                                            f"loop {loop.id}: span {sids[k]} sags {sag * 1e3:.1f} mm {label}, "
                                            f"{sag / L[k]:.1%} of its length (limit {opts.sag_limit:.1%})",
                                            refs=(loop.id, sids[k]),
                                            data={"sag_m": float(sag), "sag_ratio": float(sag / L[k]),
                                                  "state": label}))
                    break
        gv = np.asarray(opts.gravity, dtype=float)
        dh = np.abs((g.span_end_m - g.span_start_m) @ gv)
        weight = mech.mass_kg_m * sp.G0 * dh
        for k in range(n):
            P0 = mech.quasi_static_n[0, k]
            if np.isfinite(P0) and P0 > 0 and weight[k] > SPAN_WEIGHT_NOTE * P0:
                findings.append(Finding(Severity.NOTE, "span-weight",
                                        f"loop {loop.id}: span {sids[k]} weighs {weight[k]:.1f} N over its rise, "
                                        f"over {SPAN_WEIGHT_NOTE:.0%} of its tension; the tension steps leave "
                                        f"span weight out", refs=(loop.id, sids[k])))


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
        if p.power_w is not None and abs(delivered - p.power_w) > 0.02 * max(p.power_w, 1e-9):
            findings.append(Finding(Severity.WARNING, "power-mismatch",
                                    f"loop {lid}: driver {pid} is given {p.power_w / 1e3:.3g} kW but its loads "
                                    f"take {delivered / 1e3:.3g} kW", refs=(lid, pid),
                                    data={"given_w": p.power_w, "loads_w": delivered}))
        rating = p.rating_w if p.rating_w is not None else (src.rating_w if pid == src.id else None)
        peak = float(mech.power_w[:, lk.driver].max())
        if rating is not None and peak > rating * (1 + 1e-9):
            findings.append(Finding(Severity.WARNING, "power-mismatch",
                                    f"loop {lid}: driver {pid} must deliver {peak / 1e3:.3g} kW, above its "
                                    f"rating of {rating / 1e3:.3g} kW", refs=(lid, pid),
                                    data={"rating_w": rating, "loads_w": peak}))


def analyse(drive: Drive, options: Options = Options()) -> Results:
    """Compute the results of ``drive``.

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
    kin = solve_kinematics(drive)
    findings.extend(kin.findings)
    w_src = _source_speeds(kin, options.range_points)
    torques = loop_torques(drive, kin, w_src) if kin.source is not None and kin.order else {}
    if kin.source is None and drive.loops:
        findings.append(Finding(Severity.NOTE, "no-speed-source",
                                "no pulley gives a speed: speeds, torques and running tensions are left "
                                "out; tensions at rest are reported"))
    for loop in drive.loops:
        g = geoms.get(loop.id)
        mech = None
        if g is not None:
            mech = _loop_mechanics(drive, loop, g, kin, torques, w_src, options, findings)
            _loop_findings(drive, loop, mech, options, kin, findings)
            _dynamics_findings(drive, loop, g, mech, options, findings)
        loops[loop.id] = LoopResult(loop, g, mech)
    _power_findings(drive, kin, loops, findings)
    return Results(drive, loops, findings, kin, options)
