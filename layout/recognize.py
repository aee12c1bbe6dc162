"""Recognise belt loops in flat drawing primitives.

A belt path may be drawn as a closed chain of lines and arcs (in any order and
direction), as closed polylines with bulges, or as the free spans alone with the wraps
left to the pulley circles. All three go through the same stages, over one record of
the pieces' ends (:class:`PathEnds`):

1. **end points**: both ends of every piece, with their outward tangents, and the
   circle each end lies on (within the attach tolerance); arcs lying on circles;
2. **linking**: ends within the join tolerance meet (a KD-tree); ends left open on a
   circle are linked in pairs round it (a wrap left to the circle, or a gap beside a
   drawn wrap); other open ends close to each other are linked as gaps; ends still
   open are tried once more within the slip tolerance (a drafter's slip: a span
   rotated about one end, a polyline vertex moved);
3. **walking**: each chain of linked pieces is walked end to end, closed or open;
4. **classifying**: a closed walk is cut into wraps and spans and is a *loop* when at
   least two of its wraps lie on circles and the chain is evidently meant as a belt
   (on a belt layer, on a labelled or spec-named circle, or with most of its spans
   tangent at both ends). Open and branching chains raise path errors only when they
   are evidently meant as a belt too; every other chain that touches circles is
   counted in one ``stray-paths`` note.

Drafting faults of a loop's path (gaps, kinks, arcs off their circle) are recorded as
:class:`Fault` records on its :class:`Chain` and worded by the drafting checks, which
know the loop's span and pulley ids. Work here is in drawing units; tolerances follow
the design's geometry rules.
"""

from __future__ import annotations

import fnmatch
import itertools
import math
from collections import Counter, defaultdict
from dataclasses import dataclass, field
from enum import IntEnum
from typing import Iterator

import numpy as np
import shapely
from numpy.typing import NDArray
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from physics.findings import Finding, Severity

from .errors import FatalInput
from .read import Drawing, Segments, fmt_point as _fmt

__all__ = ["Tolerances", "Wrap", "DrawnSpan", "Fault", "Chain", "Recognition", "PathEnds",
           "recognize_paths", "layer_matches", "BELT_LAYER_WORDS", "Crowded", "box_candidates"]

#: Layer names that show a path is meant as a belt when the spec names no belt layers
#: (common practice: belt, rope and cable layers are named so).
BELT_LAYER_WORDS = ("*belt*", "*rope*", "*cable*")
#: A chain is belt-like when at least this share of its spans (or pieces) is tangent at both ends.
BELT_LIKE_SHARE = 0.5
#: Most pairs of distinct line ends within the join tolerance of each other that are listed,
#: or :data:`NEAR_END_PAIRS_PER_END` per end when that is more: a drawing whose ends crowd
#: closer (thousands of ends within a hair of one another) is refused with one line.
MAX_NEAR_END_PAIRS = 2_000_000
#: Pairs of near line ends allowed per distinct end point (above the floor).
NEAR_END_PAIRS_PER_END = 8
#: Most candidate circles tried for the line ends over the whole drawing (an end inside the
#: square reach of a circle is a candidate), or :data:`RIM_CANDIDATES_PER_END` per end when
#: that is more: a thousand large circles over a hundred thousand lines are refused with one
#: line instead of taking minutes.
MAX_RIM_CANDIDATES = 30_000_000
#: Candidate circles allowed per line end (above the floor).
RIM_CANDIDATES_PER_END = 20
#: Points queried against the circles' boxes at a time (bounds the candidates held in memory).
BOX_QUERY_BLOCK = 1024
#: Beyond this many ends arriving on one circle, pairing is greedy instead of exhaustive.
_EXHAUSTIVE_PAIRS = 4


@dataclass(frozen=True, slots=True)
class Tolerances:
    """Geometry tolerances, as fractions of a circle radius (angles in degrees).

    ``join``: how far two drawn ends may be apart and still meet, also the
    concentricity of an arc with its circle; ``attach``: how far a drawn end may miss
    its circle radially and still belong to that wrap; ``slip``: how far an end left
    open may miss its wrap and still close the loop across that pulley (with an error);
    ``tangent_deg`` and ``tangent_offset``: how far a span may be off the exact tangent.
    """

    join: float = 1e-3
    attach: float = 0.1
    slip: float = 0.25
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


class Crowded(Exception):
    """A drawing asks recognition for more candidates than it looks at; :meth:`line` says so."""

    SAYS = "{path}: {pairs} candidates, more than the {limit} looked at"

    def __init__(self, pairs: int, limit: int) -> None:
        super().__init__(f"{pairs} candidates, limit {limit}")
        self.pairs, self.limit = pairs, limit

    def line(self, path: str) -> str:
        return self.SAYS.format(path=path, pairs=self.pairs, limit=self.limit)


class CrowdedEnds(Crowded):
    """More pairs of line ends lie within the join tolerance than :func:`_near_pairs` lists."""

    SAYS = ("{path}: {pairs} pairs of line ends lie within the join tolerance of one another, more than "
            "the {limit} read (layout.recognize.MAX_NEAR_END_PAIRS); ends crowded this close are not a "
            "routing drawing: clean them up or lower the spec's [tolerances] join")


class CrowdedCircles(Crowded):
    """Line ends fall within the reach of circles more often than :func:`_attach` tries."""

    SAYS = ("{path}: line ends fall within the reach of circles {pairs} times or more, over the {limit} "
            "tried (layout.recognize.MAX_RIM_CANDIDATES): the drawing holds many large circles over many "
            "lines; check the drive's part of it on its own")


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
    slipped: bool = False         # its drawn arc is off the circle by a drafter's slip


@dataclass(slots=True)
class DrawnSpan:
    """The drawn pieces between two consecutive wraps (lines, in travel order)."""

    pieces: list[tuple[int, bool]] = field(default_factory=list)   # (segment, forward)


@dataclass(frozen=True, slots=True)
class Fault:
    """A drafting fault in a loop's drawn path, in drawing terms, before it is worded.

    ``kind`` is ``gap`` (the path is open between ``a`` and ``b``), ``kink`` (a span
    bends at ``a``), ``off-arc`` (an arc of the path on no circle, from ``a`` to ``b``)
    or ``slipped-arc`` (an arc drawn as the wrap on ``circle`` but off it by up to the
    slip tolerance). ``segments`` are the pieces either side; ``circle`` is the circle
    the fault lies at, or -1.
    """

    kind: str
    a: tuple[float, float]
    b: tuple[float, float]
    segments: tuple[int, ...]
    circle: int = -1
    size: float = 0.0


@dataclass(slots=True)
class Chain:
    """One closed walk that is a belt loop, in the drawing's terms."""

    wraps: list[Wrap]
    spans: list[DrawnSpan]        # span k runs from wraps[k] to wraps[k + 1]
    segments: list[int]
    layer: str
    order: int                    # smallest segment index: drawing order of the loop
    findings: list[Finding] = field(default_factory=list)
    faults: list[Fault] = field(default_factory=list)

    def reversed(self) -> "Chain":
        """The same loop travelled the other way."""
        n = len(self.wraps)
        wraps = [Wrap(w.circle, -w.turn, w.drawn, w.radius, w.segments, w.leave, w.arrive, w.slipped)
                 for w in reversed(self.wraps)]
        spans = []
        for k in range(n):
            # new span k runs from new wrap k (old n-1-k) to new wrap k+1 (old n-2-k):
            # that is old span n-2-k reversed
            old = self.spans[(n - 2 - k) % n]
            spans.append(DrawnSpan([(s, not f) for s, f in reversed(old.pieces)]))
        return Chain(wraps, spans, self.segments, self.layer, self.order, self.findings, self.faults)

    def rotated(self, k: int) -> "Chain":
        """The same loop starting at wrap ``k``."""
        return Chain(self.wraps[k:] + self.wraps[:k], self.spans[k:] + self.spans[:k],
                     self.segments, self.layer, self.order, self.findings, self.faults)


