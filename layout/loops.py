"""Build a drive's loops in the drawing's terms: drawn chains and routes from the spec.

Each drawn chain becomes a :class:`LoopRecord` with its pulleys in travel order
(counter-clockwise round the path, or as the speed source turns it), its turning senses,
crossed spans and the face of the belt on each pulley; each ``[route.*]`` of the spec that
no drawn loop already draws becomes one through the named pulleys. Loop ids come from the
path's layer where that layer holds one loop (not layer ``0``), else ``L1``, ``L2``, ...
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from physics import geometry as geo
from physics.catalogue import find_section
from physics.findings import Finding, Severity
from physics.kinematics import Travel
from physics.model import Side

from .read import Drawing, fmt_point as _fmt
from .recognize import Chain, Tolerances
from .spec import BELT_KEYS, BeltSpec, RouteSpec, Spec

__all__ = ["PulleyRecord", "LoopRecord", "build_loops", "apply_travel", "height_du"]

ToMetres = Callable[[Any], tuple[float, float]]






@dataclass(slots=True)
class PulleyRecord:
    """A pulley in the drawing's terms."""

    id: str
    circle: int
    named_by: str                      # "label", "attrib", "spec", "auto"
    values: dict[str, Any] = field(default_factory=dict)
    pitch_radius: float | None = None  # drawing units, where it differs from the circle's


@dataclass(slots=True)
class LoopRecord:
    """A loop in the drawing's terms, pulleys in travel order."""

    id: str
    circles: list[int]
    pulleys: list[str]
    radii: list[float]                 # pitch radius per contact, drawing units
    turns: list[int]
    crossed: list[bool]
    sides: list[Side]
    chain: Chain | None                # None for a loop routed from the spec
    belt: BeltSpec
    findings: list[Finding] = field(default_factory=list)


@dataclass(frozen=True, slots=True)
class LoopContext:
    """What building a loop needs besides its chain or route."""

    d: Drawing
    spec: Spec
    records: dict[str, PulleyRecord]
    id_of_circle: dict[int, str]
    by_id: dict[str, int]
    to_m: ToMetres
    tol: Tolerances
    factor: float


def build_loops(chains: list[Chain], ctx: LoopContext, findings: list[Finding]) -> list[LoopRecord]:
    """Drawn loops, then routed ones; a route for a loop that is drawn is ignored with a warning."""
    loops = [_drawn_loop(lid, ch, ctx) for ch, lid in zip(chains, _loop_ids(chains, ctx.spec))]
    drawn = [(lp.id.lower(), set(lp.circles)) for lp in loops]
    for key, r in ctx.spec.routes.items():
        twin = next((lid for lid, circles in drawn
                     if lid == key or circles == {ctx.by_id[p.lower()] for p in r.pulleys}), None)
        if twin is not None:
            also = "" if twin == key else f" (loop {next(lp.id for lp in loops if lp.id.lower() == twin)!r} runs round the same pulleys)"
            findings.append(Finding(Severity.WARNING, "route-ignored",
                                    f"{ctx.spec.path}: route.{r.loop}: a loop {r.loop!r} is drawn{also}; the "
                                    f"drawn path is analysed and the route ignored", refs=(r.loop,)))
            continue
        lr = _routed_loop(r, ctx, findings)
        if lr is not None:
            loops.append(lr)
    return loops


def _loop_ids(chains: list[Chain], spec: Spec) -> list[str]:
    """A loop's id is its layer's name where that layer holds one loop (not ``0``), else ``L<n>``."""
    layer_count: dict[str, int] = {}
    for ch in chains:
        layer_count[ch.layer.lower()] = layer_count.get(ch.layer.lower(), 0) + 1
    used: set[str] = set()
    named: list[str | None] = []
    for ch in chains:
        lid = ch.layer if (ch.layer != "0" and layer_count[ch.layer.lower()] == 1) else None
        if lid is not None and (lid.lower() in BELT_KEYS or lid.lower() in used):
            lid = None
        if lid is not None:
            used.add(lid.lower())
        named.append(lid)
    out = []
    auto_n = 0
    for lid in named:
        while lid is None:
            auto_n += 1
            cand = f"L{auto_n}"
            if cand.lower() not in used and cand.lower() not in spec.routes:
                lid = cand
        used.add(lid.lower())
        out.append(lid)
    return out


