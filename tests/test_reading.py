"""Reading drawings as real files come: units, labels, blocks, recovery, layer filters."""

from __future__ import annotations

import math

import numpy as np
import pytest

from conftest import add_drive, new_doc, save
from layout.draw import add_belt_path, path_pieces
from layout.errors import SpecError
from layout.pipeline import check_drawing
from layout.read import read_drawing
from physics import geometry as geo

D, d, C = 400.0, 100.0, 500.0
OPEN = geo.open_belt(D * 1e-3, d * 1e-3, C * 1e-3)      # Shigley Eq. 17-1 (from memory)


def _codes(checked):
    return [f.code for f in checked.findings]


def _length(checked, loop=0):
    lp = checked.model.loops[loop]
    return checked.results.loops[lp.id].geometry.length_m


def test_no_units_declared_assumes_mm_with_a_note(tmp):
    doc = new_doc(None)
    doc.header["$INSUNITS"] = 0
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    checked = check_drawing(save(doc, tmp))
    assert checked.model.units == "mm" and "units-assumed" in _codes(checked)
    assert _length(checked) == pytest.approx(OPEN[2], rel=1e-9)


def test_spec_units_override_the_header(tmp):
    doc = new_doc("in")                 # declared wrongly
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('units = "mm"\n')
    checked = check_drawing(path)
    assert checked.model.units == "mm"
    assert "units-implausible" not in _codes(checked)
    assert _length(checked) == pytest.approx(OPEN[2], rel=1e-9)


def test_r12_drawing_has_no_units_and_reads(tmp):
    import ezdxf
    doc = ezdxf.new("R12")
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "lines")
    path = save(doc, tmp)
    drawing = read_drawing(path)
    assert drawing.units is None and drawing.version == "AC1009"
    checked = check_drawing(path)
    assert "units-assumed" in _codes(checked)
    assert _length(checked) == pytest.approx(OPEN[2], rel=1e-9)


def test_header_without_insunits_is_not_metres(tmp):
    # ezdxf reads a drawing without $INSUNITS as metres; the raw header says "none"
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "spans")
    path = save(doc, tmp)
    text = path.read_text()
    k = text.index("$INSUNITS")
    # drop the variable: "  9\n$INSUNITS\n 70\n4\n"
    start = text.rindex("\n", 0, k - 1)
    end = k
    for _ in range(3):
        end = text.index("\n", end + 1)
    path.write_text(text[:start] + text[end:])
    assert read_drawing(path).units is None


def test_recovery_reader_reads_damaged_file_with_a_note(tmp):
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    path = save(doc, tmp)
    text = path.read_text()
    j = text.index("CIRCLE")
    path.write_text(text[:j] + "CIRCLE\n 40\n1e\n" + text[j + len("CIRCLE\n"):])
    checked = check_drawing(path)
    assert checked.model.drawing.recovered
    assert "recovered" in _codes(checked)
    assert _length(checked) == pytest.approx(OPEN[2], rel=1e-9)


def test_binary_dxf_reads(tmp):
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "lines")
    path = tmp / "bin.dxf"
    doc.saveas(path, fmt="bin")
    assert path.read_bytes().startswith(b"AutoCAD Binary DXF")
    drawing = read_drawing(path)
    assert drawing.units == "mm"
    assert _length(check_drawing(path)) == pytest.approx(OPEN[2], rel=1e-9)


def test_circle_like_entities_count_as_pulleys(tmp):
    # an ELLIPSE of axis ratio 1 and a closed polyline of two half-circle arcs
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_ellipse((0, 0), major_axis=(0, D / 2), ratio=1.0)
    msp.add_lwpolyline([(C - d / 2, 0, 1.0), (C + d / 2, 0, 1.0)], format="xyb", close=True)
    add_belt_path(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], form="spans")
    checked = check_drawing(save(doc, tmp))
    assert not [f for f in checked.findings if f.severity.value == "error"]
    assert _length(checked) == pytest.approx(OPEN[2], rel=1e-9)