@dataclass(slots=True)
class Recognition:
    """What :func:`recognize_paths` found."""

    chains: list[Chain]
    circle_alias: NDArray[np.int64]      # duplicate circles point at the one kept
    findings: list[Finding]


class Link(IntEnum):
    """How an end is linked to its partner end."""

    NONE = 0
    JOIN = 1        # the two ends meet
    WRAP = 2        # the belt goes round a circle from one to the other
    GAP = 3         # open space between them


@dataclass(slots=True)
class PathEnds:
    """Both ends of every drawn piece: end ``e`` belongs to piece ``e // 2``, its start when
    ``e`` is even. Arrays of shape ``(2 n, ...)``."""

    point: NDArray[np.float64]           # (2n, 2)
    tangent: NDArray[np.float64]         # (2n, 2) outward unit tangent
    circle: NDArray[np.int64]            # circle the end lies on (attach tolerance), -1
    near: NDArray[np.int64]              # circle the end lies near (slip tolerance), -1
    cluster: NDArray[np.int64]           # ends within the join tolerance share a cluster
    partner: NDArray[np.int64]           # the end linked to, -1
    link: NDArray[np.int8]               # a :class:`Link`
    link_circle: NDArray[np.int64]       # the circle of a WRAP link, -1

    def connect(self, e: int, f: int, kind: Link, circle: int = -1) -> None:
        self.partner[e], self.partner[f] = f, e
        self.link[e] = self.link[f] = kind
        self.link_circle[e] = self.link_circle[f] = circle

    def xy(self, e: int) -> tuple[float, float]:
        return (float(self.point[e, 0]), float(self.point[e, 1]))


@dataclass(frozen=True, slots=True)
class _Scene:
    """The pieces, the circles kept after removing duplicates, and what counts as evidence."""

    S: Segments
    cx: NDArray[np.float64]
    cy: NDArray[np.float64]
    cr: NDArray[np.float64]
    tol: Tolerances
    height: float                        # belt height in drawing units, 0 when unknown
    belt_height: float | None
    named: NDArray[np.bool_]             # per kept circle: labelled or named by the spec
    belt_layers: tuple[str, ...]         # patterns that show a path is meant as a belt
    restrict: bool                       # the spec's belt layers exist: loops only on them


@dataclass(slots=True)
class _Arcs:
    """Per piece: the circle an arc lies on (-1), and how."""

    circle: NDArray[np.int64]
    offset: NDArray[np.bool_]            # at a belt height outside its circle (back idler)
    slipped: NDArray[np.bool_]           # off its circle by a drafter's slip


@dataclass(slots=True)
class _Walk:
    pieces: list[tuple[int, bool]]       # (segment, forward) in walking order
    links: list[tuple[int, int]]         # (end left, end reached) after each piece
    closed: bool
    open_end: int = -1


class _Element:
    """One element of a closed walk: a piece, or a link between two pieces."""

    __slots__ = ("kind", "circle", "turn", "drawn", "segment", "a", "b")

    def __init__(self, kind: str, circle: int, turn: int, drawn: bool, segment: int,
                 a: tuple[float, float], b: tuple[float, float]) -> None:
        self.kind, self.circle, self.turn, self.drawn = kind, circle, turn, drawn
        self.segment, self.a, self.b = segment, a, b


@dataclass(slots=True)
class _Strays:
    """Chains touching circles that are not evidently belts, counted for one note."""

    count: int = 0
    at: tuple[float, float] | None = None

    def add(self, at: tuple[float, float]) -> None:
        self.count += 1
        if self.at is None:
            self.at = at


def layer_matches(layer: str, patterns: tuple[str, ...]) -> bool:
    """Whether ``layer`` matches one of the glob ``patterns`` (case-insensitive)."""
    low = layer.lower()
    return any(fnmatch.fnmatchcase(low, p.lower()) for p in patterns)




# --------------------------------------------------------------------------- the whole


def recognize_paths(d: Drawing, *, tol: Tolerances = Tolerances(),
                    belt_layers: tuple[str, ...] = (), belt_height: float | None = None,
                    named: frozenset[int] | set[int] = frozenset()) -> Recognition:
    """Find the belt loops drawn in ``d``.

    Parameters
    ----------
    d
        The drawing's primitives.
    tol
        Tolerances (fractions of radius).
    belt_layers
        Glob patterns; when the drawing has matching layers, only chains on them are
        loops, and chains elsewhere that would be loops are reported as notes. Without
        them, layers named like :data:`BELT_LAYER_WORDS` are evidence of a belt.
    belt_height
        Belt height in drawing units, when known: a back idler may be drawn at its
        outside diameter, the path's arc that far outside its circle.
    named
        Circles (the drawing's numbering) that a label or the spec names as pulleys:
        evidence that a path touching them is meant as a belt.
    """
    alias, duplicates = _dedup_circles(d, tol)
    keep = np.flatnonzero(alias == np.arange(len(alias)))
    S = d.segments
    if len(S) == 0 or keep.size == 0:
        return Recognition([], alias, _duplicate_note(d, duplicates, []))
    scene = _scene(d, keep, tol, belt_layers, belt_height, named)
    ends, arcs = _linked_ends(scene, d.path)
    comp = _components(ends, len(S))
    relevant = _relevant_components(ends, arcs, comp)
    segs = np.flatnonzero(relevant[comp])
    dropped, seg_dups = _duplicate_pieces(ends, S)
    branches = _link_all(segs, dropped, ends, arcs, comp, scene)
    evidence = _Evidence(comp, ends, arcs, scene)
    chains, strays, findings = _walk_all(segs, dropped, ends, arcs, evidence, scene, d, keep)
    findings.extend(_branch_findings(branches, ends, comp, evidence, scene, strays))
    if strays.count:
        findings.append(_stray_note(strays))
    findings[:0] = _duplicate_note(d, duplicates, seg_dups)
    for ch in chains:
        _to_drawing_numbering(ch, keep)
    chains.sort(key=lambda ch: (int(S.order[ch.order]) if len(S.order) else 0, ch.order))
    return Recognition(chains, alias, findings)


def _linked_ends(scene: _Scene, path: str) -> tuple[PathEnds, _Arcs]:
    """The pieces' ends on their circles and in their clusters, and the arcs on circles.

    Raises
    ------
    FatalInput
        When the drawing asks for more candidates than recognition looks at (:class:`Crowded`).
    """
    try:
        ends = _end_points(scene)
        arcs = _arcs_on_circles(scene, ends)
        _cluster_ends(ends, scene)
    except Crowded as err:
        raise FatalInput(err.line(path)) from err
    return ends, arcs


def _scene(d: Drawing, keep: NDArray[np.int64], tol: Tolerances, belt_layers: tuple[str, ...],
           belt_height: float | None, named: frozenset[int] | set[int]) -> _Scene:
    c = d.circles
    named_kept = np.zeros(keep.size, dtype=bool)
    if named:
        named_kept = np.isin(keep, np.fromiter(named, dtype=np.int64))
    restrict = bool(belt_layers) and any(layer_matches(layer, belt_layers) for layer in set(d.segments.layer))
    return _Scene(d.segments, c.x[keep], c.y[keep], c.r[keep], tol, belt_height or 0.0, belt_height,
                  named_kept, belt_layers or BELT_LAYER_WORDS, restrict)


