"""Where to put a new idler on a span so that it clears resonance and keeps grip.

An idler pressed into a span splits it in two shorter spans (higher frequencies), adds wrap
to its neighbours and lengthens the belt's path. Candidates are idler centres along the span
(position ``t`` from its start, deflection ``d`` into the belt) or, where an allowed region is
given, centres inside that region that still press on the span. Each candidate passes through
stages, cheapest first, and the first constraint it breaks is recorded (:class:`Constraint`):

1. position: the idler presses on the span, and its pitch circle keeps ``clearance_m`` from
   every pulley and from every other span of the drive (every loop);
2. path: the loop with the idler has a simple belt path, the idler wraps at least
   :data:`MIN_IDLER_WRAP_RAD`, and the two new spans keep the clearance from every pulley they
   do not wrap;
3. take-up: how the added path length is absorbed (:class:`TakeUp`); with fixed centres and a
   chosen belt the install tension rises by ``EA dL / L0``, and the drive is analysed so;
4. mechanics: a full analysis of the changed drive over the speed range; the chosen belt still
   fits the adjustable pulley's slide, every grip utilisation stays within the margin, and no
   resonance band is left on the two new spans.

The score is the smallest distance ``|excitation / f - 1|`` between any mode of the new spans
(direct, and twice it for parametric) and any excitation over the range, to be made as large
as possible (above the resonance margin the spans are clear). A coarse grid finds the
promising region; Nelder–Mead (scipy) refines the best few; the best are analysed again at the
full speed resolution and ranked: positions leaving no resonance first.
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass, field, replace
from enum import StrEnum
from typing import Mapping

import numpy as np
from numpy.typing import NDArray

from . import geometry as geo
from .analysis import Options, Results, analyse
from .model import Drive, Loop, Pulley, Role, Side, Tensioning
from .resonance import KINDS

__all__ = ["IdlerSuggestion", "Placement", "Constraint", "CONSTRAINT_TEXT", "TakeUp", "TakeUpMode",
           "place_idler", "suggest_idler", "resonance_distance", "take_up_mode", "tension_rise_n",
           "NEW_IDLER_ID", "DEFAULT_CLEARANCE_M", "MIN_IDLER_WRAP_RAD"]

NEW_IDLER_ID = "NEW-IDLER"
#: Least wrap for a new idler to hold the belt reliably (our choice: below a few degrees an
#: idler barely touches and its contact comes and goes with belt flutter).
MIN_IDLER_WRAP_RAD = math.radians(8.0)
#: Resonance distance beyond which a position is as good as clear (then smaller deflections win).
CLEARANCE_CAP = 0.3
#: Clearance of the idler from pulleys and spans when the belt's height is unknown (our choice:
#: about the height of the smaller V-belt sections).
DEFAULT_CLEARANCE_M = 5e-3
#: Positions within this fraction of either end of the span do not press on the span.
ALONG_MARGIN = 0.02
#: A deflection under this fraction of the idler's radius does not press on the belt.
MIN_DEPTH = 1e-6
#: A simple loop turns by 2 pi in total; tolerance on that, radians.
TURNING_TOL_RAD = 1e-6
#: A grip utilisation this far (relative) above the margin still counts as within it
#: (the lowest install tension puts the worst pulley exactly on the margin).
GRIP_TOL = 1e-9
#: Speed points of the quick analyses of the search (the best are analysed again in full).
SEARCH_POINTS = 120
#: Positions closer than this (fraction of the span) count as one suggestion.
DISTINCT_ALONG = 0.08
#: Score of a position that breaks a hard constraint.
_FAIL = 1e9


class Constraint(StrEnum):
    """Why a candidate position was ruled out (the first stage it failed)."""

    OFF_SPAN = "off-span"
    HITS_PULLEY = "hits-pulley"
    NEAR_SPAN = "near-span"
    NO_PATH = "no-path"
    PATH_HITS_PULLEY = "path-hits-pulley"
    LOW_WRAP = "low-wrap"
    BELT_UNFIT = "belt-unfit"
    GRIP = "grip"
    RESONANCE = "resonance"


#: One phrase per constraint, for messages.
CONSTRAINT_TEXT: dict[Constraint, str] = {
    Constraint.OFF_SPAN: "does not press on the span",
    Constraint.HITS_PULLEY: "hits a pulley (closer than the clearance)",
    Constraint.NEAR_SPAN: "too close to another span",
    Constraint.NO_PATH: "no simple belt path",
    Constraint.PATH_HITS_PULLEY: "the new spans pass too close to a pulley",
    Constraint.LOW_WRAP: "too little wrap on the idler",
    Constraint.BELT_UNFIT: "the chosen belt no longer fits the adjustable pulley's slide",
    Constraint.GRIP: "grip beyond the margin",
    Constraint.RESONANCE: "resonance remains",
}


class TakeUpMode(StrEnum):
    """What absorbs the path length the idler adds."""

    TENSIONER = "tensioner"      # the loop's tensioner moves
    CONSTANT = "constant"        # constant tensioning: the tension is held whatever the length
    NO_LENGTH = "no-length"      # no belt chosen: a belt longer by the added length
    ADJUST = "adjust"            # the adjustable pulley slides to take it up
    STRETCH = "stretch"          # fixed centres, a chosen belt and its EA: the install tension rises
    UNKNOWN = "unknown"          # fixed centres, a chosen belt, no EA: an adjustable pulley is needed


@dataclass(frozen=True, slots=True)
class TakeUp:
    """The path length an idler adds and how the drive absorbs it.

    ``tension_rise_n`` (per strand) for :attr:`TakeUpMode.STRETCH`; ``adjust_travel_m`` (signed,
    along the pulley's slide, from where it sits without the idler) for :attr:`TakeUpMode.ADJUST`.
    """

    mode: TakeUpMode
    added_length_m: float
    belt_length_m: float | None = None
    axial_stiffness_n: float | None = None
    tension_rise_n: float | None = None
    adjust_pulley: str | None = None
    adjust_travel_m: float | None = None


@dataclass(frozen=True, slots=True)
class IdlerSuggestion:
    """One suggested idler position and what the drive becomes with it.

    ``clearance`` is the smallest ``|excitation / f - 1|`` of any mode of the two new spans over
    the speed range (clear of resonance when above the margin); ``worst_grip`` the largest
    grip utilisation over the range; ``gap_m`` the smallest distance of the idler's pitch circle
    to any pulley or other span of the drive.
    """

    center_m: tuple[float, float]
    radius_m: float
    side: Side
    along: float                   # 0..1 along the original span from its start
    deflection_m: float            # how far the idler pushes the belt off its line
    clearance: float               # of the two new spans
    worst_grip: float
    drive: Drive
    results: Results
    loop_id: str
    spans: tuple[str, ...]         # the two new spans
    resonance_count: int           # bands left on the two new spans
    loop_clearance: float = math.inf   # of every span of the loop
    loop_resonance_count: int = 0      # bands left on every span of the loop
    take_up: TakeUp | None = None
    gap_m: float = math.inf

    @property
    def clear(self) -> bool:
        return self.resonance_count == 0


@dataclass(frozen=True, slots=True)
class Placement:
    """The answer of :func:`place_idler`.

    ``needed`` is false when the span has no resonance band over the speed range (then no
    search is made). ``suggestions``: best first, positions leaving no resonance first, each
    within every hard constraint (some may leave resonance: see :attr:`IdlerSuggestion.clear`).
    ``ruled_out`` counts the positions tried by the constraint that ruled each out
    (:attr:`Constraint.RESONANCE` for positions valid but leaving resonance).
    """

    loop_id: str
    span_index: int
    span_id: str
    needed: bool
    clearance_m: float
    suggestions: tuple[IdlerSuggestion, ...] = ()
    tried: int = 0
    ruled_out: Mapping[Constraint, int] = field(default_factory=dict)

    @property
    def valid(self) -> tuple[IdlerSuggestion, ...]:
        """The suggestions that leave no resonance on the new spans."""
        return tuple(s for s in self.suggestions if s.clear)


def resonance_distance(results: Results, loop_id: str, spans: list[int] | None = None) -> float:
    """Smallest ``|excitation / (k f_n) - 1|`` (``k`` = 1 direct, 2 parametric) over the sweep,
    every mode of the given spans (default: all spans of the loop) and every excitation."""
    mech = results.loops[loop_id].mechanics
    if mech is None or mech.dynamics is None:
        return math.inf
    dyn = mech.dynamics
    rows = slice(1, None) if mech.source_speed_rad_s.size > 1 else slice(0, 1)
    f = dyn.frequencies_hz[rows]                  # (K, n, modes)
    if spans is not None:
        f = f[:, spans, :]
    best = math.inf
    for exc in dyn.excitations_hz.values():
        e = exc[rows][:, None, None]
        for _, mult in KINDS:
            with np.errstate(divide="ignore", invalid="ignore"):
                r = np.abs(e / (mult * f) - 1.0)
            r = r[np.isfinite(r)]
            if r.size:
                best = min(best, float(r.min()))
    return best


def _bands_on(res: Results, loop_id: str, spans: list[int] | None = None) -> int:
    mech = res.loops[loop_id].mechanics
    if mech is None or mech.dynamics is None:
        return 0
    return sum(1 for b in mech.dynamics.bands if spans is None or b.span in spans)


# --- take-up ---------------------------------------------------------------------------------

def take_up_mode(drive: Drive, loop: Loop) -> TakeUpMode:
    """How ``loop`` absorbs a longer path: its tensioner, constant tensioning, a new belt (no
    length chosen), its adjustable pulley, the belt's stretch (its EA known), or unknown."""
    if any(drive.pulleys[p].role is Role.TENSIONER for p in loop.pulleys):
        return TakeUpMode.TENSIONER
    if loop.belt.tensioning is Tensioning.CONSTANT:
        return TakeUpMode.CONSTANT
    if loop.belt.length_m is None:
        return TakeUpMode.NO_LENGTH
    if any(drive.pulleys[p].adjust is not None for p in loop.pulleys):
        return TakeUpMode.ADJUST
    return TakeUpMode.STRETCH if loop.belt.axial_stiffness_n else TakeUpMode.UNKNOWN


def tension_rise_n(axial_stiffness_n: float, added_length_m: float, belt_length_m: float) -> float:
    """Rise of the install tension (per strand) when fixed centres make a belt of unstretched
    length ``belt_length_m`` run a path ``added_length_m`` longer.

    Notes
    -----
    A linear elastic strand of unstretched length ``L0`` and axial stiffness ``EA`` held on a
    path of length ``Lp`` carries ``T = EA (Lp - L0) / L0``, i.e. ``Lp = L0 (1 + T / EA)`` (the
    same stretch :mod:`physics.analysis` uses for the unstretched length). Before the idler
    ``Lp = L0 (1 + T0 / EA)``; after it ``Lp + dL = L0 (1 + T1 / EA)``. Subtracting,
    ``dL = L0 (T1 - T0) / EA``, so ``dT = EA dL / L0`` exactly in this model, and
    ``dT ~ EA dL / L`` with ``L ~ L0`` the belt's length (``T / EA`` is about 1e-3). The wraps
    change the tension steps round the loop, not its mean level, which is what ``dT`` sets.

    Examples
    --------
    >>> tension_rise_n(100e3, 0.002, 2.0)       # 100 kN, 2 mm on a 2 m belt
    100.0
    """
    return axial_stiffness_n * added_length_m / belt_length_m


def _stretched(drive: Drive, loop_id: str, rise_n: float) -> Drive:
    """The drive with the loop's install tension raised by ``rise_n`` (where one is given)."""
    loops = tuple(replace(lp, belt=replace(lp.belt, install_tension_n=lp.belt.install_tension_n + rise_n))
                  if lp.id == loop_id and lp.belt.install_tension_n is not None else lp for lp in drive.loops)
    return Drive(drive.pulleys, loops, drive.shafts)


def _adjust_offset(res: Results, loop_id: str) -> tuple[str, float] | None:
    mech = res.loops[loop_id].mechanics
    if mech is None or mech.adjust is None:
        return None
    pid, adj = mech.adjust
    return pid, adj.offset_m


# --- the span and the idler --------------------------------------------------------------------

@dataclass(frozen=True, slots=True)
class _Span:
    """The span the idler presses on, in the frame the search works in."""

    loop: Loop
    index: int
    start_m: NDArray[np.float64]      # its start (tangent point), metres
    dir: NDArray[np.float64]          # unit travel direction
    length_m: float
    away: NDArray[np.float64]         # unit normal from the belt line towards the idler's centre
    sense: int                        # +1 where the loop runs counter-clockwise
    path_length_m: float              # the loop's pitch length without the idler


def _span_frame(drive: Drive, loop: Loop, k: int, side: Side) -> _Span:
    c = np.asarray([drive.pulleys[p].center_m for p in loop.pulleys], dtype=float)
    r = np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys], dtype=float)
    g = geo.loop_geometry(c, r, loop.turns)
    sense = 1 if geo.path_area(g, r, loop.turns) > 0 else -1
    u = g.span_dir[k]
    n_in = sense * np.array([-u[1], u[0]])               # towards the inside of the loop
    away = -n_in if side is Side.BACK else n_in
    return _Span(loop, k, g.span_start_m[k], u, float(g.span_length_m[k]), away, sense, g.length_m)


