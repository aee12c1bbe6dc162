"""Drafting checks: compare what is drawn with the exact geometry, in drawing units.

Each check is a function ``check_*(model, results) -> list[Finding]`` registered in
:data:`CHECKS`; :func:`run_checks` runs them all. A finding's ``at`` is the drawn point
nearest the problem.
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np
import shapely

from physics.analysis import Results
from physics.findings import Finding, Severity
from physics.model import Side

from .recognize import layer_matches
from .path_checks import check_drawn_path, span_points_drawing
from .route import Model

__all__ = ["CHECKS", "run_checks", "span_points_drawing"]

#: Plausible pitch diameters, metres (design rule "Units").
PLAUSIBLE_DIAMETER_M = (2e-3, 6.0)
#: Highest plausible belt speed, m/s.
PLAUSIBLE_SPEED_M_S = 60.0
#: Units tried, in order of preference, when the declared one is implausible.
UNIT_CANDIDATES = ("mm", "in", "cm", "m", "ft")




def check_twists(model: Model, results: Results) -> list[Finding]:
    """Crossed spans: a note for a crossed loop, an error for an odd number of half twists."""
    out: list[Finding] = []
    for lp in model.loops:
        if not any(lp.crossed):
            continue
        ids = [f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % len(lp.pulleys)]}" for k, x in enumerate(lp.crossed) if x]
        pts = span_points_drawing(model, results, lp.id)
        at = None
        if pts is not None:
            k = lp.crossed.index(True)
            at = tuple(((pts[0][k] + pts[1][k]) / 2.0).tolist())
        if sum(lp.crossed) % 2:
            out.append(Finding(Severity.ERROR, "single-twist",
                               f"loop {lp.id}: {sum(lp.crossed)} span(s) cross another ({', '.join(ids)}); "
                               f"each carries a half twist and a loop needs an even number",
                               at=at, refs=(lp.id, *ids)))
        else:
            out.append(Finding(Severity.NOTE, "crossed-spans",
                               f"loop {lp.id}: spans {', '.join(ids)} cross; a half twist in each",
                               at=at, refs=(lp.id, *ids)))
    return out


def check_pulley_crossing(model: Model, results: Results) -> list[Finding]:
    """A span passing through a pulley of its own loop that it does not wrap.

    Candidates come from a spatial index (``shapely.STRtree`` of the pulleys' bounding
    boxes): a span can only pass inside a circle whose box its own box meets, so a loop of
    ``n`` pulleys costs about ``n log n``, not ``n**2``. Findings are in span order, then
    pulley order, as a check of every span against every pulley would give them.
    """
    out: list[Finding] = []
    circ = model.drawing.circles
    for lp in model.loops:
        pts = span_points_drawing(model, results, lp.id)
        if pts is None or len(lp.pulleys) < 3:
            continue
        starts, ends = pts
        n = len(lp.pulleys)
        lines = shapely.linestrings(np.stack([starts, ends], axis=1))
        centers = np.asarray([(circ.x[c], circ.y[c]) for c in lp.circles])
        radii = np.asarray(lp.radii, dtype=float)
        boxes = shapely.box(centers[:, 0] - radii, centers[:, 1] - radii, centers[:, 0] + radii,
                            centers[:, 1] + radii)
        ks, js = shapely.STRtree(boxes).query(lines)
        for k, j in sorted(zip(ks.tolist(), js.tolist())):
            ends_c = {lp.circles[k], lp.circles[(k + 1) % n]}
            c = lp.circles[j]
            if c in ends_c or any(np.hypot(*(centers[j] - (circ.x[e], circ.y[e]))) <= model.tol.join * lp.radii[j]
                                  for e in ends_c):
                continue
            r = lp.radii[j]
            dist = float(shapely.distance(lines[k], shapely.points(centers[j])))
            if dist < r * (1.0 - model.tol.tangent_offset):
                near = shapely.line_interpolate_point(lines[k], shapely.line_locate_point(
                    lines[k], shapely.points(centers[j])))
                sid = f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % n]}"
                out.append(Finding(
                    Severity.ERROR, "span-hits-pulley",
                    f"loop {lp.id}: span {sid} passes {r - dist:.6g} units inside pulley {lp.pulleys[j]} "
                    f"(radius {r:.6g}), which this loop does not wrap there",
                    at=(float(shapely.get_x(near)), float(shapely.get_y(near))),
                    refs=(lp.id, sid, lp.pulleys[j])))
    return out


def check_keep_out(model: Model, results: Results) -> list[Finding]:
    """Spans closer than the spec's clearance to geometry on keep-out layers."""
    spec = model.spec
    if not spec.keep_out_layers:
        return []
    d = model.drawing
    clearance = spec.clearance / model.factor
    S = d.segments
    geoms = []
    names = []
    for i in range(len(S)):
        if not layer_matches(S.layer[i], spec.keep_out_layers):
            continue
        if S.sweep[i] == 0.0:
            geoms.append(shapely.linestrings([[S.x0[i], S.y0[i]], [S.x1[i], S.y1[i]]]))
        else:
            a0 = math.atan2(S.y0[i] - S.cy[i], S.x0[i] - S.cx[i])
            t = a0 + np.linspace(0.0, S.sweep[i], max(8, int(abs(S.sweep[i]) / math.radians(2)) + 2))
            geoms.append(shapely.linestrings(np.column_stack([S.cx[i] + S.r[i] * np.cos(t),
                                                             S.cy[i] + S.r[i] * np.sin(t)])))
        names.append(f"{S.kind[i]} #{S.handle[i]} on {S.layer[i]}")
    C = d.circles
    for i in range(len(C)):
        if layer_matches(C.layer[i], spec.keep_out_layers):
            geoms.append(shapely.Point(C.x[i], C.y[i]).buffer(C.r[i], quad_segs=90).exterior)
            names.append(f"CIRCLE #{C.handle[i]} on {C.layer[i]}")
    if not geoms:
        return []
    tree = shapely.STRtree(geoms)
    out: list[Finding] = []
    for lp in model.loops:
        pts = span_points_drawing(model, results, lp.id)
        if pts is None:
            continue
        n = len(lp.pulleys)
        for k, (a, b) in enumerate(zip(*pts)):
            line = shapely.linestrings([a, b])
            hits = tree.query(line, predicate="dwithin", distance=clearance) if clearance > 0 else \
                tree.query(line, predicate="intersects")
            if not len(hits):
                continue
            dists = shapely.distance(line, np.asarray(geoms, dtype=object)[hits])
            j = int(hits[int(np.argmin(dists))])
            dist = float(np.min(dists))
            p = shapely.shortest_line(line, geoms[j])
            at = shapely.get_coordinates(p)[0]
            sid = f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % n]}"
            out.append(Finding(
                Severity.WARNING, "keep-out",
                f"loop {lp.id}: span {sid} runs {dist:.6g} units from {names[j]}; the spec asks for "
                f"{clearance:.6g}", at=(float(at[0]), float(at[1])), refs=(lp.id, sid),
                data={"distance": dist, "clearance": clearance}))
    return out


