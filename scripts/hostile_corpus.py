"""Generate a corpus of hostile and damaged drawings, and audit it.

    python scripts/hostile_corpus.py [--out DIR] [--seed 1] [--mutations 200] [--large]
                                     [--workers 2] [--timeout 10]

Each case is a file in ``DIR`` and a line of ``DIR/expected.json``: what it is and what it
must give. Every case must end within the time limit, never as an internal error, with an
exit status of 0, 1 or 2; where the case says more (``status``, ``code``, ``message``), that
too. The families: truncated drawings (cut inside HEADER, TABLES, ENTITIES), random bytes,
other formats by their signature (DWG, PDF, PNG, ZIP), binary DXF, R12 with and without a
HEADER, R2018, empty drawings, zero, negative, huge and tiny radii and coordinates, circles
repeated (exactly and a hair apart) and nearly concentric by the thousand, ten thousand lines
meeting at one point (and crowded within a hair of it), thousands of large circles over many
lines or labels, a self-touching path, a path of many tiny segments, nested and
self-referencing blocks, MINSERT arrays, megabyte texts, byte-order marks and code pages, and
seeded random byte mutations of valid drawings. ``--large`` adds a million entities and
100 000-segment paths (for a manual run; not in the suite).

The audit runs each case in its own process with a time and a memory limit
(:func:`layout.audit.audit`), so a case that would hang or eat the machine shows as
``timed-out`` or ``failed`` instead of stopping the run. Exit status: 0 when every case
gave what it must, 1 otherwise (the offending cases are printed).
"""

from __future__ import annotations

import argparse
import io
import json
import math
import random
import sys
import tempfile
from pathlib import Path
from typing import Any, Callable

import ezdxf

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from layout.draw import add_belt_path  # noqa: E402

Case = dict[str, Any]


def _drive_doc(version: str = "R2010", units: int | None = 4) -> Any:
    doc = ezdxf.new(version)
    if units is not None and version != "R12":
        doc.header["$INSUNITS"] = units
    msp = doc.modelspace()
    for c, r in (((0.0, 0.0), 100.0), ((500.0, 0.0), 50.0)):
        msp.add_circle(c, r)
    add_belt_path(msp, [(0.0, 0.0), (500.0, 0.0)], [100.0, 50.0], [1, 1], form="lines" if version == "R12" else "polyline")
    return doc


def _text(doc: Any) -> bytes:
    buf = io.StringIO()
    doc.write(buf)
    return buf.getvalue().encode("utf-8")


def _save(folder: Path, name: str, data: bytes, cases: list[Case], **expect: Any) -> None:
    (folder / name).write_bytes(data)
    cases.append({"path": name, **expect})


def _truncated(folder: Path, cases: list[Case]) -> None:
    data = _text(_drive_doc())
    for section in (b"HEADER", b"TABLES", b"ENTITIES"):
        k = data.find(b"\n" + section)
        cut = data[: k + len(section) + 200]
        _save(folder, f"truncated-in-{section.decode().lower()}.dxf", cut, cases, kind="truncated")
    for share in (0.3, 0.7, 0.95):
        _save(folder, f"truncated-{int(share * 100)}.dxf", data[: int(len(data) * share)], cases, kind="truncated")


def _formats(folder: Path, cases: list[Case], rng: random.Random) -> None:
    blobs = {"dwg.dxf": b"AC1032" + bytes(rng.randrange(256) for _ in range(2000)),
             "pdf.dxf": b"%PDF-1.7\n" + bytes(rng.randrange(256) for _ in range(500)),
             "png.dxf": b"\x89PNG\r\n\x1a\n" + bytes(rng.randrange(256) for _ in range(500)),
             "zip.dxf": b"PK\x03\x04" + bytes(rng.randrange(256) for _ in range(500)),
             "empty-file.dxf": b"", "one-byte.dxf": b"0",
             "random.dxf": bytes(rng.randrange(256) for _ in range(5000)),
             "text-noise.dxf": "\n".join(rng.choice(["0", "SECTION", "2", "ENTITIES", "LINE", "10", "x"])
                                         for _ in range(3000)).encode()}
    says = {"dwg.dxf": "this is a DWG file", "empty-file.dxf": "the file is empty"}
    for name, data in blobs.items():
        _save(folder, name, data, cases, kind="not-a-drawing", status="failed",
              **({"message": says[name]} if name in says else {}))


