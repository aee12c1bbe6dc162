"""A generated drawing library for audit tests: drives, faulty drives, damaged files, plates and
parts sheets in nested folders, some with awkward names. Invented drawings."""

from __future__ import annotations

import math
import random
from pathlib import Path

import numpy as np

from conftest import add_drive, new_doc
from layout.draw import path_pieces
from parts_sheet import add_parts_sheet

ODD_NAMES = ["with space.dxf", "ünïcødé-Ω.dxf", "-leading-dash.dxf", "UPPER.DXF"]


def _clean(path: Path, rng: random.Random) -> None:
    doc = new_doc("mm")
    R, r = rng.uniform(80, 160), rng.uniform(40, 79)
    add_drive(doc.modelspace(), [(0.0, 0.0), (rng.uniform(400, 900), 0.0)], [R, r], [1, 1],
              rng.choice(["polyline", "lines", "spans"]))
    doc.saveas(path)


def _faulty(path: Path, rng: random.Random) -> None:
    """A spans-only drive whose first span is turned 1 degree about its middle: span-not-tangent."""
    doc = new_doc("mm")
    msp = doc.modelspace()
    centers, radii = [(0.0, 0.0), (rng.uniform(500, 900), 0.0)], [150.0, 60.0]
    for c, rr in zip(centers, radii):
        msp.add_circle(c, rr)
    for k, p in enumerate(q for q in path_pieces(centers, radii, [1, 1]) if q["kind"] == "span"):
        a, b = np.asarray(p["start"]), np.asarray(p["end"])
        if k == 0:
            m, t = (a + b) / 2, math.radians(1.0)
            rot = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
            a, b = m + rot @ (a - m), m + rot @ (b - m)
        msp.add_line(tuple(a), tuple(b), dxfattribs={"layer": "BELT"})
    doc.saveas(path)


def _plate(path: Path, rng: random.Random) -> None:
    doc = new_doc("mm")
    msp = doc.modelspace()
    if rng.random() < 0.15:
        add_parts_sheet(msp, seed=rng.randrange(1000))
    else:
        w, h = rng.uniform(200, 600), rng.uniform(100, 400)
        msp.add_lwpolyline([(0, 0), (w, 0), (w, h), (0, h)], close=True)
        for _ in range(rng.randrange(2, 9)):
            msp.add_circle((rng.uniform(20, w - 20), rng.uniform(20, h - 20)), rng.uniform(3, 12))
    doc.saveas(path)


def _damaged(path: Path, rng: random.Random) -> None:
    path.write_bytes(bytes(rng.randrange(256) for _ in range(rng.randrange(10, 400))))


KINDS = {"clean": _clean, "findings": _faulty, "no-drive": _plate, "failed": _damaged}


def make_library(root: Path, n: int = 200, seed: int = 3) -> dict[str, str]:
    """``n`` drawings under ``root`` in nested folders: 20 % faulty, 5 % damaged, 25 % with no
    belt, the rest clean drives. The expected status by summary path."""
    rng = random.Random(seed)
    counts = {"findings": n // 5, "failed": n // 20, "no-drive": n // 4}
    counts["clean"] = n - sum(counts.values())
    kinds = [k for k, c in counts.items() for _ in range(c)]
    rng.shuffle(kinds)
    expected = {}
    for i, kind in enumerate(kinds):
        folder = Path(*[f"dept-{i % 3}", f"line-{i % 7}"][: 1 + i % 2])
        name = ODD_NAMES[i] if i < len(ODD_NAMES) else f"{kind}-{i:03d}.dxf"
        (root / folder).mkdir(parents=True, exist_ok=True)
        KINDS[kind](root / folder / name, rng)
        expected[(folder / name).as_posix()] = kind
    return expected
