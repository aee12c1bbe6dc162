"""Invariants of the work that scales with the drive (no timings: those are in
scripts/bench_loops.py): each loop's resonance refinement solves that loop alone, the beam
sweep in bounded chunks, and the pulley-crossing check through a spatial index."""

from __future__ import annotations

import math
from dataclasses import replace
from types import SimpleNamespace

import numpy as np
import pytest
import shapely

import layout.checks as checks
import physics.analysis as an
from physics.kinematics import loop_torques, solve_kinematics
from physics.model import Belt, Drive, LoadLaw, Loop, Pulley, Role, Side

CORNERS = ((0.0, 0.0), (0.45, 0.0), (0.45, 0.4), (0.0, 0.4))
RADII = (0.08, 0.06, 0.08, 0.04)          # A and C equal: every loop runs at the source's speed


def chain(loops: int, first: int = 0, *, bending_nm2: float | None = None) -> Drive:
    """Four-pulley loops ``first .. first + loops - 1``, each driven from the previous loop's
    ``C`` through a shaft, the source on the first loop's ``A`` (as scripts/bench_loops.py)."""
    belt = Belt(mass_per_length_kg_m=0.12, friction=0.5, bending_stiffness_nm2=bending_nm2, install_tension_n=400.0)
    pulleys, out, shafts = {}, [], []
    for k in range(first, first + loops):
        ids = tuple(f"{c}{k}" for c in "ABCD")
        ox, oy = k * CORNERS[2][0], k * CORNERS[2][1]
        for j, (pid, (x, y), r) in enumerate(zip(ids, CORNERS, RADII)):
            kw: dict = {}
            if j == 0 and k == first:
                kw = {"role": Role.DRIVER, "speed_rad_s": 150.0, "speed_range_rad_s": (30.0, 300.0)}
            elif j == 1:
                kw = {"role": Role.DRIVEN, "power_w": 5.0 + 0.5 * (k % 7)}
            pulleys[pid] = Pulley(pid, (ox + x, oy + y), r, **kw)
        out.append(Loop(f"L{k}", ids, (1, 1, 1, 1), (Side.INSIDE,) * 4, (False,) * 4, belt))
        if k > first:
            shafts.append((f"C{k - 1}", ids[0]))
    return Drive(pulleys, tuple(out), tuple(shafts))


def _bands(res: an.Results, lid: str) -> list[tuple]:
    return [(b.span, b.mode, b.kind, b.excitations, b.speed_lo, b.speed_hi, b.crossing, b.nearest,
             b.frequency_hz, b.margin_left) for b in res.loops[lid].mechanics.dynamics.bands]


# The previous implementation (every refinement step solving the whole drive), recorded on the
# three-loop chain: bands per loop, and the first band of span 0 mode 1 with its excitation.
RECORDED = {
    "L0": (8, "D0 x1", 171.1812537320347, 204.00326772061905, 187.89166771465997),
    "L1": (8, "D1 x1", 171.2178359416921, 204.03983676799234, 187.92824264735603),
    "L2": (8, "D2 x1", 171.25823887967593, 204.08022956306525, 187.9686399780403),
}
SPEED_RTOL = 1e-9       # Brent's tolerance is 1e-12; rounding of the fed power is ~1e-16


def test_three_loop_chain_matches_the_previous_implementation():
    res = an.analyse(chain(3))
    for lid, (count, exc, lo, hi, crossing) in RECORDED.items():
        bands = sorted(res.loops[lid].mechanics.dynamics.bands, key=lambda b: (b.span, b.mode, b.kind, b.speed_lo))
        assert len(bands) == count
        b = bands[0]
        assert (b.span, b.mode, b.kind, b.excitation) == (0, 1, "direct", exc)
        assert b.speed_lo == pytest.approx(lo, rel=SPEED_RTOL)
        assert b.speed_hi == pytest.approx(hi, rel=SPEED_RTOL)
        assert b.crossing == pytest.approx(crossing, rel=SPEED_RTOL)