def _versions(folder: Path, cases: list[Case]) -> None:
    bin_buf = io.BytesIO()
    _drive_doc().write(bin_buf, fmt="bin")
    _save(folder, "binary.dxf", bin_buf.getvalue(), cases, kind="binary", status="clean")
    _save(folder, "r12.dxf", _text(_drive_doc("R12")), cases, kind="r12", status="clean")
    r12 = _text(_drive_doc("R12"))
    start, end = r12.find(b"HEADER"), r12.find(b"ENDSEC")
    no_header = r12[: r12.rfind(b"0\nSECTION", 0, start)] + r12[end + len(b"ENDSEC\n"):]
    _save(folder, "r12-no-header.dxf", no_header, cases, kind="r12-no-header", status="clean", code="units-assumed")
    _save(folder, "r2018.dxf", _text(_drive_doc("R2018")), cases, kind="r2018", status="clean")
    _save(folder, "bom.dxf", b"\xef\xbb\xbf" + _text(_drive_doc()), cases, kind="bom", status="failed",
          message="UTF-8 byte-order mark")
    doc = _drive_doc("R2000")
    doc.encoding = "cp1251"                     # written as $DWGCODEPAGE ANSI_1251, the text in cp1251
    doc.modelspace().add_text("Шкив", dxfattribs={"insert": (0, 0)})
    buf = io.StringIO()
    doc.write(buf)
    _save(folder, "codepage-1251.dxf", buf.getvalue().encode("cp1251"), cases, kind="codepage", status="clean")


def _doc_case(folder: Path, cases: list[Case], name: str, build: Callable[[Any], None], **expect: Any) -> None:
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 4
    build(doc)
    _save(folder, name, _text(doc), cases, **expect)


def _geometry(folder: Path, cases: list[Case], rng: random.Random) -> None:
    msp = lambda d: d.modelspace()  # noqa: E731
    _doc_case(folder, cases, "empty.dxf", lambda d: None, kind="empty", status="no-drive")
    for name, r in (("zero-radius", 0.0), ("negative-radius", -5.0), ("huge-radius", 1e150), ("tiny-radius", 1e-300)):
        _doc_case(folder, cases, f"{name}.dxf", lambda d, r=r: [msp(d).add_circle((0, 0), r),
                                                                 msp(d).add_circle((10, 0), r)], kind="radius",
                  status="no-drive")
    for name, x in (("far-1e15", 1e15), ("far-1e160", 1e160), ("far-negative", -1e100)):
        _doc_case(folder, cases, f"{name}.dxf", lambda d, x=x: [msp(d).add_circle((x, x), 5.0),
                                                                 msp(d).add_line((x, x), (x + 1, x))], kind="coords",
                  status="no-drive")
    _doc_case(folder, cases, "concentric-3000.dxf",
              lambda d: [msp(d).add_circle((0, 0), 1 + 1e-4 * k) for k in range(3000)], kind="concentric",
              status="no-drive")
    _doc_case(folder, cases, "repeated-3000.dxf",
              lambda d: [msp(d).add_circle((0, 0), 10.0) for _ in range(3000)], kind="repeated", status="no-drive")
    _doc_case(folder, cases, "near-copies-50000.dxf", lambda d: [
        msp(d).add_circle((rng.uniform(-1e-4, 1e-4), rng.uniform(-1e-4, 1e-4)), 10 + rng.uniform(-1e-4, 1e-4))
        for _ in range(50_000)], kind="repeated", status="no-drive")
    _doc_case(folder, cases, "figure-eight.dxf", lambda d: [
        msp(d).add_circle((0, 0), 50), msp(d).add_circle((300, 0), 50),
        msp(d).add_lwpolyline([(0, 50), (300, -50), (300, 50), (0, -50)], close=True)], kind="self-touching",
              status="no-drive")
    _doc_case(folder, cases, "star-10000.dxf", lambda d: _star(msp(d), 10_000, 0.0, rng), kind="star",
              status="no-drive")
    _doc_case(folder, cases, "crowded-ends.dxf", lambda d: _star(msp(d), 10_000, 1e-3, rng), kind="crowded",
              status="failed", message="MAX_NEAR_END_PAIRS")
    _doc_case(folder, cases, "rings-over-lines.dxf", lambda d: _rings_over(msp(d), rng, lines=10_000),
              kind="rings-over", status="failed", message="MAX_RIM_CANDIDATES")
    _doc_case(folder, cases, "rings-over-texts.dxf", lambda d: _rings_over(msp(d), rng, texts=1500),
              kind="rings-over", status="failed", message="MAX_TEXT_CIRCLE_PAIRS")
    n = 20_000
    _doc_case(folder, cases, "tiny-segments.dxf", lambda d: [
        msp(d).add_circle((0, 0), 100), msp(d).add_circle((600, 0), 60),
        msp(d).add_lwpolyline([(300 + 250 * math.cos(2 * math.pi * k / n), 120 * math.sin(2 * math.pi * k / n))
                               for k in range(n)], close=True)], kind="tiny-segments",
              status="no-drive")
    _doc_case(folder, cases, "megabyte-text.dxf", lambda d: [
        msp(d).add_circle((0, 0), 10), msp(d).add_text("x" * (1 << 20), dxfattribs={"insert": (5000, 5000)})],
        kind="megabyte-text", status="no-drive")


