"""Drafting checks of a drawn belt path: tangency, gaps, kinks and arcs off their pulleys.

The drawn spans are compared with the exact tangents from the circles; the faults that
recognition recorded on each chain (:class:`layout.recognize.Fault`) are worded here,
where the loop's span and pulley ids are known. One root cause gives one error: a gap or
an arc off its circle at the very end where a span misses its tangent is part of that
``span-not-tangent`` error, not a second one.
"""

from __future__ import annotations

import math

import numpy as np

from physics.analysis import Results
from physics.findings import Finding, Severity

from .read import fmt_point as _fmt
from .loops import LoopRecord
from .recognize import Fault
from .route import Model

__all__ = ["check_drawn_path", "span_points_drawing"]




def _cross(a: np.ndarray, b: np.ndarray) -> float:
    return float(a[0] * b[1] - a[1] * b[0])


def span_points_drawing(model: Model, results: Results, loop_id: str) -> tuple[np.ndarray, np.ndarray] | None:
    """Exact span start and end points of a loop in drawing units, shape ``(n, 2)`` each."""
    g = results.loops[loop_id].geometry
    if g is None:
        return None
    o = np.asarray(model.origin)
    return o + g.span_start_m / model.factor, o + g.span_end_m / model.factor


def _seg_points(model: Model, s: int, fwd: bool) -> tuple[np.ndarray, np.ndarray]:
    S = model.drawing.segments
    a = np.array([S.x0[s], S.y0[s]])
    b = np.array([S.x1[s], S.y1[s]])
    return (a, b) if fwd else (b, a)


def check_drawn_path(model: Model, results: Results) -> list[Finding]:
    """Every drawn loop's spans against the exact tangents, then its recorded faults."""
    out: list[Finding] = []
    for lp in model.loops:
        if lp.chain is None:
            continue
        explained: list[np.ndarray] = []
        pts = span_points_drawing(model, results, lp.id)
        if pts is not None:
            for k in range(len(lp.pulleys)):
                out.extend(_span_tangency(model, lp, k, pts, explained))
        out.extend(_fault_finding(model, lp, f) for f in lp.chain.faults if not _explained(model, f, explained))
    return out


def _span_id(lp: LoopRecord, k: int) -> str:
    return f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % len(lp.pulleys)]}"


def _span_tangency(model: Model, lp: LoopRecord, k: int, pts: tuple[np.ndarray, np.ndarray],
                   explained: list[np.ndarray]) -> list[Finding]:
    """Span ``k`` drawn off its tangent (``span-not-tangent`` at the end that misses), or, where
    its wrap is left to the circle, ending short of its tangent point (``path-gap``)."""
    lines = [(s, f) for s, f in lp.chain.spans[k].pieces if model.drawing.segments.sweep[s] == 0.0]
    S, E = pts[0][k], pts[1][k]
    length = float(np.hypot(*(E - S)))
    if not lines or length == 0:
        return []
    u = (E - S) / length
    n = len(lp.pulleys)
    worst_ang, worst_off = _worst_deviation(model, lines, S, u)
    a0, _ = _seg_points(model, *lines[0])
    _, b1 = _seg_points(model, *lines[-1])
    tol = model.tol
    r_min = min(lp.radii[k], lp.radii[(k + 1) % n])
    if worst_ang <= tol.tangent_deg and worst_off <= tol.tangent_offset * r_min:
        return _short_ends(model, lp, k, (a0, b1), (S, E), u)
    at_end = bool(np.hypot(*(b1 - E)) > np.hypot(*(a0 - S)))
    at, pulley = (b1, lp.pulleys[(k + 1) % n]) if at_end else (a0, lp.pulleys[k])
    explained.extend((a0, b1))          # gaps or slipped arcs at either end are this span's fault
    miss = float(np.hypot(*(at - (E if at_end else S))))
    return [Finding(
        Severity.ERROR, "span-not-tangent",
        f"loop {lp.id}, span {_span_id(lp, k)}: drawn {worst_ang:.3g} deg and {worst_off:.3g} units off the "
        f"tangent from {_fmt(S)} to {_fmt(E)}; its end at pulley {pulley} misses the tangent point by "
        f"{miss:.3g} (allowed {tol.tangent_deg:g} deg, {tol.tangent_offset * r_min:.3g} units)",
        at=(float(at[0]), float(at[1])), refs=(lp.id, _span_id(lp, k), pulley),
        data={"angle_deg": worst_ang, "offset": worst_off, "miss": miss,
              "tangent_start": [float(S[0]), float(S[1])], "tangent_end": [float(E[0]), float(E[1])]})]