def apply_travel(loops: list[LoopRecord], plan: dict[str, Travel]) -> None:
    """Make each loop travel as the speed source turns it (a plan from :func:`physics.kinematics.travel_plan`)."""
    for lr in loops:
        t = plan.get(lr.id)
        if t is None:
            continue
        if t.reverse:
            _reverse_record(lr)
        _rotate_record(lr, lr.pulleys.index(t.first))


def height_du(b: BeltSpec, factor: float) -> float | None:
    """Belt height in drawing units: the spec's, else its section's, else None."""
    h = b.height
    if h is None and b.section:
        sec = find_section(b.section)
        h = sec.height_m if sec else None
    return None if h is None else h / factor



def _orient(turns: list[int], centers_m: np.ndarray, radii_m: np.ndarray, first_circle_pos: int
            ) -> tuple[bool, list[bool], geo.LoopGeometry]:
    """Whether to reverse the walk so travel is counter-clockwise, and the crossed spans.

    Uncrossed loops travel so that the path's signed area is positive; crossed loops so
    that the first pulley in drawing order is passed counter-clockwise.
    """
    g = geo.loop_geometry(centers_m, radii_m, turns)
    n = len(turns)
    scale = float(np.max(radii_m))
    pairs = geo.crossing_pairs(g.span_start_m, g.span_end_m, tol=1e-9 * scale)
    crossed = [False] * n
    for i, j in pairs:
        crossed[i] = crossed[j] = True
    if any(crossed):
        reverse = turns[first_circle_pos] < 0
    else:
        reverse = geo.path_area(g, radii_m, turns) < 0
    return reverse, crossed, g


def _faces(turns: list[int], crossed: list[bool], radii: np.ndarray, wraps: np.ndarray) -> list[Side]:
    if not any(crossed):
        return [Side.INSIDE if t > 0 else Side.BACK for t in turns]
    best: list[Side] = []
    best_len = -1.0
    for ref in (1, -1):
        f = geo.faces_from_turns(turns, crossed, ref)
        contact = float(np.sum(np.where(f > 0, radii * wraps, 0.0)))
        if contact > best_len + 1e-12:
            best_len = contact
            best = [Side.INSIDE if v > 0 else Side.BACK for v in f]
    return best


def _route_turns(faces: list[int], crossed: list[bool], centers_m: np.ndarray, radii_m: np.ndarray
                 ) -> list[int] | None:
    """Turning senses for a routed loop; None when no simple path exists."""
    if any(crossed):
        sense = faces[0]                       # counter-clockwise at the first pulley
        return [int(v) for v in geo.turns_from_faces(faces, crossed, sense)]
    for sense in (1, -1):
        t = [int(v) for v in geo.turns_from_faces(faces, crossed, sense)]
        try:
            g = geo.loop_geometry(centers_m, radii_m, t)
        except geo.GeometryError:
            continue
        if abs(geo.signed_turning(g, t) - 2 * math.pi * sense) < 1e-6 and not geo.crossing_pairs(
                g.span_start_m, g.span_end_m, tol=1e-9 * float(np.max(radii_m))):
            return t
    return None



