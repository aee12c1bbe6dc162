"""Real drawing libraries without false alarms, and a drafter's slip that keeps its loop.

The drive used throughout: pulleys of pitch radius 125 and 62.5 mm whose centres are
C = sqrt(500**2 + 62.5**2) = 503.891 mm apart, so that each free span is exactly 500 mm
long (span = sqrt(C**2 - (R - r)**2)). Rotating a span 1 degree about its end at the large
pulley moves its other end 500 * sin(1 deg) = 8.726 mm square to the span, that is
radially off the small pulley by 8.726 mm = 0.14 r: beyond the attach tolerance (0.1 r),
within the slip tolerance (0.25 r).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from conftest import add_piece, new_doc, save
from layout.draw import add_belt_path, path_pieces
from layout.pipeline import check_drawing
from layout.read import read_drawing
from layout.recognize import recognize_paths
from parts_sheet import add_parts_sheet
from test_findings import run_cli

R, r = 125.0, 62.5
C = math.hypot(500.0, R - r)
SPEC = """units = "mm"
[belt]
section = "SPA"
install_tension = "400 N"
[pulley.P1]
role = "driver"
speed = "1450 rpm"
direction = "ccw"
[pulley.P2]
power = "2 kW"
"""


def _open_belt_length(R: float, r: float, C: float) -> float:
    """Open belt pitch length, exact: L = 2 C cos(phi) + pi (R + r) + 2 phi (R - r), sin(phi) = (R - r) / C
    (Shigley's Mechanical Engineering Design, 9th ed., Eq. 17-1 written with the exact wrap angles)."""
    phi = math.asin((R - r) / C)
    return 2 * C * math.cos(phi) + math.pi * (R + r) + 2 * phi * (R - r)


def _rotate(p: Any, about: Any, deg: float) -> tuple[float, float]:
    t = math.radians(deg)
    v = np.asarray(p, float) - np.asarray(about, float)
    return tuple(np.asarray(about, float) + [math.cos(t) * v[0] - math.sin(t) * v[1],
                                              math.sin(t) * v[0] + math.cos(t) * v[1]])


def _drive(msp: Any, form: str, *, at: tuple[float, float] = (0.0, 0.0), layer: str = "0",
           fault: str = "") -> tuple[float, float] | None:
    """The two-pulley drive at ``at`` in one drawn form, with one fault; the faulty end's point."""
    centers = [at, (at[0] + C, at[1])]
    for c, rr in zip(centers, (R, r)):
        msp.add_circle(c, rr, dxfattribs={"layer": "PULLEYS"})
    pieces = path_pieces(centers, [R, r], [1, 1])
    span = pieces[0]                                  # leaves the large pulley, reaches the small one
    moved = _rotate(span["end"], span["start"], 1.0) if fault == "rotate" else None
    if form == "lines":
        if moved:
            span["end"] = moved
        if fault == "gap":
            a, b = np.asarray(span["start"]), np.asarray(span["end"])
            span["end"] = tuple(b - (b - a) / np.hypot(*(b - a)))          # 1 unit short of the arc
            moved = span["end"]
        for p in pieces:
            add_piece(msp, p, layer=layer)
    elif form == "polyline":
        (pl,) = add_belt_path(msp, centers, [R, r], [1, 1], form="polyline", layer=layer)
        if moved:
            pts = list(pl.get_points("xyseb"))
            i = int(np.argmin([math.hypot(x - span["end"][0], y - span["end"][1]) for x, y, *_ in pts]))
            pts[i] = (moved[0], moved[1], *pts[i][2:])
            pl.set_points(pts, format="xyseb")
    elif form == "spans":
        for k, p in enumerate(pieces):
            if p["kind"] == "span":
                a, b = np.asarray(p["start"]), np.asarray(p["end"])
                if k == 2 and fault == "short":                 # the return span 3 % short at its end
                    b = a + 0.97 * (b - a)
                    moved = tuple(b)
                msp.add_line(tuple(a), tuple(b), dxfattribs={"layer": layer})
    return moved


def _write(folder: Path, name: str, build) -> Path:
    doc = new_doc("mm")
    build(doc.modelspace())
    path = save(doc, folder, name)
    path.with_suffix(".spanwise.toml").write_text(SPEC)
    return path


def _numbers(report: Any) -> list[float]:
    """Every number of every loop in the JSON report, in order (ids and texts left out)."""
    out: list[float] = []

    def walk(x: Any) -> None:
        if isinstance(x, dict):
            for k in sorted(x):
                walk(x[k])
        elif isinstance(x, list):
            for v in x:
                walk(v)
        elif isinstance(x, (int, float)) and not isinstance(x, bool):
            out.append(float(x))

    walk(report.to_dict()["loops"])
    return out


def _same_numbers(a: Any, b: Any) -> None:
    na, nb = _numbers(a), _numbers(b)
    assert len(na) == len(nb) > 20
    # the same circles in another place: equal to round-off of the coordinates (1e-9 relative)
    assert na == pytest.approx(nb, rel=1e-9, abs=1e-9)


@pytest.fixture
def undamaged(tmp: Path) -> Any:
    path = _write(tmp, "clean.dxf", lambda msp: _drive(msp, "lines"))
    rep = check_drawing(path)
    assert not [f for f in rep.findings if f.severity.value == "error"]
    # Shigley 9th ed. Eq. 17-1 (exact wraps), by hand: phi = asin(62.5 / 503.891) = 0.124353 rad,
    # L = 2 * 500 + pi * 187.5 + 2 * 0.124353 * 62.5 = 1000 + 589.049 + 15.544 = 1604.593 mm
    assert rep.model.drive is not None
    assert rep.results.loops["L1"].geometry.length_m == pytest.approx(_open_belt_length(R, r, C) / 1000, rel=1e-12)
    assert _open_belt_length(R, r, C) == pytest.approx(1604.593, abs=1e-3)
    return rep


# --------------------------------------------------------------------------- clutter


def test_parts_sheet_alone_holds_no_belt_and_raises_no_error(tmp):
    doc = new_doc("mm")
    drawn = add_parts_sheet(doc.modelspace())
    path = save(doc, tmp, "sheet.dxf")
    rec = recognize_paths(read_drawing(path))
    assert rec.chains == []
    assert not [f for f in rec.findings if f.severity.value == "error"], rec.findings
    assert len(rec.findings) <= 3
    (dup,) = [f for f in rec.findings if f.code == "duplicate-entity"]
    # invariant: the sheet's builder counts every entity it drew twice
    assert dup.data["count"] == drawn["duplicates"]
    res = run_cli("check", path)
    assert res.returncode == 2 and "holds no belt loop" in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1


def test_a_drive_beside_the_parts_sheet_gives_its_numbers_and_its_one_fault(tmp):
    alone = _write(tmp, "alone.dxf", lambda msp: _drive(msp, "lines", at=(2000.0, 0.0), layer="BELT", fault="gap"))

    def both(msp: Any) -> None:
        add_parts_sheet(msp)
        _drive(msp, "lines", at=(2000.0, 0.0), layer="BELT", fault="gap")

    sheet = _write(tmp, "sheet_and_drive.dxf", both)
    a, b = check_drawing(alone), check_drawing(sheet)
    assert [lp.id for lp in b.model.loops] == ["BELT"]
    _same_numbers(a, b)
    errors = [f for f in b.findings if f.severity.value == "error"]
    assert [f.code for f in errors] == ["path-gap"]
    assert errors[0].data["gap"] == pytest.approx(1.0, rel=1e-6)        # drawn 1 unit short
    assert len([f for f in b.findings if f.severity.value == "note"]) <= 4


# --------------------------------------------------------------------------- a drafter's slip


@pytest.mark.parametrize("form,fault,code", [("lines", "rotate", "span-not-tangent"),
                                             ("polyline", "rotate", "span-not-tangent"),
                                             ("spans", "short", "path-gap")])
def test_a_slip_keeps_the_loop_with_one_located_error(tmp, undamaged, form, fault, code):
    where: list = []
    path = _write(tmp, f"slip_{form}.dxf", lambda msp: where.append(_drive(msp, form, fault=fault)))
    rep = check_drawing(path)
    assert [lp.id for lp in rep.model.loops] == ["L1"]
    _same_numbers(undamaged, rep)
    errors = [f for f in rep.findings if f.severity.value == "error"]
    assert [f.code for f in errors] == [code], [f.message for f in errors]
    f = errors[0]
    # the span and the pulley at its faulty end: the rotated span P1-P2 misses P2; the short
    # return span P2-P1 stops 3 % (15 mm) short of P1
    span, pulley = ("P1-P2", "P2") if fault == "rotate" else ("P2-P1", "P1")
    assert f.refs == ("L1", span, pulley)
    assert math.dist(f.at, where[0]) < 1e-9
    if fault == "rotate":
        assert f.data["angle_deg"] == pytest.approx(1.0, rel=1e-6)
        assert f.data["miss"] == pytest.approx(500 * math.sin(math.radians(1.0)), rel=1e-3)
    else:
        assert f.data["gap"] == pytest.approx(0.03 * 500, rel=1e-9)
    assert run_cli("check", path, "--read-only").returncode == 1


def test_an_open_polyline_ending_at_one_pulley_closes_across_it(tmp, undamaged):
    def build(msp: Any) -> None:
        centers = [(0.0, 0.0), (C, 0.0)]
        for c, rr in zip(centers, (R, r)):
            msp.add_circle(c, rr)
        pieces = path_pieces(centers, [R, r], [1, 1])
        wrap = pieces[3]                               # the wrap on the large pulley, drawn half
        half = dict(wrap, sweep=wrap["sweep"] / 2)
        a0 = math.atan2(wrap["start"][1], wrap["start"][0]) + half["sweep"]
        half["end"] = (R * math.cos(a0), R * math.sin(a0))
        for p in pieces[:3] + [half]:
            add_piece(msp, p, layer="0")

    rep = check_drawing(_write(tmp, "open.dxf", build))
    _same_numbers(undamaged, rep)
    errors = [f for f in rep.findings if f.severity.value == "error"]
    assert [f.code for f in errors] == ["path-gap"]
    assert errors[0].refs[0] == "L1" and errors[0].refs[-1] == "P1"


def test_an_open_path_of_the_speed_source_is_one_error(tmp):
    # the return span missing: path-open, and no second error about the speed source's belt
    def build(msp: Any) -> None:
        centers = [(0.0, 0.0), (C, 0.0)]
        msp.add_circle(centers[0], R)
        msp.add_circle(centers[1], r)
        msp.add_text("P1", dxfattribs={"insert": (0.0, 0.0), "height": 10})
        msp.add_text("P2", dxfattribs={"insert": (C, 0.0), "height": 10})
        for p in path_pieces(centers, [R, r], [1, 1])[1:4]:       # arc, span, arc
            add_piece(msp, p)

    rep = check_drawing(_write(tmp, "open.dxf", build))
    errors = [f for f in rep.findings if f.severity.value == "error"]
    assert [f.code for f in errors] == ["path-open"]
    assert set(errors[0].refs) == {"P1", "P2"}


def test_a_route_for_a_drawn_loop_is_ignored(tmp, undamaged):
    path = _write(tmp, "routed.dxf", lambda msp: _drive(msp, "lines"))
    path.with_suffix(".spanwise.toml").write_text(SPEC + '[route.EXTRA]\npulleys = ["P1", "P2"]\n')
    rep = check_drawing(path)
    assert [lp.id for lp in rep.model.loops] == ["L1"]
    (w,) = [f for f in rep.findings if f.code == "route-ignored"]
    assert w.severity.value == "warning" and w.refs == ("EXTRA",)
    _same_numbers(undamaged, rep)


def test_an_impossible_route_of_the_speed_source_is_one_error(tmp):
    # three pulleys in a row routed A, C, B with B on the back: the path would cross itself
    def build(msp: Any) -> None:
        for x, name in ((0.0, "A"), (300.0, "B"), (600.0, "C")):
            msp.add_circle((x, 0.0), 50.0)
            msp.add_text(name, dxfattribs={"insert": (x, 0.0), "height": 10})

    path = _write(tmp, "route.dxf", build)
    path.with_suffix(".spanwise.toml").write_text(
        'units = "mm"\n[pulley.A]\nrole = "driver"\nspeed = "1450 rpm"\n'
        '[route.R]\npulleys = ["A", "C", "B"]\nback = ["C"]\n')
    rep = check_drawing(path)
    errors = [f for f in rep.findings if f.severity.value == "error"]
    assert [f.code for f in errors] == ["route-impossible"], [f.message for f in errors]


def test_a_loop_touching_one_circle_only_is_no_belt(tmp):
    # Two chords of one circle on the belt layer close a walk (chord, round the circle, chord,
    # round the circle): every wrap on the same circle, so nothing is driven; a belt loop needs
    # two pulleys at least (common practice). Points at 10, 80, 190 and 260 degrees, r = 50.
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), 50)

    def at(deg: float) -> tuple[float, float]:
        return (50 * math.cos(math.radians(deg)), 50 * math.sin(math.radians(deg)))

    msp.add_line(at(10), at(80), dxfattribs={"layer": "BELT"})
    msp.add_line(at(190), at(260), dxfattribs={"layer": "BELT"})
    rec = recognize_paths(read_drawing(save(doc, tmp, "one_circle.dxf")), belt_layers=("BELT",))
    assert rec.chains == []