def _star(msp: Any, n: int, jitter: float, rng: random.Random) -> None:
    """Two circles and ``n`` lines from one point (each moved up to ``jitter`` off it)."""
    msp.add_circle((0, 0), 50)
    msp.add_circle((300, 0), 50)
    for k in range(n):
        a = 2 * math.pi * k / n
        hub = (1000 + rng.uniform(-jitter, jitter), 1000 + rng.uniform(-jitter, jitter))
        msp.add_line(hub, (1000 + 100 * math.cos(a), 1000 + 100 * math.sin(a)))


def _rings_over(msp: Any, rng: random.Random, *, lines: int = 0, texts: int = 0) -> None:
    """2000 concentric circles 0.2 % apart in radius (none repeats another) over short lines
    or pulley-like labels, every one inside every circle's bounding box."""
    for k in range(2000):
        msp.add_circle((0, 0), 10_000 * 1.002 ** k)
    for _ in range(lines):
        x, y = rng.uniform(-5000, 5000), rng.uniform(-5000, 5000)
        msp.add_line((x, y), (x + 3, y))
    for k in range(texts):
        msp.add_text(f"P{k}", dxfattribs={"insert": (rng.uniform(-5000, 5000), rng.uniform(-5000, 5000))})


def _blocks(folder: Path, cases: list[Case]) -> None:
    def nested(d: Any, depth: int) -> None:
        prev = None
        for k in range(depth):
            b = d.blocks.new(f"N{k}")
            b.add_circle((0, 0), 10)
            if prev is not None:
                b.add_blockref(prev, (1, 0))
            prev = f"N{k}"
        d.modelspace().add_blockref(prev, (0, 0))

    for depth in (40, 300):
        _doc_case(folder, cases, f"nested-{depth}.dxf", lambda d, depth=depth: nested(d, depth), kind="nested",
                  status="failed", message="nested more than 32 levels deep")

    def cycle(d: Any) -> None:
        a, b = d.blocks.new("A"), d.blocks.new("B")
        a.add_circle((0, 0), 5)
        a.add_blockref("B", (1, 0))
        b.add_blockref("A", (1, 0))
        d.modelspace().add_blockref("A", (0, 0))

    _doc_case(folder, cases, "self-referencing.dxf", cycle, kind="cycle", status="no-drive")

    def minsert(d: Any, rows: int, cols: int) -> None:
        b = d.blocks.new("HOLE")
        b.add_circle((0, 0), 2)
        ref = d.modelspace().add_blockref("HOLE", (0, 0))
        ref.grid(size=(rows, cols), spacing=(10, 10))

    _doc_case(folder, cases, "minsert-100x100.dxf", lambda d: minsert(d, 100, 100), kind="minsert", status="no-drive")
    _doc_case(folder, cases, "minsert-1000x1000.dxf", lambda d: minsert(d, 1000, 1000), kind="minsert",
              status="failed", message="expected at most 100000 cells")