def test_old_style_2d_polyline_with_bulges(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    pieces = path_pieces([(0, 0), (C, 0)], [D / 2, d / 2], [1, 1])
    pts = []
    for i in range(0, len(pieces), 2):
        pts.append((*pieces[i]["start"], 0, 0, 0))
        pts.append((*pieces[i]["end"], 0, 0, math.tan(pieces[i + 1]["sweep"] / 4)))
    pl = msp.add_polyline2d([(x, y) for x, y, *_ in pts], close=True)
    for v, p in zip(pl.vertices, pts):
        v.dxf.bulge = p[4]
    assert _length(check_drawing(save(doc, tmp))) == pytest.approx(OPEN[2], rel=1e-9)


def test_labels_text_mtext_and_attributes_name_pulleys(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    blk = doc.blocks.new("IDLER")
    blk.add_circle((0, 0), 30)
    blk.add_attdef("ID", (0, 0))
    blk.add_attdef("ROLE", (0, -5))
    blk.add_attdef("PARTNO", (0, -10))         # not a spec key: ignored
    centers = [(0.0, 0.0), (C, 0.0), (C / 2, 250.0)]
    msp.add_circle(centers[0], D / 2)
    msp.add_circle(centers[1], d / 2)
    ref = msp.add_blockref("IDLER", centers[2])
    ref.add_auto_attribs({"ID": "TENS", "ROLE": "idler", "PARTNO": "6204-2RS"})
    msp.add_text("MOTOR role=driver speed=1450rpm direction=ccw", dxfattribs={"insert": (-50, 20)})
    msp.add_mtext("PUMP\\Prole=driven power=2.2kW", dxfattribs={"insert": (C - 20, 10)})
    msp.add_text("M8", dxfattribs={"insert": (900, 900)})       # a callout elsewhere
    msp.add_circle((900, 900), 4)                               # in a bolt hole: not a pulley
    add_belt_path(msp, centers, [D / 2, d / 2, 30.0], [1, 1, 1], form="lines")
    checked = check_drawing(save(doc, tmp))
    (lp,) = checked.model.loops
    assert lp.pulleys == ["MOTOR", "PUMP", "TENS"]            # from the driver, travel order
    p = checked.model.drive.pulleys
    assert p["MOTOR"].role.value == "driver" and p["MOTOR"].speed_rad_s == pytest.approx(1450 * math.pi / 30)
    assert p["PUMP"].power_w == pytest.approx(2200.0)
    assert set(p) == {"MOTOR", "PUMP", "TENS"}


def test_bad_label_value_is_fatal_with_its_place(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    msp.add_text("P1 speed=1450", dxfattribs={"insert": (0, 0)})
    msp.add_text("P2 power=5,5kW", dxfattribs={"insert": (C, 0)})
    with pytest.raises(SpecError) as err:
        check_drawing(save(doc, tmp))
    probs = err.value.problems
    assert len(probs) == 2
    assert "TEXT #" in probs[0] and "speed" in probs[0] and "rpm" in probs[0]
    assert "comma" in probs[1]


def test_spec_naming_an_automatic_id_gets_a_warning(tmp):
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('[pulley.P1]\nrole = "driver"\n')
    checked = check_drawing(path)
    assert "auto-id-named" in _codes(checked)
    assert checked.model.drive.pulleys["P1"].role.value == "driver"


def test_spec_at_finds_pulley_and_concentric_needs_diameter(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    msp.add_circle((C, 0), 120)                  # a second pulley on the same shaft, unwrapped
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('[pulley.FAN]\nat = [500, 0]\ndiameter = "100 mm"\nrole = "driven"\n')
    checked = check_drawing(path)
    assert "FAN" in checked.model.loops[0].pulleys
    (tmp / "drive.spanwise.toml").write_text('[pulley.FAN]\nat = [510, 0]\n')
    with pytest.raises(SpecError, match="no circle centred"):
        check_drawing(path)


def test_belt_layers_restrict_the_search_with_a_note(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline", layer="BELT_A")
    add_drive(msp, [(0, 2000), (C, 2000)], [D / 2, d / 2], [1, 1], "polyline", layer="SKETCH")
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('belt_layers = ["belt*"]\n')
    checked = check_drawing(path)
    assert [lp.id for lp in checked.model.loops] == ["BELT_A"]
    assert "off-belt-layer" in _codes(checked)


def test_loop_ids_from_layers_else_numbered(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline", layer="0")
    add_drive(msp, [(0, 2000), (C, 2000)], [D / 2, d / 2], [1, 1], "polyline", layer="MAIN")
    add_drive(msp, [(0, 4000), (C, 4000)], [D / 2, d / 2], [1, 1], "spans", layer="TWIN")
    add_drive(msp, [(0, 6000), (C, 6000)], [D / 2, d / 2], [1, 1], "spans", layer="TWIN")
    checked = check_drawing(save(doc, tmp))
    assert [lp.id for lp in checked.model.loops] == ["L1", "MAIN", "L2", "L3"]


def test_small_slot_is_a_note_not_a_loop(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    add_drive(msp, [(1000, 0), (1014, 0)], [4.0, 4.0], [1, 1], "spans", layer="0")     # an 8 mm slot
    checked = check_drawing(save(doc, tmp))
    assert len(checked.model.loops) == 1 and "possible-slot" in _codes(checked)


def test_back_idler_drawn_at_outside_diameter(tmp):
    # height 10 mm: the idler's circle is drawn at r = 30, its pitch line runs at r = 40
    centers = [(0.0, 0.0), (800.0, 0.0), (400.0, 125.0)]
    pitch = [100.0, 100.0, 40.0]
    g = geo.loop_geometry(np.asarray(centers) * 1e-3, np.asarray(pitch) * 1e-3, [1, 1, -1])
    for form in ("spans", "lines"):
        doc = new_doc("mm")
        msp = doc.modelspace()
        for c, r in zip(centers, [100.0, 100.0, 30.0]):
            msp.add_circle(c, r)
        add_belt_path(msp, centers, pitch, [1, 1, -1], form=form)
        path = save(doc, tmp, f"{form}.dxf")
        (tmp / f"{form}.spanwise.toml").write_text('[belt]\nheight = "10 mm"\n')
        checked = check_drawing(path)
        assert not [f for f in checked.findings if f.severity.value == "error"], checked.findings
        assert "back-offset" in _codes(checked)
        (lp,) = checked.model.loops
        assert [s.value for s in lp.sides] == ["inside", "inside", "back"]
        assert _length(checked) == pytest.approx(g.length_m, rel=1e-9)


def test_keep_out_clearance(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], "polyline")
    msp.add_line((-300, -230), (800, -230), dxfattribs={"layer": "FRAME_GUARD"})
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('keep_out_layers = ["FRAME*"]\nclearance = "10 mm"\n')
    checked = check_drawing(path)
    assert "keep-out" not in _codes(checked)          # the lowest span point is y = -200
    (tmp / "drive.spanwise.toml").write_text('keep_out_layers = ["FRAME*"]\nclearance = "40 mm"\n')
    (f,) = [f for f in check_drawing(path).findings if f.code == "keep-out"]
    # closest approach: the bottom span's tangent point on the big pulley, at
    # y = -R cos(asin((R - r)/C)) = -200 * sqrt(1 - 0.3**2) (hand), so 230 - 190.79 above the guard
    assert f.data["distance"] == pytest.approx(230.0 - 200.0 * math.sqrt(1 - 0.09), abs=1e-9)


def test_pitch_diameter_under_section_minimum(tmp):
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0, 0), (C, 0)], [D / 2, 40.0], [1, 1], "polyline")
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('[belt]\nsection = "SPA"\n')
    (f,) = [f for f in check_drawing(path).findings if f.code == "diameter-small"]
    # ISO 4183 minimum datum diameter for SPA, 90 mm (from memory); the small pulley is 80 mm
    assert f.data["pitch_diameter_m"] == pytest.approx(0.08)
    assert f.data["min_pitch_diameter_m"] == pytest.approx(0.09)


def test_travel_follows_the_speed_source_through_a_shared_shaft(tmp):
    # stage 1: M -> J1 (open); stage 2: J2 (on J1's shaft) -> X. M turns clockwise.
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0, 0), (400, 0)], [50.0, 120.0], [1, 1], "polyline", layer="S1")
    add_drive(msp, [(400, 0), (400, 500)], [60.0, 150.0], [1, 1], "spans", layer="S2")
    for t, c in (("M", (0, 0)), ("J1", (400, 100)), ("J2", (400, 0)), ("X", (400, 500))):
        msp.add_text(t, dxfattribs={"insert": c})
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('[pulley.M]\nspeed = "1450 rpm"\ndirection = "cw"\n')
    checked = check_drawing(path)
    s1, s2 = checked.model.loops
    assert s1.pulleys == ["M", "J1"] and s1.turns == [-1, -1]
    assert s2.pulleys == ["J2", "X"] and s2.turns == [-1, -1]       # J2 turns with J1
    assert checked.model.drive.shafts == (("J1", "J2"),)
    (tmp / "drive.spanwise.toml").write_text('[pulley.M]\nspeed = "1450 rpm"\n')
    checked = check_drawing(path)
    assert "direction-assumed" in _codes(checked)
    assert checked.model.loops[0].turns == [1, 1]


def test_automatic_ids_follow_drawing_order_through_block_references(tmp):
    # model space holds: the big pulley as a block reference, then the small one as a
    # CIRCLE; unlabelled pulleys are numbered in the order entities are stored (README, the drawing contract: "in drawing order")
    doc = new_doc("mm")
    blk = doc.blocks.new("SHEAVE")
    blk.add_circle((0, 0), D / 2)
    msp = doc.modelspace()
    msp.add_blockref("SHEAVE", (0, 0))
    msp.add_circle((C, 0), d / 2)
    add_belt_path(msp, [(0, 0), (C, 0)], [D / 2, d / 2], [1, 1], form="spans")
    checked = check_drawing(save(doc, tmp))
    p = checked.model.drive.pulleys
    assert p["P1"].radius_m == pytest.approx(0.2) and p["P2"].radius_m == pytest.approx(0.05)
