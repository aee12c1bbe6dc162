"""The same drive read from every way of drawing it: one drive, many drawn forms, the same numbers.

Reference values: Budynas & Nisbett, Shigley's Mechanical Engineering Design, 9th ed.,
ch. 17, Eqs. 17-1 (open) and 17-2 (crossed) (from memory), via physics.geometry's closed
forms, which tests/test_geometry.py checks against the book's worked example.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from conftest import add_drive, new_doc, save
from layout.pipeline import check_drawing
from physics import geometry as geo

D, d, C = 400.0, 100.0, 500.0     # mm


def _codes(checked):
    return [f.code for f in checked.findings]


def _errors(checked):
    return [f for f in checked.findings if f.severity.value == "error"]


def _two_pulley(tmp: Path, form: str, crossed: bool, *, units: str = "mm", scale: float = 1.0,
                gap: float = 0.0, seed: int = 0, name: str = "drive.dxf") -> Path:
    doc = new_doc(units)
    msp = doc.modelspace()
    add_drive(msp, [(0.0, 0.0), (C * scale, 0.0)], [D / 2 * scale, d / 2 * scale],
              [1, -1] if crossed else [1, 1], form, gap=gap, seed=seed)
    return save(doc, tmp, name)


def _wraps_and_length(checked):
    (lp,) = checked.model.loops
    g = checked.results.loops[lp.id].geometry
    wraps = {checked.model.drive.pulleys[p].radius_m: w for p, w in zip(lp.pulleys, g.wrap_rad)}
    return wraps, g.length_m, lp


@pytest.mark.parametrize("form", ["polyline", "lines", "spans", "shuffled"])
@pytest.mark.parametrize("crossed", [False, True])
def test_two_pulley_drive_matches_closed_forms_in_every_drawn_form(tmp, form, crossed):
    path = _two_pulley(tmp, form, crossed, gap=1e-3 if form == "shuffled" else 0.0, seed=3)
    checked = check_drawing(path)
    assert not _errors(checked), [f.message for f in checked.findings]
    wraps, length, lp = _wraps_and_length(checked)
    if crossed:
        th, L = geo.crossed_belt(D * 1e-3, d * 1e-3, C * 1e-3)
        assert wraps[0.2] == pytest.approx(th, rel=1e-9)
        assert wraps[0.05] == pytest.approx(th, rel=1e-9)
        assert "crossed-spans" in _codes(checked)
        assert lp.crossed == [True, True]
    else:
        ts, tl, L = geo.open_belt(D * 1e-3, d * 1e-3, C * 1e-3)
        assert wraps[0.2] == pytest.approx(tl, rel=1e-9)
        assert wraps[0.05] == pytest.approx(ts, rel=1e-9)
        assert lp.crossed == [False, False]
    assert length == pytest.approx(L, rel=1e-9)
    # both pulleys touched by the inside face, open or crossed (derived: each crossed span turns the belt over once, two half twists bring the inside face back)
    assert [s.value for s in lp.sides] == ["inside", "inside"]


@pytest.mark.parametrize("crossed", [False, True])
def test_routed_drive_matches_closed_forms(tmp, crossed):
    doc = new_doc("mm")
    msp = doc.modelspace()
    msp.add_circle((0, 0), D / 2)
    msp.add_circle((C, 0), d / 2)
    msp.add_text("A", dxfattribs={"insert": (0, 0)})
    msp.add_text("B", dxfattribs={"insert": (C, 0)})
    path = save(doc, tmp)
    crossed_line = 'crossed = ["A-B", "B-A"]' if crossed else ""
    (tmp / "drive.spanwise.toml").write_text(f'[route.V1]\npulleys = ["A", "B"]\n{crossed_line}\n')
    checked = check_drawing(path)
    assert not _errors(checked)
    wraps, length, lp = _wraps_and_length(checked)
    assert lp.id == "V1" and lp.chain is None
    if crossed:
        th, L = geo.crossed_belt(D * 1e-3, d * 1e-3, C * 1e-3)
        assert wraps[0.2] == pytest.approx(th, rel=1e-9)
    else:
        ts, tl, L = geo.open_belt(D * 1e-3, d * 1e-3, C * 1e-3)
        assert wraps[0.05] == pytest.approx(ts, rel=1e-9)
        assert wraps[0.2] == pytest.approx(tl, rel=1e-9)
    assert length == pytest.approx(L, rel=1e-9)


def test_mm_and_inch_drawings_give_the_same_si_numbers(tmp):
    mm = check_drawing(_two_pulley(tmp, "polyline", False, units="mm", name="mm.dxf"))
    inch = check_drawing(_two_pulley(tmp, "polyline", False, units="in", scale=1 / 25.4, name="in.dxf"))
    w_mm, l_mm, _ = _wraps_and_length(mm)
    w_in, l_in, _ = _wraps_and_length(inch)
    assert l_in == pytest.approx(l_mm, rel=1e-12)
    assert sorted(w_in.values()) == pytest.approx(sorted(w_mm.values()), rel=1e-12)
    assert inch.model.units == "in"


@pytest.mark.parametrize("rotation,scale,mirror", [(0.0, 1.0, False), (37.0, 2.5, False), (-120.0, 0.4, True)])
def test_pulleys_as_rotated_scaled_block_references(tmp, rotation, scale, mirror):
    doc = new_doc("mm")
    msp = doc.modelspace()
    for name, r in (("BIG", D / 2), ("SMALL", d / 2)):
        blk = doc.blocks.new(name)
        # the pitch circle off the block's base point, so the transform matters
        blk.add_circle((10.0, -5.0), r / scale)
        blk.add_circle((10.0, -5.0), 4.0)          # a bore
    sx = -scale if mirror else scale
    for name, at in (("BIG", (0.0, 0.0)), ("SMALL", (C, 0.0))):
        ref = msp.add_blockref(name, (0, 0), dxfattribs={"rotation": rotation, "xscale": sx, "yscale": scale})
        # place the reference so the pitch circle lands at `at`
        m = ref.matrix44()
        cx, cy, _ = m.transform((10.0, -5.0, 0.0))
        ref.dxf.insert = (at[0] - cx, at[1] - cy, 0.0)
    from layout.draw import add_belt_path
    add_belt_path(msp, [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], form="spans")
    checked = check_drawing(save(doc, tmp))
    assert not _errors(checked), [f.message for f in checked.findings]
    wraps, length, _ = _wraps_and_length(checked)
    ts, tl, L = geo.open_belt(D * 1e-3, d * 1e-3, C * 1e-3)
    assert length == pytest.approx(L, rel=1e-9)
    assert wraps[0.05] == pytest.approx(ts, rel=1e-9)


def test_nested_block_with_mirrored_arc_path(tmp):
    # the whole drive inside a block, inserted mirrored inside another block: arcs reverse
    doc = new_doc("mm")
    inner = doc.blocks.new("DRIVE")
    add_drive(inner, [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "lines")
    outer = doc.blocks.new("MACHINE")
    outer.add_blockref("DRIVE", (100, 50), dxfattribs={"xscale": -1, "rotation": 30})
    doc.modelspace().add_blockref("MACHINE", (1000, 2000), dxfattribs={"rotation": 15})
    checked = check_drawing(save(doc, tmp))
    assert not _errors(checked), [f.message for f in checked.findings]
    _, length, _ = _wraps_and_length(checked)
    assert length == pytest.approx(geo.open_belt(D * 1e-3, d * 1e-3, C * 1e-3)[2], rel=1e-9)


def test_non_uniformly_scaled_circle_is_a_finding_not_a_pulley(tmp):
    doc = new_doc("mm")
    blk = doc.blocks.new("OVAL")
    blk.add_circle((0, 0), 30)
    msp = doc.modelspace()
    msp.add_blockref("OVAL", (2000, 0), dxfattribs={"xscale": 2, "yscale": 1})
    add_drive(msp, [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "polyline")
    checked = check_drawing(save(doc, tmp))
    assert "circle-distorted" in _codes(checked)
    assert len(checked.model.drive.pulleys) == 2


def _plate(msp, holes, form: str) -> None:
    """A mounting plate: its outline offset 12 mm round 8 mm holes (arcs concentric with the
    holes but not on them)."""
    from layout.draw import add_belt_path
    for h in holes:
        msp.add_circle(h, 4.0)
    add_belt_path(msp, holes, [16.0] * len(holes), [1] * len(holes), form=form, layer="PLATE")


def test_plate_outline_offset_round_three_holes_is_not_a_belt(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    _plate(msp, [(2000.0, 0.0), (2200.0, 0.0), (2100.0, 150.0)], "lines")
    add_drive(msp, [(0.0, 0.0), (C, 0.0)], [D / 2, d / 2], [1, 1], "polyline")
    checked = check_drawing(save(doc, tmp))
    assert len(checked.model.loops) == 1
    assert not _errors(checked)
    assert all("PLATE" not in f.message for f in checked.findings)


def test_plate_outline_alone_is_no_belt_loop(tmp):
    from layout.errors import FatalInput
    doc = new_doc("mm")
    _plate(doc.modelspace(), [(0.0, 0.0), (200.0, 0.0), (100.0, 150.0)], "polyline")
    with pytest.raises(FatalInput, match="no belt loop"):
        check_drawing(save(doc, tmp))


def test_mm_drawing_declaring_inches_gets_units_warning(tmp):
    # drawn in mm, header says inches: the pulleys would measure 10 m and 2.5 m
    checked = check_drawing(_two_pulley(tmp, "polyline", False, units="in"))
    (f,) = [f for f in checked.findings if f.code == "units-implausible"]
    assert f.severity.value == "warning"
    assert f.data["likely"] == "mm"
    assert checked.model.units == "in"       # analysis goes on in the declared unit


def test_far_from_origin_drawing_keeps_precision(tmp):
    doc = new_doc("mm")
    off = (3.0e6, -7.0e6)
    add_drive(doc.modelspace(), [off, (off[0] + C, off[1])], [D / 2, d / 2], [1, 1], "spans")
    checked = check_drawing(save(doc, tmp))
    assert not _errors(checked), [f.message for f in checked.findings]
    _, length, _ = _wraps_and_length(checked)
    assert length == pytest.approx(geo.open_belt(D * 1e-3, d * 1e-3, C * 1e-3)[2], rel=1e-9)


def test_two_belts_on_one_circle_are_two_loops(tmp):
    # a two-groove motor pulley drawn once, driving a fan to the right and a pump to the
    # left, both belts as spans only on their own layers: the ends on the shared circle must
    # pair belt by belt
    doc = new_doc("mm")
    msp = doc.modelspace()
    for c, r in (((0.0, 0.0), 60.0), ((600.0, 0.0), 120.0), ((-500.0, 0.0), 100.0)):
        msp.add_circle(c, r)
    from layout.draw import add_belt_path
    add_belt_path(msp, [(0.0, 0.0), (600.0, 0.0)], [60.0, 120.0], [1, 1], form="spans", layer="FAN_BELT")
    add_belt_path(msp, [(0.0, 0.0), (-500.0, 0.0)], [60.0, 100.0], [1, 1], form="spans", layer="PUMP_BELT")
    checked = check_drawing(save(doc, tmp))
    assert not _errors(checked), [f.message for f in checked.findings]
    by_id = {lp.id: lp for lp in checked.model.loops}
    assert set(by_id) == {"FAN_BELT", "PUMP_BELT"}
    for lid, (R, Cd) in (("FAN_BELT", (120.0, 600.0)), ("PUMP_BELT", (100.0, 500.0))):
        length = checked.results.loops[lid].geometry.length_m
        assert length == pytest.approx(geo.open_belt(2 * R * 1e-3, 0.12, Cd * 1e-3)[2], rel=1e-9)