def _with_idler(drive: Drive, span: _Span, center: NDArray[np.float64], radius: float, side: Side) -> Drive:
    """The drive with the new idler inserted after pulley ``span.index`` of the loop."""
    loop, k = span.loop, span.index
    turn = span.sense if side is Side.INSIDE else -span.sense
    idler = Pulley(NEW_IDLER_ID, (float(center[0]), float(center[1])), radius, Role.IDLER)

    def ins(seq: tuple, value: object) -> tuple:
        return (*seq[:k + 1], value, *seq[k + 1:])

    new_loop = replace(loop, pulleys=ins(loop.pulleys, NEW_IDLER_ID), turns=ins(loop.turns, turn),
                       sides=ins(loop.sides, side), crossed=ins(loop.crossed, False))
    loops = tuple(new_loop if lp.id == loop.id else lp for lp in drive.loops)
    return Drive({**drive.pulleys, NEW_IDLER_ID: idler}, loops, drive.shafts)


def _segment_distances(p: NDArray[np.float64], a: NDArray[np.float64], b: NDArray[np.float64]
                       ) -> NDArray[np.float64]:
    """Distances from point(s) ``p`` to the segments ``a[i]``–``b[i]`` (broadcast)."""
    ab = b - a
    den = np.maximum(np.einsum("...i,...i->...", ab, ab), np.finfo(float).tiny)
    t = np.clip(np.einsum("...i,...i->...", p - a, ab) / den, 0.0, 1.0)
    return np.hypot(*np.moveaxis(a + t[..., None] * ab - p, -1, 0))


