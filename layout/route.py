"""From recognised paths, labels and the spec to a :class:`physics.model.Drive`.

This is where the drawing's terms (circle indices, drawing units, layers) become the
drive's terms (pulley ids, metres, travel order). It names pulleys (labels, spec,
automatic ids), names loops, puts each loop in travel order, tells inside from back
contact and crossed spans, groups concentric pulleys into shafts (a networkx graph of
loops and shafts), and routes the loops the spec gives as ``[route.*]``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import networkx as nx
import numpy as np
from scipy.spatial import cKDTree

from physics import geometry as geo
from physics.catalogue import find_section
from physics.findings import Finding, Severity
from physics.model import Belt, Drive, Loop, Pulley, Role, Side

from .errors import FatalInput, SpecError
from .quantity import length_factor
from .read import Drawing
from .recognize import Chain, Recognition, Tolerances, recognize_paths
from .spec import BELT_KEYS, PULLEY_KEYS, BeltSpec, PulleySpec, Spec, parse_label_words, pulley_values, valid_id

__all__ = ["Model", "PulleyRecord", "LoopRecord", "build_model"]



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
    graph: nx.MultiGraph
    findings: list[Finding]

    def to_drawing(self, p_m: Any) -> tuple[float, float]:
        """A point in the drive's frame (metres) back to drawing units."""
        return (self.origin[0] + float(p_m[0]) / self.factor, self.origin[1] + float(p_m[1]) / self.factor)

    def circle_center(self, i: int) -> tuple[float, float]:
        c = self.drawing.circles
        return (float(c.x[i]), float(c.y[i]))


def _fmt(p: Any) -> str:
    return f"({p[0]:.6g}, {p[1]:.6g})"


# --------------------------------------------------------------------------- labels


@dataclass(slots=True)
class _Label:
    id: str
    values: dict[str, Any]
    circle: int
    source: str
    kind: str                          # "label" or "attrib"
    has_keys: bool


def _containing(d: Drawing, x: float, y: float, candidates: np.ndarray | None = None) -> list[int]:
    c = d.circles
    if candidates is None:
        inside = np.flatnonzero(np.hypot(c.x - x, c.y - y) < c.r)
    else:
        inside = candidates[np.hypot(c.x[candidates] - x, c.y[candidates] - y) < c.r[candidates]]
    return sorted(inside.tolist(), key=lambda i: c.r[i])


def _read_labels(d: Drawing, wrapped: set[int], alias: np.ndarray, problems: list[str]) -> list[_Label]:
    labels: list[_Label] = []
    t = d.texts
    c = d.circles
    if len(t) and len(c):
        from shapely import STRtree, box, points
        tree = STRtree(box(c.x - c.r, c.y - c.r, c.x + c.r, c.y + c.r))
        ti, ci = tree.query(points(np.column_stack([t.x, t.y])))
        hits: dict[int, list[int]] = {}
        for a, b in zip(ti.tolist(), ci.tolist()):
            hits.setdefault(a, []).append(b)
        for k, cands in sorted(hits.items()):
            words = t.text[k].split()
            if not words or not valid_id(words[0]) or any("=" not in w for w in words[1:]):
                continue                # prose, a callout, a section mark: not a label
            inside = _containing(d, float(t.x[k]), float(t.y[k]), np.asarray(cands))
            inside = [int(alias[i]) for i in inside]
            if not inside:
                continue
            wrapped_in = [i for i in inside if i in wrapped]
            where = f"label {t.text[k]!r} (TEXT #{t.handle[k]} on {t.layer[k]} at {_fmt((t.x[k], t.y[k]))})"
            has_keys = len(words) > 1
            values = parse_label_words(words[1:], where, problems) if has_keys else {}
            circle = wrapped_in[0] if wrapped_in else inside[0]
            labels.append(_Label(words[0], values, circle, where, "label", has_keys))
    by_owner: dict[str, list[int]] = {}
    if d.attribs:
        for i, o in enumerate(c.owner):
            if o:
                by_owner.setdefault(o, []).append(i)
    for a in d.attribs:
        owned = np.asarray(by_owner.get(a.handle, []), dtype=np.int64)
        if not owned.size:
            continue
        owned_alias = sorted({int(alias[i]) for i in owned}, key=lambda i: c.r[i])
        wrapped_in = [i for i in owned_alias if i in wrapped]
        where = f"attributes of block '{a.block}' (INSERT #{a.handle} at {_fmt((a.x, a.y))})"
        pid = a.tags.get("ID", "").strip()
        items = {k.lower(): v for k, v in a.tags.items() if k.lower() in PULLEY_KEYS and v.strip()}
        if not pid and not items:
            continue
        if pid and not valid_id(pid):
            problems.append(f"{where}: ID = {pid!r}: expected an id starting with a letter, e.g. 'P1'")
            continue
        values = pulley_values(items, where, problems, from_label=True)
        pool = wrapped_in or owned_alias
        containing = [i for i in pool if math.hypot(c.x[i] - a.x, c.y[i] - a.y) < c.r[i]]
        circle = (containing or pool)[0]
        labels.append(_Label(pid, values, circle, where, "attrib", bool(items)))
    return labels


