"""``spanwise suggest-idler`` end to end: clearance, take-up of the added path, ranking,
``--count``/``-q``, and the answers when no idler is needed or no position is valid.

The drive is the resonant two-pulley sample of ``test_resonance`` (A: r = 50 mm at the origin,
B: r = 100 mm at 1000 mm; span A-B resonates with A's first order, B-A does not). Every check
names the independent computation it compares against.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest
import shapely

import test_resonance as tr
from physics.geometry import loop_geometry
from physics.placement import CONSTRAINT_TEXT, Constraint
from test_findings import run_cli

A, B = ((0.0, 0.0), 50.0), ((1000.0, 0.0), 100.0)      # centres and pitch radii, mm
FIXED_BELT = 'tensioning = "fixed"\nlength = "2350 mm"\naxial_stiffness = "40 kN"'
EA_N, BELT_L_M, T0_N = 40e3, 2.350, 200.0


def _sample(tmp: Path, name: str = "drive", belt: str | None = None) -> Path:
    path = tr._drawing(tmp, name, [A[0], B[0]], [A[1], B[1]], [1, 1])
    if belt is not None:
        spec = tmp / f"{name}.spanwise.toml"
        spec.write_text(spec.read_text().replace('tensioning = "constant"', belt))
    return path


def _suggest(tmp: Path, path: Path, *args: str) -> tuple[object, dict]:
    out = tmp / f"{path.stem}.idlers.json"
    r = run_cli("suggest-idler", path, "--span", "A-B", "--json", out, *args)
    return r, json.loads(out.read_text())


# --- an independent exact path: tangents and wraps by hand, measured with shapely -------------

def _tangent(ci, rho_i, cj, rho_j):
    """Tangent points of the span from circle i to j (signed radii: + counter-clockwise).

    With m the left normal of the travel direction d, a tangent point is p = c - rho m, so
    m . (cj - ci) = rho_j - rho_i; d = (m_y, -m_x) points from i to j for the root b > 0."""
    D = np.subtract(cj, ci)
    dist = math.hypot(*D)
    e = D / dist
    q = np.array([-e[1], e[0]])
    a = (rho_j - rho_i) / dist
    m = a * e + math.sqrt(1 - a * a) * q
    return np.asarray(ci) - rho_i * m, np.asarray(cj) - rho_j * m


def _exact_path(centers, radii, turns, step_rad: float = 1e-4) -> shapely.LineString:
    n = len(centers)
    spans = [_tangent(centers[i], turns[i] * radii[i], centers[(i + 1) % n], turns[(i + 1) % n] * radii[(i + 1) % n])
             for i in range(n)]
    pts = []
    for i in range(n):
        j = (i + 1) % n
        arrive, leave = spans[i][1], spans[j][0]
        c = np.asarray(centers[j])
        th0 = math.atan2(*(arrive - c)[::-1])
        th1 = math.atan2(*(leave - c)[::-1])
        sweep = turns[j] * ((turns[j] * (th1 - th0)) % (2 * math.pi))
        pts.append(spans[i][0])
        for th in np.linspace(th0, th0 + sweep, max(2, int(abs(sweep) / step_rad) + 1)):
            pts.append(c + radii[j] * np.array([math.cos(th), math.sin(th)]))
    pts.append(pts[0])
    return shapely.LineString(pts)


def _with_idler(row: dict) -> tuple[list, list, list]:
    """Centres, radii (mm) and turns of the loop A, idler, B: the back idler turns clockwise."""
    return [A[0], tuple(row["center"]), B[0]], [A[1], row["pitch_diameter_m"] / 2 * 1e3, B[1]], [1, -1, 1]


# --- the tests ---------------------------------------------------------------------------------

def test_every_suggested_idler_clears_every_pulley_and_span_by_the_clearance(tmp):
    path = _sample(tmp)
    r, rep = _suggest(tmp, path, "--clearance", "110 mm", "--count", "3")
    assert r.returncode == 0, r.stdout + r.stderr
    assert rep["clearance_m"] == pytest.approx(0.110)
    assert rep["ruled_out"]["hits-pulley"] + rep["ruled_out"]["near-span"] > 0   # the clearance binds
    rows = rep["suggestions"]
    assert rows
    # shapely distances (independent of the placement code): pulley circles, and the other span
    # B-A as the hand tangent of the two circles (_tangent), against each idler's pitch circle
    pulleys = [shapely.Point(c).buffer(rad, quad_segs=512) for c, rad in (A, B)]
    other = shapely.LineString(_tangent(B[0], B[1], A[0], A[1]))
    for row in rows:
        idler = shapely.Point(row["center"]).buffer(row["pitch_diameter_m"] / 2 * 1e3, quad_segs=512)
        gaps = [idler.distance(p) for p in pulleys] + [idler.distance(other)]
        assert min(gaps) >= 110.0 - 1e-3                      # mm; polygon sag of the buffers < 1e-3
        assert row["gap_m"] * 1e3 == pytest.approx(min(gaps), abs=1e-3)


def test_default_clearance_is_the_belt_height_of_its_section(tmp):
    path = _sample(tmp, belt='tensioning = "constant"\nsection = "SPB"')
    r, rep = _suggest(tmp, path, "--count", "1")
    from physics.catalogue import find_section
    assert r.returncode in (0, 1), r.stderr
    assert rep["clearance_m"] == pytest.approx(find_section("SPB").height_m)   # catalogue row


def test_a_span_with_no_resonance_needs_no_idler(tmp):
    path = _sample(tmp)
    r = run_cli("suggest-idler", path, "--span", "B-A", "--json", tmp / "i.json")
    # test_resonance.test_driver_order_crossing_a_span_frequency: the one band is on A-B
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip().count("\n") == 0 and "no idler needed" in r.stdout
    rep = json.loads((tmp / "i.json").read_text())
    assert rep["idler_needed"] is False and rep["suggestions"] == []


def test_added_path_and_tension_rise_with_a_chosen_belt(tmp):
    path = _sample(tmp, belt=FIXED_BELT)
    r, rep = _suggest(tmp, path, "--count", "2")
    assert r.returncode == 0, r.stdout + r.stderr
    before = _exact_path([A[0], B[0]], [A[1], B[1]], [1, 1]).length
    for row in rep["suggestions"]:
        t = row["take_up"]
        assert t["mode"] == "stretch" and t["belt_length_m"] == pytest.approx(BELT_L_M)
        c, rad, turns = _with_idler(row)
        # shapely lengths of the hand-built exact paths (arcs in 1e-4 rad chords: error < 1e-6 mm)
        added_mm = _exact_path(c, rad, turns).length - before
        assert t["added_length_m"] * 1e3 == pytest.approx(added_mm, abs=1e-5)
        # physics.geometry of the drive with and without the idler
        exact = loop_geometry(np.array(c) / 1e3, np.array(rad) / 1e3, turns).length_m - loop_geometry(
            np.array([A[0], B[0]]) / 1e3, [A[1] / 1e3, B[1] / 1e3], [1, 1]).length_m
        assert t["added_length_m"] == pytest.approx(exact, rel=1e-9)
        # by hand: a linear elastic strand on fixed centres, dT = EA dL / L (L: the chosen belt)
        rise = EA_N * t["added_length_m"] / BELT_L_M
        assert t["tension_rise_n"] == pytest.approx(rise, rel=1e-12)
        assert row["install_tension_n"] == pytest.approx(T0_N + rise, rel=1e-12)     # analysed so
    assert "T +" in r.stdout


def test_an_adjustable_pulley_takes_up_the_added_path(tmp):
    path = _sample(tmp, belt='tensioning = "fixed"\nlength = "2480 mm"')
    spec = tmp / "drive.spanwise.toml"
    spec.write_text(spec.read_text().replace('direction = "ccw"', 'direction = "ccw"\nadjust = "180 deg"'))
    r, rep = _suggest(tmp, path, "--count", "1")
    assert r.returncode == 0, r.stdout + r.stderr
    (row,) = rep["suggestions"]
    t = row["take_up"]
    assert t["mode"] == "adjust" and t["adjust_pulley"] == "A"
    # physics.geometry: A sits at its slide offset s0 (along -x, `adjust = "180 deg"`) without the
    # idler, and at s0 + travel with it; both paths are the chosen belt's running length
    adj = json.loads(run_cli("check", path, "--json", "-").stdout)["loops"][0]["stock"]["adjust"]
    target, s0 = adj["path_length_m"], adj["travel_m"]
    assert target == pytest.approx(2.480)                         # no EA: the belt does not stretch
    c, rad, turns = _with_idler(row)

    def length_at(centers, radii, trn, s_m):
        cc = np.array(centers, float) / 1e3
        cc[0, 0] -= s_m
        return loop_geometry(cc, np.array(radii) / 1e3, trn).length_m

    assert length_at([A[0], B[0]], [A[1], B[1]], [1, 1], s0) == pytest.approx(target, abs=1e-9)
    assert length_at(c, rad, turns, s0 + t["adjust_travel_m"]) == pytest.approx(target, abs=1e-9)
    # to first order the open belt shortens by 2 cos(beta) per unit A moves towards B
    # (sin beta = (R - r) / C = 0.05), so the travel is -dL / (2 cos beta)
    beta = math.asin(0.05)
    assert t["adjust_travel_m"] == pytest.approx(-t["added_length_m"] / (2 * math.cos(beta)), rel=0.02)


def test_count_and_quiet(tmp):
    path = _sample(tmp)
    r, rep = _suggest(tmp, path, "--count", "2")
    assert r.returncode == 0 and 1 <= len(rep["suggestions"]) <= 2
    q = run_cli("suggest-idler", path, "--span", "A-B", "--count", "1", "-q")
    assert q.returncode == 0, q.stderr
    lines = q.stdout.splitlines()
    assert len(lines) == 1 and lines[0].split()[0] == "1"            # the one suggestion row, nothing else
    assert run_cli("suggest-idler", path, "--span", "A-B", "--count", "0").returncode == 2
    bad = run_cli("suggest-idler", path, "--span", "A-B", "--clearance", "5")
    assert bad.returncode == 2 and "--clearance" in bad.stderr


def test_positions_leaving_no_resonance_rank_first(tmp):
    path = _sample(tmp)
    doc = ezdxf.readfile(path)
    for x0 in (20, 450):      # one zone near A (the long span still resonates), one mid-span
        box = [(x0, -250), (x0 + 100, -250), (x0 + 100, -40), (x0, -40)]
        doc.modelspace().add_lwpolyline(box, close=True, dxfattribs={"layer": "ZONES"})
    doc.saveas(path)
    r, rep = _suggest(tmp, path, "--region", "ZONES", "--count", "4")
    assert r.returncode == 0, r.stdout + r.stderr
    left = [row["resonances_left"] for row in rep["suggestions"]]
    assert 0 in left and any(n > 0 for n in left)
    clear_flags = [n == 0 for n in left]
    assert clear_flags == sorted(clear_flags, reverse=True)


def test_no_valid_position_says_which_constraints_ruled_them_out(tmp):
    path = _sample(tmp)
    r, rep = _suggest(tmp, path, "--clearance", "300 mm")
    assert r.returncode == 1 and rep["suggestions"] == []
    counts = rep["ruled_out"]
    assert sum(counts.values()) == rep["positions_tried"] > 0
    assert counts["hits-pulley"] > 0 and counts["near-span"] > 0
    for c in (Constraint.HITS_PULLEY, Constraint.NEAR_SPAN):
        assert f"{counts[c.value]} {CONSTRAINT_TEXT[c]}" in r.stdout
    # a zone near A only: positions are valid but leave the resonance, and the message says so
    doc = ezdxf.readfile(path)
    doc.modelspace().add_lwpolyline([(20, -250), (120, -250), (120, -40), (20, -40)], close=True,
                                    dxfattribs={"layer": "NEAR_A"})
    doc.saveas(path)
    r, rep = _suggest(tmp, path, "--region", "NEAR_A")
    assert r.returncode == 1
    assert rep["ruled_out"]["resonance"] > 0 and CONSTRAINT_TEXT[Constraint.RESONANCE] in r.stdout
    assert all(row["resonances_left"] > 0 for row in rep["suggestions"])