def _other_spans(drive: Drive, base: Results, span: _Span) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Start and end points ``(m, 2)`` of every span of the drive but the one pressed on."""
    starts, ends = [], []
    for lid, lr in base.loops.items():
        if lr.geometry is None:
            continue
        keep = [j for j in range(len(lr.geometry.span_length_m)) if not (lid == span.loop.id and j == span.index)]
        starts.append(lr.geometry.span_start_m[keep])
        ends.append(lr.geometry.span_end_m[keep])
    if not starts:
        return np.zeros((0, 2)), np.zeros((0, 2))
    return np.concatenate(starts), np.concatenate(ends)


# --- the search --------------------------------------------------------------------------------

@dataclass(frozen=True, slots=True)
class _Outcome:
    suggestion: IdlerSuggestion | None
    reason: Constraint | None          # None: valid and clear


class _Search:
    """Candidates for one span, each evaluated once (stages in the module docstring)."""

    def __init__(self, drive: Drive, span: _Span, radius_m: float, side: Side, options: Options,
                 clearance_m: float, base: Results) -> None:
        self.drive, self.span, self.radius_m, self.side = drive, span, radius_m, side
        self.options, self.clearance_m, self.base = options, clearance_m, base
        self.quick = replace(options, range_points=min(options.range_points, SEARCH_POINTS))
        self.mode = take_up_mode(drive, span.loop)
        self.base_adjust = _adjust_offset(base, span.loop.id)
        self.span_a, self.span_b = _other_spans(drive, base, span)
        self.p_center = np.asarray([p.center_m for p in drive.pulleys.values()], dtype=float).reshape(-1, 2)
        self.p_radius = np.asarray([p.radius_m for p in drive.pulleys.values()], dtype=float)
        self.p_ids = list(drive.pulleys)
        n = len(span.loop.pulleys)
        self.ends = (span.loop.pulleys[span.index], span.loop.pulleys[(span.index + 1) % n])
        self.new_spans = (f"{self.ends[0]}-{NEW_IDLER_ID}", f"{NEW_IDLER_ID}-{self.ends[1]}")
        self.cache: dict[tuple[float, float], _Outcome] = {}

    def center_of(self, x: NDArray[np.float64]) -> NDArray[np.float64]:
        along, depth = float(x[0]), float(x[1])
        return self.span.start_m + along * self.span.length_m * self.span.dir + (self.radius_m - depth) * self.span.away

    def x_of(self, center: NDArray[np.float64]) -> NDArray[np.float64]:
        rel = center - self.span.start_m
        return np.array([float(rel @ self.span.dir) / self.span.length_m, self.radius_m - float(rel @ self.span.away)])

    def tally(self) -> dict[Constraint, int]:
        return dict(Counter(o.reason for o in self.cache.values() if o.reason is not None))

    def evaluate(self, center: NDArray[np.float64]) -> _Outcome:
        key = (round(float(center[0]), 9), round(float(center[1]), 9))
        if key not in self.cache:
            self.cache[key] = self._stages(np.asarray(center, dtype=float))
        return self.cache[key]

    def _stages(self, center: NDArray[np.float64]) -> _Outcome:
        reason, gap = self._position(center)
        if reason is not None:
            return _Outcome(None, reason)
        d2 = _with_idler(self.drive, self.span, center, self.radius_m, self.side)
        reason, g2 = self._path(d2)
        if reason is not None:
            return _Outcome(None, reason)
        added = g2.length_m - self.span.path_length_m
        if self.mode is TakeUpMode.STRETCH:
            d2 = _stretched(d2, self.span.loop.id, self._rise(added))
        try:
            res = analyse(d2, self.quick)
        except (ValueError, FloatingPointError):
            return _Outcome(None, Constraint.NO_PATH)
        return self.judge(center, d2, res, added, gap)

    def _position(self, center: NDArray[np.float64]) -> tuple[Constraint | None, float]:
        """Stage 1: presses on the span; clears every pulley and every other span."""
        along, depth = self.x_of(center)
        if not (ALONG_MARGIN < along < 1.0 - ALONG_MARGIN and MIN_DEPTH * self.radius_m < depth < self.radius_m):
            return Constraint.OFF_SPAN, math.nan
        pulley_gap = np.hypot(*(self.p_center - center).T) - self.p_radius - self.radius_m
        span_gap = _segment_distances(center, self.span_a, self.span_b) - self.radius_m
        if pulley_gap.size and pulley_gap.min() < self.clearance_m:
            return Constraint.HITS_PULLEY, math.nan
        if span_gap.size and span_gap.min() < self.clearance_m:
            return Constraint.NEAR_SPAN, math.nan
        return None, float(min(pulley_gap.min(initial=math.inf), span_gap.min(initial=math.inf)))

    def _path(self, d2: Drive) -> tuple[Constraint | None, geo.LoopGeometry | None]:
        """Stage 2: a simple path, enough wrap on the idler, new spans clear of other pulleys."""
        loop = next(lp for lp in d2.loops if lp.id == self.span.loop.id)
        c = np.asarray([d2.pulleys[p].center_m for p in loop.pulleys], dtype=float)
        r = np.asarray([d2.pulleys[p].radius_m for p in loop.pulleys], dtype=float)
        try:
            g = geo.loop_geometry(c, r, loop.turns)
        except geo.GeometryError:
            return Constraint.NO_PATH, None
        if abs(abs(geo.signed_turning(g, loop.turns)) - 2 * math.pi) > TURNING_TOL_RAD:
            return Constraint.NO_PATH, None
        k = self.span.index
        if g.wrap_rad[k + 1] < MIN_IDLER_WRAP_RAD:
            return Constraint.LOW_WRAP, None
        wrapped = {NEW_IDLER_ID, *self.ends}
        wrapped |= {q for shaft in self.drive.shafts if wrapped & set(shaft) for q in shaft}
        others = np.asarray([i for i, pid in enumerate(self.p_ids) if pid not in wrapped], dtype=int)
        if others.size:
            a, b = g.span_start_m[[k, k + 1]], g.span_end_m[[k, k + 1]]
            d = _segment_distances(self.p_center[others][:, None, :], a[None], b[None])
            if (d - self.p_radius[others][:, None]).min() < self.clearance_m:
                return Constraint.PATH_HITS_PULLEY, None
        return None, g

    def _rise(self, added_m: float) -> float:
        b = self.span.loop.belt
        return tension_rise_n(b.axial_stiffness_n, added_m, b.length_m)

    def _take_up(self, res: Results, added_m: float) -> TakeUp:
        b = self.span.loop.belt
        out = TakeUp(self.mode, added_m, b.length_m, b.axial_stiffness_n)
        if self.mode is TakeUpMode.STRETCH:
            return replace(out, tension_rise_n=self._rise(added_m))
        if self.mode is TakeUpMode.ADJUST:
            now = _adjust_offset(res, self.span.loop.id)
            if now is not None:
                was = self.base_adjust[1] if self.base_adjust is not None else 0.0
                return replace(out, adjust_pulley=now[0], adjust_travel_m=now[1] - was)
        return out

    def judge(self, center: NDArray[np.float64], d2: Drive, res: Results, added_m: float, gap_m: float) -> _Outcome:
        """Stage 4: the analysed drive within the mechanical constraints (belt fit, grip, resonance)."""
        lid, k = self.span.loop.id, self.span.index
        take_up = self._take_up(res, added_m)
        if self.mode is TakeUpMode.ADJUST and take_up.adjust_travel_m is None:
            return _Outcome(None, Constraint.BELT_UNFIT)
        mech = res.loops[lid].mechanics
        worst = float(np.nanmax(mech.utilisation)) if mech is not None and np.isfinite(mech.utilisation).any() else 0.0
        mine = [k, k + 1]
        x = self.x_of(center)
        s = IdlerSuggestion((float(center[0]), float(center[1])), self.radius_m, self.side, float(x[0]), float(x[1]),
                            resonance_distance(res, lid, mine), worst, d2, res, lid, self.new_spans,
                            _bands_on(res, lid, mine), resonance_distance(res, lid), _bands_on(res, lid),
                            take_up, gap_m)
        if worst > self.options.grip_margin * (1.0 + GRIP_TOL):
            return _Outcome(s, Constraint.GRIP)
        return _Outcome(s, Constraint.RESONANCE if s.resonance_count else None)

    def score(self, out: _Outcome) -> float:
        s = out.suggestion
        if s is None:
            return _FAIL
        penalty = 0.0
        if s.worst_grip > self.options.grip_margin:
            penalty += 10.0 * (s.worst_grip - self.options.grip_margin) + 1.0
        # clear the new spans' resonances; among clear positions, small deflections (less bending)
        return -min(s.clearance, CLEARANCE_CAP) + penalty + 0.05 * s.deflection_m / self.span.length_m

    def rank(self, out: _Outcome) -> tuple[bool, bool, float]:
        """Positions leaving no resonance on the new spans first, then none on the loop, then the score."""
        s = out.suggestion
        return (s is None or s.resonance_count > 0, s is None or s.loop_resonance_count > 0, self.score(out))


def _starts(search: _Search, region: list[NDArray[np.float64]] | None, grid: int) -> list[NDArray[np.float64]]:
    """The coarse grid, as ``(along, depth)`` points: along the span, or inside the region."""
    if region:
        import shapely

        union = shapely.union_all([shapely.Polygon(p) for p in region if len(p) >= 3])
        minx, miny, maxx, maxy = union.bounds
        xs = np.linspace(minx, maxx, grid + 2)[1:-1]
        ys = np.linspace(miny, maxy, grid + 2)[1:-1]
        pts = np.array([(x, y) for x in xs for y in ys])
        inside = shapely.contains_xy(union, pts[:, 0], pts[:, 1]) if pts.size else np.zeros(0, bool)
        return [search.x_of(p) for p in pts[inside]]
    length, r = search.span.length_m, search.radius_m
    depths = np.linspace(0.01, 0.06, 4) * length
    depths = depths[depths < 0.9 * r]
    if depths.size == 0:
        depths = np.array([0.3 * r])
    return [np.array([along, dep]) for along in np.linspace(0.12, 0.88, grid) for dep in depths]


def _refine(search: _Search, starts: list[NDArray[np.float64]], region: list[NDArray[np.float64]] | None,
            count: int) -> list[IdlerSuggestion]:
    """Nelder–Mead from the best grid points; distinct positions within the hard constraints."""
    from scipy.optimize import minimize

    union = None
    if region:
        import shapely

        union = shapely.union_all([shapely.Polygon(p) for p in region if len(p) >= 3])
    scored = sorted(((search.rank(o), x) for x in starts if (o := search.evaluate(search.center_of(x))).suggestion),
                    key=lambda z: z[0])

    def objective(x: NDArray[np.float64]) -> float:
        ctr = search.center_of(x)
        if union is not None and not shapely.contains_xy(union, ctr[0], ctr[1]):
            return _FAIL
        return search.score(search.evaluate(ctr))

    found: list[_Outcome] = []
    step = [0.05, 0.0], [0.0, 0.005 * search.span.length_m]
    for _, x0 in scored[: max(3 * count, 6)]:
        opt = minimize(objective, x0, method="Nelder-Mead", options={
            "xatol": 1e-4, "fatol": 1e-4, "maxiter": 60, "initial_simplex": [x0, x0 + step[0], x0 + step[1]]})
        best = search.evaluate(search.center_of(opt.x)) if opt.fun < _FAIL / 10 else None
        if best is None or best.suggestion is None or best.reason is Constraint.GRIP:
            best = search.evaluate(search.center_of(x0))
        if best.suggestion is None or best.reason is Constraint.GRIP:
            continue
        if any(abs(best.suggestion.along - f.suggestion.along) < DISTINCT_ALONG for f in found):
            continue
        found.append(best)
    found.sort(key=search.rank)
    return [o.suggestion for o in found]


def _finalise(search: _Search, found: list[IdlerSuggestion], count: int) -> list[IdlerSuggestion]:
    """The best ``count`` analysed again at full speed resolution, re-judged and ranked."""
    final: list[_Outcome] = []
    for s in found:
        if len(final) == count:
            break
        res = analyse(s.drive, search.options)
        out = search.judge(np.asarray(s.center_m), s.drive, res, s.take_up.added_length_m, s.gap_m)
        if out.suggestion is not None and out.reason is not Constraint.GRIP:
            final.append(out)
    final.sort(key=search.rank)
    return [o.suggestion for o in final]


def place_idler(drive: Drive, loop_id: str, span_index: int, radius_m: float, *, side: Side = Side.BACK,
                options: Options = Options(), region: list[NDArray[np.float64]] | None = None,
                count: int = 3, grid: int = 15, clearance_m: float | None = None,
                base: Results | None = None) -> Placement:
    """Positions for a new idler on span ``span_index`` of loop ``loop_id``, and why others fail.

    Parameters
    ----------
    radius_m
        Pitch radius of the new idler.
    side
        ``BACK``: pressed on the back of the belt from outside the loop; ``INSIDE``: from inside.
    region
        Allowed areas for the idler's centre: closed polygons, each an ``(m, 2)`` array in the
        drive's frame (metres). Without it, positions along the span.
    count
        How many distinct positions to return at most, best first.
    clearance_m
        Least gap between the idler's pitch circle and every pulley and other span, and between
        the new spans and every pulley they do not wrap (default: the belt's height, else
        :data:`DEFAULT_CLEARANCE_M`).
    base
        The drive's results with ``options`` when already computed.

    Raises
    ------
    ValueError
        The span is crossed, or the loop has no span frequencies (no speed source or no mass).
    """
    loop = next(lp for lp in drive.loops if lp.id == loop_id)
    if loop.crossed[span_index]:
        raise ValueError(f"span {span_index} of loop {loop_id} is crossed; an idler cannot press on it")
    clear_m = clearance_m if clearance_m is not None else (loop.belt.height_m or DEFAULT_CLEARANCE_M)
    if not clear_m >= 0.0:
        raise ValueError(f"clearance {clear_m} m: expected 0 or more")
    base = base if base is not None else analyse(drive, options)
    mech = base.loops[loop_id].mechanics
    if mech is None or mech.dynamics is None:
        raise ValueError(f"loop {loop_id} has no span frequencies (it needs a speed source and the belt's "
                         f"mass per length), so no resonance to move")
    answer = Placement(loop_id, span_index, loop.span_ids[span_index], _bands_on(base, loop_id, [span_index]) > 0,
                       clear_m)
    if not answer.needed:
        return answer
    search = _Search(drive, _span_frame(drive, loop, span_index, side), radius_m, side, options, clear_m, base)
    found = _refine(search, _starts(search, region, grid), region, count)
    final = _finalise(search, found, count)
    return replace(answer, suggestions=tuple(final), tried=len(search.cache), ruled_out=search.tally())


def suggest_idler(drive: Drive, loop_id: str, span_index: int, radius_m: float, **kwargs: object
                  ) -> list[IdlerSuggestion]:
    """The suggestions of :func:`place_idler` alone (empty when no idler is needed)."""
    return list(place_idler(drive, loop_id, span_index, radius_m, **kwargs).suggestions)
