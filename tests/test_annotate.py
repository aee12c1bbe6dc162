"""The findings written back into the drawing: round trip, idempotence, strip, markers,
R12, overlay, in-place with backup, and spanwise never reading its own output."""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path
from typing import Any

import ezdxf
import pytest

from conftest import add_drive, new_doc, save
from layout.annotate import LAYERS, MARK_BLOCKS
from layout.pipeline import check_drawing
from test_findings import _spans_drawing, run_cli
from test_resonance import _drawing as resonant_drawing

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"


def _copy_sample(tmp: Path, name: str) -> Path:
    for suffix in (".dxf", ".spanwise.toml"):
        shutil.copy(SAMPLES / f"{name}{suffix}", tmp / f"{name}{suffix}")
    return tmp / f"{name}.dxf"


def _values(e: Any) -> dict[str, Any]:
    """Every parsed tag value of an entity: DXF attributes, vertices, XDATA."""
    out: dict[str, Any] = dict(e.dxf.all_existing_dxf_attribs())
    out.pop("handle", None)
    out.pop("owner", None)
    t = e.dxftype()
    if t == "LWPOLYLINE":
        out["points"] = [tuple(p) for p in e.get_points("xyseb")]
    if t == "POLYLINE":
        out["vertices"] = [dict(v.dxf.all_existing_dxf_attribs(), handle=None, owner=None) for v in e.vertices]
    if t == "INSERT":
        out["attribs"] = [(a.dxf.tag, a.dxf.text) for a in e.attribs]
    if e.xdata is not None:
        out["xdata"] = {app: list(tags) for app, tags in e.xdata.data.items()}
    return out


def _entities(path: Path) -> list[Any]:
    return list(ezdxf.readfile(path).modelspace())


def _loops(path: Path, spec: Path | None = None) -> list[dict[str, Any]]:
    return check_drawing(path, spec=spec).to_dict()["loops"]


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize("name", ["fan_motor", "bottling_conveyor", "mixer_two_stage"])
def test_annotated_copy_keeps_every_input_entity_and_the_numbers(tmp, name):
    src = _copy_sample(tmp, name)
    before, stat = _sha(src), src.stat()
    r = run_cli("check", src)
    assert r.returncode == 0, r.stderr
    out = tmp / f"{name}.spanwise.dxf"
    # the input is untouched, bytes and time
    assert _sha(src) == before and src.stat().st_mtime_ns == stat.st_mtime_ns
    original = {e.dxf.handle: e for e in _entities(src)}
    written = {e.dxf.handle: e for e in _entities(out)}
    for h, e in original.items():
        assert h in written, h
        assert written[h].dxftype() == e.dxftype() and _values(written[h]) == _values(e)
    ours = [e for h, e in written.items() if h not in original]
    assert ours and all(e.dxf.layer.startswith("SPANWISE-") for e in ours)
    # checking the annotated copy gives the original's loops and numbers
    assert _loops(out, tmp / f"{name}.spanwise.toml") == _loops(src)
    # re-running on the annotated copy replaces spanwise's layers: the same number of entities
    r = run_cli("check", out, "--spec", tmp / f"{name}.spanwise.toml", "--out", tmp / "again.dxf")
    assert r.returncode == 0, r.stderr
    assert len(_entities(tmp / "again.dxf")) == len(written)


def test_strip_gives_back_the_input_entities_and_layers(tmp):
    src = _copy_sample(tmp, "bottling_conveyor")
    assert run_cli("check", src, "--out", tmp / "a.dxf").returncode == 0
    r = run_cli("strip", tmp / "a.dxf", "--out", tmp / "s.dxf")
    assert r.returncode == 0, r.stderr
    key = lambda es: {(e.dxf.handle, e.dxftype(), e.dxf.layer) for e in es}  # noqa: E731
    assert key(_entities(tmp / "s.dxf")) == key(_entities(src))
    layers = lambda p: sorted(layer.dxf.name for layer in ezdxf.readfile(p).layers)  # noqa: E731
    assert layers(tmp / "s.dxf") == layers(src)
    blocks = lambda p: sorted(b.name for b in ezdxf.readfile(p).blocks)  # noqa: E731
    assert blocks(tmp / "s.dxf") == blocks(src)
    # in place: a backup first, and the backup is the annotated file as it was
    annotated = _sha(tmp / "a.dxf")
    assert run_cli("strip", tmp / "a.dxf").returncode == 0
    assert _sha(tmp / "a.dxf.bak") == annotated
    assert key(_entities(tmp / "a.dxf")) == key(_entities(src))