# --------------------------------------------------------------------------- loops


def _height_du(b: BeltSpec, factor: float) -> float | None:
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


# --------------------------------------------------------------------------- build


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
    # units
    if spec.units:
        units = spec.units
    elif d.units:
        units = d.units
    else:
        units = "mm"
        findings.append(Finding(Severity.NOTE, "units-assumed",
                                f"{d.path}: the drawing declares no units ($INSUNITS) and the spec gives "
                                f"none; millimetres assumed"))
    factor = length_factor(units)
    tol = Tolerances.from_spec(spec.tolerances)
    rec: Recognition = recognize_paths(d, tol=tol, belt_layers=spec.belt_layers,
                                       belt_height=_height_du(spec.belt, factor))
    findings.extend(rec.findings)
    alias = rec.circle_alias
    circ = d.circles
    wrapped = {w.circle for ch in rec.chains for w in ch.wraps}

    # ---- names: labels, then spec `at`, then automatic ids, then spec ids by name
    labels = _read_labels(d, wrapped, alias, problems)
    spec_ids = {k for k in spec.pulleys} | {p.lower() for r in spec.routes.values() for p in r.pulleys}
    names: dict[int, tuple[str, str, dict[str, Any]]] = {}     # circle -> (id, named_by, values)
    by_id: dict[str, int] = {}
    for lab in labels:
        if not lab.id:
            if lab.circle in names:
                names[lab.circle][2].update(lab.values)
            else:
                names[lab.circle] = ("", lab.kind, dict(lab.values))
            continue
        if lab.circle not in wrapped and not lab.has_keys and lab.id.lower() not in spec_ids:
            continue                    # "M8" in a bolt hole, a callout in an unwrapped circle
        low = lab.id.lower()
        if lab.circle in names and names[lab.circle][0]:
            prev = names[lab.circle][0]
            if prev.lower() != low:
                findings.append(Finding(Severity.WARNING, "label-conflict",
                                        f"{lab.source} names a pulley already labelled {prev!r}; "
                                        f"ignored", at=tuple(map(float, (circ.x[lab.circle], circ.y[lab.circle]))),
                                        refs=(prev,)))
            continue
        if low in by_id and by_id[low] != lab.circle:
            other = by_id[low]
            problems.append(f"{lab.source}: id {lab.id!r} already names the circle at "
                            f"{_fmt((circ.x[other], circ.y[other]))}; ids must be unique")
            continue
        values = dict(names[lab.circle][2]) if lab.circle in names else {}
        values.update(lab.values)
        names[lab.circle] = (lab.id, lab.kind, values)
        by_id[low] = lab.circle
    spec_at: dict[str, int] = {}
    for key, ps in spec.pulleys.items():
        if ps.at is None:
            continue
        circle = _find_at(d, alias, wrapped, ps, factor, problems)
        if circle is None:
            continue
        if key in by_id and by_id[key] != circle:
            problems.append(f"{ps.source}: at = {list(ps.at)} finds the circle at "
                            f"{_fmt((circ.x[circle], circ.y[circle]))}, but a label gives id {ps.id!r} "
                            f"to another circle")
            continue
        if circle in names and names[circle][0] and names[circle][0].lower() != key:
            findings.append(Finding(Severity.NOTE, "label-overridden",
                                    f"{ps.source} renames the pulley labelled {names[circle][0]!r} "
                                    f"to {ps.id!r}", at=_pt(circ, circle), refs=(ps.id,)))
            by_id.pop(names[circle][0].lower(), None)
        values = dict(names[circle][2]) if circle in names else {}
        names[circle] = (ps.id, "spec", values)
        by_id[key] = circle
        spec_at[key] = circle
    # two small equal circles joined only by tangent lines: a slot, not a drive
    named_circles = set(names) | set(spec_at.values()) | {by_id[p.lower()] for r in spec.routes.values()
                                                           for p in r.pulleys if p.lower() in by_id}
    chains = []
    for ch in rec.chains:
        slot = _possible_slot(ch, d, factor, tol, spec, named_circles)
        if slot is not None:
            findings.append(slot)
        else:
            chains.append(ch)
    rec.chains = chains
    wrapped = {w.circle for ch in rec.chains for w in ch.wraps}
    # automatic ids for wrapped circles without a name, in drawing order
    used = {v.lower() for v in by_id}
    counter = 0
    for circle in sorted(wrapped, key=lambda c: (int(circ.order[c]), c)):
        if circle in names and names[circle][0]:
            continue
        while True:
            counter += 1
            cand = f"P{counter}"
            if cand.lower() not in used:
                break
        values = names[circle][2] if circle in names else {}
        names[circle] = (cand, "auto", values)
        by_id[cand.lower()] = circle
        used.add(cand.lower())
    # spec pulleys named by id
    for key, ps in spec.pulleys.items():
        if key in spec_at:
            continue
        if key not in by_id:
            problems.append(f"{ps.source}: no pulley {ps.id!r} in the drawing (give it a label "
                            f"inside its circle, or at = [x, y])")
            continue
        circle = by_id[key]
        if names[circle][1] == "auto":
            findings.append(Finding(Severity.WARNING, "auto-id-named",
                                    f"{ps.source} names {ps.id!r}, an automatic id given in drawing "
                                    f"order; label the pulley in the drawing so the name cannot move",
                                    at=_pt(circ, circle), refs=(ps.id,)))
    # ---- routes
    drawn_loop_ids = []
    for r in spec.routes.values():
        for pid in r.pulleys:
            if pid.lower() not in by_id:
                problems.append(f"{spec.path}: route.{r.loop}: no pulley {pid!r} in the drawing "
                                f"(label its circle, or give [pulley.{pid}] at = [x, y])")
    if problems:
        raise SpecError(problems)

    # ---- pulley records, with values: labels, then spec over them
    records: dict[str, PulleyRecord] = {}
    id_of_circle: dict[int, str] = {}
    for circle, (pid, named_by, values) in names.items():
        if not pid:
            continue
        vals = dict(values)
        ps = spec.pulleys.get(pid.lower())
        if ps is not None:
            vals.update(ps.given())
        records[pid] = PulleyRecord(pid, circle, named_by, vals)
        id_of_circle[circle] = pid

    # ---- loops from drawn chains
    all_centers = [(circ.x[i], circ.y[i]) for i in id_of_circle]
    origin = tuple(np.mean(np.asarray(all_centers, dtype=float), axis=0)) if all_centers else (0.0, 0.0)
    origin = (float(origin[0]), float(origin[1]))

    def to_m(p: Any) -> tuple[float, float]:
        return ((float(p[0]) - origin[0]) * factor, (float(p[1]) - origin[1]) * factor)

    loops: list[LoopRecord] = []
    layer_count: dict[str, int] = {}
    for ch in rec.chains:
        layer_count[ch.layer.lower()] = layer_count.get(ch.layer.lower(), 0) + 1
    used_loop_ids: set[str] = set()
    pending: list[tuple[Chain, str | None]] = []
    for ch in rec.chains:
        lid = ch.layer if (ch.layer != "0" and layer_count[ch.layer.lower()] == 1) else None
        if lid is not None and (lid.lower() in BELT_KEYS or lid.lower() in used_loop_ids):
            lid = None
        if lid is not None:
            used_loop_ids.add(lid.lower())
        pending.append((ch, lid))
    auto_n = 0
    for ch, lid in pending:
        if lid is None:
            while True:
                auto_n += 1
                lid = f"L{auto_n}"
                if lid.lower() not in used_loop_ids and lid.lower() not in spec.routes:
                    break
            used_loop_ids.add(lid.lower())
        loops.append(_drawn_loop(lid, ch, d, id_of_circle, records, to_m, spec, tol, factor))
        drawn_loop_ids.append(lid.lower())
    for key, r in spec.routes.items():
        if key in drawn_loop_ids:
            findings.append(Finding(Severity.WARNING, "route-ignored",
                                    f"{spec.path}: route.{r.loop}: a loop {r.loop!r} is drawn; the drawn "
                                    f"path is analysed and the route ignored", refs=(r.loop,)))
            continue
        lr = _routed_loop(r, d, by_id, id_of_circle, to_m, spec, findings)
        if lr is not None:
            loops.append(lr)
    for key in spec.loop_belts:
        if key not in {lp.id.lower() for lp in loops}:
            problems.append(f"{spec.path}: [belt.{key}]: no loop {key!r} in the drawing")
    if problems:
        raise SpecError(problems)
    if not loops:
        if any(f.severity is Severity.ERROR for f in findings):
            pass                        # a broken path is a finding, not "no belt"
        else:
            raise FatalInput(f"{d.path}: holds no belt loop: no closed path of lines and arcs, "
                             f"polyline or tangent spans wraps two or more circles, and the spec "
                             f"routes none")

    # ---- physics drive
    pulleys: dict[str, Pulley] = {}
    in_loops = {p for lp in loops for p in lp.pulleys}
    for pid, pr in records.items():
        if pid not in in_loops and pr.named_by == "auto":
            continue
        r = pr.pitch_radius if pr.pitch_radius is not None else float(circ.r[pr.circle])
        pulleys[pid] = _physics_pulley(pid, to_m((circ.x[pr.circle], circ.y[pr.circle])), r * factor,
                                       pr.values, to_m)
    plist = [p for p in pulleys]
    shafts = _shafts(d, records, plist, tol)
    findings.extend(_travel_from_speed_source(loops, records, shafts))
    ploops = []
    for lp in loops:
        ploops.append(Loop(lp.id, tuple(lp.pulleys), tuple(lp.turns), tuple(lp.sides),
                           tuple(lp.crossed), _physics_belt(lp.belt)))
    drive = Drive(pulleys, tuple(ploops), tuple(tuple(s) for s in shafts if len(s) > 1))
    graph = _loop_shaft_graph(drive, shafts)
    for lp in loops:
        findings.extend(lp.findings)
    return Model(d, spec, units, factor, origin, tol, records, loops, drive, graph, findings)