def _drawn_loop(lid: str, ch: Chain, ctx: LoopContext) -> LoopRecord:
    """A drawn chain as a loop: counter-clockwise travel, from its driver (or first pulley)."""
    d, spec, records, id_of_circle, to_m, factor = ctx.d, ctx.spec, ctx.records, ctx.id_of_circle, ctx.to_m, ctx.factor
    circ = d.circles
    turns = [w.turn for w in ch.wraps]
    centers = np.asarray([to_m((circ.x[w.circle], circ.y[w.circle])) for w in ch.wraps])
    radii = np.asarray([w.radius for w in ch.wraps]) * factor
    first = min(range(len(ch.wraps)), key=lambda i: (int(circ.order[ch.wraps[i].circle]), ch.wraps[i].circle))
    findings: list[Finding] = list(ch.findings)
    try:
        reverse, crossed, g = _orient(turns, centers, radii, first)
    except geo.GeometryError:
        # reported by physics.analysis with the loop's ids
        reverse, crossed, g = False, [False] * len(turns), None
    if reverse:
        ch = ch.reversed()
    # start at the driver if one is named, else at the first pulley in drawing order
    ids = [id_of_circle[w.circle] for w in ch.wraps]
    start = next((i for i, p in enumerate(ids) if records[p].values.get("role") == "driver"), None)
    if start is None:
        start = min(range(len(ch.wraps)), key=lambda i: (int(circ.order[ch.wraps[i].circle]), ch.wraps[i].circle))
    ch = ch.rotated(start)
    turns = [w.turn for w in ch.wraps]
    ids = [id_of_circle[w.circle] for w in ch.wraps]
    radii_du = [w.radius for w in ch.wraps]
    n = len(turns)
    crossed = [False] * n
    sides = [Side.INSIDE if t > 0 else Side.BACK for t in turns]
    if g is not None:
        g = geo.loop_geometry(np.asarray([to_m((circ.x[w.circle], circ.y[w.circle])) for w in ch.wraps]),
                              np.asarray(radii_du) * factor, turns)
        for i, j in geo.crossing_pairs(g.span_start_m, g.span_end_m,
                                       tol=1e-9 * float(max(radii_du) * factor)):
            crossed[i] = crossed[j] = True
        sides = _faces(turns, crossed, np.asarray(radii_du), g.wrap_rad)
    height = height_du(spec.belt_for(lid), factor)
    if height is not None:
        findings.extend(_back_offsets(ch, sides, d, height, ctx.tol))
    radii_du = [w.radius for w in ch.wraps]
    for w, pid in zip(ch.wraps, ids):
        if w.radius != float(circ.r[w.circle]):
            records[pid].pitch_radius = w.radius
    return LoopRecord(lid, [w.circle for w in ch.wraps], ids, radii_du, turns, crossed, sides, ch,
                      spec.belt_for(lid), findings)


def _back_offsets(ch: Chain, sides: list[Side], d: Drawing, height: float, tol: Tolerances) -> list[Finding]:
    """Back idlers drawn at their outside diameter in the spans-only form.

    Where the drawn spans on both sides of a back pulley are tangent to a circle ``height``
    larger than the one drawn, the pulley is taken as drawn at its outside diameter and its
    pitch radius is that larger radius (a note says so).
    """
    out: list[Finding] = []
    S = d.segments
    circ = d.circles
    n = len(ch.wraps)
    for i, (w, side) in enumerate(zip(ch.wraps, sides)):
        if side is not Side.BACK or w.drawn:
            continue
        c = np.array([circ.x[w.circle], circ.y[w.circle]])
        r = float(circ.r[w.circle])
        dists = []
        for span in (ch.spans[(i - 1) % n], ch.spans[i]):
            lines = [s for s, _ in span.pieces if S.sweep[s] == 0.0]
            if not lines:
                break
            s = lines[-1] if span is ch.spans[(i - 1) % n] else lines[0]
            a = np.array([S.x0[s], S.y0[s]])
            b = np.array([S.x1[s], S.y1[s]])
            u = (b - a) / max(float(np.hypot(*(b - a))), 1e-300)
            dists.append(abs(float(u[0] * (c - a)[1] - u[1] * (c - a)[0])))
        if len(dists) != 2:
            continue
        limit = tol.tangent_offset * r
        if all(abs(dd - r) > limit for dd in dists) and all(abs(dd - (r + height)) <= limit for dd in dists):
            w.radius = r + height
            out.append(Finding(Severity.NOTE, "back-offset",
                               f"the spans at the back pulley at {_fmt(tuple(c))} are tangent to a circle "
                               f"{height:.6g} outside it: taken as drawn at its outside diameter, pitch "
                               f"radius {w.radius:.6g}", at=(float(c[0]), float(c[1]))))
    return out


