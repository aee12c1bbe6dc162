"""Recognise belt loops in flat drawing primitives.

A belt path may be drawn as a closed chain of lines and arcs (in any order and
direction), as closed polylines with bulges, or as the free spans alone with the wraps
left to the pulley circles. All three are handled by one mechanism:

1. the ends of all pieces are clustered within a join tolerance (a KD-tree), so
   pieces that meet become one chain;
2. ends left open that lie on a circle (within the attach tolerance) are linked in
   pairs round that circle: a wrap left to the circle, or a gap next to a drawn wrap;
3. remaining open ends close to each other are linked as gaps;
4. each closed walk is cut into wraps (arcs on circles, or links round circles) and
   spans (lines), and is a *loop* when at least two of its wraps lie on circles.

Circles that are not wrapped stay candidates for labels and the spec. Work here is in
drawing units; tolerances follow the design's geometry rules.
"""

from __future__ import annotations

import fnmatch
import math
from collections import Counter, defaultdict
from dataclasses import dataclass, field

import numpy as np
import shapely
from numpy.typing import NDArray
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from physics.findings import Finding, Severity

from .read import Drawing, Segments

__all__ = ["Tolerances", "Wrap", "DrawnSpan", "Chain", "Recognition", "recognize_paths",
           "layer_matches"]


@dataclass(frozen=True, slots=True)
class Tolerances:
    """Geometry tolerances, as fractions of a circle radius (angles in degrees).

    ``join``: how far two drawn ends may be apart and still meet, also the
    concentricity of an arc with its circle; ``attach``: how far a drawn end may miss
    its circle radially and still belong to that wrap; ``tangent_deg`` and
    ``tangent_offset``: how far a span may be off the exact tangent.
    """

    join: float = 1e-3
    attach: float = 0.1
    tangent_deg: float = 0.05
    tangent_offset: float = 1e-3
    #: relative to the size of a coordinate: the precision floor of float64 drawings
    coordinate: float = 1e-9

    @classmethod
    def from_spec(cls, values: dict[str, float]) -> "Tolerances":
        return cls(**{k: float(v) for k, v in values.items()})

    def join_abs(self, r: float | NDArray[np.float64], coord: float | NDArray[np.float64]
                 ) -> float | NDArray[np.float64]:
        return np.maximum(self.join * r, self.coordinate * np.abs(coord))


@dataclass(slots=True)
class Wrap:
    """The belt's contact with one circle, in travel order of the walk."""

    circle: int
    turn: int                     # +1 counter-clockwise round the centre, -1 clockwise
    drawn: bool                   # an arc of the path lies on the circle
    radius: float                 # pitch radius, drawing units (circle's, or the path's for a back offset)
    segments: list[int] = field(default_factory=list)
    arrive: tuple[float, float] | None = None   # drawn end of the arriving span at this circle
    leave: tuple[float, float] | None = None    # drawn start of the leaving span


@dataclass(slots=True)
class DrawnSpan:
    """The drawn pieces between two consecutive wraps (lines, in travel order)."""

    pieces: list[tuple[int, bool]] = field(default_factory=list)   # (segment, forward)


@dataclass(slots=True)
class Chain:
    """One closed walk that is a belt loop, in the drawing's terms."""

    wraps: list[Wrap]
    spans: list[DrawnSpan]        # span k runs from wraps[k] to wraps[k + 1]
    segments: list[int]
    layer: str
    order: int                    # smallest segment index: drawing order of the loop
    findings: list[Finding] = field(default_factory=list)

    def reversed(self) -> "Chain":
        """The same loop travelled the other way."""
        n = len(self.wraps)
        wraps = []
        for w in reversed(self.wraps):
            wraps.append(Wrap(w.circle, -w.turn, w.drawn, w.radius, w.segments, w.leave, w.arrive))
        spans = []
        for k in range(n):
            # new span k runs from new wrap k (old n-1-k) to new wrap k+1 (old n-2-k):
            # that is old span n-2-k reversed
            old = self.spans[(n - 2 - k) % n]
            spans.append(DrawnSpan([(s, not f) for s, f in reversed(old.pieces)]))
        return Chain(wraps, spans, self.segments, self.layer, self.order, self.findings)

    def rotated(self, k: int) -> "Chain":
        """The same loop starting at wrap ``k``."""
        return Chain(self.wraps[k:] + self.wraps[:k], self.spans[k:] + self.spans[:k],
                     self.segments, self.layer, self.order, self.findings)


