"""Exact belt-path geometry against the textbook closed forms and hand values."""

from __future__ import annotations

import math

import numpy as np
import pytest

from physics import geometry as geo

# Reference table: (D, d, C, theta_small, theta_large, L, tolerance, source)
# Budynas & Nisbett, Shigley's Mechanical Engineering Design, 9th ed., ch. 17, Eq. 17-1
# (from memory); the flat-belt values 3.0165 / 3.2667 rad / 230.07 in are those of the
# book's flat-belt worked example (18 in and 6 in pulleys, 8 ft centres).
OPEN_CASES = [
    (18.0, 6.0, 96.0, 3.016511, 3.266674, 230.0742, 5e-7, "Shigley ch. 17 flat-belt example"),
    (400.0, 100.0, 500.0, 2.53221, 3.75098, 1830.7452, 5e-6,
     "computed from Shigley Eq. 17-1: pi -/+ 2 asin(0.3), sqrt(4C^2 - (D - d)^2) + (D th_l + d th_s)/2"),
    # hand check: (D - d)/C = 1 gives exactly 120 deg on the small pulley (common practice)
    (400.0, 100.0, 300.0, 2 * math.pi / 3, 4 * math.pi / 3, 1462.0930, 5e-7, "hand: asin(1/2)"),
]


@pytest.mark.parametrize("D,d,C,th_s,th_l,L,rel,source", OPEN_CASES)
def test_open_closed_form_matches_published_values(D, d, C, th_s, th_l, L, rel, source):
    ts, tl, length = geo.open_belt(D, d, C)
    assert ts == pytest.approx(th_s, rel=rel)
    assert tl == pytest.approx(th_l, rel=rel)
    assert length == pytest.approx(L, rel=rel)


@pytest.mark.parametrize("D,d,C", [(18.0, 6.0, 96.0), (400.0, 100.0, 500.0), (400.0, 100.0, 300.0),
                                   (250.0, 250.0, 700.0), (0.5, 0.08, 0.3)])
def test_loop_geometry_equals_open_closed_form(D, d, C):
    # Shigley Eq. 17-1 (from memory) against the general signed-radius tangent formula
    g = geo.loop_geometry([[0.0, 0.0], [C, 0.0]], [D / 2, d / 2], [1, 1])
    ts, tl, length = geo.open_belt(D, d, C)
    assert g.wrap_rad[0] == pytest.approx(tl, rel=1e-12)
    assert g.wrap_rad[1] == pytest.approx(ts, rel=1e-12)
    assert g.length_m == pytest.approx(length, rel=1e-12)


@pytest.mark.parametrize("D,d,C", [(400.0, 100.0, 500.0), (18.0, 6.0, 96.0), (100.0, 100.0, 250.0)])
def test_loop_geometry_equals_crossed_closed_form(D, d, C):
    # Shigley Eq. 17-2 (from memory): theta = pi + 2 asin((D + d)/2C) on both pulleys
    g = geo.loop_geometry([[0.0, 0.0], [C, 0.0]], [D / 2, d / 2], [1, -1])
    th, length = geo.crossed_belt(D, d, C)
    assert g.wrap_rad == pytest.approx([th, th], rel=1e-12)
    assert g.length_m == pytest.approx(length, rel=1e-12)


def test_crossed_reference_value():
    # D=400, d=100, C=500 crossed: 240 deg, L = 1913.2230 (computed from Shigley Eq. 17-2,
    # from memory: theta = pi + 2 asin(500/1000), L = sqrt(4C^2 - (D + d)^2) + (D + d) theta/2)
    th, length = geo.crossed_belt(400.0, 100.0, 500.0)
    assert math.degrees(th) == pytest.approx(240.0, rel=1e-12)
    assert length == pytest.approx(1913.2230, rel=1e-7)


def test_approximate_length_is_short_by_the_series_term():
    # L_exact - L_approx ~ (D - d)**4 / (192 C**3): 0.3470 vs 0.3375 (derived: with
    # s = (D - d)/(2C) = sin(a), the exact L = 2C cos(a) + pi (D + d)/2 + 2C s a; with
    # cos(a) = 1 - s^2/2 - s^4/8 - ... and a = s + s^3/6 + ..., L = 2C + pi (D + d)/2
    # + C s^2 + C s^4/12 + ...; C s^2 = (D - d)^2/(4C) is the approximation's last term and
    # C s^4/12 = (D - d)^4/(192 C^3) what it leaves out)
    exact = geo.open_belt(400.0, 100.0, 500.0)[2]
    approx = geo.open_belt_approx_length(400.0, 100.0, 500.0)
    assert exact - approx == pytest.approx(0.3470, abs=1e-4)
    assert 0 < exact - approx < 1.05 * 300.0**4 / (192 * 500.0**3)


def test_three_pulley_total_turning_is_two_pi():
    # invariant: a simple loop's tangent turns by 2*pi in all (counter-clockwise)
    c = [[0.0, 0.0], [0.6, 0.0], [0.3, 0.5]]
    g = geo.loop_geometry(c, [0.1, 0.08, 0.05], [1, 1, 1])
    assert geo.signed_turning(g, [1, 1, 1]) == pytest.approx(2 * math.pi, abs=1e-12)
    assert geo.path_area(g, [0.1, 0.08, 0.05], [1, 1, 1]) > 0


def test_backside_idler_geometry_against_hand_computation():
    # A back idler of radius 0.03 centred on the straight span of a 1:1 drive, 0.02 above the
    # span line: the belt is pushed out by 0.01 + the idler wraps 2*asin-like angle. Check the
    # tangent points against shapely-free hand geometry: each span touches both circles.
    c = np.array([[0.0, 0.0], [1.0, 0.0], [0.5, 0.12]])
    r = np.array([0.1, 0.1, 0.03])
    t = np.array([1, 1, -1])
    g = geo.loop_geometry(c[[0, 1, 2]], r, t)
    for k in range(3):
        j = (k + 1) % 3
        for p, ci, ri in ((g.span_start_m[k], c[k], r[k]), (g.span_end_m[k], c[j], r[j])):
            assert np.hypot(*(p - ci)) == pytest.approx(ri, rel=1e-12)
            # tangent: radius perpendicular to the span
            assert abs(np.dot(p - ci, g.span_dir[k])) < 1e-12
    assert geo.signed_turning(g, t) == pytest.approx(2 * math.pi, abs=1e-12)


def test_overlapping_circles_raise_with_span_index():
    with pytest.raises(geo.GeometryError) as err:
        geo.loop_geometry([[0.0, 0.0], [0.1, 0.0]], [0.2, 0.05], [1, 1])
    assert err.value.span_index in (0, 1)


def test_crossing_pairs_finds_the_crossed_spans_only():
    g = geo.loop_geometry([[0.0, 0.0], [0.5, 0.0]], [0.2, 0.05], [1, -1])
    assert geo.crossing_pairs(g.span_start_m, g.span_end_m) == [(0, 1)]
    g = geo.loop_geometry([[0.0, 0.0], [0.5, 0.0]], [0.2, 0.05], [1, 1])
    assert geo.crossing_pairs(g.span_start_m, g.span_end_m) == []


def test_faces_round_trip_through_turns():
    faces = np.array([1, -1, 1, 1])
    crossed = np.array([False, True, True, False])
    turns = geo.turns_from_faces(faces, crossed, 1)
    assert list(turns) == [1, -1, -1, 1]
    assert list(geo.faces_from_turns(turns, crossed, 1)) == list(faces)