def _worst_deviation(model: Model, lines: list[tuple[int, bool]], S: np.ndarray, u: np.ndarray
                     ) -> tuple[float, float]:
    """The largest angle (degrees) of a drawn line to the tangent, and the largest offset of an end."""
    worst_ang = worst_off = 0.0
    for s, f in lines:
        a, b = _seg_points(model, s, f)
        d = b - a
        dl = float(np.hypot(*d))
        if dl == 0:
            continue
        worst_ang = max(worst_ang, math.degrees(math.atan2(abs(_cross(u, d / dl)), float(np.dot(u, d / dl)))))
        worst_off = max(worst_off, abs(_cross(u, a - S)), abs(_cross(u, b - S)))
    return worst_ang, worst_off


def _short_ends(model: Model, lp: LoopRecord, k: int, drawn: tuple[np.ndarray, np.ndarray],
                exact: tuple[np.ndarray, np.ndarray], u: np.ndarray) -> list[Finding]:
    """Ends of a tangent span whose wrap is left to the circle must reach the tangent point
    (a span drawn a little long, past it, is sloppy but harmless)."""
    out = []
    n = len(lp.pulleys)
    tol = model.tol
    for drawn_end, point, j, inward in ((drawn[0], exact[0], k, u), (drawn[1], exact[1], (k + 1) % n, -u)):
        wrap = lp.chain.wraps[j]
        if wrap.drawn:
            continue
        miss = float(np.dot(drawn_end - point, inward))
        limit = float(tol.join_abs(wrap.radius, float(np.abs(point).max())))
        if miss > max(limit, tol.tangent_offset * wrap.radius):
            out.append(Finding(
                Severity.ERROR, "path-gap",
                f"loop {lp.id}, span {_span_id(lp, k)}: drawn end {_fmt(drawn_end)} is {miss:.6g} units "
                f"short of its tangent point {_fmt(point)} on pulley {lp.pulleys[j]}",
                at=(float(drawn_end[0]), float(drawn_end[1])), refs=(lp.id, _span_id(lp, k), lp.pulleys[j]),
                data={"gap": miss}))
    return out


def _explained(model: Model, f: Fault, explained: list[np.ndarray]) -> bool:
    """Whether fault ``f`` touches an end already reported as off its tangent."""
    if f.kind == "kink":
        return False
    for p in explained:
        lim = 1e-9 * max(1.0, float(np.abs(p).max()))          # the same drawn point, to round-off
        if min(math.hypot(f.a[0] - p[0], f.a[1] - p[1]), math.hypot(f.b[0] - p[0], f.b[1] - p[1])) <= lim:
            return True
    return False


def _fault_refs(lp: LoopRecord, f: Fault) -> tuple[tuple[str, ...], str]:
    """The loop, the span holding the fault's pieces and the pulley it lies at; and a prefix."""
    refs = [lp.id]
    span = next((k for k, sp in enumerate(lp.chain.spans) if any(s in f.segments for s, _ in sp.pieces)), None)
    where = f"loop {lp.id}"
    if span is not None:
        refs.append(_span_id(lp, span))
        where += f", span {refs[-1]}"
    if f.circle >= 0 and f.circle in lp.circles:
        refs.append(lp.pulleys[lp.circles.index(f.circle)])
        where += f", pulley {refs[-1]}"
    return tuple(refs), where


def _fault_finding(model: Model, lp: LoopRecord, f: Fault) -> Finding:
    refs, where = _fault_refs(lp, f)
    S = model.drawing.segments
    mid = ((f.a[0] + f.b[0]) / 2.0, (f.a[1] + f.b[1]) / 2.0)
    if f.kind == "gap":
        return Finding(Severity.ERROR, "path-gap",
                       f"{where}: the belt path has a gap of {f.size:.6g} between {_fmt(f.a)} and {_fmt(f.b)}; "
                       f"draw the path closed", at=mid, refs=refs, data={"gap": f.size})
    if f.kind == "kink":
        return Finding(Severity.ERROR, "span-kink",
                       f"{where}: the belt path bends at {_fmt(f.a)} where there is no pulley; a free span is "
                       f"straight", at=f.a, refs=refs)
    s = f.segments[0]
    if f.kind == "slipped-arc":
        return Finding(Severity.ERROR, "arc-off-pulley",
                       f"{where}: {S.kind[s]} #{S.handle[s]} on {S.layer[s]} is drawn as the wrap but lies up to "
                       f"{f.size:.3g} units off the pulley's circle; the wrap is taken from the circle",
                       at=mid, refs=refs, data={"miss": f.size})
    return Finding(Severity.ERROR, "arc-off-pulley",
                   f"{where}: {S.kind[s]} #{S.handle[s]} on {S.layer[s]}: arc of radius {S.r[s]:.6g} centred at "
                   f"{_fmt((S.cx[s], S.cy[s]))} lies on no pulley circle; the belt bends only round a pulley",
                   at=mid, refs=refs)