def test_every_finding_has_its_marker_at_its_place(tmp):
    path, _ = _spans_drawing(tmp, rotate_deg=1.0)          # span-not-tangent, an error
    r = run_cli("check", path, "--json", tmp / "r.json", "--out", tmp / "a.dxf")
    assert r.returncode == 1
    findings = json.loads((tmp / "r.json").read_text())["findings"]
    located = [f for f in findings if f["at"] is not None]
    assert any(f["code"] == "span-not-tangent" for f in located)
    marks = [e for e in ezdxf.readfile(tmp / "a.dxf").modelspace().query('INSERT[layer=="SPANWISE-FINDINGS"]')]
    assert len(marks) == len(located)
    for f, m in zip(located, marks):
        assert m.dxf.name == MARK_BLOCKS[next(s for s in MARK_BLOCKS if s.value == f["severity"])]
        assert (m.dxf.insert.x, m.dxf.insert.y) == pytest.approx(tuple(f["at"]), rel=1e-12, abs=1e-9)
        assert f"code={f['code']}" in m.get_xdata("SPANWISE")[0].value


def test_layers_one_concern_each_with_indexed_colours(tmp):
    path = resonant_drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    assert run_cli("check", path).returncode == 0
    doc = ezdxf.readfile(tmp / "drive.spanwise.dxf")
    for name in LAYERS:
        assert name in doc.layers and 1 <= doc.layers.get(name).dxf.color <= 255
    msp = doc.modelspace()
    spans = " ".join(e.dxf.text for e in msp.query('TEXT[layer=="SPANWISE-SPAN-LABELS"]'))
    # span labels: P and T, f1 running, the pluck frequency, wave speeds
    assert "A-B" in spans and "B-A" in spans and "pluck" in spans and "down" in spans
    assert msp.query('ARC[layer=="SPANWISE-PATH"]') and msp.query('SOLID[layer=="SPANWISE-HUB-LOADS"]')
    assert any("resonance" in e.dxf.text for e in msp.query('TEXT[layer=="SPANWISE-SUMMARY"]'))
    # every XDATA string fits R12's 255 characters
    for e in msp:
        if e.dxf.layer.startswith("SPANWISE-"):
            assert all(len(str(t.value)) <= 255 for t in e.get_xdata("SPANWISE"))


HANDLELESS_R12 = """0
SECTION
2
ENTITIES
{entities}0
ENDSEC
0
EOF
"""


def _r12_entities(centers: list, radii: list) -> str:
    from layout.draw import path_pieces

    out = []
    for (x, y), r in zip(centers, radii):
        out.append(f"0\nCIRCLE\n8\nPULLEYS\n10\n{x!r}\n20\n{y!r}\n30\n0.0\n40\n{r!r}\n")
    for p in path_pieces(centers, radii, [1, 1]):
        if p["kind"] == "span":
            (x0, y0), (x1, y1) = map(float, p["start"]), map(float, p["end"])
            out.append(f"0\nLINE\n8\nBELT\n10\n{x0!r}\n20\n{y0!r}\n30\n0.0\n11\n{x1!r}\n21\n{y1!r}\n31\n0.0\n")
    return "".join(out)


def test_r12_stays_r12_and_loses_nothing(tmp):
    path = tmp / "old.dxf"
    path.write_text(HANDLELESS_R12.format(entities=_r12_entities([(0.0, 0.0), (500.0, 0.0)], [200.0, 50.0])))
    r = run_cli("check", path, "--out", tmp / "a.dxf")
    assert r.returncode == 0, r.stderr
    raw = (tmp / "a.dxf").read_text(encoding="cp1252")
    assert "AC1009" in raw and "LWPOLYLINE" not in raw and "MTEXT" not in raw
    doc = ezdxf.readfile(tmp / "a.dxf")
    assert doc.dxfversion == "AC1009"
    # handle-less entities compared by order: the input's come first, unchanged
    src = [e for e in _entities(path)]
    out = [e for e in doc.modelspace() if not e.dxf.layer.startswith("SPANWISE-")]
    assert [(e.dxftype(), e.dxf.layer) for e in out] == [(e.dxftype(), e.dxf.layer) for e in src]
    assert [_values(a) for a in out] == [_values(b) for b in src]
    assert _loops(tmp / "a.dxf") == _loops(path)


