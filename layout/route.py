"""From a drawing and its spec to a :class:`physics.model.Drive`.

This is where the drawing's terms (circle indices, drawing units, layers) become the
drive's terms (pulley ids, metres, travel order), in four stages: recognise the drawn
paths (:mod:`layout.recognize`), name the pulleys (:mod:`layout.naming`), build the loops
from the chains and the spec's routes (:mod:`layout.loops`), and convert them to the
physics drive: pulleys in metres in a local frame, concentric pulleys grouped into
shafts, and every loop listed to travel as the speed source turns it
(:func:`physics.kinematics.travel_plan`, on the drive's one loop–shaft graph).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import networkx as nx
import numpy as np
from scipy.spatial import cKDTree

from physics.catalogue import find_section
from physics.findings import Finding, Severity
from physics.kinematics import travel_plan
from physics.model import Belt, Drive, Loop, Pulley, Role

from .errors import FatalInput, NoBeltLoop, SpecError
from .loops import LoopContext, LoopRecord, PulleyRecord, ToMetres, apply_travel, build_loops, height_du
from .naming import Names, name_pulleys, named_circles, texts_in_circles
from .quantity import length_factor
from .read import Drawing
from .recognize import Recognition, Tolerances, recognize_paths
from .spec import BeltSpec, Spec

__all__ = ["Model", "PulleyRecord", "LoopRecord", "build_model"]


@dataclass(slots=True)
class Model:
    """The drawing read as a drive: records in drawing terms and the physics :class:`Drive`."""

    drawing: Drawing
    spec: Spec
    units: str
    factor: float                      # metres per drawing unit
    origin: tuple[float, float]        # drawing units; physics coordinates are relative to it
    tol: Tolerances
    pulleys: dict[str, PulleyRecord]
    loops: list[LoopRecord]
    drive: Drive
    findings: list[Finding]

    def to_drawing(self, p_m: Any) -> tuple[float, float]:
        """A point in the drive's frame (metres) back to drawing units."""
        return (self.origin[0] + float(p_m[0]) / self.factor, self.origin[1] + float(p_m[1]) / self.factor)

    def circle_center(self, i: int) -> tuple[float, float]:
        return self.drawing.circles.center(i)


def build_model(d: Drawing, spec: Spec) -> Model:
    """Read the drive out of a drawing and its spec.

    Raises
    ------
    SpecError
        Bad labels, ids in the spec that match nothing, conflicting names (all listed).
    FatalInput
        The drawing holds no belt loop.
    """
    findings: list[Finding] = list(d.findings)
    problems: list[str] = []
    units, factor = _units(d, spec, findings)
    tol = Tolerances.from_spec(spec.tolerances)
    hits = texts_in_circles(d)
    rec: Recognition = recognize_paths(d, tol=tol, belt_layers=spec.belt_layers,
                                       belt_height=height_du(spec.belt, factor), named=named_circles(d, spec, hits))
    findings.extend(rec.findings)
    names = name_pulleys(d, spec, rec, hits, factor, tol, findings, problems)
    if problems:
        raise SpecError(problems)
    records, id_of_circle = _records(names, spec)
    origin = _origin(d, id_of_circle)

    def to_m(p: Any) -> tuple[float, float]:
        return ((float(p[0]) - origin[0]) * factor, (float(p[1]) - origin[1]) * factor)

    ctx = LoopContext(d, spec, records, id_of_circle, names.by_id, to_m, tol, factor)
    loops = build_loops(rec.chains, ctx, findings)
    problems = [f"{spec.path}: [belt.{key}]: no loop {key!r} in the drawing"
                for key in spec.loop_belts if key not in {lp.id.lower() for lp in loops}]
    if problems:
        raise SpecError(problems)
    if not loops and not any(f.severity is Severity.ERROR for f in findings):
        _refuse_truncated(d)
        raise NoBeltLoop(f"{d.path}: holds no belt loop: no closed path of lines and arcs, "
                         f"polyline or tangent spans wraps two or more circles, and the spec "
                         f"routes none{_skipped(d)}")      # a broken path is a finding, not "no belt"
    _name_open_paths(findings, id_of_circle)
    drive = _to_drive(d, records, loops, to_m, factor, tol, findings)
    for lp in loops:
        findings.extend(lp.findings)
    return Model(d, spec, units, factor, origin, tol, records, loops, drive, findings)


