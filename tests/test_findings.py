"""Drafting errors found and placed in the drawing; bad files refused cleanly."""

from __future__ import annotations

import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from conftest import add_drive, add_piece, new_doc, save
from layout.draw import path_pieces
from layout.pipeline import check_drawing

D, d, C = 400.0, 100.0, 500.0


def run_cli(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    return subprocess.run([sys.executable, "-m", "layout.cli", *map(str, args)], capture_output=True,
                          text=True, cwd=cwd, env=env)


def _spans_drawing(tmp: Path, rotate_deg: float = 0.0, shorten: float = 0.0) -> tuple[Path, list]:
    """Spans-only two-pulley drive; span 0 rotated about its middle, or the
    top span shortened at its end (a gap at the small pulley)."""
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    spans = [p for p in path_pieces([(0, 0), (C, 0)], [D / 2, d / 2], [1, 1]) if p["kind"] == "span"]
    drawn = []
    for k, s in enumerate(spans):
        a, b = np.asarray(s["start"]), np.asarray(s["end"])
        if k == 0 and rotate_deg:
            m = (a + b) / 2
            t = math.radians(rotate_deg)
            rot = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
            a, b = m + rot @ (a - m), m + rot @ (b - m)
        if k == 1 and shorten:
            u = (b - a) / np.hypot(*(b - a))
            b = b - shorten * u
        msp.add_line(tuple(a), tuple(b), dxfattribs={"layer": "BELT"})
        drawn.append((a, b))
    return save(doc, tmp), drawn


def test_span_rotated_one_degree_is_not_tangent_at_its_place(tmp):
    path, drawn = _spans_drawing(tmp, rotate_deg=1.0)
    checked = check_drawing(path)
    bad = [f for f in checked.findings if f.code == "span-not-tangent"]
    assert len(bad) == 1
    f = bad[0]
    assert f.severity.value == "error"
    assert f.data["angle_deg"] == pytest.approx(1.0, rel=1e-6)
    # located at one of the drawn ends of the rotated span
    a, b = drawn[0]
    assert min(np.hypot(*(np.asarray(f.at) - a)), np.hypot(*(np.asarray(f.at) - b))) < 1e-9
    # the other span is fine, and the loop is still computed from the circles
    assert len(checked.model.loops) == 1


def test_tiny_rotation_within_tolerance_is_accepted(tmp):
    # tangency tolerance 0.05 deg (layout.recognize.Tolerances, common practice); rotating by 0.01 deg about the
    # middle moves the ends by 0.04 mm, under 1e-3 * r = 0.05 mm
    path, _ = _spans_drawing(tmp, rotate_deg=0.01)
    assert not [f for f in check_drawing(path).findings if f.severity.value == "error"]


def test_one_unit_gap_is_reported(tmp):
    path, drawn = _spans_drawing(tmp, shorten=1.0)
    checked = check_drawing(path)
    gaps = [f for f in checked.findings if f.code == "path-gap"]
    assert len(gaps) == 1
    assert gaps[0].data["gap"] == pytest.approx(1.0, rel=1e-6)
    a, b = drawn[1]
    assert np.hypot(*(np.asarray(gaps[0].at) - b)) < 1.0


def test_one_unit_gap_between_line_and_arc_is_reported(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    pieces = path_pieces([(0, 0), (C, 0)], [D / 2, d / 2], [1, 1])
    a, b = np.asarray(pieces[0]["start"]), np.asarray(pieces[0]["end"])
    pieces[0]["end"] = tuple(b - (b - a) / np.hypot(*(b - a)))      # 1 unit short of the arc
    for p in pieces:
        add_piece(msp, p)
    checked = check_drawing(save(doc, tmp))
    gaps = [f for f in checked.findings if f.code == "path-gap"]
    assert len(gaps) == 1 and gaps[0].data["gap"] == pytest.approx(1.0, rel=1e-6)
    assert len(checked.model.loops) == 1


def test_missing_wrap_arc_is_closed_by_the_circle(tmp):
    # span, arc, span drawn; the wrap on the big pulley left to its circle (a mixed form)
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    for p in path_pieces([(0, 0), (C, 0)], [D / 2, d / 2], [1, 1])[:3]:
        add_piece(msp, p)
    checked = check_drawing(save(doc, tmp))
    assert len(checked.model.loops) == 1
    assert not [f for f in checked.findings if f.severity.value == "error"]


def test_missing_span_is_an_open_path(tmp):
    # arc, span, arc drawn; the second span missing: the path does not close
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    pieces = path_pieces([(0, 0), (C, 0)], [D / 2, d / 2], [1, 1])
    for p in pieces[1:4]:
        add_piece(msp, p)
    path = save(doc, tmp)
    checked = check_drawing(path)
    opens = [f for f in checked.findings if f.code == "path-open"]
    assert len(opens) == 1 and opens[0].severity.value == "error"
    assert not checked.model.loops
    r = run_cli("check", path)
    assert r.returncode == 1


def test_arc_on_no_pulley_is_reported(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    # a third "pulley" drawn as a wrap arc but with no circle under it
    add_drive(msp, [(0.0, 0.0), (C, 0.0), (C / 2, 400.0)], [D / 2, d / 2, 40.0], [1, 1, 1], "lines",
              circles=False)
    checked = check_drawing(save(doc, tmp))
    assert "arc-off-pulley" in [f.code for f in checked.findings]


def test_span_through_a_pulley_of_its_own_loop_is_reported(tmp):
    # a drafting slip found by a seeded search: routed A -> B -> C -> X (X touched by the
    # back of the belt), the path does not cross itself, but the span B-C runs 46.6 units
    # from X's centre, inside X (radius 90), which the loop wraps elsewhere
    doc = new_doc("mm")
    msp = doc.modelspace()
    centers = [(80.0, 310.0), (260.0, 750.0), (360.0, 90.0), (370.0, 330.0)]
    radii = [110.0, 60.0, 110.0, 90.0]
    for c, r in zip(centers, radii):
        msp.add_circle(c, r)
    for t, c in zip(("A", "B", "C", "X"), centers):
        msp.add_text(t, dxfattribs={"insert": c})
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('[route.R]\npulleys = ["A", "B", "C", "X"]\nback = ["X"]\n')
    checked = check_drawing(path)
    hits = [f for f in checked.findings if f.code == "span-hits-pulley"]
    assert len(hits) == 1 and set(hits[0].refs) == {"R", "B-C", "X"}
    # placed on the span, at its closest approach to X's centre
    assert np.hypot(hits[0].at[0] - 370.0, hits[0].at[1] - 330.0) == pytest.approx(46.6267, abs=1e-3)
    # a pulley in no loop is not this check's business (it may be another loop's plane)
    (tmp / "drive.spanwise.toml").write_text('[route.R]\npulleys = ["A", "B", "C"]\n')
    assert not [f for f in check_drawing(path).findings if f.code == "span-hits-pulley"]


def test_random_bytes_named_dxf_exit_2_one_line(tmp):
    path = tmp / "noise.dxf"
    rng = np.random.default_rng(7)
    path.write_bytes(rng.integers(0, 256, 4096, dtype=np.uint8).tobytes())
    before = path.read_bytes()
    r = run_cli("check", path)
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1
    assert "Traceback" not in r.stderr
    assert path.read_bytes() == before


def test_dwg_signature_exit_2_one_line(tmp):
    path = tmp / "drive.dxf"
    path.write_bytes(b"AC1032\x00\x00\x00\x00\x00\x00" + bytes(range(256)) * 4)
    r = run_cli("check", path)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "DWG" in lines[0]
    assert "Traceback" not in r.stderr


def test_empty_and_truncated_files_exit_2(tmp):
    (tmp / "empty.dxf").write_bytes(b"")
    r = run_cli("check", tmp / "empty.dxf")
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "polyline")
    full = save(doc, tmp, "full.dxf").read_bytes()
    k = full.index(b"ENTITIES")
    (tmp / "cut.dxf").write_bytes(full[:k + 40])
    r = run_cli("check", tmp / "cut.dxf")
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and len(r.stderr.strip().splitlines()) == 1


def test_input_is_byte_identical_after_check(tmp):
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "lines")
    path = save(doc, tmp)
    before = path.read_bytes()
    mtime = path.stat().st_mtime_ns
    r = run_cli("check", path, "--json", tmp / "out.json")
    assert r.returncode == 0, r.stderr
    assert path.read_bytes() == before
    assert path.stat().st_mtime_ns == mtime
    assert sorted(p.name for p in tmp.iterdir()) == ["drive.dxf", "out.json"]


def test_no_circles_no_loop_exit_2(tmp):
    doc = new_doc("mm")
    doc.modelspace().add_lwpolyline([(0, 0), (100, 0), (100, 50), (0, 50)], close=True)
    r = run_cli("check", save(doc, tmp))
    assert r.returncode == 2 and "no belt loop" in r.stderr


def test_spans_drawn_slightly_long_are_accepted(tmp):
    # spans-only sketch with every line running 3 units past its tangent points
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    for p in path_pieces([(0, 0), (C, 0)], [D / 2, d / 2], [1, 1]):
        if p["kind"] == "span":
            a, b = np.asarray(p["start"]), np.asarray(p["end"])
            u = (b - a) / np.hypot(*(b - a))
            msp.add_line(tuple(a - 3 * u), tuple(b + 3 * u))
    checked = check_drawing(save(doc, tmp))
    assert not [f for f in checked.findings if f.severity.value == "error"], checked.findings


# ---- regressions found by scripts/fuzz_check.py, each with a tiny drawing

def test_regression_speed_source_on_no_loop(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "polyline")
    msp.add_circle((2000, 0), 40)
    msp.add_text("M role=driver speed=1000rpm", dxfattribs={"insert": (2000, 0)})
    checked = check_drawing(save(doc, tmp))
    f = [f for f in checked.findings if f.code == "ambiguous-drive"]
    assert f and "M" in f[0].refs


def test_regression_non_finite_coordinates_are_skipped(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "polyline")
    msp.add_line((0, 0), (1, 1), dxfattribs={"layer": "JUNK"})
    msp.add_circle((5, 5), 3, dxfattribs={"layer": "JUNK"})
    path = save(doc, tmp)
    text = path.read_text()
    # write NaN and infinity into the junk entities, as damaged files do
    k = text.index("AcDbLine\n")
    text = text[:k] + text[k:].replace("\n 11\n1.0\n", "\n 11\ninf\n", 1)
    k = text.index("AcDbCircle\n 10\n5.0\n")
    text = text[:k] + text[k:].replace("\n 10\n5.0\n", "\n 10\nnan\n", 1)
    path.write_text(text)
    checked = check_drawing(path)
    bad = [f for f in checked.findings if f.code == "bad-coordinates"]
    assert bad and bad[0].data["skipped"] == 2
    assert len(checked.model.loops) == 1


def test_regression_infinite_whole_number_in_spec(tmp):
    from layout.errors import SpecError
    from layout.spec import parse_spec
    for data in ({"belt": {"strands": float("inf")}}, {"modes": float("inf")}):
        with pytest.raises(SpecError, match="whole number"):
            parse_spec(data, "s.toml")


def test_regression_adjust_slide_through_the_other_pulley():
    # the slide runs through the other pulley; Brent's method must not step into positions
    # where no belt path exists
    from physics.geometry import open_belt
    from physics.length import solve_adjust
    target = open_belt(0.2, 0.1, 0.16)[2]
    res = solve_adjust([[0.0, 0.0], [0.5, 0.0]], [0.1, 0.05], [1, 1], 1, [-1.0, 0.0], target)
    # moving along -x the centre distance shrinks from 0.5 to 0.16 (Shigley Eq. 17-1, from memory)
    assert res is not None and 0.5 - res.offset_m == pytest.approx(0.16, rel=1e-9)


def test_regression_prose_inside_a_pulley_is_not_a_label(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "polyline")
    msp.add_text("SECTION A-A", dxfattribs={"insert": (0, 0)})
    checked = check_drawing(save(doc, tmp))
    assert "SECTION" not in checked.model.drive.pulleys


def test_duplicate_labels_are_each_refused_and_a_flood_is_counted(tmp):
    # 25 separate drives, the large pulley of each labelled 'A': the first names its circle and
    # the other 24 are duplicates, each a problem with its place (exit 2). The console shows the
    # first 20 (layout.errors.MAX_LISTED) and one line counting the other 4: 24 - 20 = 4.
    doc = new_doc("mm")
    msp = doc.modelspace()
    for k in range(25):
        y = 2000.0 * k
        add_drive(msp, [(0.0, y), (C, y)], [D / 2, d / 2], [1, 1], "polyline")
        msp.add_text("A", dxfattribs={"insert": (0, y)})
    r = run_cli("check", save(doc, tmp), "--read-only")
    lines = r.stderr.strip().splitlines()
    assert r.returncode == 2 and "Traceback" not in r.stderr, r.stderr
    assert len(lines) == 21 and all("id 'A' already names the circle at (0, 0)" in s for s in lines[:20]), lines
    assert "at (0, 2000)" in lines[0] and lines[20] == "spanwise: ... and 4 more problems like these"