def test_loop_of_a_long_chain_as_in_the_chain_it_drives():
    """A loop's results depend only on the loops it drives: loop k of a 30-loop chain equals
    loop k of the chain k..29 driven at the same speed (A and C are equal, so k turns at the
    source's speed)."""
    full = an.analyse(chain(30))
    for k in (0, 12, 29):
        part = an.analyse(chain(30 - k, first=k))
        lid = f"L{k}"
        a, b = full.loops[lid].mechanics, part.loops[lid].mechanics
        np.testing.assert_allclose(a.torque_nm, b.torque_nm, rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(a.tension_n, b.tension_n, rtol=1e-12)
        ba, bb = _bands(full, lid), _bands(part, lid)
        assert [x[:4] for x in ba] == [x[:4] for x in bb]
        for x, y in zip(ba, bb):
            for p, q in zip(x[4:8], y[4:8]):              # a band may have no crossing (None)
                assert (p is None) == (q is None)
                if p is not None:
                    assert p == pytest.approx(q, rel=SPEED_RTOL, nan_ok=True)


def test_one_loop_torques_equal_the_whole_drive_solve():
    """The refinement's per-loop torques against kinematics.loop_torques over the sweep, for
    every load law, drag, and a range down to standstill (where the whole drive is solved)."""
    d = chain(5)
    ps = dict(d.pulleys)
    ps["B1"] = replace(ps["B1"], power_w=None, torque_nm=0.3, load_law=LoadLaw.QUADRATIC)
    ps["B2"] = replace(ps["B2"], power_w=None, torque_nm=0.2, drag_torque_nm=0.05)
    ps["D3"] = replace(ps["D3"], drag_torque_nm=0.02)
    ps["A0"] = replace(ps["A0"], speed_range_rad_s=(0.0, 300.0))
    d = replace(d, pulleys=ps)
    kin = solve_kinematics(d)
    for floor in (0.0, 15.0):
        k = replace(kin, torque_floor_rad_s=floor)
        fed = an._fed_powers(d, k)
        w = np.array([0.0, 3.0, 15.0, 77.7, 150.0, 300.0])
        whole = loop_torques(d, k, w)
        for lid in k.order:
            one = np.vstack([an._loop_torques_at(d, k, lid, fed, float(x)) for x in w])
            np.testing.assert_allclose(one, whole[lid], rtol=1e-12, atol=1e-12)


def test_beam_sweep_in_chunks_gives_the_same_numbers(monkeypatch):
    d = chain(2, bending_nm2=0.02)
    ref = an.analyse(d, an.Options(span_ends="clamped"))
    monkeypatch.setattr(an, "SWEEP_BUDGET_BYTES", 7 * an._BEAM_POINT_BYTES)     # chunks of 7 points
    got = an.analyse(d, an.Options(span_ends="clamped"))
    for lid in ref.loops:
        a, b = ref.loops[lid].mechanics, got.loops[lid].mechanics
        np.testing.assert_array_equal(a.dynamics.frequencies_hz, b.dynamics.frequencies_hz)
        np.testing.assert_array_equal(a.static_frequency_hz, b.static_frequency_hz)
        assert _bands(ref, lid) == _bands(got, lid)


def _crossing_case(n: int, seed: int):
    """A loop record of ``n`` circles and spans between random points (not tangent: many
    cross circles), as the check sees them through ``span_points_drawing``."""
    rng = np.random.default_rng(seed)
    centers = rng.uniform(0.0, 1000.0, (n, 2))
    radii = rng.uniform(2.0, 25.0, n)
    centers[7] = centers[3] + 1e-4          # a circle concentric with a span's end circle
    ids = tuple(f"P{i}" for i in range(n))
    lp = SimpleNamespace(id="L1", pulleys=ids, circles=tuple(range(n)), radii=tuple(radii.tolist()))
    starts = centers + rng.normal(0.0, 3.0, (n, 2))
    ends = np.roll(centers, -1, axis=0) + rng.normal(0.0, 3.0, (n, 2))
    model = SimpleNamespace(drawing=SimpleNamespace(circles=SimpleNamespace(x=centers[:, 0], y=centers[:, 1])),
                            loops=[lp], tol=SimpleNamespace(join=1e-3, tangent_offset=1e-3))
    return model, (starts, ends)


def _brute_force(model, pts) -> list[tuple]:
    """Every span against every pulley: (span id, pulley, depth, at)."""
    lp = model.loops[0]
    circ = model.drawing.circles
    n = len(lp.pulleys)
    out = []
    for k in range(n):
        a, b = pts[0][k], pts[1][k]
        line = shapely.LineString([a, b])
        ends_c = {lp.circles[k], lp.circles[(k + 1) % n]}
        for j in range(n):
            cj = np.array([circ.x[j], circ.y[j]])
            if j in ends_c or any(math.hypot(*(cj - (circ.x[e], circ.y[e]))) <= model.tol.join * lp.radii[j]
                                  for e in ends_c):
                continue
            dist = line.distance(shapely.Point(cj))
            if dist < lp.radii[j] * (1.0 - model.tol.tangent_offset):
                near = line.interpolate(line.project(shapely.Point(cj)))
                out.append((f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % n]}", lp.pulleys[j], lp.radii[j] - dist,
                            (near.x, near.y)))
    return out


def test_pulley_crossing_on_300_pulleys_as_brute_force(monkeypatch):
    model, pts = _crossing_case(300, seed=11)
    monkeypatch.setattr(checks, "span_points_drawing", lambda m, r, lid: pts)
    found = checks.check_pulley_crossing(model, None)
    expect = _brute_force(model, pts)
    assert len(expect) > 20                                  # the case does cross pulleys
    assert [f.code for f in found] == ["span-hits-pulley"] * len(expect)
    assert [f.refs for f in found] == [("L1", sid, pid) for sid, pid, _, _ in expect]
    for f, (_, _, _, at) in zip(found, expect):
        assert f.at == pytest.approx(at, abs=1e-9)
