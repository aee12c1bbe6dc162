"""Builders for drawings made in memory with ezdxf, shared by the tests."""

from __future__ import annotations

import math
import random
from pathlib import Path
from typing import Any

import ezdxf
import numpy as np
import pytest

from layout.draw import add_belt_path, path_pieces

INSUNITS = {"in": 1, "ft": 2, "mm": 4, "cm": 5, "m": 6}


def new_doc(units: str | None = "mm") -> Any:
    doc = ezdxf.new("R2010")
    if units is not None:
        doc.header["$INSUNITS"] = INSUNITS[units]
    return doc


def add_shuffled_lines_arcs(msp: Any, centers: Any, radii: Any, turns: Any, *, gap: float = 0.0,
                            seed: int = 0, layer: str = "BELT") -> None:
    """The exact path as LINE and ARC entities in a random order, every other line drawn
    backwards, each line shortened by ``gap`` at both ends, and each wrap split in two arcs."""
    rng = random.Random(seed)
    ents: list[tuple[str, tuple]] = []
    for i, p in enumerate(path_pieces(centers, radii, turns)):
        if p["kind"] == "span":
            a, b = np.asarray(p["start"]), np.asarray(p["end"])
            u = (b - a) / np.hypot(*(b - a))
            a, b = a + gap * u, b - gap * u
            if i % 4 == 0:
                a, b = b, a
            ents.append(("line", (tuple(a), tuple(b))))
        else:
            cx, cy = p["center"]
            a0 = math.degrees(math.atan2(p["start"][1] - cy, p["start"][0] - cx))
            sw = math.degrees(p["sweep"])
            mid = a0 + sw / 2.0
            for s, e in ((a0, mid), (mid, a0 + sw)):
                lo, hi = (s, e) if sw > 0 else (e, s)
                ents.append(("arc", ((cx, cy), p["radius"], lo, hi)))
    rng.shuffle(ents)
    for kind, args in ents:
        if kind == "line":
            msp.add_line(*args, dxfattribs={"layer": layer})
        else:
            msp.add_arc(*args, dxfattribs={"layer": layer})


def add_piece(msp: Any, p: dict[str, Any], *, layer: str = "BELT") -> None:
    """One piece of :func:`layout.draw.path_pieces` as a LINE or an ARC."""
    if p["kind"] == "span":
        msp.add_line(p["start"], p["end"], dxfattribs={"layer": layer})
        return
    cx, cy = p["center"]
    a0 = math.degrees(math.atan2(p["start"][1] - cy, p["start"][0] - cx))
    a1 = a0 + math.degrees(p["sweep"])
    msp.add_arc((cx, cy), p["radius"], min(a0, a1), max(a0, a1), dxfattribs={"layer": layer})


def add_drive(msp: Any, centers: Any, radii: Any, turns: Any, form: str, *, layer: str = "BELT",
              gap: float = 0.0, seed: int = 0, circles: bool = True) -> None:
    """Circles plus the belt path in one of the drawn forms: polyline, lines, spans, shuffled."""
    if circles:
        for c, r in zip(centers, radii):
            msp.add_circle(tuple(c), r, dxfattribs={"layer": "PULLEYS"})
    if form == "shuffled":
        add_shuffled_lines_arcs(msp, centers, radii, turns, gap=gap, seed=seed, layer=layer)
    else:
        add_belt_path(msp, centers, radii, turns, form=form, layer=layer)


def save(doc: Any, folder: Path, name: str = "drive.dxf") -> Path:
    path = folder / name
    doc.saveas(path)
    return path


@pytest.fixture
def tmp(tmp_path: Path) -> Path:
    return tmp_path
