"""Files ezdxf's readers reject or read short: the raw-tag reader (layout.rawread) and its write-back.

The typical file is a vector-graphics program's DXF export: no handles, no ``AcDbEntity``,
and an LWPOLYLINE without its ``100/AcDbPolyline`` subclass marker, which ezdxf's normal
and recovery readers both refuse (measured below, not assumed).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest
from ezdxf import recover

from layout import rawread
from layout.pipeline import check_drawing
from layout.read import read_document, read_drawing
from test_findings import run_cli

R_SMALL, R_LARGE, C = 62.5, 125.0, 500.0     # mm; the small pulley at (0, 0), the large at (C, 0)
# Open belt, Shigley's Mechanical Engineering Design, 9th ed., Eq. 17-1 (from memory):
#   L = 2 C cos(phi) + pi (R + r) + 2 phi (R - r),   sin(phi) = (R - r) / C.
# By hand: sin(phi) = 62.5 / 500 = 0.125, phi = 0.1253278 rad, cos(phi) = 0.9921567;
#   2 C cos(phi) = 992.1567, pi (R + r) = pi 187.5 = 589.0486, 2 phi (R - r) = 15.6660;
#   L = 1596.8713 mm.
PHI = math.asin((R_LARGE - R_SMALL) / C)
OPEN_MM = 2 * C * math.cos(PHI) + math.pi * (R_LARGE + R_SMALL) + 2 * PHI * (R_LARGE - R_SMALL)


def _tags(*pairs: tuple[int, object]) -> str:
    return "".join(f"{code}\n{value}\n" for code, value in pairs)


def _belt_vertices() -> list[tuple[float, float, float]]:
    """The open belt's pitch line as closed-polyline vertices ``(x, y, bulge)``, counter-clockwise.

    Both tangent points of a span lie along one unit normal n of the span, n . (c2 - c1) = r - R,
    so n = (-(R - r) / C, +-cos(phi)). The belt runs along the lower span, round the large pulley
    (wrap pi + 2 phi), back along the upper span and round the small one (wrap pi - 2 phi); a
    polyline arc of sweep s has bulge tan(s / 4).
    """
    nx, ny = -(R_LARGE - R_SMALL) / C, math.cos(PHI)
    return [(R_SMALL * nx, -R_SMALL * ny, 0.0),
            (C + R_LARGE * nx, -R_LARGE * ny, math.tan((math.pi + 2 * PHI) / 4)),
            (C + R_LARGE * nx, R_LARGE * ny, 0.0),
            (R_SMALL * nx, R_SMALL * ny, math.tan((math.pi - 2 * PHI) / 4))]


def _entities(*, markers: bool = False, extra: str = "") -> str:
    """Two pulleys, the belt as a closed LWPOLYLINE with bulges, a LINE, an ARC and a TEXT."""
    ent = "100\nAcDbEntity\n" if markers else ""
    poly = "100\nAcDbPolyline\n" if markers else ""
    text = _tags((0, "CIRCLE")) + ent + _tags((8, "PULLEYS"), (10, 0.0), (20, 0.0), (30, 0.0), (40, R_SMALL))
    text += _tags((0, "CIRCLE")) + ent + _tags((8, "PULLEYS"), (10, C), (20, 0.0), (30, 0.0), (40, R_LARGE))
    text += _tags((0, "LWPOLYLINE")) + ent + _tags((8, "BELT")) + poly + _tags((90, 4), (70, 1))
    for x, y, bulge in _belt_vertices():
        text += _tags((10, repr(x)), (20, repr(y)), (42, repr(bulge)))
    text += _tags((0, "LINE")) + ent + _tags((8, "FRAME"), (10, -200), (20, -200), (11, 800), (21, -200))
    text += _tags((0, "ARC")) + ent + _tags((8, "FRAME"), (10, 250), (20, 300), (40, 20), (50, 0), (51, 180))
    text += extra
    text += _tags((0, "TEXT")) + ent + _tags((8, "NOTES"), (10, 0), (20, -100), (40, 10), (1, "DRIVE"))
    return text


def _vector_export(path: Path, *, header: str | None = None, extra: str = "", markers: bool = False,
                   end: bool = True) -> Path:
    """A hand-made text DXF: optional HEADER, no TABLES, ENTITIES as a vector program writes them."""
    text = ""
    if header is not None:
        text += _tags((0, "SECTION"), (2, "HEADER"), (9, "$ACADVER"), (1, header), (0, "ENDSEC"))
    text += _tags((0, "SECTION"), (2, "ENTITIES")) + _entities(markers=markers, extra=extra)
    if end:
        text += _tags((0, "ENDSEC"), (0, "EOF"))
    path.write_text(text)
    return path


HATCH_AND_SPLINE = (_tags((0, "HATCH"), (8, "FILL"), (10, 0), (20, 0), (30, 0), (2, "SOLID"), (70, 1),
                          (71, 0), (91, 0), (75, 0), (76, 1), (98, 0))
                    + _tags((0, "SPLINE"), (8, "CURVES"), (70, 8), (71, 3), (72, 0), (73, 0), (74, 0)))


def _recovered(drawing_or_report):
    found = [f for f in drawing_or_report.findings if f.code == "recovered"]
    assert len(found) == 1
    return found[0]


def test_ezdxf_readers_both_refuse_the_vector_export(tmp_path):
    # the premise, measured: both readers raise on the missing AcDbPolyline marker
    path = _vector_export(tmp_path / "export.dxf")
    with pytest.raises(ezdxf.DXFStructureError, match="AcDbPolyline"):
        ezdxf.readfile(path)
    with pytest.raises(ezdxf.DXFStructureError, match="AcDbPolyline"):
        recover.readfile(path)


def test_vector_export_checks_through_the_raw_reader(tmp_path):
    path = _vector_export(tmp_path / "export.dxf")
    r = run_cli("check", path, "--json", "-")
    assert r.returncode == 0, r.stderr
    rep = json.loads(r.stdout)
    assert rep["drawing"]["recovered"] is True
    assert len(rep["loops"]) == 1
    assert rep["loops"][0]["length_m"] == pytest.approx(OPEN_MM * 1e-3, rel=1e-6)
    notes = [f for f in rep["findings"] if f["code"] == "recovered"]
    assert len(notes) == 1 and notes[0]["severity"] == "note"
    assert notes[0]["data"]["reader"] == "raw-tags"
    assert notes[0]["data"]["rebuilt"] == 6 and notes[0]["data"]["skipped"] == {}
    assert sorted(p.name for p in tmp_path.iterdir()) == ["export.dxf"]     # --json - writes no file


def test_skipped_hatch_and_spline_are_named_in_the_note(tmp_path):
    path = _vector_export(tmp_path / "export.dxf", header="AC1015", extra=HATCH_AND_SPLINE)
    drawing = read_drawing(path)
    assert drawing.recovered and drawing.rebuilt
    note = _recovered(drawing)
    assert note.severity.value == "note"
    assert note.data["skipped"] == {"HATCH": 1, "SPLINE": 1}
    assert "HATCH" in note.message and "SPLINE" in note.message
    assert [len(drawing.circles), len(drawing.texts)] == [2, 1]
    report = check_drawing(path)
    lp = report.model.loops[0]
    assert report.results.loops[lp.id].geometry.length_m == pytest.approx(OPEN_MM * 1e-3, rel=1e-6)


def test_recovery_reader_losing_entities_hands_over_to_the_raw_reader(tmp_path):
    # a complete structure (markers, header) without ENDSEC and EOF: measured, the recovery
    # reader returns an empty model space while the raw tags hold the drive
    path = _vector_export(tmp_path / "cut.dxf", header="AC1015", markers=True, end=False)
    doc, _ = recover.readfile(path)
    raw = rawread.walk(path.read_bytes())
    lost = rawread.lost_entities(raw, doc)
    assert lost.get("LWPOLYLINE") == 1 and lost.get("CIRCLE") == 2
    drawing = read_drawing(path)
    assert drawing.rebuilt
    note = _recovered(drawing)
    assert note.severity.value == "warning"                    # truncated
    assert note.data["lost"] == lost
    assert note.data["skipped"] == {"TEXT cut off by the end of the file": 1}   # the last, maybe partial
    report = check_drawing(path)
    lp = report.model.loops[0]
    assert report.results.loops[lp.id].geometry.length_m == pytest.approx(OPEN_MM * 1e-3, rel=1e-6)


def _cut_in_first_circle(path: Path) -> None:
    text = _vector_export(path).read_text()
    path.write_text(text[:text.index("40\n62.5")])


def _cut_in_belt(path: Path) -> None:
    text = _vector_export(path).read_text()
    path.write_text(text[:text.index("42\n") + 3])


def _not_group_codes(path: Path) -> None:
    path.write_text("0\nSECTION\n2\nENTITIES\nthis line is no group code\nnor is this\n")


def _noise(path: Path) -> None:
    path.write_bytes(np.random.default_rng(11).integers(0, 256, 4096, dtype=np.uint8).tobytes())


@pytest.mark.parametrize("spoil", [_cut_in_first_circle, _cut_in_belt, _not_group_codes, _noise])
def test_truncated_and_garbage_files_exit_2_with_one_line(tmp_path, spoil):
    path = tmp_path / "bad.dxf"
    spoil(path)
    before = path.read_bytes()
    r = run_cli("check", path)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and len(r.stderr.strip().splitlines()) == 1
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.dxf"]


def test_in_place_is_refused_for_a_rebuilt_drawing_and_a_copy_is_written(tmp_path):
    path = _vector_export(tmp_path / "export.dxf", extra=HATCH_AND_SPLINE)
    before = path.read_bytes()
    r = run_cli("check", path, "--in-place")
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "--in-place" in lines[0]
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["export.dxf"]        # no backup either
    r = run_cli("check", path)                  # the default annotated copy may be written
    assert r.returncode == 0, r.stderr
    copy = tmp_path / "export.spanwise.dxf"
    doc = ezdxf.readfile(copy)                  # the normal reader reads spanwise's copy
    assert any(layer.dxf.name.startswith("SPANWISE-") for layer in doc.layers)
    again = check_drawing(copy)
    assert not again.model.drawing.recovered
    lp = again.model.loops[0]
    assert again.results.loops[lp.id].geometry.length_m == pytest.approx(OPEN_MM * 1e-3, rel=1e-6)
    assert path.read_bytes() == before


def _well_formed(version: str) -> object:
    """A drawing with every entity type the raw reader rebuilds, in blocks too."""
    doc = ezdxf.new(version)
    msp = doc.modelspace()
    msp.add_circle((0, 0), 40, dxfattribs={"layer": "P", "extrusion": (0, 0, -1)})
    msp.add_arc((10, 10), 5, 10, 200, dxfattribs={"layer": "BELT"})
    msp.add_line((0, 0), (5, 5), dxfattribs={"layer": "BELT"})
    msp.add_polyline2d([(0, 0, 0.3), (5, 0, 0), (5, 5, -0.2)], format="xyb", close=True)
    msp.add_polyline3d([(0, 0, 0), (5, 0, 1), (5, 5, 2)])
    msp.add_text("M1", dxfattribs={"insert": (1, 2), "halign": 1, "align_point": (3, 3)})
    if version == "R12":
        return doc
    blk = doc.blocks.new("SHEAVE")
    blk.add_circle((0, 0), 50)
    blk.add_lwpolyline([(0, 0, 0.5), (10, 0, 0), (10, 10, -1)], format="xyb", close=True,
                       dxfattribs={"layer": "0"})
    blk.add_ellipse((100, 100), (20, 0), 1.0, 0.2, 2.0)
    blk.add_mtext("J\\Pk", dxfattribs={"insert": (3, 4)})
    ref = msp.add_blockref("SHEAVE", (0, 500), dxfattribs={"layer": "L2", "rotation": 30, "xscale": -1})
    ref.add_attrib("ID", "A1", (1, 1))
    grid = msp.add_blockref("SHEAVE", (5000, 0))
    grid.dxf.column_count, grid.dxf.column_spacing, grid.dxf.row_count, grid.dxf.row_spacing = 3, 1000, 2, 700
    msp.add_lwpolyline([(0, 0, 1), (10, 0, 1)], format="xyb", close=True, dxfattribs={"extrusion": (0, 0, -1)})
    msp.add_ellipse((200, 100), (0, 20), 1.0)
    return doc


@pytest.mark.parametrize("version", ["R12", "R2010"])
def test_raw_reader_agrees_with_ezdxf_on_a_well_formed_file(tmp_path, version):
    # cross-check: the same file through ezdxf's reader and through the raw walk and rebuild
    path = tmp_path / "ok.dxf"
    _well_formed(version).saveas(path)
    assert not read_drawing(path).rebuilt
    by_ezdxf = read_document(ezdxf.readfile(path))
    raw = rawread.walk(path.read_bytes())
    rebuilt, count = rawread.build(raw)
    by_raw = read_document(rebuilt)
    assert count == len(raw.entities) + sum(len(b.entities) for b in raw.blocks if not b.name.startswith("*"))
    assert by_raw.entity_count == by_ezdxf.entity_count
    for a, b in ((by_ezdxf.circles, by_raw.circles), (by_ezdxf.segments, by_raw.segments),
                 (by_ezdxf.texts, by_raw.texts)):
        for name in a.__dataclass_fields__:
            if name in ("handle", "owner"):
                continue                       # a rebuilt document has handles of its own
            va, vb = getattr(a, name), getattr(b, name)
            assert np.array_equal(np.asarray(va), np.asarray(vb)), name
    assert [(s.tags, s.block, s.x, s.y) for s in by_raw.attribs] == [
        (s.tags, s.block, s.x, s.y) for s in by_ezdxf.attribs]


def test_block_nesting_and_self_reference_are_bounded(tmp_path):
    # 40 blocks nested in a chain, each with one circle, and two blocks containing each other
    doc = ezdxf.new("R2010")
    for i in range(40):
        blk = doc.blocks.new(f"B{i}")
        blk.add_circle((0, 0), 1.0 + i)
        if i + 1 < 40:
            blk.add_blockref(f"B{i + 1}", (10, 0))
    doc.blocks.new("X").add_blockref("Y", (0, 0))
    doc.blocks.new("Y").add_blockref("X", (0, 0))
    doc.blocks.get("Y").add_circle((0, 0), 3.0)
    msp = doc.modelspace()
    msp.add_blockref("B0", (0, 0))
    msp.add_blockref("X", (0, 0))
    path = tmp_path / "deep.dxf"
    doc.saveas(path)
    raw = rawread.walk(path.read_bytes())
    rebuilt, _ = rawread.build(raw)
    assert raw.skipped[f"INSERT nesting blocks deeper than {rawread.MAX_NESTING} levels"] == 1
    assert raw.skipped["INSERT making a block contain itself"] == 1
    drawing = read_document(rebuilt)
    # the first MAX_NESTING levels of the chain are kept; Y's circle once, inside X
    assert len(drawing.circles) == rawread.MAX_NESTING + 1
    assert sorted(drawing.circles.r.tolist())[-1] == pytest.approx(float(rawread.MAX_NESTING))