def test_overlay_holds_only_spanwise_and_attached_gives_the_same_numbers(tmp):
    src = _copy_sample(tmp, "fan_motor")
    r = run_cli("check", src, "--overlay", tmp / "ov.dxf")
    assert r.returncode == 0, r.stderr
    ov = ezdxf.readfile(tmp / "ov.dxf")
    assert all(e.dxf.layer.startswith("SPANWISE-") for e in ov.modelspace())
    assert not (tmp / "fan_motor.spanwise.dxf").exists()       # only the overlay was asked for
    # checked alone, an overlay is refused in one line: it has no drawing content
    r = run_cli("check", tmp / "ov.dxf", "--read-only")
    assert r.returncode == 2 and "overlay" in r.stderr and len(r.stderr.strip().splitlines()) == 1
    # attached to the drawing (bound into it as a block reference), nothing changes
    from ezdxf.addons import importer

    doc = ezdxf.readfile(src)
    imp = importer.Importer(ov, doc)
    blk = doc.blocks.new("OVERLAY")
    imp.import_entities(ov.modelspace(), blk)
    imp.import_tables("layers")
    imp.finalize()
    doc.modelspace().add_blockref("OVERLAY", (0, 0))
    doc.saveas(tmp / "attached.dxf")
    assert _loops(tmp / "attached.dxf", tmp / "fan_motor.spanwise.toml") == _loops(src)


def test_suggest_idler_copy_reads_as_the_original(tmp):
    path = resonant_drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    r = run_cli("suggest-idler", path, "--span", "A-B", "--out", tmp / "idlers.dxf")
    assert r.returncode == 0, r.stderr
    checked = check_drawing(tmp / "idlers.dxf", spec=tmp / "drive.spanwise.toml")
    assert not [f for f in checked.findings if f.severity.value == "error"]
    assert checked.to_dict()["loops"] == _loops(path)


def test_in_place_writes_after_a_backup_and_twice_is_idempotent(tmp):
    src = _copy_sample(tmp, "fan_motor")
    original = _sha(src)
    assert run_cli("check", src, "--in-place", "-q").returncode == 0
    assert _sha(tmp / "fan_motor.dxf.bak") == original
    n = len(_entities(src))
    assert run_cli("check", src, "--in-place", "-q").returncode == 0
    assert len(_entities(src)) == n
    assert (tmp / "fan_motor.dxf.1.bak").exists()             # an earlier backup is never overwritten
    assert _sha(tmp / "fan_motor.dxf.bak") == original


def test_a_changed_annotated_copy_is_not_overwritten(tmp):
    src = _copy_sample(tmp, "fan_motor")
    assert run_cli("check", src).returncode == 0
    out = tmp / "fan_motor.spanwise.dxf"
    assert run_cli("check", src).returncode == 0              # its own untouched output: replaced
    doc = ezdxf.readfile(out)                                  # a drafter goes on working in it
    doc.modelspace().add_line((0, 0), (10, 10), dxfattribs={"layer": "MINE"})
    doc.saveas(out)
    worked = _sha(out)
    r = run_cli("check", src)
    assert r.returncode == 2 and "--force" in r.stderr and _sha(out) == worked
    assert run_cli("check", src, "--force", "-q").returncode == 0


def test_in_memory_drive_in_a_block_keeps_the_block(tmp):
    doc = new_doc("mm")
    blk = doc.blocks.new("DRIVE")
    add_drive(blk, [(0.0, 0.0), (500.0, 0.0)], [200.0, 50.0], [1, 1], "polyline")
    doc.modelspace().add_blockref("DRIVE", (100, 50), dxfattribs={"rotation": 30})
    path = save(doc, tmp)
    assert run_cli("check", path, "--out", tmp / "a.dxf").returncode == 0
    out = ezdxf.readfile(tmp / "a.dxf")
    assert "DRIVE" in out.blocks and len(out.blocks.get("DRIVE")) == len(doc.blocks.get("DRIVE"))
    assert _loops(tmp / "a.dxf") == _loops(path)