def _skipped(d: Drawing) -> str:
    """What the reader skipped for bad coordinates, as a clause to a no-belt line ('' when nothing)."""
    for f in d.findings:
        if f.code == "bad-coordinates":
            n = f.data.get("skipped", 0)
            return (f" ({n} entit{'y was' if n == 1 else 'ies were'} skipped with coordinates that are not "
                    f"finite or beyond {f.data.get('limit', 0):.0e} drawing units: bad-coordinates)")
    return ""


def _refuse_truncated(d: Drawing) -> None:
    """A drawing cut off in its entities that shows no belt is truncated, not belt-less: what
    was lost may have held it (one fatal line)."""
    for f in d.findings:
        where = f.data.get("truncated_in") if f.code == "recovered" else None
        if where:
            raise FatalInput(f"{d.path}: the file is truncated (it ends inside its {where} section) and "
                             f"what could be read holds no belt loop; expected a complete DXF drawing")


def _units(d: Drawing, spec: Spec, findings: list[Finding]) -> tuple[str, float]:
    """The drawing's unit (the spec's, else the header's, else mm with a note) and metres per unit."""
    if spec.units:
        units = spec.units
    elif d.units:
        units = d.units
    else:
        units = "mm"
        findings.append(Finding(Severity.NOTE, "units-assumed",
                                f"{d.path}: the drawing declares no units ($INSUNITS) and the spec gives "
                                f"none; millimetres assumed"))
    return units, length_factor(units)


def _records(names: Names, spec: Spec) -> tuple[dict[str, PulleyRecord], dict[int, str]]:
    """Pulley records with their values: the label's, then the spec's over them."""
    records: dict[str, PulleyRecord] = {}
    id_of_circle: dict[int, str] = {}
    for circle, (pid, named_by, values) in names.names.items():
        if not pid:
            continue
        vals = dict(values)
        ps = spec.pulleys.get(pid.lower())
        if ps is not None:
            vals.update(ps.given())
        records[pid] = PulleyRecord(pid, circle, named_by, vals)
        id_of_circle[circle] = pid
    return records, id_of_circle


def _origin(d: Drawing, id_of_circle: dict[int, str]) -> tuple[float, float]:
    """The drive's local origin: the mean centre of the named circles (drawing units)."""
    circ = d.circles
    centers = [(circ.x[i], circ.y[i]) for i in id_of_circle]
    if not centers:
        return (0.0, 0.0)
    o = np.mean(np.asarray(centers, dtype=float), axis=0)
    return (float(o[0]), float(o[1]))


def _name_open_paths(findings: list[Finding], id_of_circle: dict[int, str]) -> None:
    """Give each ``path-open`` error the ids of the named pulleys its path touches."""
    for i, f in enumerate(findings):
        if f.code == "path-open" and f.data.get("circles"):
            ids = tuple(id_of_circle[c] for c in f.data["circles"] if c in id_of_circle)
            if ids:
                findings[i] = replace(f, refs=ids)


def _to_drive(d: Drawing, records: dict[str, PulleyRecord], loops: list[LoopRecord], to_m: ToMetres,
              factor: float, tol: Tolerances, findings: list[Finding]) -> Drive:
    """The physics drive: pulleys in metres, shafts, and loops travelling as the source turns them."""
    circ = d.circles
    pulleys: dict[str, Pulley] = {}
    in_loops = {p for lp in loops for p in lp.pulleys}
    for pid, pr in records.items():
        if pid not in in_loops and pr.named_by == "auto":
            continue
        r = pr.pitch_radius if pr.pitch_radius is not None else float(circ.r[pr.circle])
        pulleys[pid] = _physics_pulley(pid, to_m((circ.x[pr.circle], circ.y[pr.circle])), r * factor,
                                       pr.values, to_m)
    shafts = tuple(tuple(s) for s in _shafts(d, records, list(pulleys), tol) if len(s) > 1)
    findings.extend(_direction_note(records))
    drawn = Drive(pulleys, tuple(_physics_loop(lp) for lp in loops), shafts)
    apply_travel(loops, travel_plan(drawn))
    return Drive(pulleys, tuple(_physics_loop(lp) for lp in loops), shafts)


def _physics_loop(lp: LoopRecord) -> Loop:
    return Loop(lp.id, tuple(lp.pulleys), tuple(lp.turns), tuple(lp.sides), tuple(lp.crossed),
                _physics_belt(lp.belt))