@dataclass(slots=True)
class Recognition:
    """What :func:`recognize_paths` found."""

    chains: list[Chain]
    circle_alias: NDArray[np.int64]      # duplicate circles point at the one kept
    findings: list[Finding]


def layer_matches(layer: str, patterns: tuple[str, ...]) -> bool:
    """Whether ``layer`` matches one of the glob ``patterns`` (case-insensitive)."""
    low = layer.lower()
    return any(fnmatch.fnmatchcase(low, p.lower()) for p in patterns)


def _fmt(p: tuple[float, float] | NDArray[np.float64]) -> str:
    return f"({p[0]:.6g}, {p[1]:.6g})"


def _dedup_circles(d: Drawing, tol: Tolerances) -> tuple[NDArray[np.int64], list[Finding]]:
    c = d.circles
    n = len(c)
    alias = np.arange(n)
    findings: list[Finding] = []
    if n < 2:
        return alias, findings
    pts = np.column_stack([c.x, c.y])
    tree = cKDTree(pts)
    # each circle's own tolerance: a large circle must not widen the search for small ones
    lims = tol.join_abs(c.r, np.abs(pts).max(axis=1))
    hits = tree.query_ball_point(pts, r=lims)
    pairs = sorted((i, j) for i, js in enumerate(hits) for j in js if j > i)
    for i, j in pairs:
        lim = float(tol.join_abs(min(c.r[i], c.r[j]), max(abs(c.x[i]), abs(c.y[i]))))
        if (math.hypot(c.x[i] - c.x[j], c.y[i] - c.y[j]) <= lim and abs(c.r[i] - c.r[j]) <= lim
                and alias[j] == j):
            alias[j] = alias[i]
            findings.append(Finding(Severity.NOTE, "duplicate-entity",
                                    f"CIRCLE #{c.handle[j]} on {c.layer[j]} at {_fmt((c.x[j], c.y[j]))} "
                                    f"repeats CIRCLE #{c.handle[i]}; the copy is ignored",
                                    at=(float(c.x[j]), float(c.y[j]))))
    return alias, findings


