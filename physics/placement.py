"""Where to put a new idler on a span so that it clears resonance and keeps grip.

An idler pressed into a span splits it in two shorter spans (higher frequencies) and
adds wrap to its neighbours. Candidates are idler centres along the span (position ``t``
from its start, deflection ``d`` into the belt) or, where an allowed region is given,
centres inside that region that still touch the span. Each candidate is scored by a
full analysis of the changed drive over the speed range:

* hard limits: the path exists and does not run through another pulley, the idler
  overlaps no pulley, every grip utilisation stays within the margin;
* the score: the smallest distance ``|excitation / f - 1|`` between any span mode of the
  loop (direct, and twice it for parametric) and any excitation over the range, to be made
  as large as possible (above the resonance margin the loop is clear).

A coarse grid finds the promising region; Nelder–Mead (scipy) refines the best few.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from . import geometry as geo
from .analysis import Options, Results, analyse
from .model import Drive, Loop, Pulley, Role, Side
from .resonance import KINDS

__all__ = ["IdlerSuggestion", "suggest_idler", "resonance_distance", "NEW_IDLER_ID"]

NEW_IDLER_ID = "NEW-IDLER"
#: Least wrap for a new idler to hold the belt reliably (our choice: below a few degrees an
#: idler barely touches and its contact comes and goes with belt flutter).
MIN_IDLER_WRAP_RAD = math.radians(8.0)
#: Clearance beyond which a position is as good as clear (then smaller deflections win).
CLEARANCE_CAP = 0.3


@dataclass(frozen=True, slots=True)
class IdlerSuggestion:
    """One suggested idler position and what the drive becomes with it.

    ``clearance`` is the smallest ``|excitation / f - 1|`` of any span mode of the loop over
    the speed range (clear of resonance when above the margin); ``worst_grip`` the largest
    grip utilisation over the range.
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

    @property
    def clear(self) -> bool:
        return self.resonance_count == 0


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


def _inside_sense(g: geo.LoopGeometry, loop: Loop, drive: Drive) -> int:
    """+1 where the loop runs counter-clockwise (its inside on the left of each span)."""
    r = np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys])
    return 1 if geo.path_area(g, r, loop.turns) > 0 else -1


def _with_idler(drive: Drive, loop: Loop, k: int, center: NDArray[np.float64], radius: float, side: Side,
                sense: int) -> Drive:
    turn = sense if side is Side.INSIDE else -sense
    idler = Pulley(NEW_IDLER_ID, (float(center[0]), float(center[1])), radius, Role.IDLER)
    pulleys = list(loop.pulleys)
    turns = list(loop.turns)
    sides = list(loop.sides)
    crossed = list(loop.crossed)
    pulleys.insert(k + 1, NEW_IDLER_ID)
    turns.insert(k + 1, turn)
    sides.insert(k + 1, side)
    crossed.insert(k + 1, False)
    new_loop = replace(loop, pulleys=tuple(pulleys), turns=tuple(turns), sides=tuple(sides), crossed=tuple(crossed))
    loops = tuple(new_loop if lp.id == loop.id else lp for lp in drive.loops)
    return Drive({**drive.pulleys, NEW_IDLER_ID: idler}, loops, drive.shafts)


def _valid(drive: Drive, loop: Loop, res: Results, center: NDArray[np.float64], radius: float) -> bool:
    lr = res.loops[loop.id]
    g = lr.geometry
    if g is None:
        return False
    k = lr.loop.pulleys.index(NEW_IDLER_ID)
    if g.wrap_rad[k] < MIN_IDLER_WRAP_RAD:
        return False
    for pid, p in drive.pulleys.items():
        if pid == NEW_IDLER_ID:
            continue
        if math.hypot(p.center_m[0] - center[0], p.center_m[1] - center[1]) < (p.radius_m + radius) * 1.02:
            return False
    # a simple loop: total turning 2 pi, no span through a pulley of the loop
    if abs(abs(geo.signed_turning(g, lr.loop.turns)) - 2 * math.pi) > 1e-6:
        return False
    cs = np.asarray([drive.pulleys[q].center_m for q in lr.loop.pulleys])
    rs = np.asarray([drive.pulleys[q].radius_m for q in lr.loop.pulleys])
    n = len(rs)
    for s in range(n):
        a, b = g.span_start_m[s], g.span_end_m[s]
        ab = b - a
        t = np.clip(((cs - a) @ ab) / max(float(ab @ ab), 1e-300), 0.0, 1.0)
        d = np.hypot(*(a + t[:, None] * ab - cs).T)
        others = [j for j in range(n) if j not in (s, (s + 1) % n)]
        if any(d[j] < rs[j] * (1 - 1e-6) for j in others):
            return False
    return True