def _direction_note(records: dict[str, PulleyRecord]) -> list[Finding]:
    """A ``direction-assumed`` note when the speed source gives no direction."""
    src = next((pid for pid, r in records.items() if r.values.get("speed") is not None), None)
    if src is None or records[src].values.get("direction") in ("ccw", "cw"):
        return []
    return [Finding(Severity.NOTE, "direction-assumed",
                    f"pulley {src} has a speed but no direction; counter-clockwise assumed", refs=(src,))]


def _physics_pulley(pid: str, center_m: tuple[float, float], radius_m: float, v: dict[str, Any],
                    to_m: Any) -> Pulley:
    direction = {"ccw": 1, "cw": -1}.get(v.get("direction", ""), None)
    fd = v.get("force_direction")
    adj = v.get("adjust")
    pivot = v.get("pivot")
    return Pulley(
        id=pid, center_m=center_m, radius_m=radius_m, role=Role(v.get("role", "idler")),
        speed_rad_s=v.get("speed"), direction=direction, speed_range_rad_s=v.get("speed_range"),
        orders=tuple(v.get("orders", (1.0,))), power_w=v.get("power"), torque_nm=v.get("torque"),
        rating_w=v.get("rating"), groove_angle_rad=v.get("groove_angle"),
        drag_torque_nm=v.get("drag_torque"), force_n=v.get("force"),
        force_direction=None if fd is None else (math.cos(fd), math.sin(fd)),
        pivot_m=None if pivot is None else to_m(pivot), arm_torque_nm=v.get("arm_torque"),
        adjust=None if adj is None else (math.cos(adj), math.sin(adj)),
        load_law=v.get("load"))


def _physics_belt(b: BeltSpec) -> Belt:
    """The belt of one loop: the spec's values over its section's."""
    sec = find_section(b.section) if b.section else None
    mu = b.friction if b.friction is not None else (sec.friction if sec else None)
    groove = b.groove_angle if b.groove_angle is not None else (sec.groove_angle_rad if sec else None)
    eff = b.effective_friction
    if eff is None and sec is not None:
        # a section's design groove friction stands, whatever friction or groove is restated;
        # derived as mu / sin(groove / 2) only where no section gives one
        eff = sec.design_effective_friction
    mass = b.mass_per_length
    if mass is None and sec is not None:
        mass = sec.mass_per_length_kg_m
        if mass is None and sec.density_kg_m3 and b.width and b.thickness:
            mass = sec.density_kg_m3 * b.width * b.thickness
    return Belt(
        section=sec.name if sec else None, mass_per_length_kg_m=mass,
        axial_stiffness_n=b.axial_stiffness, bending_stiffness_nm2=b.bending_stiffness,
        friction=mu, effective_friction=eff, groove_angle_rad=groove, strands=b.strands or 1,
        height_m=b.height if b.height is not None else (sec.height_m if sec else None),
        tensioning=b.tensioning or "fixed", install_tension_n=b.install_tension, length_m=b.length,
        stock_lengths_m=b.stock_lengths,
        max_speed_m_s=b.max_speed if b.max_speed is not None else (sec.max_speed_m_s if sec else None),
        min_pitch_diameter_m=b.min_diameter if b.min_diameter is not None else (
            sec.min_pitch_diameter_m if sec else None))


def _shafts(d: Drawing, records: dict[str, PulleyRecord], plist: list[str], tol: Tolerances) -> list[list[str]]:
    """Groups of pulley ids whose centres coincide (within the join tolerance)."""
    if not plist:
        return []
    circ = d.circles
    pts = np.asarray([(circ.x[records[p].circle], circ.y[records[p].circle]) for p in plist])
    rs = np.asarray([circ.r[records[p].circle] for p in plist])
    lim = np.asarray(tol.join_abs(rs, np.abs(pts).max(axis=1)))
    tree = cKDTree(pts)
    g = nx.Graph()
    g.add_nodes_from(range(len(plist)))
    for i, j in tree.query_pairs(r=float(lim.max())):
        if math.hypot(*(pts[i] - pts[j])) <= max(lim[i], lim[j]):
            g.add_edge(i, j)
    groups = [sorted(c) for c in nx.connected_components(g)]
    groups.sort(key=lambda c: c[0])
    return [[plist[i] for i in c] for c in groups]