def _mutations(folder: Path, cases: list[Case], rng: random.Random, count: int) -> None:
    base = [_text(_drive_doc()), _text(_drive_doc("R12"))]
    for k in range(count):
        data = bytearray(rng.choice(base))
        for _ in range(rng.randrange(1, 12)):
            i = rng.randrange(len(data))
            op = rng.random()
            if op < 0.5:
                data[i] = rng.randrange(256)
            elif op < 0.8:
                del data[i:i + rng.randrange(1, 40)]
            else:
                data[i:i] = bytes(rng.randrange(256) for _ in range(rng.randrange(1, 20)))
        _save(folder, f"mutated-{k:04d}.dxf", bytes(data), cases, kind="mutation")


def _large(folder: Path, cases: list[Case]) -> None:
    def million(d: Any) -> None:
        msp = d.modelspace()
        for k in range(1_000_000):
            msp.add_line((k % 1000, k // 1000), (k % 1000 + 0.5, k // 1000))

    _doc_case(folder, cases, "million-lines.dxf", million, kind="million")


def generate(folder: Path, *, seed: int = 1, mutations: int = 200, large: bool = False) -> list[Case]:
    """Write the corpus into ``folder``; the cases with what each must give."""
    folder.mkdir(parents=True, exist_ok=True)
    rng = random.Random(seed)
    cases: list[Case] = []
    _truncated(folder, cases)
    _formats(folder, cases, rng)
    _versions(folder, cases)
    _geometry(folder, cases, rng)
    _blocks(folder, cases)
    _mutations(folder, cases, rng, mutations)
    if large:
        _large(folder, cases)
    (folder / "expected.json").write_text(json.dumps(cases, indent=1))
    return cases


def problems(cases: list[Case], rows: list[dict[str, Any]]) -> list[str]:
    """What went wrong: a missing row, a time-out, an internal error, a status not expected."""
    by_path = {r["path"]: r for r in rows}
    out = []
    for c in cases:
        r = by_path.get(c["path"])
        if r is None:
            out.append(f"{c['path']}: no row")
            continue
        msg = r.get("message", "")
        if r["status"] == "timed-out" or "internal error" in msg or "died" in msg:
            out.append(f"{c['path']} ({c['kind']}): {r['status']} {msg[:200]}")
        elif "status" in c and r["status"] != c["status"]:
            out.append(f"{c['path']} ({c['kind']}): {r['status']}, expected {c['status']} {msg[:200]}")
        elif "code" in c and c["code"] not in r["codes"]:
            out.append(f"{c['path']} ({c['kind']}): no {c['code']} finding (gave {r['codes']})")
        elif "message" in c and c["message"] not in msg:
            out.append(f"{c['path']} ({c['kind']}): the message does not say {c['message']!r}: {msg[:200]}")
        elif c["kind"] == "truncated" and r["status"] != "failed" and "recovered" not in r["codes"]:
            out.append(f"{c['path']} (truncated): {r['status']} without saying it was truncated")
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--mutations", type=int, default=200)
    ap.add_argument("--large", action="store_true")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--timeout", type=float, default=10.0)
    args = ap.parse_args(argv)
    from layout.audit import AuditOptions, audit

    folder = args.out or Path(tempfile.mkdtemp(prefix="spanwise-hostile-"))
    cases = generate(folder, seed=args.seed, mutations=args.mutations, large=args.large)
    rows = audit([folder], workers=args.workers, options=AuditOptions(timeout_s=args.timeout, memory_bytes=1 << 30))
    bad = problems(cases, rows)
    counts: dict[str, int] = {}
    for r in rows:
        counts[r["status"]] = counts.get(r["status"], 0) + 1
    print(f"{len(cases)} cases in {folder}: {counts}; {len(bad)} problem(s)")
    for line in bad:
        print("  " + line)
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