def suggest_idler(drive: Drive, loop_id: str, span_index: int, radius_m: float, *, side: Side = Side.BACK,
                  options: Options = Options(), region: list[NDArray[np.float64]] | None = None,
                  count: int = 3, grid: int = 15) -> list[IdlerSuggestion]:
    """Best positions for a new idler on span ``span_index`` of loop ``loop_id``.

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
        How many distinct positions to return, best first.
    """
    loop = next(lp for lp in drive.loops if lp.id == loop_id)
    if loop.crossed[span_index]:
        raise ValueError(f"span {span_index} of loop {loop_id} is crossed; an idler cannot press on it")
    c, r, t = (np.asarray([drive.pulleys[p].center_m for p in loop.pulleys]),
               np.asarray([drive.pulleys[p].radius_m for p in loop.pulleys]), np.asarray(loop.turns, float))
    g = geo.loop_geometry(c, r, t)
    sense = _inside_sense(g, loop, drive)
    S = g.span_start_m[span_index]
    u = g.span_dir[span_index]
    length = float(g.span_length_m[span_index])
    n_in = sense * np.array([-u[1], u[0]])               # towards the inside of the loop
    away = -n_in if side is Side.BACK else n_in          # where the idler's centre sits
    quick = replace(options, range_points=min(options.range_points, 120))
    cache: dict[tuple[float, float], IdlerSuggestion | None] = {}
    n = len(loop.pulleys)
    new_spans = (f"{loop.pulleys[span_index]}-{NEW_IDLER_ID}", f"{NEW_IDLER_ID}-{loop.pulleys[(span_index + 1) % n]}")

    def candidate(center: NDArray[np.float64]) -> IdlerSuggestion | None:
        key = (round(float(center[0]), 9), round(float(center[1]), 9))
        if key in cache:
            return cache[key]
        rel = center - S
        along = float(rel @ u) / length
        depth = radius_m - float(rel @ away)              # how far into the belt's line
        out = None
        if 0.02 < along < 0.98 and depth > 1e-6 * radius_m:
            d2 = _with_idler(drive, loop, span_index, center, radius_m, side, sense)
            try:
                res = analyse(d2, quick)
            except (ValueError, FloatingPointError):
                res = None
            if res is not None and _valid(d2, loop, res, center, radius_m):
                mech = res.loops[loop_id].mechanics
                worst = float(np.nanmax(mech.utilisation)) if mech is not None and np.isfinite(
                    mech.utilisation).any() else 0.0
                mine = [span_index, span_index + 1]
                clear = resonance_distance(res, loop_id, mine)
                bands = _bands_on(res, loop_id, mine)
                out = IdlerSuggestion((float(center[0]), float(center[1])), radius_m, side, along, depth, clear,
                                      worst, d2, res, loop_id, new_spans, bands, resonance_distance(res, loop_id))
        cache[key] = out
        return out

    def score(s: IdlerSuggestion | None) -> float:
        if s is None:
            return 1e9
        penalty = 0.0
        if s.worst_grip > options.grip_margin:
            penalty += 10.0 * (s.worst_grip - options.grip_margin) + 1.0
        # clear the new spans' resonances; among clear positions, small deflections (less bending)
        return -min(s.clearance, CLEARANCE_CAP) + penalty + 0.05 * s.deflection_m / length

    def center_of(x: NDArray[np.float64]) -> NDArray[np.float64]:
        along, depth = float(x[0]), float(x[1])
        return S + along * length * u + (radius_m - depth) * away

    # coarse grid
    starts: list[NDArray[np.float64]] = []
    if region:
        import shapely
        polys = [shapely.Polygon(p) for p in region if len(p) >= 3]
        union = shapely.union_all(polys)
        minx, miny, maxx, maxy = union.bounds
        xs = np.linspace(minx, maxx, grid + 2)[1:-1]
        ys = np.linspace(miny, maxy, grid + 2)[1:-1]
        pts = np.array([(x, y) for x in xs for y in ys])
        inside = shapely.contains_xy(union, pts[:, 0], pts[:, 1]) if pts.size else np.zeros(0, bool)
        for p in pts[inside]:
            rel = p - S
            if 0.0 < float(rel @ away) < radius_m:         # touches the belt from the right side
                starts.append(np.array([float(rel @ u) / length, radius_m - float(rel @ away)]))
    else:
        depths = np.linspace(0.01, 0.06, 4) * length
        depths = depths[depths < 0.9 * radius_m]
        if depths.size == 0:
            depths = np.array([0.3 * radius_m])
        for along in np.linspace(0.12, 0.88, grid):
            for dep in depths:
                starts.append(np.array([along, dep]))
    scored = []
    for x in starts:
        s = candidate(center_of(x))
        if s is not None:
            scored.append((score(s), x))
    scored.sort(key=lambda z: z[0])
    polys_ok = None
    if region:
        import shapely
        polys_ok = shapely.union_all([shapely.Polygon(p) for p in region if len(p) >= 3])

    def objective(x: NDArray[np.float64]) -> float:
        ctr = center_of(x)
        if polys_ok is not None:
            import shapely
            if not shapely.contains_xy(polys_ok, ctr[0], ctr[1]):
                return 1e9
        return score(candidate(ctr))

    from scipy.optimize import minimize

    found: list[IdlerSuggestion] = []
    for _, x0 in scored[: max(3 * count, 6)]:
        opt = minimize(objective, x0, method="Nelder-Mead",
                       options={"xatol": 1e-4, "fatol": 1e-4, "maxiter": 60,
                                "initial_simplex": [x0, x0 + [0.05, 0.0], x0 + [0.0, 0.005 * length]]})
        best = candidate(center_of(opt.x)) if opt.fun < 1e8 else None
        if best is None:
            best = candidate(center_of(x0))
        if best is None:
            continue
        if any(abs(best.along - f.along) < 0.08 for f in found):
            continue
        found.append(best)
    found.sort(key=score)
    final = []
    mine = [span_index, span_index + 1]
    for s in found[:count]:
        res = analyse(s.drive, options)      # the full analysis, with refined resonance bands
        final.append(replace(s, results=res, clearance=resonance_distance(res, loop_id, mine),
                             resonance_count=_bands_on(res, loop_id, mine),
                             loop_clearance=resonance_distance(res, loop_id)))
    return final


def _bands_on(res: Results, loop_id: str, spans: list[int]) -> int:
    mech = res.loops[loop_id].mechanics
    if mech is None or mech.dynamics is None:
        return 0
    return sum(1 for b in mech.dynamics.bands if b.span in spans)