def _to_drawing_numbering(ch: Chain, keep: NDArray[np.int64]) -> None:
    """Map a chain's circle indices from the kept circles back to the drawing's numbering."""
    for w in ch.wraps:
        w.circle = int(keep[w.circle])
    ch.faults = [Fault(f.kind, f.a, f.b, f.segments, int(keep[f.circle]) if f.circle >= 0 else -1, f.size)
                 for f in ch.faults]


# --------------------------------------------------------------------------- duplicates


def _dedup_circles(d: Drawing, tol: Tolerances) -> tuple[NDArray[np.int64], list[tuple[int, int]]]:
    """Each circle's alias (the circle it repeats, or itself) and the (copy, kept) pairs.

    Exact copies go to their first circle at once (one sort); the other circles are searched
    in (x, y, r), each within its own tolerance, so that concentric circles of other radii
    are never candidates; only circles with a neighbour are looked at, each group once from
    its first circle, so 200 000 copies of one circle, drawn exactly or a hair apart, cost
    one search.
    """
    c = d.circles
    n = len(c)
    alias = np.arange(n)
    if n < 2:
        return alias, []
    xyr = np.column_stack([c.x, c.y, c.r])
    firsts = _exact_copies(xyr, alias)
    if firsts.size > 1:
        _near_copies(d, xyr, firsts, alias, tol)
    alias = alias[alias]                  # an exact copy of a near copy repeats what that repeats
    copies = np.flatnonzero(alias != np.arange(n))
    return alias, sorted(zip(copies.tolist(), alias[copies].tolist()), key=lambda p: (p[1], p[0]))


def _exact_copies(xyr: NDArray[np.float64], alias: NDArray[np.int64]) -> NDArray[np.int64]:
    """Alias every circle drawn exactly like an earlier one to the first; return the firsts."""
    order = np.lexsort((xyr[:, 2], xyr[:, 1], xyr[:, 0]))      # stable: a group's first circle first
    Q = xyr[order]
    new = np.ones(len(Q), dtype=bool)
    new[1:] = (Q[1:] != Q[:-1]).any(axis=1)
    first = order[new]
    alias[order] = first[np.cumsum(new) - 1]
    return np.sort(first)


def _near_copies(d: Drawing, xyr: NDArray[np.float64], firsts: NDArray[np.int64], alias: NDArray[np.int64],
                 tol: Tolerances) -> None:
    """Alias each of ``firsts`` that repeats an earlier one within the join tolerance."""
    c = d.circles
    sub = xyr[firsts]
    reach = tol.join_abs(sub[:, 2], np.abs(sub[:, :2]).max(axis=1)) * math.sqrt(2.0)
    tree = cKDTree(sub)
    nearest = tree.query(sub, k=2)[0][:, 1]              # the nearest other circle: no count of a crowd
    for a in np.flatnonzero(nearest <= reach).tolist():
        i = int(firsts[a])
        if alias[i] != i:
            continue
        for b in sorted(tree.query_ball_point(sub[a], r=reach[a])):
            j = int(firsts[b])
            if j <= i or alias[j] != j:
                continue
            lim = float(tol.join_abs(min(c.r[i], c.r[j]), max(abs(c.x[i]), abs(c.y[i]))))
            if math.hypot(c.x[i] - c.x[j], c.y[i] - c.y[j]) <= lim and abs(c.r[i] - c.r[j]) <= lim:
                alias[j] = i


def _duplicate_pieces(ends: PathEnds, S: Segments) -> tuple[NDArray[np.bool_], list[tuple[int, int]]]:
    """Pieces that repeat an earlier one (same clusters, same sweep): dropped, with (copy, kept) pairs."""
    ca, cb = ends.cluster[0::2], ends.cluster[1::2]
    sw = np.round(S.sweep, 6)
    flip = ca > cb
    key = np.column_stack([np.where(flip, cb, ca), np.where(flip, ca, cb), np.where(flip, -sw, sw) + 0.0])
    _, first, inverse = np.unique(key, axis=0, return_index=True, return_inverse=True)
    kept = first[inverse.reshape(-1)]
    dropped = kept != np.arange(len(S))
    return dropped, [(int(s), int(kept[s])) for s in np.flatnonzero(dropped)]


def _duplicate_note(d: Drawing, circles: list[tuple[int, int]], pieces: list[tuple[int, int]]) -> list[Finding]:
    """One ``duplicate-entity`` note for all repeated entities, located at the first."""
    pieces = list({d.segments.handle[s]: (s, o) for s, o in pieces}.values())    # one per entity
    n = len(circles) + len(pieces)
    if n == 0:
        return []
    c, S = d.circles, d.segments
    if circles:
        j, i = circles[0]
        first = f"CIRCLE #{c.handle[j]} on {c.layer[j]} at {_fmt((c.x[j], c.y[j]))} repeats CIRCLE #{c.handle[i]}"
        at = (float(c.x[j]), float(c.y[j]))
    else:
        s, o = pieces[0]
        first = f"{S.kind[s]} #{S.handle[s]} on {S.layer[s]} repeats {S.kind[o]} #{S.handle[o]}"
        at = (float(S.x0[s]), float(S.y0[s]))
    what = "entity repeats another and is" if n == 1 else "entities repeat others and are"
    return [Finding(Severity.NOTE, "duplicate-entity",
                    f"{n} {what} ignored ({first}{', and more' if n > 1 else ''})", at=at,
                    data={"count": n, "circles": len(circles), "pieces": len(pieces)})]


# --------------------------------------------------------------------------- end points


def _end_points(scene: _Scene) -> PathEnds:
    """Both ends of every piece, their outward tangents, and the circle each lies on."""
    S = scene.S
    n = len(S)
    P = np.empty((2 * n, 2))
    P[0::2, 0], P[0::2, 1] = S.x0, S.y0
    P[1::2, 0], P[1::2, 1] = S.x1, S.y1
    T = np.empty_like(P)
    chord = np.column_stack([S.x1 - S.x0, S.y1 - S.y0])
    clen = np.hypot(chord[:, 0], chord[:, 1])
    clen[clen == 0] = 1.0
    line_dir = chord / clen[:, None]
    T[0::2] = -line_dir
    T[1::2] = line_dir
    a = np.flatnonzero(S.sweep != 0.0)
    if a.size:
        sg = np.sign(S.sweep[a])[:, None]
        rr = S.r[a][:, None]
        r0 = np.column_stack([S.x0[a] - S.cx[a], S.y0[a] - S.cy[a]])
        r1 = np.column_stack([S.x1[a] - S.cx[a], S.y1[a] - S.cy[a]])
        T[2 * a] = -sg * np.column_stack([-r0[:, 1], r0[:, 0]]) / rr
        T[2 * a + 1] = sg * np.column_stack([-r1[:, 1], r1[:, 0]]) / rr
    m = 2 * n
    on, near = _attach(P, scene, (scene.tol.attach, max(scene.tol.slip, scene.tol.attach)))
    return PathEnds(P, T, on, near, np.arange(m),
                    np.full(m, -1, np.int64), np.zeros(m, np.int8), np.full(m, -1, np.int64))


def _attach(P: NDArray[np.float64], scene: _Scene, fracs: tuple[float, ...]) -> list[NDArray[np.int64]]:
    """For each point and each fraction, the circle it lies on within that fraction of the
    radius (the one it misses least), or -1; one spatial query for all fractions.

    A back idler may be drawn at its outside diameter: a point may also lie the belt's
    height outside its circle. The points are queried in blocks, so the candidates in
    memory stay few; the candidates over the whole drawing are limited
    (:data:`MAX_RIM_CANDIDATES`).
    """
    cx, cy, cr = scene.cx, scene.cy, scene.cr
    outs = [np.full(len(P), -1, dtype=np.int64) for _ in fracs]
    if not len(P):
        return outs
    reach = cr * (1 + max(fracs)) + scene.height
    tree = shapely.STRtree(shapely.box(cx - reach, cy - reach, cx + reach, cy + reach))
    limit = max(MAX_RIM_CANDIDATES, RIM_CANDIDATES_PER_END * len(P))
    for qi, qc in box_candidates(tree, P, limit, CrowdedCircles):
        _attach_block(P, qi, qc, scene, fracs, outs)
    return outs


