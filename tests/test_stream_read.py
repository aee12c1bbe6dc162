"""The streamed reading (layout.stream) against the whole-document reading of the same file.

The independent reference is ezdxf's own document loader (``read_drawing(keep_document=True)``
always loads the document): for every drawing the stream reads, every value of the Drawing
must be the same; for every drawing it cannot vouch for (damage, odd forms) it must step
aside, so that the document loader and its recovery readers give the result.
"""

from __future__ import annotations

import dataclasses
import random
from pathlib import Path
from typing import Any

import ezdxf
import numpy as np
import pytest

from conftest import add_drive, new_doc, save
from layout.errors import FatalInput, NotADrawing
from layout.read import read_drawing
from parts_sheet import add_parts_sheet

SAMPLES = sorted((Path(__file__).parent.parent / "sample_drawings").glob("*.dxf"))
CENTRES = [(0.0, 0.0), (300.0, 0.0), (150.0, 160.0)]
RADII = [50.0, 25.0, 30.0]


def _value(x: Any) -> Any:
    if isinstance(x, np.ndarray):
        return x.tolist() if x.dtype == object else (x.dtype.str, x.shape, x.tobytes())
    return x


def _contents(d: Any) -> dict[str, Any]:
    """Every compared value of a Drawing (not the document it may hold, nor how it was read)."""
    out: dict[str, Any] = {}
    for f in dataclasses.fields(d):
        v = getattr(d, f.name)
        if f.name in ("document", "streamed"):
            continue
        if f.name in ("circles", "segments", "texts"):
            for g in dataclasses.fields(v):
                out[f"{f.name}.{g.name}"] = _value(getattr(v, g.name))
        elif f.name == "findings":
            out[f.name] = [(x.code, x.severity, x.message) for x in v]
        else:
            out[f.name] = v
    return out


def _both(path: Path) -> tuple[Any, Any]:
    """(default read, whole-document read), each a Drawing or the error's (type, message)."""
    out = []
    for keep in (False, True):
        try:
            out.append(read_drawing(path, keep_document=keep))
        except (FatalInput, NotADrawing) as err:
            out.append((type(err).__name__, str(err)))
    return out[0], out[1]


def _assert_same(path: Path) -> Any:
    streamed, whole = _both(path)
    if isinstance(streamed, tuple) or isinstance(whole, tuple):
        assert streamed == whole
        return streamed
    a, b = _contents(streamed), _contents(whole)
    assert a.keys() == b.keys()
    for k in a:
        assert a[k] == b[k], k
    return streamed


# --------------------------------------------------------------------------- drawings


def _block_drive(doc: Any) -> None:
    """Pulleys as block references: plain, scaled, rotated, mirrored, seen from below, an array."""
    blk = doc.blocks.new("SHEAVE", base_point=(5, 5))
    blk.add_circle((5, 5), 1.0, dxfattribs={"layer": "0"})
    blk.add_attdef("ID", (5, 5))
    msp = doc.modelspace()
    for i, (x, y) in enumerate(CENTRES):
        ins = msp.add_blockref("SHEAVE", (x, y), dxfattribs={"xscale": RADII[i], "yscale": RADII[i],
                                                             "rotation": 30.0 * i, "layer": "PULLEYS"})
        ins.add_attrib("ID", f"P{i + 1}", (x, y))
    msp.add_blockref("SHEAVE", (0, -400), dxfattribs={"xscale": -20, "yscale": 20})
    msp.add_blockref("SHEAVE", (200, -400), dxfattribs={"xscale": 10, "yscale": 10,
                                                        "extrusion": (0, 0, -1)})
    arr = msp.add_blockref("SHEAVE", (0, -600), dxfattribs={"xscale": 8, "yscale": 8})
    arr.grid(size=(3, 4), spacing=(30, 40))
    add_drive(msp, CENTRES, RADII, [1, 1, 1], "lines")