#: A slot's circles are under this diameter (design, "Geometry rules").
SLOT_MAX_DIAMETER_M = 0.020


def _possible_slot(ch: Chain, d: Drawing, factor: float, tol: Tolerances, spec: Spec,
                   named: set[int]) -> Finding | None:
    """A ``possible-slot`` note when ``ch`` looks like a slot outline rather than a belt."""
    if len(ch.wraps) != 2 or any(w.drawn for w in ch.wraps):
        return None
    a, b = ch.wraps[0].circle, ch.wraps[1].circle
    circ = d.circles
    ra, rb = float(circ.r[a]), float(circ.r[b])
    if abs(ra - rb) > tol.join * min(ra, rb) or 2 * ra * factor >= SLOT_MAX_DIAMETER_M:
        return None
    if math.hypot(circ.x[a] - circ.x[b], circ.y[a] - circ.y[b]) >= 2 * (2 * ra):
        return None
    if a in named or b in named:
        return None
    from .recognize import layer_matches
    if spec.belt_layers and layer_matches(ch.layer, spec.belt_layers):
        return None
    return Finding(Severity.NOTE, "possible-slot",
                   f"two {2 * ra:.4g}-unit circles at {_fmt(_pt(circ, a))} and {_fmt(_pt(circ, b))} joined "
                   f"by tangent lines look like a slot, not a belt drive; label them or name them in the "
                   f"spec if they are pulleys", at=_pt(circ, a))