def box_candidates(tree: shapely.STRtree, xy: NDArray[np.float64], limit: int, crowded: type[Crowded]
                   ) -> Iterator[tuple[NDArray[np.int64], NDArray[np.int64]]]:
    """The (point, box) candidates of the points ``xy`` in ``tree``'s boxes, as index arrays,
    :data:`BOX_QUERY_BLOCK` points at a time (blocks without a candidate are skipped).

    Raises
    ------
    Crowded
        ``crowded(seen, limit)`` once more than ``limit`` candidates are found in all.
    """
    seen = 0
    for lo in range(0, len(xy), BOX_QUERY_BLOCK):
        qi, qc = tree.query(shapely.points(xy[lo:lo + BOX_QUERY_BLOCK]))
        seen += qi.size
        if seen > limit:
            raise crowded(seen, limit)
        if qi.size:
            yield qi + lo, qc


def _attach_block(P: NDArray[np.float64], qi0: NDArray[np.int64], qc0: NDArray[np.int64], scene: _Scene,
                  fracs: tuple[float, ...], outs: list[NDArray[np.int64]]) -> None:
    """Set ``outs`` for the points ``qi0``, each tried on its candidate circle ``qc0``."""
    cx, cy, cr, h = scene.cx, scene.cy, scene.cr, scene.height
    dist = np.hypot(P[qi0, 0] - cx[qc0], P[qi0, 1] - cy[qc0])
    miss0 = np.minimum(np.abs(dist - cr[qc0]), np.abs(dist - cr[qc0] - h))
    for out, frac in zip(outs, fracs):
        ok = miss0 <= frac * cr[qc0]
        qi, qc, miss = qi0[ok], qc0[ok], miss0[ok]
        order = np.lexsort((cr[qc], miss, qi))        # per point: smallest miss first
        qi, qc = qi[order], qc[order]
        first = np.ones(qi.size, dtype=bool)
        first[1:] = qi[1:] != qi[:-1]
        out[qi[first]] = qc[first]


def _arcs_on_circles(scene: _Scene, ends: PathEnds) -> _Arcs:
    """Arcs on circles: concentric within the join tolerance with an equal radius (or a back
    offset); then arcs off every circle that a slip explains."""
    S = scene.S
    n = len(S)
    arcs = _Arcs(np.full(n, -1, np.int64), np.zeros(n, bool), np.zeros(n, bool))
    a = np.flatnonzero(S.sweep != 0.0)
    if not a.size:
        return arcs
    ctree = cKDTree(np.column_stack([scene.cx, scene.cy]))
    lim = scene.tol.join_abs(S.r[a], np.maximum(np.abs(S.cx[a]), np.abs(S.cy[a])))
    near = ctree.query_ball_point(np.column_stack([S.cx[a], S.cy[a]]), r=lim)
    for k, cands in zip(a.tolist(), near):
        if cands:
            _arc_on(k, cands, scene, arcs)
    off = a[arcs.circle[a] < 0]
    off = off[(ends.circle[2 * off] >= 0) | (ends.circle[2 * off + 1] >= 0)]    # one end on a circle
    if off.size:
        slip = min(scene.tol.slip, 0.5)
        reach = slip * S.r[off] / (1.0 - slip)         # slip * r_c, with r_c <= r_arc / (1 - slip)
        cands = ctree.query_ball_point(np.column_stack([S.cx[off], S.cy[off]]), r=reach)
        for k, cs in zip(off.tolist(), cands):
            c, slipped = _slipped_circle(k, cs, scene, ends)
            if c >= 0:
                arcs.circle[k], arcs.slipped[k] = c, slipped
    return arcs


def _arc_on(k: int, cands: list[int], scene: _Scene, arcs: _Arcs) -> None:
    """Put arc ``k`` on the concentric candidate circle of nearest radius, if close enough."""
    S, cr = scene.S, scene.cr
    best = min(cands, key=lambda c: abs(S.r[k] - cr[c]))
    best_dr = abs(S.r[k] - cr[best])
    rl = float(scene.tol.join_abs(S.r[k], max(abs(S.cx[k]), abs(S.cy[k]))))
    if best_dr <= rl:
        arcs.circle[k] = best
    elif scene.belt_height is not None and 0 < S.r[k] - cr[best] <= scene.belt_height + rl:
        arcs.circle[k] = best
        arcs.offset[k] = True


def _slipped_circle(k: int, cands: list[int], scene: _Scene, ends: PathEnds) -> tuple[int, bool]:
    """The circle arc ``k`` is the wrap on although its centre is off it, and whether it slipped.

    An arc whose ends and middle all lie on a circle within the join tolerance is on it (a
    short arc's centre is ill-conditioned); one with an end on the circle and the rest within
    the slip tolerance, its radius within it too, is a slip (a polyline vertex dragged).
    ``(-1, False)`` when there is none.
    """
    S, tol = scene.S, scene.tol
    a0 = math.atan2(S.y0[k] - S.cy[k], S.x0[k] - S.cx[k])
    mid = (S.cx[k] + S.r[k] * math.cos(a0 + S.sweep[k] / 2), S.cy[k] + S.r[k] * math.sin(a0 + S.sweep[k] / 2))
    for c in sorted(cands, key=lambda c: abs(S.r[k] - scene.cr[c])):
        r = float(scene.cr[c])
        centre = (scene.cx[c], scene.cy[c])
        join = float(tol.join_abs(r, max(abs(centre[0]), abs(centre[1]))))
        if abs(S.r[k] - r) > tol.slip * r:
            continue
        ends_miss = [abs(math.hypot(*(ends.point[e] - centre)) - r) for e in (2 * k, 2 * k + 1)]
        mid_miss = abs(math.hypot(mid[0] - centre[0], mid[1] - centre[1]) - r)
        if max(ends_miss + [mid_miss]) <= join:
            return int(c), False
        if min(ends_miss) <= join and max(ends_miss + [mid_miss]) <= tol.slip * r:
            return int(c), True
    return -1, False


# --------------------------------------------------------------------------- linking


def _cluster_ends(ends: PathEnds, scene: _Scene) -> None:
    """Ends within the join tolerance of each other share a cluster (never both ends of one piece).

    Each end is searched within its own tolerance (one end far out must not widen the search
    for all); a pair meets within the larger of its two tolerances. Ends drawn at one point
    are taken together first, so a thousand lines meeting at a point cost one search, and the
    pairs of distinct points are counted before they are listed (:data:`MAX_NEAR_END_PAIRS`).
    """
    P, cr = ends.point, scene.cr
    r_ref = np.where(ends.circle >= 0, cr[np.maximum(ends.circle, 0)], np.median(cr))
    etol = scene.tol.join_abs(r_ref, np.abs(P).max(axis=1))
    ends.cluster = end_clusters(P, etol)


def end_clusters(P: NDArray[np.float64], etol: NDArray[np.float64]) -> NDArray[np.int64]:
    """Cluster of each end ``P[e]`` (of piece ``e // 2``): ends ``e``, ``f`` of other pieces
    within ``max(etol[e], etol[f])`` of each other share one, transitively."""
    m = len(P)
    at = _Coincident.of(P, etol)
    edges = np.concatenate([at.same_point_edges(), at.cross_edges(*_near_pairs(at.points, at.tol))])
    if not edges.size:
        return np.arange(m)
    g = coo_matrix((np.ones(len(edges)), (edges[:, 0], edges[:, 1])), shape=(m, m))
    return connected_components(g, directed=False)[1].astype(np.int64)