def _clutter(doc: Any) -> None:
    """The entity types read beside the ones skipped, paper space, texts and odd characters."""
    msp = doc.modelspace()
    r12 = doc.dxfversion <= "AC1009"
    add_drive(msp, CENTRES, RADII, [1, 1, 1], "lines" if r12 else "polyline")
    msp.add_text("ID=P1 Ø100 café", dxfattribs={"insert": (0, -60), "layer": "LABELS"})
    if not r12:                       # the entity types DXF R12 does not have
        add_parts_sheet(msp, center=(2000.0, 0.0))
        msp.add_ellipse((0, 900), major_axis=(80, 20), ratio=0.5, start_param=0.3, end_param=5.0)
        msp.add_mtext("drive\\Pnotes {\\fArial;bold} 50%", dxfattribs={"insert": (0, -90)})
        msp.add_lwpolyline([(0, 0, 0, 0, 0.5), (10, 0), (10, 10)], format="xyseb", close=True)
        hatch = msp.add_hatch()
        hatch.paths.add_polyline_path([(0, 0), (5, 0), (5, 5)])
    msp.add_polyline2d([(500, 500), (600, 500), (600, 600)], close=True)
    msp.add_polyline3d([(700, 0, 0), (800, 0, 5)])
    msp.add_arc((0, 1200), 40, 10, 300, dxfattribs={"extrusion": (0, 0, -1)})
    msp.add_linear_dim(base=(0, 50), p1=(0, 0), p2=(300, 0)).render()
    doc.paperspace().add_circle((0, 0), 99)
    doc.paperspace().add_line((0, 0), (1, 1))


def _drawing(folder: Path, version: str, build: Any, name: str) -> Path:
    doc = ezdxf.new(version)
    doc.header["$INSUNITS"] = 4
    build(doc)
    return save(doc, folder, name)


BUILDS = {"blocks": _block_drive, "clutter": _clutter}


@pytest.mark.parametrize("version", ["R12", "R2000", "R2010", "R2018"])
@pytest.mark.parametrize("build", sorted(BUILDS))
def test_streamed_drawing_is_the_whole_document_drawing(tmp_path: Path, version: str, build: str) -> None:
    path = _drawing(tmp_path, version, BUILDS[build], f"{build}.dxf")
    d = _assert_same(path)
    assert d.streamed, "a clean drawing ezdxf wrote is read from its tags"


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_sample_drawings_are_streamed_alike(path: Path) -> None:
    assert _assert_same(path).streamed


def test_an_annotated_copy_counts_every_annotation_as_the_document_does(tmp_path: Path) -> None:
    # the copy holds spanwise's layers with types the stream does not read (arrowhead SOLIDs):
    # each is counted, the count being ezdxf's own tally of model space entities on those layers
    from layout.cli import main

    out = tmp_path / "annotated.dxf"
    assert main(["check", str(SAMPLES[0]), "--out", str(out), "-q", "--force"]) in (0, 1)
    own = [e for e in ezdxf.readfile(out).modelspace() if e.dxf.layer.upper().startswith("SPANWISE-")]
    assert {e.dxftype() for e in own} >= {"SOLID", "TEXT", "LINE"}
    d = _assert_same(out)
    assert d.streamed and d.own_count == len(own)


def test_windows_line_ends_and_a_code_page(tmp_path: Path) -> None:
    """CR LF line ends and a cp1252 R2000 text; the same drawing read both ways."""
    path = _drawing(tmp_path, "R2000", _clutter, "crlf.dxf")
    path.write_bytes(path.read_bytes().replace(b"\r\n", b"\n").replace(b"\n", b"\r\n"))
    d = _assert_same(path)
    assert d.streamed and any("café" in t for t in d.texts.text)


# --------------------------------------------------------------------------- damage


def _edit(data: bytes, old: bytes, new: bytes, nth: int = 0) -> bytes:
    at = -1
    for _ in range(nth + 1):
        at = data.index(old, at + 1)
    return data[:at] + new + data[at + len(old):]