def recognize_paths(d: Drawing, *, tol: Tolerances = Tolerances(),
                    belt_layers: tuple[str, ...] = (), belt_height: float | None = None
                    ) -> Recognition:
    """Find the belt loops drawn in ``d``.

    Parameters
    ----------
    d
        The drawing's primitives.
    tol
        Tolerances (fractions of radius).
    belt_layers
        Glob patterns; when the drawing has matching layers, only chains on them are
        loops, and chains elsewhere that would be loops are reported as notes.
    belt_height
        Belt height in drawing units, when known: a back idler may be drawn at its
        outside diameter, the path's arc that far outside its circle.
    """
    findings: list[Finding] = []
    alias, dup_findings = _dedup_circles(d, tol)
    findings.extend(dup_findings)
    keep = np.flatnonzero(alias == np.arange(len(alias)))
    S = d.segments
    n = len(S)
    if n == 0 or keep.size == 0:
        return Recognition([], alias, findings)
    cx, cy, cr = d.circles.x[keep], d.circles.y[keep], d.circles.r[keep]

    P = np.empty((2 * n, 2))
    P[0::2, 0], P[0::2, 1] = S.x0, S.y0
    P[1::2, 0], P[1::2, 1] = S.x1, S.y1
    is_arc = S.sweep != 0.0
    # outward unit tangents at each end
    T = np.empty_like(P)
    chord = np.column_stack([S.x1 - S.x0, S.y1 - S.y0])
    clen = np.hypot(chord[:, 0], chord[:, 1])
    clen[clen == 0] = 1.0
    line_dir = chord / clen[:, None]
    T[0::2] = -line_dir
    T[1::2] = line_dir
    if is_arc.any():
        a = np.flatnonzero(is_arc)
        sg = np.sign(S.sweep[a])
        r0 = np.column_stack([S.x0[a] - S.cx[a], S.y0[a] - S.cy[a]])
        r1 = np.column_stack([S.x1[a] - S.cx[a], S.y1[a] - S.cy[a]])
        rr = S.r[a][:, None]
        T[2 * a] = -sg[:, None] * np.column_stack([-r0[:, 1], r0[:, 0]]) / rr
        T[2 * a + 1] = sg[:, None] * np.column_stack([-r1[:, 1], r1[:, 0]]) / rr

    # --- which circle (if any) each end attaches to: |dist - r| <= attach * r, nearest
    # (a back idler may be drawn at its outside diameter: spans then end `belt_height`
    # outside its circle)
    h = belt_height or 0.0
    reach = cr * (1 + tol.attach) + h
    tree = shapely.STRtree(shapely.box(cx - reach, cy - reach, cx + reach, cy + reach))
    qi, qc = tree.query(shapely.points(P))
    attach_c = np.full(2 * n, -1, dtype=np.int64)
    if qi.size:
        dist = np.hypot(P[qi, 0] - cx[qc], P[qi, 1] - cy[qc])
        miss = np.minimum(np.abs(dist - cr[qc]), np.abs(dist - cr[qc] - h))
        ok = miss <= tol.attach * cr[qc]
        qi, qc, miss = qi[ok], qc[ok], miss[ok]
        order = np.lexsort((cr[qc], miss, qi))        # per end: smallest miss first
        qi, qc = qi[order], qc[order]
        first = np.ones(qi.size, dtype=bool)
        first[1:] = qi[1:] != qi[:-1]
        attach_c[qi[first]] = qc[first]

    # --- arcs on circles: concentric within join tolerance, radius equal (or a back offset)
    arc_circle = np.full(n, -1, dtype=np.int64)
    arc_offset = np.zeros(n, dtype=bool)
    if is_arc.any():
        ctree = cKDTree(np.column_stack([cx, cy]))
        a = np.flatnonzero(is_arc)
        lim = tol.join_abs(S.r[a], np.maximum(np.abs(S.cx[a]), np.abs(S.cy[a])))
        near = ctree.query_ball_point(np.column_stack([S.cx[a], S.cy[a]]), r=lim)
        for k, cands in zip(a, near):
            if not cands:
                continue
            best, best_dr = -1, math.inf
            for c in cands:
                dr = abs(S.r[k] - cr[c])
                if dr < best_dr:
                    best, best_dr = c, dr
            rl = float(tol.join_abs(S.r[k], max(abs(S.cx[k]), abs(S.cy[k]))))
            if best_dr <= rl:
                arc_circle[k] = best
            elif belt_height is not None and 0 < S.r[k] - cr[best] <= belt_height + rl:
                arc_circle[k] = best
                arc_offset[k] = True

    # --- cluster ends within join tolerance
    r_ref = np.where(attach_c >= 0, cr[np.maximum(attach_c, 0)], np.median(cr))
    etol = tol.join_abs(r_ref, np.abs(P).max(axis=1))
    ptree = cKDTree(P)
    pairs = ptree.query_pairs(r=float(etol.max()), output_type="ndarray")
    if pairs.size:
        dd = np.hypot(*(P[pairs[:, 0]] - P[pairs[:, 1]]).T)
        pairs = pairs[dd <= np.maximum(etol[pairs[:, 0]], etol[pairs[:, 1]])]
    # the two ends of one segment never cluster with each other
    pairs = pairs[pairs[:, 0] // 2 != pairs[:, 1] // 2] if pairs.size else pairs
    m = 2 * n
    if pairs.size:
        g = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(m, m))
        _, cluster = connected_components(g, directed=False)
    else:
        cluster = np.arange(m)
    # components of pieces: clusters joined by segments
    ncl = int(cluster.max()) + 1
    g2 = coo_matrix((np.ones(n), (cluster[0::2], cluster[1::2])), shape=(ncl, ncl))
    _, comp_of_cluster = connected_components(g2, directed=False)
    comp = comp_of_cluster[cluster[0::2]]          # component per segment

    # relevant components: touching a circle
    rel_seg = (attach_c[0::2] >= 0) | (attach_c[1::2] >= 0) | (arc_circle >= 0)
    relevant = np.zeros(int(comp.max()) + 1, dtype=bool)
    relevant[comp[rel_seg]] = True
    seg_ok = relevant[comp]
    if not seg_ok.any():
        return Recognition([], alias, findings)
    segs = np.flatnonzero(seg_ok)
    ends = np.concatenate([2 * segs, 2 * segs + 1])

    # duplicates: two pieces between the same clusters with the same sweep
    seen: dict[tuple[int, int, float], int] = {}
    dropped = np.zeros(n, dtype=bool)
    for s in segs:
        ca, cb = int(cluster[2 * s]), int(cluster[2 * s + 1])
        sw = round(float(S.sweep[s]), 6)
        key = (ca, cb, sw) if ca <= cb else (cb, ca, -sw)
        if key in seen:
            dropped[s] = True
            o = seen[key]
            findings.append(Finding(Severity.NOTE, "duplicate-entity",
                                    f"{S.kind[s]} #{S.handle[s]} on {S.layer[s]} repeats "
                                    f"{S.kind[o]} #{S.handle[o]}; the copy is ignored",
                                    at=(float(S.x0[s]), float(S.y0[s]))))
        else:
            seen[key] = int(s)
    ends = ends[~dropped[ends // 2]]
    members: dict[int, list[int]] = defaultdict(list)
    for e in ends.tolist():
        members[int(cluster[e])].append(e)

    partner = np.full(m, -1, dtype=np.int64)
    link_kind: dict[int, tuple[str, int]] = {}
    branch_at: list[int] = []
    for es in members.values():
        if len(es) == 2:
            partner[es[0]], partner[es[1]] = es[1], es[0]
            link_kind[es[0]] = link_kind[es[1]] = ("join", -1)
        elif len(es) > 2:
            branch_at.append(es[0])
    open_ends = [e for es in members.values() if len(es) == 1 for e in es]

    # --- wraps left to circles, and gaps next to drawn wraps: pair open ends round circles
    by_circle: dict[int, list[int]] = defaultdict(list)
    for e in open_ends:
        c = int(attach_c[e])
        if c >= 0:
            rv = P[e] - (cx[c], cy[c])
            rn = math.hypot(rv[0], rv[1])
            if rn == 0:
                continue
            sin_t = (rv[0] * T[e, 1] - rv[1] * T[e, 0]) / rn
            if abs(sin_t) >= 0.5:          # not a radial line (centre marks, leaders)
                by_circle[c].append(e)
    for c, es in by_circle.items():
        for e, f in _pair_round_circle(c, es, P, T, cx, cy, arc_circle, S.layer):
            partner[e], partner[f] = f, e
            link_kind[e] = link_kind[f] = ("wrap", c)

    # --- remaining open ends close to each other: gaps
    rest = [e for e in open_ends if partner[e] < 0]
    if len(rest) > 1:
        comp_r: dict[int, float] = {}
        for e in ends.tolist():
            c = int(attach_c[e])
            if c >= 0:
                k = int(comp[e // 2])
                comp_r[k] = min(comp_r.get(k, math.inf), float(cr[c]))
        rp = P[rest]
        rtree = cKDTree(rp)
        dist, idx = rtree.query(rp, k=2)
        for a_i, e in enumerate(rest):
            b_i = int(idx[a_i, 1])
            f = rest[b_i]
            if partner[e] >= 0 or partner[f] >= 0 or int(idx[b_i, 1]) != a_i or f // 2 == e // 2:
                continue
            rlim = min(comp_r.get(int(comp[e // 2]), math.inf), comp_r.get(int(comp[f // 2]), math.inf))
            if math.isfinite(rlim) and dist[a_i, 1] <= tol.attach * rlim:
                partner[e], partner[f] = f, e
                link_kind[e] = link_kind[f] = ("gap", -1)

    # --- walk the closed chains
    visited = np.zeros(n, dtype=bool)
    visited[dropped] = True
    chains: list[Chain] = []
    off_layer: list[Chain] = []
    has_belt_layers = bool(belt_layers) and any(layer_matches(l, belt_layers) for l in set(S.layer))
    for s0 in segs.tolist():
        if visited[s0]:
            continue
        walk: list[tuple[int, bool]] = []
        links: list[tuple[str, int, int, int]] = []   # kind, circle, end_from, end_to
        s, fwd = s0, True
        closed = False
        open_end = -1
        guard = 0
        while True:
            guard += 1
            if guard > 4 * n + 4:
                break
            visited[s] = True
            walk.append((s, fwd))
            out_end = 2 * s + (1 if fwd else 0)
            p = int(partner[out_end])
            if p < 0:
                open_end = out_end
                break
            kind, c = link_kind[out_end]
            links.append((kind, c, out_end, p))
            s, fwd = p // 2, (p % 2 == 0)
            if s == s0:
                closed = fwd
                break
        comp_segs = [w[0] for w in walk]
        touched = {int(attach_c[2 * k]) for k in comp_segs} | {int(attach_c[2 * k + 1]) for k in comp_segs}
        touched |= {int(arc_circle[k]) for k in comp_segs}
        touched.discard(-1)
        if not closed:
            if open_end >= 0 and len(touched) >= 2:
                # walk the other way to mark the rest of the open path
                _mark_open(s0, partner, visited)
                findings.append(Finding(
                    Severity.ERROR, "path-open",
                    f"{S.kind[open_end // 2]} #{S.handle[open_end // 2]} on {S.layer[open_end // 2]}: "
                    f"the belt path touching {len(touched)} pulleys is not closed; its end at "
                    f"{_fmt(P[open_end])} meets nothing", at=(float(P[open_end, 0]), float(P[open_end, 1]))))
            continue
        chain = _assemble(walk, links, S, P, T, cx, cy, cr, arc_circle, arc_offset, tol)
        if chain is None:
            continue
        offsets = [w for w in chain.wraps if w.radius != cr[w.circle]]
        exact = len(chain.wraps) - len(offsets)
        if exact < 2:
            continue                                  # an outline, a slot, a symbol: not a belt
        for w in offsets:
            chain.findings.append(Finding(
                Severity.NOTE, "back-offset",
                f"the path round CIRCLE #{d.circles.handle[keep[w.circle]]} at "
                f"{_fmt((cx[w.circle], cy[w.circle]))} runs {w.radius - cr[w.circle]:.6g} outside it: "
                f"taken as a back idler drawn at its outside diameter, pitch radius {w.radius:.6g}",
                at=(float(cx[w.circle]), float(cy[w.circle]))))
        layers = Counter(S.layer[k] for k in chain.segments)
        chain.layer = layers.most_common(1)[0][0]
        if has_belt_layers and not all(layer_matches(S.layer[k], belt_layers) for k in chain.segments):
            off_layer.append(chain)
            continue
        chains.append(chain)
    for e in branch_at:
        s = e // 2
        if relevant[comp[s]]:
            findings.append(Finding(
                Severity.ERROR, "path-branch",
                f"{S.kind[s]} #{S.handle[s]} on {S.layer[s]}: more than two path ends meet at "
                f"{_fmt(P[e])}; a belt path cannot branch", at=(float(P[e, 0]), float(P[e, 1]))))
    for ch in off_layer:
        w0 = ch.wraps[0]
        findings.append(Finding(
            Severity.NOTE, "off-belt-layer",
            f"a closed path on layer {ch.layer} wraps {len(ch.wraps)} circles but is not on the belt "
            f"layers ({', '.join(belt_layers)}); not analysed",
            at=(float(cx[w0.circle]), float(cy[w0.circle]))))
    # map circle indices back to the drawing's numbering
    for ch in chains:
        for w in ch.wraps:
            w.circle = int(keep[w.circle])
    chains.sort(key=lambda ch: (int(S.order[ch.order]) if len(S.order) else 0, ch.order))
    return Recognition(chains, alias, findings)


#: Beyond this many ends arriving on one circle, pairing is greedy instead of exhaustive.
_EXHAUSTIVE_PAIRS = 4


def _pair_round_circle(c: int, es: list[int], P: NDArray[np.float64], T: NDArray[np.float64],
                       cx: NDArray[np.float64], cy: NDArray[np.float64], arc_circle: NDArray[np.int64],
                       layers: list[str]) -> list[tuple[int, int]]:
    """Pair open ends on circle ``c``: each pair is the belt going round the circle.

    An end whose outward tangent turns counter-clockwise round the centre (``+``) pairs with
    one turning clockwise (``-``); the wrap between them runs counter-clockwise from the
    ``+`` end. Where several belts touch one circle (a two-groove pulley drawn once) the
    pairing chosen keeps ends of one layer together, makes gaps next to drawn arcs as short
    as possible, and makes the shortest wrap left to the circle as long as possible (a belt
    cannot wrap nothing).
    """
    ang = {e: math.atan2(P[e, 1] - cy[c], P[e, 0] - cx[c]) for e in es}
    sgn = {e: 1 if ((P[e, 0] - cx[c]) * T[e, 1] - (P[e, 1] - cy[c]) * T[e, 0]) > 0 else -1 for e in es}
    plus = sorted((e for e in es if sgn[e] > 0), key=lambda e: ang[e])
    minus = [e for e in es if sgn[e] < 0]
    if not plus or not minus:
        return []
    if len(plus) == 1 and len(minus) == 1:
        return [] if plus[0] // 2 == minus[0] // 2 else [(plus[0], minus[0])]

    def span(e: int, f: int) -> float:
        return (ang[f] - ang[e]) % (2 * math.pi)

    def on_arc(e: int) -> bool:
        return arc_circle[e // 2] == c

    if len(plus) <= _EXHAUSTIVE_PAIRS and len(minus) <= _EXHAUSTIVE_PAIRS:
        import itertools

        best: tuple | None = None
        best_pairs: list[tuple[int, int]] = []
        k = min(len(plus), len(minus))
        for chosen in itertools.permutations(minus, k):
            for sub in itertools.combinations(plus, k):
                pairs = [(e, f) for e, f in zip(sub, chosen) if e // 2 != f // 2]
                if len(pairs) < k:
                    continue
                same = sum(1 for e, f in pairs if layers[e // 2] == layers[f // 2])
                gaps = sum(span(e, f) for e, f in pairs if on_arc(e) or on_arc(f))
                wraps = [span(e, f) for e, f in pairs if not (on_arc(e) or on_arc(f))]
                key = (same, -gaps, min(wraps) if wraps else 0.0)
                if best is None or key > best:
                    best, best_pairs = key, pairs
        return best_pairs
    used: set[int] = set()
    out = []
    for e in plus:
        cands = [f for f in minus if f not in used and f // 2 != e // 2]
        if cands:
            f = min(cands, key=lambda f: span(e, f))
            used.add(f)
            out.append((e, f))
    return out


def _mark_open(s0: int, partner: NDArray[np.int64], visited: NDArray[np.bool_]) -> None:
    """Mark every piece reachable from ``s0`` through links as visited."""
    stack = [s0]
    while stack:
        s = stack.pop()
        for e in (2 * s, 2 * s + 1):
            p = int(partner[e])
            if p >= 0 and not visited[p // 2]:
                visited[p // 2] = True
                stack.append(p // 2)


def _assemble(walk: list[tuple[int, bool]], links: list[tuple[str, int, int, int]], S: Segments,
              P: NDArray[np.float64], T: NDArray[np.float64], cx: NDArray[np.float64],
              cy: NDArray[np.float64], cr: NDArray[np.float64], arc_circle: NDArray[np.int64],
              arc_offset: NDArray[np.bool_], tol: Tolerances) -> Chain | None:
    """Cut a closed walk into wraps and spans; ``None`` when it has fewer than two wraps.

    The walk alternates pieces and the links between them. Each becomes an element
    ``(kind, circle, turn, drawn, segment, a, b)`` with ``a``, ``b`` its drawn start and
    end: ``wrap`` (an arc on a circle, or a link round a circle), ``line``, ``gap`` (a
    link across open space), ``badarc`` (an arc on no circle).
    """
    elems: list[tuple[str, int, int, bool, int, tuple[float, float], tuple[float, float]]] = []
    for (s, fwd), (kind, c, e_from, e_to) in zip(walk, links):
        a_end, b_end = (2 * s, 2 * s + 1) if fwd else (2 * s + 1, 2 * s)
        a, b = (float(P[a_end, 0]), float(P[a_end, 1])), (float(P[b_end, 0]), float(P[b_end, 1]))
        if S.sweep[s] != 0.0:
            ac = int(arc_circle[s])
            if ac >= 0:
                elems.append(("wrap", ac, 1 if (S.sweep[s] > 0) == fwd else -1, True, s, a, b))
            else:
                elems.append(("badarc", -1, 0, True, s, a, b))
        else:
            elems.append(("line", -1, 0, True, s, a, b))
        pa = (float(P[e_from, 0]), float(P[e_from, 1]))
        pb = (float(P[e_to, 0]), float(P[e_to, 1]))
        if kind == "wrap":
            rv = P[e_from] - (cx[c], cy[c])
            turn = 1 if (rv[0] * T[e_from, 1] - rv[1] * T[e_from, 0]) > 0 else -1
            elems.append(("wrap", c, turn, False, -1, pa, pb))
        elif kind == "gap":
            elems.append(("gap", -1, 0, False, -1, pa, pb))
    n = len(elems)

    def same_wrap(i: int, j: int) -> bool:
        return elems[i][0] == "wrap" and elems[j][0] == "wrap" and elems[i][1] == elems[j][1]

    starts = [i for i in range(n) if elems[i][0] == "wrap" and not same_wrap((i - 1) % n, i)]
    if len(starts) < 2:
        return None
    elems = elems[starts[0]:] + elems[:starts[0]]
    wraps: list[Wrap] = []
    spans: list[DrawnSpan] = []
    gaps: list[tuple[tuple[float, float], tuple[float, float]]] = []
    kinks: list[tuple[float, float]] = []
    badarcs: list[int] = []
    prev_dir: NDArray[np.float64] | None = None
    for i, (kind, c, turn, drawn, s, a, b) in enumerate(elems):
        if kind == "wrap":
            if i > 0 and same_wrap(i - 1, i):
                w = wraps[-1]
                w.leave = b
                if s >= 0:
                    w.segments.append(s)
                if drawn and not w.drawn:
                    w.drawn, w.turn = True, turn
                    if w.radius == cr[c] and arc_offset[s]:
                        w.radius = float(S.r[s])
                continue
            radius = float(S.r[s]) if drawn and arc_offset[s] else float(cr[c])
            wraps.append(Wrap(c, turn, drawn, radius, [s] if s >= 0 else [], arrive=a, leave=b))
            spans.append(DrawnSpan())
            prev_dir = None
            continue
        span = spans[-1]
        if kind == "line":
            d = np.array([b[0] - a[0], b[1] - a[1]])
            d /= max(float(np.hypot(d[0], d[1])), 1e-300)
            if prev_dir is not None:
                bend = math.degrees(math.acos(max(-1.0, min(1.0, float(np.dot(prev_dir, d))))))
                if bend > tol.tangent_deg:
                    kinks.append(a)
            prev_dir = d
            span.pieces.append((s, bool(np.array_equal(a, (S.x0[s], S.y0[s])))))
        elif kind == "gap":
            gaps.append((a, b))
        else:
            badarcs.append(s)
            prev_dir = None
    # gaps inside drawn wraps: a link round a circle next to an arc on it
    for kind_elems in _wrap_links_beside_arcs(elems):
        gaps.append(kind_elems)
    chain = Chain(wraps, spans, [s for s, _ in walk], "",
                  min((int(S.order[s]) if len(S.order) else s, s) for s, _ in walk)[1])
    for a, b in gaps:
        size = math.hypot(a[0] - b[0], a[1] - b[1])
        chain.findings.append(Finding(
            Severity.ERROR, "path-gap",
            f"the belt path has a gap of {size:.6g} between {_fmt(a)} and {_fmt(b)}; draw the "
            f"path closed", at=((a[0] + b[0]) / 2.0, (a[1] + b[1]) / 2.0), data={"gap": size}))
    for p in kinks:
        chain.findings.append(Finding(
            Severity.ERROR, "span-kink",
            f"the belt path bends at {_fmt(p)} where there is no pulley; a free span is straight",
            at=(float(p[0]), float(p[1]))))
    for s in badarcs:
        chain.findings.append(Finding(
            Severity.ERROR, "arc-off-pulley",
            f"{S.kind[s]} #{S.handle[s]} on {S.layer[s]}: arc of radius {S.r[s]:.6g} centred at "
            f"{_fmt((S.cx[s], S.cy[s]))} lies on no pulley circle; the belt bends only round a pulley",
            at=(float((S.x0[s] + S.x1[s]) / 2.0), float((S.y0[s] + S.y1[s]) / 2.0))))
    return chain


def _wrap_links_beside_arcs(elems: list[tuple]) -> list[tuple[tuple[float, float], tuple[float, float]]]:
    """Links round a circle in a wrap group that also holds a drawn arc: each is a gap."""
    out = []
    n = len(elems)
    i = 0
    while i < n:
        if elems[i][0] != "wrap":
            i += 1
            continue
        j = i
        while j + 1 < n and elems[j + 1][0] == "wrap" and elems[j + 1][1] == elems[i][1]:
            j += 1
        group = elems[i:j + 1]
        if any(e[3] for e in group):
            out.extend((e[5], e[6]) for e in group if not e[3])
        i = j + 1
    return out
