"""A generated dense parts sheet: a round plate with a lattice of windows, holes, ribs, tabs
and slots on many layers, much of it drawn twice, and no belt. Invented geometry for tests."""

from __future__ import annotations

import math
import random
from typing import Any

LAYERS = [f"PART-{k:02d}" for k in range(40)]


def add_parts_sheet(msp: Any, *, seed: int = 7, center: tuple[float, float] = (0.0, 0.0),
                    duplicate: bool = True) -> dict[str, int]:
    """Draw the sheet into ``msp``; return how many of each kind were drawn (``duplicates``:
    entities drawn a second time, exactly over the first, on another layer)."""
    rng = random.Random(seed)
    cx, cy = center
    count = {"windows": 0, "holes": 0, "ribs": 0, "tabs": 0, "slots": 0, "duplicates": 0}

    def layer() -> dict[str, str]:
        return {"layer": rng.choice(LAYERS)}

    def twice(add) -> None:
        add(layer())
        if duplicate and rng.random() < 0.6:
            add(layer())
            count["duplicates"] += 1

    twice(lambda a: msp.add_circle((cx, cy), 600.0, dxfattribs=a))               # the plate
    _windows(msp, rng, cx, cy, twice, count)
    holes = _holes(msp, rng, cx, cy, twice, count)
    _ribs(msp, rng, holes, twice, count)
    _tabs(msp, rng, cx, cy, twice, count)
    _slots(msp, rng, cx, cy, twice, count)
    return count


def _windows(msp, rng, cx, cy, twice, count) -> None:
    """Square windows of side 30 at a pitch of 45 inside radius 420, corners shared in rows."""
    for i in range(-10, 11):
        for j in range(-10, 11):
            x, y = cx + 45.0 * i, cy + 45.0 * j
            if math.hypot(x - cx, y - cy) > 420.0 or (i % 5 == 0 and j % 5 == 0):
                continue
            pts = [(x, y), (x + 30, y), (x + 30, y + 30), (x, y + 30)]
            twice(lambda a, pts=pts: msp.add_lwpolyline(pts, close=True, dxfattribs=a))
            count["windows"] += 1


def _holes(msp, rng, cx, cy, twice, count) -> list[tuple[float, float, float]]:
    """Holes at the lattice's crossings and on two bolt rings: about a hundred circles."""
    holes = []
    for i in range(-10, 11, 5):
        for j in range(-10, 11, 5):
            x, y = cx + 45.0 * i + 15, cy + 45.0 * j + 15
            if math.hypot(x - cx, y - cy) <= 440:
                holes.append((x, y, 14.0))
    for ring, n, r in ((480.0, 36, 8.0), (540.0, 48, 6.0)):
        for k in range(n):
            t = 2 * math.pi * k / n + rng.uniform(-0.01, 0.01)
            holes.append((cx + ring * math.cos(t), cy + ring * math.sin(t), r))
    for x, y, r in holes:
        twice(lambda a, x=x, y=y, r=r: msp.add_circle((x, y), r, dxfattribs=a))
        count["holes"] += 1
    return holes


def _ribs(msp, rng, holes, twice, count) -> None:
    """Lines from one hole's edge to the next hole's edge on the bolt rings, leaving each
    hole at an oblique angle (neither radial nor tangent), some meeting in threes."""
    ring = [h for h in holes if h[2] < 10]
    for (x0, y0, r0), (x1, y1, r1) in zip(ring, ring[1:]):
        d = math.atan2(y1 - y0, x1 - x0)
        for off in (0.6, -0.6):
            a = (x0 + r0 * math.cos(d + off), y0 + r0 * math.sin(d + off))
            b = (x1 + r1 * math.cos(d + math.pi - off), y1 + r1 * math.sin(d + math.pi - off))
            twice(lambda at, a=a, b=b: msp.add_line(a, b, dxfattribs=at))
            count["ribs"] += 1
        if rng.random() < 0.3:                       # a third line into the same point: a branch
            a = (x0 + r0 * math.cos(d + 0.6), y0 + r0 * math.sin(d + 0.6))
            twice(lambda at, a=a: msp.add_line(a, (a[0] + 5.0, a[1] + 17.0), dxfattribs=at))
            count["ribs"] += 1


def _tabs(msp, rng, cx, cy, twice, count) -> None:
    """Rectangular tabs standing out of the plate's edge (radial sides on the plate circle)."""
    for k in range(12):
        t = 2 * math.pi * k / 12
        u, v = (math.cos(t), math.sin(t)), (-math.sin(t), math.cos(t))
        half = 40.0
        p = [(cx + (600.0 * math.cos(math.asin(s * half / 600.0))) * u[0] + s * half * v[0],
              cy + (600.0 * math.cos(math.asin(s * half / 600.0))) * u[1] + s * half * v[1]) for s in (-1, 1)]
        q = [(x + 60.0 * u[0], y + 60.0 * u[1]) for x, y in p]
        for a, b in ((p[0], q[0]), (q[0], q[1]), (q[1], p[1])):
            twice(lambda at, a=a, b=b: msp.add_line(a, b, dxfattribs=at))
        count["tabs"] += 1


def _slots(msp, rng, cx, cy, twice, count) -> None:
    """Obround slots drawn as two arcs and two lines, between the windows and the bolt rings."""
    for k in range(16):
        t = 2 * math.pi * (k + 0.5) / 16
        x, y = cx + 455.0 * math.cos(t), cy + 455.0 * math.sin(t)
        u = (-math.sin(t), math.cos(t))
        r, half = 5.0, 12.0
        c0 = (x - half * u[0], y - half * u[1])
        c1 = (x + half * u[0], y + half * u[1])
        n = (u[1], -u[0])
        ang = math.degrees(math.atan2(n[1], n[0]))
        twice(lambda at: msp.add_line((c0[0] + r * n[0], c0[1] + r * n[1]), (c1[0] + r * n[0], c1[1] + r * n[1]),
                                      dxfattribs=at))
        twice(lambda at: msp.add_line((c0[0] - r * n[0], c0[1] - r * n[1]), (c1[0] - r * n[0], c1[1] - r * n[1]),
                                      dxfattribs=at))
        twice(lambda at: msp.add_arc(c1, r, ang - 90 - 90 + 90, ang + 90 + 90 - 90, dxfattribs=at))
        twice(lambda at: msp.add_arc(c0, r, ang + 90, ang + 270, dxfattribs=at))
        count["slots"] += 1