def _routed_loop(r: RouteSpec, ctx: LoopContext, findings: list[Finding]) -> LoopRecord | None:
    """A ``[route.*]`` through its pulleys in travel order; None (with an error) when impossible."""
    d, spec, by_id, id_of_circle, to_m = ctx.d, ctx.spec, ctx.by_id, ctx.id_of_circle, ctx.to_m
    circ = d.circles
    circles = [by_id[p.lower()] for p in r.pulleys]
    ids = [id_of_circle[c] for c in circles]
    back = {b.lower() for b in r.back}
    faces = [-1 if p.lower() in back else 1 for p in r.pulleys]
    n = len(circles)
    crossed = [False] * n
    pairs = {(a.lower(), b.lower()) for a, b in r.crossed}
    for k in range(n):
        if (r.pulleys[k].lower(), r.pulleys[(k + 1) % n].lower()) in pairs:
            crossed[k] = True
    centers = np.asarray([to_m((circ.x[c], circ.y[c])) for c in circles])
    radii_du = [float(circ.r[c]) for c in circles]
    if sum(crossed) % 2:
        findings.append(Finding(Severity.ERROR, "single-twist",
                                f"{spec.path}: route.{r.loop}: {sum(crossed)} crossed span(s); a belt "
                                f"loop needs an even number of half twists", refs=(r.loop,)))
        return None
    factor = float(np.linalg.norm(centers[1] - centers[0])) / max(
        math.hypot(circ.x[circles[1]] - circ.x[circles[0]], circ.y[circles[1]] - circ.y[circles[0]]), 1e-300)
    turns = _route_turns(faces, crossed, centers, np.asarray(radii_du) * factor)
    if turns is None:
        findings.append(Finding(Severity.ERROR, "route-impossible",
                                f"{spec.path}: route.{r.loop}: no belt path runs round "
                                f"{', '.join(r.pulleys)} in this order with these faces without "
                                f"crossing itself", at=circ.center(circles[0]), refs=(r.loop, *ids)))
        return None
    sides = [Side.INSIDE if f > 0 else Side.BACK for f in faces]
    return LoopRecord(r.loop, circles, ids, radii_du, turns, crossed, sides, None,
                      spec.belt_for(r.loop), [])


def _reverse_record(lr: LoopRecord) -> None:
    """Travel ``lr`` the other way, keeping its first pulley first."""
    n = len(lr.pulleys)
    first = lr.pulleys[0]
    if lr.chain is not None:
        lr.chain = lr.chain.reversed()
    order = list(range(n - 1, -1, -1))
    crossed = [lr.crossed[(n - 2 - i) % n] for i in range(n)]
    lr.circles = [lr.circles[i] for i in order]
    lr.pulleys = [lr.pulleys[i] for i in order]
    lr.radii = [lr.radii[i] for i in order]
    lr.turns = [-lr.turns[i] for i in order]
    lr.sides = [lr.sides[i] for i in order]
    lr.crossed = crossed
    _rotate_record(lr, lr.pulleys.index(first))


def _rotate_record(lr: LoopRecord, k: int) -> None:
    """Start ``lr`` at its pulley number ``k``."""
    if k == 0:
        return
    if lr.chain is not None:
        lr.chain = lr.chain.rotated(k)
    for name in ("circles", "pulleys", "radii", "turns", "sides", "crossed"):
        xs = getattr(lr, name)
        setattr(lr, name, xs[k:] + xs[:k])