def check_min_diameter(model: Model, results: Results) -> list[Finding]:
    """Pitch diameters under the belt section's minimum (inside contact)."""
    out: list[Finding] = []
    drive = model.drive
    for lp in drive.loops:
        dmin = lp.belt.min_pitch_diameter_m
        if dmin is None:
            continue
        for pid, side in zip(lp.pulleys, lp.sides):
            if side is not Side.INSIDE:
                continue
            dia = 2.0 * drive.pulleys[pid].radius_m
            if dia < dmin * (1.0 - 1e-9):
                rec = model.pulleys[pid]
                out.append(Finding(
                    Severity.WARNING, "diameter-small",
                    f"loop {lp.id}: pulley {pid} has pitch diameter {dia * 1e3:.4g} mm, under the "
                    f"{lp.belt.section or 'belt'}'s minimum of {dmin * 1e3:.4g} mm",
                    at=model.circle_center(rec.circle), refs=(lp.id, pid),
                    data={"pitch_diameter_m": dia, "min_pitch_diameter_m": dmin}))
    return out


def _plausible(model: Model, factor: float) -> bool:
    drive = model.drive
    lo, hi = PLAUSIBLE_DIAMETER_M
    scale = factor / model.factor
    for lp in drive.loops:
        dmin = lp.belt.min_pitch_diameter_m
        for pid, side in zip(lp.pulleys, lp.sides):
            dia = 2.0 * drive.pulleys[pid].radius_m * scale
            if not lo <= dia <= hi:
                return False
            if dmin is not None and side is Side.INSIDE and dia < dmin / 3.0:
                return False
        for pid in lp.pulleys:
            p = drive.pulleys[pid]
            if p.speed_rad_s is not None and p.speed_rad_s * p.radius_m * scale > PLAUSIBLE_SPEED_M_S:
                return False
    return True


def check_units(model: Model, results: Results) -> list[Finding]:
    """A declared unit that makes the drive implausible, when another unit fits."""
    from .quantity import length_factor

    if not model.drive.loops or _plausible(model, model.factor):
        return []
    for cand in UNIT_CANDIDATES:
        if cand == model.units:
            continue
        f = length_factor(cand)
        if _plausible(model, f):
            sizes = sorted(2.0 * p.radius_m for p in model.drive.pulleys.values())
            return [Finding(
                Severity.WARNING, "units-implausible",
                f"{model.drawing.path}: in {model.units} the pulleys measure {sizes[0]:.4g} m to "
                f"{sizes[-1]:.4g} m across; the drawing looks drawn in {cand} (set units = \"{cand}\" "
                f"in the spec); analysed in {model.units} as declared",
                data={"declared": model.units, "likely": cand})]
    return []


CHECKS: list[Callable[[Model, Results], list[Finding]]] = [
    check_twists, check_drawn_path, check_pulley_crossing, check_keep_out, check_min_diameter,
    check_units,
]


def run_checks(model: Model, results: Results) -> list[Finding]:
    """All drafting checks, in a stable order."""
    out: list[Finding] = []
    for check in CHECKS:
        out.extend(check(model, results))
    return out


def locate(model: Model, results: Results, f: Finding) -> Finding:
    """Place a physics finding (refs only) at the drawn point it concerns: the middle of a
    span it names, else the centre of a pulley, else the loop's first pulley."""
    if f.at is not None:
        return f
    for lp in model.loops:
        n = len(lp.pulleys)
        sids = [f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % n]}" for k in range(n)]
        for ref in f.refs:
            if ref in sids and (lp.id in f.refs or len(f.refs) == 1):
                pts = span_points_drawing(model, results, lp.id)
                if pts is not None:
                    k = sids.index(ref)
                    mid = (pts[0][k] + pts[1][k]) / 2.0
                    return f.located((float(mid[0]), float(mid[1])))
    for ref in f.refs:
        if ref in model.pulleys:
            return f.located(model.circle_center(model.pulleys[ref].circle))
    for lp in model.loops:
        if lp.id in f.refs and lp.circles:
            return f.located(model.circle_center(lp.circles[0]))
    return f