def _pt(circ: Any, i: int) -> tuple[float, float]:
    return (float(circ.x[i]), float(circ.y[i]))


def _find_at(d: Drawing, alias: np.ndarray, wrapped: set[int], ps: PulleySpec, factor: float,
             problems: list[str]) -> int | None:
    c = d.circles
    x, y = ps.at  # type: ignore[misc]
    if not len(c):
        problems.append(f"{ps.source}: at = [{x:g}, {y:g}]: the drawing has no circles")
        return None
    dist = np.hypot(c.x - x, c.y - y)
    lim = np.maximum(1e-3 * c.r, 1e-9 * max(abs(x), abs(y)))
    hits = sorted({int(alias[i]) for i in np.flatnonzero(dist <= lim)})
    if ps.diameter is not None and hits:
        # diameter in SI; compare in drawing units via the circle radii ratio
        hits_d = [i for i in hits if abs(2 * c.r[i] - ps.diameter / factor) <= 1e-3 * 2 * c.r[i]]
        if not hits_d:
            problems.append(f"{ps.source}: no circle of diameter {ps.diameter:g} m at [{x:g}, {y:g}]")
            return None
        hits = hits_d
    if not hits:
        near = int(np.argmin(dist))
        problems.append(f"{ps.source}: at = [{x:g}, {y:g}]: no circle centred there (nearest centre "
                        f"{_fmt((c.x[near], c.y[near]))})")
        return None
    if len(hits) > 1:
        w = [i for i in hits if i in wrapped]
        if len(w) == 1:
            return w[0]
        problems.append(f"{ps.source}: at = [{x:g}, {y:g}]: {len(hits)} concentric circles there; add "
                        f"diameter = \"...\" to pick one")
        return None
    return hits[0]


