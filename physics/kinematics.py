"""Speeds and power flow through loops and shared shafts.

Loops are solved in order along the loop–shaft graph from the speed source's shaft: in
each later loop the pulley on the incoming shaft is the loop's driver and turns with its
shaft. Every speed is proportional to the source speed, so a loop's kinematics are
ratios; torques follow from the loads and depend on speed only for loads given as power.

Signs: angular speeds are counter-clockwise positive; a torque ``Q`` is positive where
the pulley drives the belt and negative where it takes power out.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import networkx as nx
import numpy as np
from numpy.typing import NDArray

from .findings import Finding, Severity
from .model import Drive, LoadLaw, Loop, Pulley, Role

__all__ = ["LoopKinematics", "Kinematics", "Travel", "loop_shaft_graph", "travel_plan", "solve_kinematics",
           "loop_torques", "load_terms", "load_torque"]


@dataclass(frozen=True, slots=True)
class LoopKinematics:
    """One loop's kinematics, per unit source speed.

    Attributes
    ----------
    driver
        Index (in the loop's travel order) of the balancing driver: the pulley on the
        incoming shaft, or in the source loop the driver without a given power.
    omega_per_source
        Signed angular speed of each pulley per rad/s of source speed, shape ``(n,)``.
    speed_per_source
        Belt speed, m/s per rad/s of source speed.
    downstream
        For each pulley, the loops it passes power on to through its shaft.
    """

    loop: Loop
    driver: int
    omega_per_source: NDArray[np.float64]
    speed_per_source: float
    downstream: tuple[tuple[str, ...], ...]


@dataclass(frozen=True, slots=True)
class Kinematics:
    """Kinematics of a whole drive: the source and every loop reached from it."""

    source: str | None
    source_speed_rad_s: float | None           # magnitude
    source_direction: int
    speed_range_rad_s: tuple[float, float] | None
    loops: dict[str, LoopKinematics] = field(default_factory=dict)
    order: tuple[str, ...] = ()                 # loops from the source outwards
    findings: tuple[Finding, ...] = ()
    #: below this source speed, loads held at constant power take their torque at it (0: none)
    torque_floor_rad_s: float = 0.0


def _shaft_of(drive: Drive) -> dict[str, int]:
    shaft = {}
    k = 0
    for k, s in enumerate(drive.shafts):
        for p in s:
            shaft[p] = k
    nxt = len(drive.shafts)
    for p in drive.pulleys:
        if p not in shaft:
            shaft[p] = nxt
            nxt += 1
    return shaft


def loop_shaft_graph(drive: Drive) -> nx.MultiGraph:
    """The drive's one loop–shaft graph: loop nodes ``("loop", id)``, shaft nodes ``("shaft", k)``.

    An edge joins a loop and a shaft for every pulley of the loop on that shaft (parallel
    edges where a loop touches one shaft twice), with the pulley's id as ``pulley``.
    """
    shaft = _shaft_of(drive)
    g = nx.MultiGraph()
    for lp in drive.loops:
        g.add_node(("loop", lp.id))
        for p in lp.pulleys:
            g.add_edge(("loop", lp.id), ("shaft", shaft[p]), pulley=p)
    return g


@dataclass(frozen=True, slots=True)
class Travel:
    """How a loop must be listed to travel as the speed source turns it: reversed or not, and
    starting from ``first``, its pulley on the shaft it is driven through."""

    reverse: bool
    first: str


def _reached(drive: Drive, g: nx.MultiGraph, src_shaft: int) -> list[tuple[str, int]]:
    """Loops reached from the source's shaft, breadth first, each with the shaft it is reached through."""
    return [(b[1], a[1]) for a, b in nx.bfs_edges(g, ("shaft", src_shaft)) if a[0] == "shaft" and b[0] == "loop"]


def travel_plan(drive: Drive) -> dict[str, Travel]:
    """For each loop the speed source reaches, how to list it so that it travels the way its
    shafts turn (the source's ``direction``, counter-clockwise when not given).

    Empty when no pulley gives a speed or no loop runs on the source's shaft. The plan is
    followed with :func:`solve_kinematics`'s order, so a drive listed by it raises no
    ``direction-conflict``.
    """
    src = next((p for p in drive.pulleys.values() if p.speed_rad_s is not None), None)
    shaft = _shaft_of(drive)
    g = loop_shaft_graph(drive)
    if src is None or ("shaft", shaft[src.id]) not in g:
        return {}
    turning = {shaft[src.id]: src.direction or 1}
    by_id = {lp.id: lp for lp in drive.loops}
    plan: dict[str, Travel] = {}
    for lid, k in _reached(drive, g, shaft[src.id]):
        lp = by_id[lid]
        entry = next(i for i, p in enumerate(lp.pulleys) if shaft[p] == k)
        reverse = lp.turns[entry] != turning[k]
        for p, t in zip(lp.pulleys, lp.turns):
            turning.setdefault(shaft[p], -t if reverse else t)
        plan[lid] = Travel(reverse, lp.pulleys[entry])
    return plan


def _source_problems(drive: Drive, g: nx.MultiGraph, shaft: dict[str, int], src: Pulley,
                     others: list[Pulley]) -> tuple[list[Finding], bool]:
    """``ambiguous-drive`` findings about the source; True when the loops cannot be followed."""
    out: list[Finding] = []
    if ("shaft", shaft[src.id]) not in g:
        out.append(Finding(Severity.ERROR, "ambiguous-drive",
                           f"pulley {src.id} gives the speed but no belt loop runs on it or on its "
                           f"shaft; no loop can be driven from it", refs=(src.id,)))
        return out, True
    comp = nx.node_connected_component(g, ("shaft", shaft[src.id]))
    for other in others:
        if ("shaft", shaft[other.id]) in comp:
            out.append(Finding(Severity.ERROR, "ambiguous-drive",
                               f"pulleys {src.id} and {other.id} both give a speed; one speed "
                               f"source per drive", refs=(src.id, other.id)))
    simple = nx.Graph(g.subgraph(comp))
    if simple.number_of_edges() != g.subgraph(comp).number_of_edges() or not nx.is_forest(simple):
        cyc = [lp.id for lp in drive.loops if ("loop", lp.id) in comp]
        out.append(Finding(Severity.ERROR, "ambiguous-drive",
                           f"loops {', '.join(cyc)} close a cycle through their shafts (or one loop "
                           f"touches a shaft twice); the speeds cannot be followed from the source",
                           refs=tuple(cyc)))
        return out, True
    return out, False


def solve_kinematics(drive: Drive) -> Kinematics:
    """Speeds of every pulley per unit source speed, and the order loops are solved in.

    Findings: ``ambiguous-drive`` (several speed sources in one connected drive, a cycle
    of loops, a loop no shaft links to the source), ``direction-conflict`` (a loop's
    travel order disagrees with the rotation its shaft gives it).
    """
    sources = [p for p in drive.pulleys.values() if p.speed_rad_s is not None]
    if not sources:
        return Kinematics(None, None, 1, None)
    src = sources[0]
    shaft = _shaft_of(drive)
    g = loop_shaft_graph(drive)
    findings, stop = _source_problems(drive, g, shaft, src, sources[1:])
    if stop:
        return Kinematics(src.id, src.speed_rad_s, src.direction or 1, src.speed_range_rad_s,
                          findings=tuple(findings))
    direction = src.direction or 1
    reached = _reached(drive, g, shaft[src.id])
    loops = _loop_speeds(drive, shaft, shaft[src.id], direction, reached, findings)
    order = [lid for lid, _ in reached]
    loops = _with_downstream(loops, order, dict(reached), shaft)
    for lp in drive.loops:
        if lp.id not in loops and ("loop", lp.id) in g:
            findings.append(Finding(Severity.ERROR, "ambiguous-drive",
                                    f"loop {lp.id}: no shaft links it to the speed source {src.id}; give "
                                    f"it its own drive or join it by a shaft", refs=(lp.id,)))
    return Kinematics(src.id, src.speed_rad_s, direction, src.speed_range_rad_s, loops, tuple(order),
                      tuple(findings))


def _loop_speeds(drive: Drive, shaft: dict[str, int], src_shaft: int, direction: int,
                 reached: list[tuple[str, int]], findings: list[Finding]) -> dict[str, LoopKinematics]:
    """Each reached loop's pulley speeds per unit source speed, from the shaft that drives it."""
    omega_shaft: dict[int, float] = {src_shaft: float(direction)}
    by_id = {lp.id: lp for lp in drive.loops}
    loops: dict[str, LoopKinematics] = {}
    for lid, k_in in reached:
        lp = by_id[lid]
        entry = next(i for i, p in enumerate(lp.pulleys) if shaft[p] == k_in)
        w_entry = omega_shaft[k_in]
        r = np.asarray([drive.pulleys[p].radius_m for p in lp.pulleys])
        turns = np.asarray(lp.turns, dtype=float)
        if np.sign(w_entry) != turns[entry]:
            findings.append(Finding(Severity.ERROR, "direction-conflict",
                                    f"loop {lid}: its travel order turns {lp.pulleys[entry]} against "
                                    f"its shaft; reverse the loop's pulley order", refs=(lid,)))
        v = abs(w_entry) * r[entry]
        omega = turns * v / r
        driver = entry
        if k_in == src_shaft:
            cands = [i for i, p in enumerate(lp.pulleys)
                     if drive.pulleys[p].role is Role.DRIVER and drive.pulleys[p].power_w is None
                     and drive.pulleys[p].torque_nm is None]
            if cands:
                driver = cands[0]
        for i, p in enumerate(lp.pulleys):
            omega_shaft.setdefault(shaft[p], float(omega[i]))
        loops[lid] = LoopKinematics(lp, driver, omega, float(v), ())
    return loops


def _with_downstream(loops: dict[str, LoopKinematics], order: list[str], parent_shaft: dict[str, int],
                     shaft: dict[str, int]) -> dict[str, LoopKinematics]:
    """Each loop with, per pulley, the later loops its shaft passes power on to."""
    feeds: dict[int, list[str]] = {}
    for lid in order:
        feeds.setdefault(parent_shaft[lid], []).append(lid)
    out = {}
    for lid in order:
        lk = loops[lid]
        down = tuple(tuple(x for x in feeds.get(shaft[p], []) if x != lid and order.index(x) > order.index(lid))
                     for p in lk.loop.pulleys)
        out[lid] = LoopKinematics(lk.loop, lk.driver, lk.omega_per_source, lk.speed_per_source, down)
    return out


def loop_torques(drive: Drive, kin: Kinematics, source_speed: NDArray[np.float64]
                 ) -> dict[str, NDArray[np.float64]]:
    """Torque on every pulley of every loop (whole set of strands), shape ``(K, n)``.

    ``source_speed`` is an array of source speeds (rad/s, magnitudes). A driven pulley's load
    follows its :class:`~physics.model.LoadLaw` from its value at the nominal speed: constant
    power, constant torque, or torque rising with the square of speed. Loads held at constant
    power (and the power a shaft passes on) below the source speed ``kin.torque_floor_rad_s``
    take their torque at that speed: a constant power at standstill needs an unbounded torque.
    Loops are solved from the far end back to the source, so that each shaft passes on what
    its downstream loops and its own load take.
    """
    w_src = np.asarray(source_speed, dtype=float).reshape(-1)
    w_floor = np.maximum(w_src, kin.torque_floor_rad_s)
    torques: dict[str, NDArray[np.float64]] = {}
    driver_power: dict[str, NDArray[np.float64]] = {}
    for lid in reversed(kin.order):
        lk = kin.loops[lid]
        lp = lk.loop
        n = len(lp.pulleys)
        per_source = np.abs(lk.omega_per_source)
        Q = np.zeros((w_src.size, n))
        with np.errstate(divide="ignore", invalid="ignore"):
            for i, pid in enumerate(lp.pulleys):
                if i == lk.driver:
                    continue
                w_i = per_source[i] * w_floor                      # (K,) floored for power over speed
                q = load_torque(drive.pulleys[pid], float(per_source[i]), w_src, w_floor,
                                kin.source_speed_rad_s or 0.0)
                for down in lk.downstream[i]:
                    q = q - driver_power[down] / w_i
                Q[:, i] = np.where(np.isfinite(q), q, 0.0)
        r = np.asarray([drive.pulleys[p].radius_m for p in lp.pulleys])
        others = np.delete(np.arange(n), lk.driver)
        Q[:, lk.driver] = -r[lk.driver] * np.sum(Q[:, others] / r[others], axis=1)
        # the balancing driver's own shaft may feed later loops too (a jackshaft driver)
        driver_power[lid] = Q[:, lk.driver] * (per_source[lk.driver] * w_floor)
        torques[lid] = Q
    return torques


def load_terms(p: Pulley, per_source: float, nominal: float) -> tuple[float, float, float]:
    """A pulley's own torque (+ driving, - taking power out) as ``a / s_f + b + c (s / nominal)**2``
    at source speed ``s`` (``s_f`` the floored source speed), for a pulley turning
    ``per_source`` times as fast as the source: a second driver's power or torque as given, or a
    driven load by its law from its value at the ``nominal`` source speed, plus bearing drag."""
    if p.role is Role.DRIVER:                   # a second motor: its power or torque as given
        return (p.power_w / per_source, 0.0, 0.0) if p.power_w is not None else (0.0, p.torque_nm or 0.0, 0.0)
    a = b = c = 0.0
    w_nominal = per_source * nominal
    if p.law is not None:
        power = p.power_w if p.power_w is not None else p.torque_nm * w_nominal
        torque = p.torque_nm if p.torque_nm is not None else (p.power_w / w_nominal if w_nominal > 0 else 0.0)
        if p.law is LoadLaw.CONSTANT_POWER:
            a = -power / per_source
        elif p.law is LoadLaw.QUADRATIC and w_nominal > 0:
            c = -torque
        else:
            b = -torque
    if p.drag_torque_nm is not None:
        b -= p.drag_torque_nm
    return a, b, c


def load_torque(p: Pulley, per_source: float, w_src: NDArray[np.float64], w_floor: NDArray[np.float64],
                nominal: float) -> NDArray[np.float64]:
    """:func:`load_terms` evaluated at source speeds ``w_src`` (floored: ``w_floor``)."""
    a, b, c = load_terms(p, per_source, nominal)
    q = np.full(w_src.shape, b)
    if a:
        q = q + a / w_floor
    if c:
        q = q + c * (w_src / nominal) ** 2
    return q