DAMAGE = {
    # a number that is not one, in the header (skipped by the stream, refused by ezdxf)
    "bad header number": lambda d: _edit(d, b"$LTSCALE\n 40\n1.0", b"$LTSCALE\n 40\n1.0x"),
    "header name without $": lambda d: _edit(d, b"$LTSCALE", b"LTSCALE"),
    "bad number in a hatch": lambda d: _edit(d, b"HATCH\n  5\n", b"HATCH\n  5\n", 0).replace(
        b"AcDbHatch\n 10\n0.0", b"AcDbHatch\n 10\n0.0.0", 1),
    "handle not hexadecimal": lambda d: _edit(d, b"LINE\n  5\n", b"LINE\n  5\nZZ"),
    "point without its y": lambda d: _edit(d, b"AcDbLine\n 10\n", b"AcDbLine\n 11\n"),
    "no end of file": lambda d: d[:d.rindex(b"EOF")],
    # not damage to ezdxf, but forms the stream leaves to the document reader
    "a code given twice": lambda d: _edit(d, b"AcDbCircle\n 10\n", b"AcDbCircle\n 40\n1.0\n 40\n2.0\n 10\n"),
    "lwpolyline without its marker": lambda d: _edit(d, b"AcDbPolyline", b"AcDbPolylinX"),
    "table entry without a name": lambda d: _edit(d, b"AcDbLayerTableRecord\n  2\n", b"AcDbLayerTableRecord\n  3\n"),
    "section without ENDSEC": lambda d: _edit(d, b"ENDSEC", b"ENDSEX", 1),
}


ODD = {"a code given twice", "lwpolyline without its marker"}


@pytest.mark.parametrize("damage", sorted(DAMAGE))
def test_damage_sends_the_file_to_the_document_reader(tmp_path: Path, damage: str) -> None:
    clean = _drawing(tmp_path, "R2010", _clutter, "clean.dxf").read_bytes()
    assert b"\r\n" not in clean
    path = tmp_path / "damaged.dxf"
    path.write_bytes(DAMAGE[damage](clean))
    d = _assert_same(path)
    if not isinstance(d, tuple):
        assert not d.streamed
        assert d.recovered or damage in ODD, "the document reader says it had to recover the drawing"


# --------------------------------------------------------------------------- mutations


def _mutate(data: bytes, rng: random.Random) -> bytes:
    """A few line-level edits of the kinds damaged files show: a changed character, a lost or
    doubled line or tag, stray spaces."""
    lines = data.split(b"\n")
    for _ in range(rng.randrange(1, 5)):
        i, op = rng.randrange(len(lines)), rng.random()
        if op < 0.35 and lines[i]:
            ln = bytearray(lines[i])
            ln[rng.randrange(len(ln))] = rng.choice(b"0123456789.-eE x$A\x00\xff")
            lines[i] = bytes(ln)
        elif op < 0.5:
            del lines[i]
        elif op < 0.65:
            del lines[i:i + 2]
        elif op < 0.8:
            lines[i:i] = lines[i:i + 2]
        else:
            lines[i] = b" " + lines[i] if rng.random() < 0.5 else lines[i] + b" "
    return b"\n".join(lines)


def test_seeded_mutations_read_alike(tmp_path: Path) -> None:
    """Property: whatever a mutation breaks, the default read is the whole-document read."""
    rng = random.Random(20261203)
    bases = [p.read_bytes() for p in SAMPLES[:2]]
    bases.append(_drawing(tmp_path, "R12", _block_drive, "r12.dxf").read_bytes())
    streamed = 0
    for k in range(90):
        path = tmp_path / f"m{k}.dxf"
        path.write_bytes(_mutate(rng.choice(bases), rng))
        d = _assert_same(path)
        streamed += not isinstance(d, tuple) and d.streamed
    assert 0 < streamed < 90, "some mutations leave a streamable file, some do not"


def test_a_megabyte_comment_is_skipped_alike(tmp_path: Path) -> None:
    """A 999 comment of a million characters before the entities: a string, not a number,
    so the stream reads on; the circles are the drive's three (hand count)."""
    doc = new_doc()
    add_drive(doc.modelspace(), CENTRES, RADII, [1, 1, 1], "polyline")
    path = save(doc, tmp_path)
    path.write_bytes(_edit(path.read_bytes(), b"  0\nSECTION\n  2\nENTITIES",
                           b"999\n" + b"x" * 1_000_000 + b"\n  0\nSECTION\n  2\nENTITIES"))
    d = _assert_same(path)
    assert d.streamed and sorted(d.circles.r.tolist()) == sorted(RADII)