def _lines_near_two_circles(tmp: Path, off: float) -> Path:
    """Circles r = 40 at (0, 0) and r = 30 at (150, 0), joined by two lines at ``off`` x r from
    each centre (1.0: the open belt's tangents), each ending on both circles."""
    doc = new_doc("mm")
    msp = doc.modelspace()
    (ra, rb), B = (40.0, 30.0), np.array([150.0, 0.0])
    msp.add_circle((0, 0), ra)
    msp.add_circle(tuple(B), rb)
    da, db = off * ra, off * rb
    alpha = math.acos((da - db) / 150.0)          # |150 cos(alpha) - da| = db, the same side
    for sign in (1, -1):
        n = np.array([math.cos(alpha), sign * math.sin(alpha)])
        t = np.array([-n[1], n[0]])                   # along the line, from A towards B
        t = t if B @ t > 0 else -t
        foot_a, foot_b = da * n, B + (da - B @ n) * n
        end_a = foot_a + t * math.sqrt(ra ** 2 - da ** 2)
        end_b = foot_b - t * math.sqrt(rb ** 2 - db ** 2)
        msp.add_line(tuple(end_a), tuple(end_b))
    return save(doc, tmp, f"lines_{off}.dxf")


@pytest.mark.parametrize("off, loops", [(1.0, 1), (0.95, 0)])
def test_lines_ending_on_two_circles_are_a_belt_only_when_they_leave_at_the_tangent(tmp, off, loops):
    # At off = 0.95 each line passes 0.95 r from the centre and ends on the circle
    # sqrt(1 - 0.95**2) r = 0.312 r from its tangent point (acos(0.95) = 18.2 deg off the tangent);
    # the attach tolerance is 0.1 r. Lines crossing a bolt circle like this are clutter, while the
    # tangents themselves (off = 1.0) are a belt drawn as its spans, the arcs left to the circles.
    rec = recognize_paths(read_drawing(_lines_near_two_circles(tmp, off)))
    assert len(rec.chains) == loops


def test_arcs_on_no_circle_between_two_circles_are_no_belt(tmp):
    # Two arcs of radius 400 bridge circles r = 40 at (0, 0) and r = 30 at (150, 0), each ending on
    # both circles: a closed walk round the two circles, but the belt bends only round pulleys, so
    # nothing of it is a span or a wrap (the two circles alone are a bolt pair, not a drive).
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), 40)
    msp.add_circle((150, 0), 30)
    for sign in (1, -1):
        pa, pb = np.array([0.0, 40.0 * sign]), np.array([150.0, 30.0 * sign])
        mid, chord = (pa + pb) / 2, pb - pa
        normal = np.array([-chord[1], chord[0]]) / np.hypot(*chord) * -sign
        centre = mid + normal * math.sqrt(400.0 ** 2 - (np.hypot(*chord) / 2) ** 2)
        angles = sorted(math.degrees(math.atan2(*(p - centre)[::-1])) % 360 for p in (pa, pb))
        start, end = (angles if angles[1] - angles[0] < 180 else angles[::-1])
        msp.add_arc(tuple(centre), 400.0, start, end)
    rec = recognize_paths(read_drawing(save(doc, tmp, "arcs.dxf")))
    assert rec.chains == []