def _drawn_loop(lid: str, ch: Chain, d: Drawing, id_of_circle: dict[int, str],
                records: dict[str, PulleyRecord], to_m: Any, spec: Spec, tol: Tolerances,
                factor: float) -> LoopRecord:
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
    height = _height_du(spec.belt_for(lid), factor)
    if height is not None:
        findings.extend(_back_offsets(ch, sides, d, height, tol))
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


def _routed_loop(r: Any, d: Drawing, by_id: dict[str, int], id_of_circle: dict[int, str], to_m: Any,
                 spec: Spec, findings: list[Finding]) -> LoopRecord | None:
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
                                f"crossing itself", at=_pt(circ, circles[0]), refs=(r.loop,)))
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


def _travel_from_speed_source(loops: list[LoopRecord], records: dict[str, PulleyRecord],
                              shafts: list[list[str]]) -> list[Finding]:
    """Make travel follow the speed source's rotation, loop after loop through the shafts.

    A pulley turns the way the belt goes round it (its ``turn``). The loop holding the
    speed source travels so that the source turns its given way; each loop reached
    through a shaft travels so that its pulley on that shaft turns with the shaft, and
    lists its pulleys from that one (the loop's driver).
    """
    out: list[Finding] = []
    sources = [pid for pid, r in records.items() if r.values.get("speed") is not None]
    if not sources:
        return out
    src = sources[0]
    sense = {"ccw": 1, "cw": -1}.get(records[src].values.get("direction", ""), 0)
    if sense == 0:
        sense = 1
        out.append(Finding(Severity.NOTE, "direction-assumed",
                           f"pulley {src} has a speed but no direction; counter-clockwise assumed",
                           refs=(src,)))
    shaft_of = {p: k for k, s in enumerate(shafts) for p in s}
    turning: dict[int, int] = {shaft_of[src]: sense}
    done: set[int] = set()
    frontier = [shaft_of[src]]
    while frontier:
        k = frontier.pop(0)
        for i, lr in enumerate(loops):
            if i in done:
                continue
            entry = next((p for p in lr.pulleys if shaft_of.get(p) == k), None)
            if entry is None:
                continue
            j = lr.pulleys.index(entry)
            if lr.turns[j] != turning[k]:
                _reverse_record(lr)
            _rotate_record(lr, lr.pulleys.index(entry))
            done.add(i)
            for p, t in zip(lr.pulleys, lr.turns):
                s = shaft_of.get(p)
                if s is not None and s not in turning:
                    turning[s] = t
                    frontier.append(s)
    return out


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
        adjust=None if adj is None else (math.cos(adj), math.sin(adj)))


def _physics_belt(b: BeltSpec) -> Belt:
    """The belt of one loop: the spec's values over its section's."""
    sec = find_section(b.section) if b.section else None
    mu = b.friction if b.friction is not None else (sec.friction if sec else None)
    groove = b.groove_angle if b.groove_angle is not None else (sec.groove_angle_rad if sec else None)
    eff = b.effective_friction
    if eff is None and sec is not None and b.friction is None and b.groove_angle is None:
        eff = sec.effective_friction if sec.groove_angle_rad is not None else None
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


def _loop_shaft_graph(drive: Drive, shafts: list[list[str]]) -> nx.MultiGraph:
    """Bipartite graph: loop nodes ``("loop", id)`` and shaft nodes ``("shaft", k)``.

    An edge joins a loop and a shaft for every pulley of the loop on that shaft (parallel
    edges where a loop touches one shaft twice).
    """
    g = nx.MultiGraph()
    shaft_of: dict[str, int] = {}
    for k, s in enumerate(shafts):
        g.add_node(("shaft", k), pulleys=tuple(s))
        for p in s:
            shaft_of[p] = k
    for lp in drive.loops:
        g.add_node(("loop", lp.id))
        for p in lp.pulleys:
            if p in shaft_of:
                g.add_edge(("loop", lp.id), ("shaft", shaft_of[p]), pulley=p)
    return g