@dataclass(frozen=True, slots=True)
class _Coincident:
    """Ends grouped by the point they are drawn at: end ``e`` is in group ``inv[e]``, at
    ``points[inv[e]]``; ``count`` ends per group, ``top`` the end of the widest tolerance
    ``tol`` and ``tol2`` the widest of the others' (-1 when alone).

    A group's ends all meet each other, so two groups meet when an end of each, not of one
    piece, is within the larger of their two tolerances. The two ends of a piece of no
    length meet only through other ends, so when they are alone at their point each is a
    group of its own.
    """

    points: NDArray[np.float64]
    inv: NDArray[np.int64]
    count: NDArray[np.int64]
    top: NDArray[np.int64]
    tol: NDArray[np.float64]
    tol2: NDArray[np.float64]

    @classmethod
    def of(cls, P: NDArray[np.float64], etol: NDArray[np.float64]) -> "_Coincident":
        order = np.lexsort((-etol, P[:, 1], P[:, 0]))      # by point, the widest tolerance first
        Q = P[order]
        new = np.ones(len(Q), dtype=bool)
        new[1:] = (Q[1:] != Q[:-1]).any(axis=1)
        pos = np.flatnonzero(new)
        count = np.diff(np.append(pos, len(Q)))
        # the second end of a lone piece of no length starts a group of its own
        lone = (count == 2) & (order[pos] // 2 == order[np.minimum(pos + 1, len(Q) - 1)] // 2)
        new[pos[lone] + 1] = True
        starts = np.flatnonzero(new)
        inv = np.empty(len(P), dtype=np.int64)
        inv[order] = np.cumsum(new) - 1
        count = np.diff(np.append(starts, len(Q)))
        second = np.where(count > 1, etol[order[np.minimum(starts + 1, len(Q) - 1)]], -1.0)
        return cls(Q[starts], inv, count, order[starts], etol[order[starts]], second)

    def same_point_edges(self) -> NDArray[np.int64]:
        """Every end joined to the first end of its group."""
        e = np.arange(len(self.inv))
        rep = self.top[self.inv]
        keep = e != rep
        return np.column_stack([rep[keep], e[keep]])

    def cross_edges(self, pairs: NDArray[np.int64], dist: NDArray[np.float64]) -> NDArray[np.int64]:
        """The groups of ``pairs``, ``dist`` apart, that meet, joined by their first ends."""
        u, v = pairs[:, 0], pairs[:, 1]
        tu, tv = self.top[u], self.top[v]
        one_u, one_v = self.count[u] == 1, self.count[v] == 1
        # a lone end whose piece's other end is the widest of the group beside it meets
        # that group only through the group's other ends
        reach_u = np.where(one_v & (tu // 2 == tv // 2), self.tol2[u], self.tol[u])
        reach_v = np.where(one_u & (tu // 2 == tv // 2), self.tol2[v], self.tol[v])
        meet = (dist <= np.maximum(reach_u, reach_v)) & ~(one_u & one_v & (tu // 2 == tv // 2))
        return np.column_stack([tu, tv])[meet].astype(np.int64, copy=False).reshape(-1, 2)


def _near_pairs(U: NDArray[np.float64], tol: NDArray[np.float64]
                ) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
    """Pairs ``(i, j)``, ``i < j``, of distinct points within the larger of their tolerances,
    and their distances.

    Most points share about one tolerance: their pairs come from one search within twice the
    median; the few with a wider one are searched each within its own. The pairs are
    counted before they are listed.

    Raises
    ------
    CrowdedEnds
        When more than :data:`MAX_NEAR_END_PAIRS` (or :data:`NEAR_END_PAIRS_PER_END` per point)
        pairs are that close.
    """
    if len(U) < 2:
        return np.empty((0, 2), np.int64), np.empty(0)
    tree = cKDTree(U)
    r0 = 2.0 * float(np.median(tol))
    wide = np.flatnonzero(tol > r0)
    n = (int(tree.count_neighbors(tree, r0)) - len(U)) // 2
    if wide.size:
        n += int(tree.query_ball_point(U[wide], r=tol[wide], return_length=True).sum())
    limit = max(MAX_NEAR_END_PAIRS, NEAR_END_PAIRS_PER_END * len(U))
    if n > limit:
        raise CrowdedEnds(n, limit)
    pairs = [tree.query_pairs(r0, output_type="ndarray").reshape(-1, 2)]
    if wide.size:
        hits = tree.query_ball_point(U[wide], r=tol[wide], return_sorted=False)
        sizes = np.fromiter((len(h) for h in hits), dtype=np.int64, count=wide.size)
        pairs.append(np.column_stack([np.repeat(wide, sizes),
                                      np.fromiter(itertools.chain.from_iterable(hits), dtype=np.int64,
                                                  count=int(sizes.sum()))]))
    p = np.concatenate(pairs).astype(np.int64, copy=False)
    p = np.sort(p[p[:, 0] != p[:, 1]], axis=1)
    p = np.unique(p, axis=0) if wide.size else p
    dist = np.hypot(*(U[p[:, 0]] - U[p[:, 1]]).T)
    near = dist <= np.maximum(tol[p[:, 0]], tol[p[:, 1]])
    return p[near], dist[near]


def _components(ends: PathEnds, n: int) -> NDArray[np.int64]:
    """Component per piece: pieces whose ends share clusters, transitively."""
    cluster = ends.cluster
    ncl = int(cluster.max()) + 1
    g = coo_matrix((np.ones(n), (cluster[0::2], cluster[1::2])), shape=(ncl, ncl))
    _, comp_of_cluster = connected_components(g, directed=False)
    return comp_of_cluster[cluster[0::2]]


def _relevant_components(ends: PathEnds, arcs: _Arcs, comp: NDArray[np.int64]) -> NDArray[np.bool_]:
    """Components touching a circle (an end on one, or an arc on one)."""
    touching = (ends.circle[0::2] >= 0) | (ends.circle[1::2] >= 0) | (arcs.circle >= 0)
    relevant = np.zeros(int(comp.max()) + 1, dtype=bool)
    relevant[comp[touching]] = True
    return relevant


def _link_all(segs: NDArray[np.int64], dropped: NDArray[np.bool_], ends: PathEnds, arcs: _Arcs,
              comp: NDArray[np.int64], scene: _Scene) -> list[int]:
    """Link the ends of the pieces in ``segs``; return one end of each branching cluster."""
    live = segs[~dropped[segs]]
    members: dict[int, list[int]] = defaultdict(list)
    for e in np.concatenate([2 * live, 2 * live + 1]).tolist():
        members[int(ends.cluster[e])].append(e)
    branches: list[int] = []
    open_ends: list[int] = []
    for es in members.values():
        if len(es) == 2:
            ends.connect(es[0], es[1], Link.JOIN)
        elif len(es) > 2:
            branches.append(es[0])
        else:
            open_ends.append(es[0])
    _link_round_circles(open_ends, ends.circle, ends, arcs, scene)
    _link_gaps([e for e in open_ends if ends.partner[e] < 0], live, ends, comp, scene)
    still = [e for e in open_ends if ends.partner[e] < 0]
    if still:
        _link_round_circles(still, ends.near, ends, arcs, scene)     # a drafter's slip
    return branches


def _link_round_circles(open_ends: list[int], circle: NDArray[np.int64], ends: PathEnds, arcs: _Arcs,
                        scene: _Scene) -> None:
    """Pair open ends lying on one circle (``circle[end]``): the belt goes round it from one
    to the other. Radial pieces (centre marks, leaders) are left out."""
    by_circle: dict[int, list[int]] = defaultdict(list)
    for e in open_ends:
        c = int(circle[e])
        if c < 0:
            continue
        rv = ends.point[e] - (scene.cx[c], scene.cy[c])
        rn = math.hypot(rv[0], rv[1])
        if rn == 0:
            continue
        sin_t = (rv[0] * ends.tangent[e, 1] - rv[1] * ends.tangent[e, 0]) / rn
        if abs(sin_t) >= 0.5:
            by_circle[c].append(e)
    for c, es in by_circle.items():
        for e, f in _pair_round_circle(c, es, ends, scene, arcs.circle):
            ends.connect(e, f, Link.WRAP, c)


def _link_gaps(rest: list[int], live: NDArray[np.int64], ends: PathEnds, comp: NDArray[np.int64],
               scene: _Scene) -> None:
    """Link mutually nearest open ends within the attach tolerance of their chains' circles."""
    if len(rest) < 2:
        return
    comp_r: dict[int, float] = {}
    for e in np.concatenate([2 * live, 2 * live + 1]).tolist():
        c = int(ends.circle[e])
        if c >= 0:
            k = int(comp[e // 2])
            comp_r[k] = min(comp_r.get(k, math.inf), float(scene.cr[c]))
    dist, idx = cKDTree(ends.point[rest]).query(ends.point[rest], k=2)
    for a_i, e in enumerate(rest):
        b_i = int(idx[a_i, 1])
        f = rest[b_i]
        if ends.partner[e] >= 0 or ends.partner[f] >= 0 or int(idx[b_i, 1]) != a_i or f // 2 == e // 2:
            continue
        rlim = min(comp_r.get(int(comp[e // 2]), math.inf), comp_r.get(int(comp[f // 2]), math.inf))
        if math.isfinite(rlim) and dist[a_i, 1] <= scene.tol.attach * rlim:
            ends.connect(e, f, Link.GAP)


def _pair_round_circle(c: int, es: list[int], ends: PathEnds, scene: _Scene,
                       arc_circle: NDArray[np.int64]) -> list[tuple[int, int]]:
    """Pair open ends on circle ``c``: each pair is the belt going round the circle.

    An end whose outward tangent turns counter-clockwise round the centre (``+``) pairs with
    one turning clockwise (``-``); the wrap between them runs counter-clockwise from the
    ``+`` end. Where several belts touch one circle (a two-groove pulley drawn once) the
    pairing chosen keeps ends of one layer together, makes gaps next to drawn arcs as short
    as possible, and makes the shortest wrap left to the circle as long as possible (a belt
    cannot wrap nothing).
    """
    P, T, layers = ends.point, ends.tangent, scene.S.layer
    cx, cy = scene.cx[c], scene.cy[c]
    ang = {e: math.atan2(P[e, 1] - cy, P[e, 0] - cx) for e in es}
    plus = sorted((e for e in es if (P[e, 0] - cx) * T[e, 1] - (P[e, 1] - cy) * T[e, 0] > 0), key=ang.get)
    minus = [e for e in es if e not in plus]
    if not plus or not minus:
        return []
    if len(plus) == 1 and len(minus) == 1:
        return [] if plus[0] // 2 == minus[0] // 2 else [(plus[0], minus[0])]

    def span(e: int, f: int) -> float:
        return (ang[f] - ang[e]) % (2 * math.pi)

    def beside_arc(e: int, f: int) -> bool:
        return arc_circle[e // 2] == c or arc_circle[f // 2] == c

    if len(plus) > _EXHAUSTIVE_PAIRS or len(minus) > _EXHAUSTIVE_PAIRS:
        return _pair_greedy(plus, minus, span)
    best: tuple | None = None
    best_pairs: list[tuple[int, int]] = []
    k = min(len(plus), len(minus))
    for chosen in itertools.permutations(minus, k):
        for sub in itertools.combinations(plus, k):
            pairs = [(e, f) for e, f in zip(sub, chosen) if e // 2 != f // 2]
            if len(pairs) < k:
                continue
            same = sum(1 for e, f in pairs if layers[e // 2] == layers[f // 2])
            gaps = sum(span(e, f) for e, f in pairs if beside_arc(e, f))
            wraps = [span(e, f) for e, f in pairs if not beside_arc(e, f)]
            key = (same, -gaps, min(wraps) if wraps else 0.0)
            if best is None or key > best:
                best, best_pairs = key, pairs
    return best_pairs


def _pair_greedy(plus: list[int], minus: list[int], span) -> list[tuple[int, int]]:
    """Each ``+`` end in angular order takes the nearest free ``-`` end counter-clockwise."""
    used: set[int] = set()
    out = []
    for e in plus:
        cands = [f for f in minus if f not in used and f // 2 != e // 2]
        if cands:
            f = min(cands, key=lambda f: span(e, f))
            used.add(f)
            out.append((e, f))
    return out


# --------------------------------------------------------------------------- walking


def _walk(s0: int, fwd0: bool, ends: PathEnds, limit: int) -> _Walk:
    """Follow links from piece ``s0`` (entered at its start when ``fwd0``) until the walk
    closes or reaches an open end."""
    w = _Walk([], [], False)
    s, fwd = s0, fwd0
    for _ in range(limit):
        w.pieces.append((s, fwd))
        out_end = 2 * s + (1 if fwd else 0)
        p = int(ends.partner[out_end])
        if p < 0:
            w.open_end = out_end
            return w
        w.links.append((out_end, p))
        s, fwd = p // 2, (p % 2 == 0)
        if s == s0:
            w.closed = fwd == fwd0
            return w
    return w


def _walk_all(segs: NDArray[np.int64], dropped: NDArray[np.bool_], ends: PathEnds, arcs: _Arcs,
              evidence: "_Evidence", scene: _Scene, d: Drawing, keep: NDArray[np.int64]
              ) -> tuple[list[Chain], _Strays, list[Finding]]:
    """Walk every chain once: closed ones become loops (or strays), open ones path errors (or strays)."""
    visited = dropped.copy()
    chains: list[Chain] = []
    off_layer: list[Chain] = []
    strays = _Strays()
    findings: list[Finding] = []
    limit = 4 * len(scene.S) + 4
    for s0 in segs.tolist():
        if visited[s0]:
            continue
        w = _walk(s0, True, ends, limit)
        if not w.closed and w.open_end >= 0:
            e = w.open_end
            w = _walk(e // 2, e % 2 == 0, ends, limit)       # the whole chain, from that open end
        for s, _ in w.pieces:
            visited[s] = True
        if not w.closed:
            findings.extend(_open_path(w, ends, arcs, evidence, scene, strays))
            continue
        ch = _closed_chain(w, ends, arcs, scene, d, keep, strays)
        if ch is None:
            continue
        if scene.restrict and not all(layer_matches(scene.S.layer[k], scene.belt_layers) for k in ch.segments):
            off_layer.append(ch)
        else:
            chains.append(ch)
    findings.extend(_off_layer_notes(off_layer, scene))
    return chains, strays, findings


def _touched(pieces: list[int], ends: PathEnds, arcs: _Arcs) -> set[int]:
    out = {int(ends.circle[2 * k]) for k in pieces} | {int(ends.circle[2 * k + 1]) for k in pieces}
    out |= {int(arcs.circle[k]) for k in pieces}
    out.discard(-1)
    return out


def _open_path(w: _Walk, ends: PathEnds, arcs: _Arcs, evidence: "_Evidence", scene: _Scene,
               strays: _Strays) -> list[Finding]:
    """A ``path-open`` error for an open chain touching two or more circles that is meant as
    a belt; such a chain that is not is counted as a stray."""
    pieces = [s for s, _ in w.pieces]
    touched = _touched(pieces, ends, arcs)
    if w.open_end < 0 or len(touched) < 2:
        return []
    e = w.open_end
    if not evidence.meant(evidence.component(e // 2)):
        strays.add(ends.xy(e))
        return []
    S = scene.S
    s = e // 2
    return [Finding(Severity.ERROR, "path-open",
                    f"{S.kind[s]} #{S.handle[s]} on {S.layer[s]}: the belt path touching {len(touched)} "
                    f"pulleys is not closed; its end at {_fmt(ends.point[e])} meets nothing",
                    at=ends.xy(e), data={"circles": sorted(touched)})]


def _branch_findings(branches: list[int], ends: PathEnds, comp: NDArray[np.int64], evidence: "_Evidence",
                     scene: _Scene, strays: _Strays) -> list[Finding]:
    """A ``path-branch`` error where three or more ends of a chain meant as a belt meet."""
    out = []
    S = scene.S
    for e in branches:
        s = e // 2
        if not evidence.meant(int(comp[s])):
            strays.add(ends.xy(e))
            continue
        out.append(Finding(
            Severity.ERROR, "path-branch",
            f"{S.kind[s]} #{S.handle[s]} on {S.layer[s]}: more than two path ends meet at "
            f"{_fmt(ends.point[e])}; a belt path cannot branch", at=ends.xy(e)))
    return out


def _stray_note(strays: _Strays) -> Finding:
    n = strays.count
    what = "chain of lines and arcs touches" if n == 1 else "chains of lines and arcs touch"
    return Finding(Severity.NOTE, "stray-paths",
                   f"{n} {what} circles without looking like a belt (not on a belt layer, no labelled "
                   f"pulley, spans not tangent): not analysed; the first at {_fmt(strays.at)}",
                   at=strays.at, data={"count": n})


def _off_layer_notes(off_layer: list[Chain], scene: _Scene) -> list[Finding]:
    out = []
    for ch in off_layer:
        w0 = ch.wraps[0]
        out.append(Finding(
            Severity.NOTE, "off-belt-layer",
            f"a closed path on layer {ch.layer} wraps {len(ch.wraps)} circles but is not on the belt "
            f"layers ({', '.join(scene.belt_layers)}); not analysed",
            at=(float(scene.cx[w0.circle]), float(scene.cy[w0.circle]))))
    return out


# --------------------------------------------------------------------------- evidence


def _tangent_at(a: NDArray[np.float64], b: NDArray[np.float64], c: int, radius: float, scene: _Scene) -> bool:
    """Whether the line from ``a`` to ``b`` is tangent to circle ``c`` (pitch ``radius``, or a
    belt height outside it) within the attach tolerance, and ends at its tangent point.

    The tangent point is the foot of the perpendicular from the centre; the end nearer the
    centre must lie within the attach tolerance of it. A line merely passing near the circle
    at a steep angle (its end on the circle, 20 degrees off the tangent) is no span.
    """
    u = b - a
    length = float(np.hypot(u[0], u[1]))
    if length == 0:
        return False
    centre = np.array([scene.cx[c], scene.cy[c]])
    q = centre - a
    dist = abs(float(u[0] * q[1] - u[1] * q[0])) / length
    lim = scene.tol.attach * float(scene.cr[c])
    if not (abs(dist - radius) <= lim or (scene.height > 0 and abs(dist - scene.cr[c] - scene.height) <= lim)):
        return False
    foot = a + u * float(u @ q) / length ** 2
    end = a if np.hypot(*(a - centre)) <= np.hypot(*(b - centre)) else b
    return float(np.hypot(*(end - foot))) <= lim


def _on_belt_layer(layers: list[str], scene: _Scene) -> bool:
    """Whether most of the pieces lie on a belt layer."""
    return bool(layers) and layer_matches(Counter(layers).most_common(1)[0][0], scene.belt_layers)


class _Evidence:
    """Whether each component of pieces is evidently meant as a belt, decided once per component."""

    def __init__(self, comp: NDArray[np.int64], ends: PathEnds, arcs: _Arcs, scene: _Scene) -> None:
        self._order = np.argsort(comp, kind="stable")
        self._sorted = comp[self._order]
        self._ends, self._arcs, self._scene, self._comp = ends, arcs, scene, comp
        self._verdict: dict[int, bool] = {}

    def component(self, piece: int) -> int:
        return int(self._comp[piece])

    def meant(self, k: int) -> bool:
        if k not in self._verdict:
            lo, hi = np.searchsorted(self._sorted, [k, k + 1])
            self._verdict[k] = self._decide(self._order[lo:hi])
        return self._verdict[k]

    def _decide(self, pieces: NDArray[np.int64]) -> bool:
        """On a belt layer, touching a named circle, or mostly arcs on circles and lines
        tangent to circles at both ends."""
        ends, arcs, scene = self._ends, self._arcs, self._scene
        S = scene.S
        if _on_belt_layer([S.layer[s] for s in pieces.tolist()], scene):
            return True
        if any(scene.named[c] for c in _touched(pieces.tolist(), ends, arcs)):
            return True
        good = 0
        for s in pieces.tolist():
            ca, cb = int(ends.near[2 * s]), int(ends.near[2 * s + 1])
            if arcs.circle[s] >= 0:
                good += 1
            elif S.sweep[s] == 0.0 and ca >= 0 and cb >= 0 and ca != cb:
                a, b = ends.point[2 * s], ends.point[2 * s + 1]
                good += _tangent_at(a, b, ca, float(scene.cr[ca]), scene) and _tangent_at(
                    a, b, cb, float(scene.cr[cb]), scene)
        return good >= 2 and good >= BELT_LIKE_SHARE * pieces.size


def _chain_meant(ch: Chain, ends: PathEnds, scene: _Scene) -> bool:
    """Whether a closed chain is evidently meant as a belt: on a belt layer, wrapping a named
    circle, or with most of its drawn spans tangent to the circles at both their ends."""
    if layer_matches(ch.layer, scene.belt_layers) or any(scene.named[w.circle] for w in ch.wraps):
        return True
    n = len(ch.wraps)
    drawn = tangent = 0
    for k, span in enumerate(ch.spans):
        if not span.pieces:
            continue                  # the wraps' drawn arcs meet: nothing to judge
        drawn += 1
        lines = [(s, f) for s, f in span.pieces if scene.S.sweep[s] == 0.0]
        if not lines:
            continue                  # only arcs on no circle between two wraps: no belt span
        first, last = lines[0], lines[-1]
        a0, b0 = _piece_points(first, ends)
        a1, b1 = _piece_points(last, ends)
        w0, w1 = ch.wraps[k], ch.wraps[(k + 1) % n]
        tangent += _tangent_at(a0, b0, w0.circle, w0.radius, scene) and _tangent_at(a1, b1, w1.circle, w1.radius, scene)
    if drawn == 0:                    # arcs on circles meeting end to end, or arcs on no circle
        return set(ch.segments) <= {s for w in ch.wraps for s in w.segments}
    return tangent >= 1 and tangent >= BELT_LIKE_SHARE * drawn


def _piece_points(piece: tuple[int, bool], ends: PathEnds) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    s, fwd = piece
    a, b = ends.point[2 * s], ends.point[2 * s + 1]
    return (a, b) if fwd else (b, a)


# --------------------------------------------------------------------------- classifying


def _closed_chain(w: _Walk, ends: PathEnds, arcs: _Arcs, scene: _Scene, d: Drawing, keep: NDArray[np.int64],
                  strays: _Strays) -> Chain | None:
    """The loop a closed walk draws, or ``None`` (an outline, a slot, a symbol, a stray)."""
    ch = _assemble(w, ends, arcs, scene)
    if ch is None:
        return None
    cr = scene.cr
    offsets = [wr for wr in ch.wraps if wr.radius != cr[wr.circle]]
    exact = [wr for wr in ch.wraps if wr.radius == cr[wr.circle] and not wr.slipped]
    on_circle = {wr.circle for wr in ch.wraps if wr.radius == cr[wr.circle]}
    if len(exact) < 1 or len(on_circle) < 2:
        return None                                  # an outline, a slot, a symbol, one circle: not a belt
    ch.layer = Counter(scene.S.layer[k] for k in ch.segments).most_common(1)[0][0]
    if not _chain_meant(ch, ends, scene):
        strays.add(ends.xy(2 * ch.segments[0]))
        return None
    for wr in offsets:
        ch.findings.append(Finding(
            Severity.NOTE, "back-offset",
            f"the path round CIRCLE #{d.circles.handle[keep[wr.circle]]} at "
            f"{_fmt((scene.cx[wr.circle], scene.cy[wr.circle]))} runs {wr.radius - cr[wr.circle]:.6g} outside it: "
            f"taken as a back idler drawn at its outside diameter, pitch radius {wr.radius:.6g}",
            at=(float(scene.cx[wr.circle]), float(scene.cy[wr.circle]))))
    return ch


def _elements(w: _Walk, ends: PathEnds, arcs: _Arcs, scene: _Scene) -> list[_Element]:
    """A closed walk as alternating pieces and links: ``wrap`` (an arc on a circle, or a link
    round one), ``line``, ``gap`` (a link across open space), ``badarc`` (an arc on no circle)."""
    S = scene.S
    out: list[_Element] = []
    for (s, fwd), (e_from, e_to) in zip(w.pieces, w.links):
        a, b = (ends.xy(2 * s), ends.xy(2 * s + 1)) if fwd else (ends.xy(2 * s + 1), ends.xy(2 * s))
        if S.sweep[s] == 0.0:
            out.append(_Element("line", -1, 0, True, s, a, b))
        elif arcs.circle[s] >= 0:
            out.append(_Element("wrap", int(arcs.circle[s]), 1 if (S.sweep[s] > 0) == fwd else -1, True, s, a, b))
        else:
            out.append(_Element("badarc", -1, 0, True, s, a, b))
        kind = Link(int(ends.link[e_from]))
        if kind is Link.WRAP:
            c = int(ends.link_circle[e_from])
            rv = ends.point[e_from] - (scene.cx[c], scene.cy[c])
            turn = 1 if (rv[0] * ends.tangent[e_from, 1] - rv[1] * ends.tangent[e_from, 0]) > 0 else -1
            out.append(_Element("wrap", c, turn, False, -1, ends.xy(e_from), ends.xy(e_to)))
        elif kind is Link.GAP:
            out.append(_Element("gap", -1, 0, False, -1, ends.xy(e_from), ends.xy(e_to)))
    return out


def _assemble(w: _Walk, ends: PathEnds, arcs: _Arcs, scene: _Scene) -> Chain | None:
    """Cut a closed walk into wraps, spans and faults; ``None`` when it has fewer than two wraps."""
    elems = _elements(w, ends, arcs, scene)
    n = len(elems)

    def same_wrap(i: int, j: int) -> bool:
        return elems[i].kind == "wrap" and elems[j].kind == "wrap" and elems[i].circle == elems[j].circle

    starts = [i for i in range(n) if elems[i].kind == "wrap" and not same_wrap((i - 1) % n, i)]
    if len(starts) < 2:
        return None
    elems = elems[starts[0]:] + elems[:starts[0]]
    S = scene.S
    order = min((int(S.order[s]) if len(S.order) else s, s) for s, _ in w.pieces)[1]
    ch = Chain([], [], [s for s, _ in w.pieces], "", order)
    prev_dir: NDArray[np.float64] | None = None
    for i, el in enumerate(elems):
        if el.kind == "wrap":
            _add_wrap(ch, el, i > 0 and elems[i - 1].kind == "wrap" and elems[i - 1].circle == el.circle,
                      arcs, scene)
            prev_dir = None
        elif el.kind == "line":
            prev_dir = _add_line(ch, el, prev_dir, elems[i - 1], scene)
        elif el.kind == "gap":
            ch.faults.append(_gap(el.a, el.b, _neighbours(elems, i)))
        else:
            ch.faults.append(Fault("off-arc", el.a, el.b, (el.segment,)))
            prev_dir = None
    ch.faults.extend(_gaps_beside_arcs(elems))
    return ch


def _add_wrap(ch: Chain, el: _Element, continues: bool, arcs: _Arcs, scene: _Scene) -> None:
    """Start a wrap (and the span leaving it), or extend the wrap the element continues."""
    S, c, s = scene.S, el.circle, el.segment
    if continues:
        w = ch.wraps[-1]
        w.leave = el.b
        if s >= 0:
            w.segments.append(s)
        if el.drawn and not w.drawn:
            w.drawn, w.turn = True, el.turn
            if w.radius == scene.cr[c] and arcs.offset[s]:
                w.radius = float(S.r[s])
    else:
        radius = float(S.r[s]) if el.drawn and arcs.offset[s] else float(scene.cr[c])
        ch.wraps.append(Wrap(c, el.turn, el.drawn, radius, [s] if s >= 0 else [], arrive=el.a, leave=el.b))
        ch.spans.append(DrawnSpan())
    if el.drawn and arcs.slipped[s]:
        w = ch.wraps[-1]
        w.slipped = True
        miss = max(abs(math.hypot(p[0] - scene.cx[c], p[1] - scene.cy[c]) - scene.cr[c]) for p in (el.a, el.b))
        ch.faults.append(Fault("slipped-arc", el.a, el.b, (s,), c, float(miss)))


def _add_line(ch: Chain, el: _Element, prev_dir: NDArray[np.float64] | None, before: _Element,
              scene: _Scene) -> NDArray[np.float64]:
    """Add a line to the current span; a bend from the previous line is a kink. The new direction."""
    a, b, s = el.a, el.b, el.segment
    d = np.array([b[0] - a[0], b[1] - a[1]])
    d /= max(float(np.hypot(d[0], d[1])), 1e-300)
    if prev_dir is not None:
        bend = math.degrees(math.acos(max(-1.0, min(1.0, float(np.dot(prev_dir, d))))))
        if bend > scene.tol.tangent_deg:
            ch.faults.append(Fault("kink", a, a, (before.segment, s)))
    S = scene.S
    ch.spans[-1].pieces.append((s, bool(np.array_equal(a, (S.x0[s], S.y0[s])))))
    return d


def _neighbours(elems: list[_Element], i: int) -> tuple[int, ...]:
    n = len(elems)
    return tuple(x for x in (elems[(i - 1) % n].segment, elems[(i + 1) % n].segment) if x >= 0)


def _gap(a: tuple[float, float], b: tuple[float, float], segments: tuple[int, ...], circle: int = -1) -> Fault:
    return Fault("gap", a, b, segments, circle, math.hypot(a[0] - b[0], a[1] - b[1]))


def _gaps_beside_arcs(elems: list[_Element]) -> list[Fault]:
    """Links round a circle in a wrap group that also holds a drawn arc: each is a gap."""
    out = []
    n = len(elems)
    i = 0
    while i < n:
        if elems[i].kind != "wrap":
            i += 1
            continue
        j = i
        while j + 1 < n and elems[j + 1].kind == "wrap" and elems[j + 1].circle == elems[i].circle:
            j += 1
        if any(e.drawn for e in elems[i:j + 1]):
            out.extend(_gap(e.a, e.b, _neighbours(elems, k), e.circle)
                       for k, e in enumerate(elems) if i <= k <= j and not e.drawn)
        i = j + 1
    return out
