"""Seeded fuzz runner for ``spanwise check``: many generated drawings and specs, every crash.

    python scripts/fuzz_check.py [--count 200] [--seed 1] [--out /tmp/fuzz] [--jobs 2]
                                 [--cli 20] [--timeout 60] [--only SEED ...]

Each case ``k`` (0 <= k < count) uses the seed ``S + k`` and is fully determined by it:
a drawing ``OUT/cases/seed_<seed>.dxf`` and, usually, its spec ``seed_<seed>.spanwise.toml``
beside it, plus ``seed_<seed>.case.json`` (what was generated: the tags). The case is run
through :func:`layout.pipeline.check_drawing` and the command line's report (``report_dict``,
``dumps``, ``summary_text``). ``FatalInput`` is an expected answer; any other exception is a
crash, written with its traceback to ``seed_<seed>.traceback.txt``. A sample of ``--cli`` cases
is also run as ``spanwise check FILE --json OUT`` in a subprocess: any "Traceback" in its output,
an exit status other than 0/1/2, or a status 2 without one ``spanwise:`` line per problem is
flagged. Non-standard JSON numbers (NaN, Infinity) in the report are flagged as anomalies.

The mix: valid drives (2-5 pulleys, back idlers, crossed two-pulley drives, two-stage drives on
a shared shaft, routes given only in the spec) drawn as a closed LWPOLYLINE, an old-style
POLYLINE, LINE+ARC entities, shuffled/split LINE+ARC or only the tangent spans, with random
perturbations and unrelated geometry; random specs; and hostile inputs (degenerate circles,
zero-length lines, NaN/inf written into the file, huge or tiny coordinates, odd labels, empty
model space, INSERTs of missing or self-referencing blocks, truncated files, random bytes).

A run of 20 000 cases (``--count 20000 --seed 1000 --jobs 2 --cli 50``, 2 cores, 346 s): outcomes
10 728 ok and 9 272 fatal (each one clear line), no crash, no anomaly, and 50 command-line runs
with exit codes 0, 1 and 2 and no problem. Run case by case against the code before the end
clustering, circle matching and repeated-circle searches were rewritten, every outcome and
every ok case's finding codes were the same; 155 fatal lines differ only in wording (116 name
a byte-order mark, 39 add the entities skipped for bad coordinates). An earlier run's one
flagged anomaly was the word "NaN" quoted from a damaged file inside a finding's message, not
a number; the check now parses the JSON to tell.

``--only SEED`` regenerates and runs just those seeds in this process and prints tracebacks.
Exit status: 0 when nothing unexpected was found, 1 otherwise.
"""

from __future__ import annotations

import argparse
import concurrent.futures as cf
import json
import math
import os
import random
import re
import signal
import subprocess
import sys
import time
import traceback
from collections import defaultdict
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
PROJECT_DIRS = (str(ROOT / "layout") + os.sep, str(ROOT / "physics") + os.sep)
SPANWISE = str(Path(sys.executable).with_name("spanwise"))

SECTIONS = ["Z", "A", "B", "C", "D", "SPZ", "SPA", "SPB", "SPC", "PH", "PJ", "PK", "PL", "PM",
            "6PK", "8PJ", "12PK", "3PL", "FLAT-POLYAMIDE", "FLAT-LEATHER", "FLAT-RUBBER",
            "ROUND-3", "ROUND-5", "ROUND-8", "ROUND-12", "ROUND-4.5", "WIRE-6X19-6",
            "WIRE-6X19-10", "WIRE-6X19-16", "spa", "6pk"]
BAD_SECTIONS = ["XYZ", "0PK", "-3PK", "ROUND-0", "ROUND--1", "WIRE-6X19-0", "ROUND-1e400", "PK6",
                "ROUND-nan", "1000000PK", "", " "]
NAMES = ["MOTOR", "FAN", "PUMP", "T1", "IDL", "GEN", "HEAD", "CAP", "DRV", "AUX", "JACK", "MIX"]
INSUNITS = {"in": 1, "ft": 2, "mm": 4, "cm": 5, "m": 6}
UNIT_MM = {"mm": 1.0, "cm": 10.0, "m": 1000.0, "in": 25.4, "ft": 304.8}


class CaseTimeout(Exception):
    pass


# --------------------------------------------------------------------------- TOML writing



def _non_standard_numbers(text: str) -> list[str]:
    """NaN or Infinity written as JSON numbers (a word inside a string, quoted from a damaged
    file in a message, does not count)."""
    found: list[str] = []

    def note(word: str) -> float:
        found.append(word)
        return float("nan")

    json.loads(text, parse_constant=note)
    return sorted(set(found))

def _tv(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_tv(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_tk(k)} = {_tv(x)}" for k, x in v.items()) + "}"
    raise TypeError(v)


def _tk(k: str) -> str:
    return k if re.fullmatch(r"[A-Za-z0-9_-]+", k) else json.dumps(k, ensure_ascii=False)


def to_toml(d: dict[str, Any], path: tuple[str, ...] = ()) -> str:
    out: list[str] = []
    subs = []
    for k, v in d.items():
        if isinstance(v, dict) and not (v and v.get("__inline__")):
            subs.append((k, v))
        else:
            if isinstance(v, dict):
                v = {a: b for a, b in v.items() if a != "__inline__"}
            out.append(f"{_tk(k)} = {_tv(v)}")
    text = "\n".join(out) + ("\n" if out else "")
    for k, v in subs:
        p = path + (k,)
        text += "\n[" + ".".join(_tk(x) for x in p) + "]\n" + to_toml(v, p)
    return text


# --------------------------------------------------------------------------- geometry


def _rot(p, a):
    c, s = math.cos(a), math.sin(a)
    return (p[0] * c - p[1] * s, p[0] * s + p[1] * c)


def convex_drive(rng: random.Random, n: int, size: float):
    """``n`` pulleys on a convex ring, counter-clockwise, non-overlapping."""
    for _ in range(50):
        ang = sorted(rng.uniform(0, 2 * math.pi) for _ in range(n))
        if n > 1 and min((ang[(i + 1) % n] - ang[i]) % (2 * math.pi) for i in range(n)) < 0.5:
            continue
        a, b = size * rng.uniform(1, 3), size * rng.uniform(1, 3)
        cs = [(a * math.cos(t), b * math.sin(t)) for t in ang]
        rs = []
        for i, c in enumerate(cs):
            dmin = min(math.dist(c, o) for j, o in enumerate(cs) if j != i)
            rs.append(dmin * rng.uniform(0.08, 0.42))
        return cs, rs
    return [(0.0, 0.0), (size * 4, 0.0)], [size * 0.6, size * 0.3]


def add_back_idlers(rng: random.Random, cs, rs, k: int):
    """Insert ``k`` back idlers (turn -1) pressing on spans of a counter-clockwise ring."""
    cs, rs, turns = list(cs), list(rs), [1] * len(cs)
    for _ in range(k):
        n = len(cs)
        i = rng.randrange(n)
        j = (i + 1) % n
        if turns[i] < 0 or turns[j] < 0:
            continue
        (x0, y0), (x1, y1) = cs[i], cs[j]
        d = math.dist(cs[i], cs[j])
        if d <= 0:
            continue
        ux, uy = (x1 - x0) / d, (y1 - y0) / d
        nx, ny = uy, -ux                          # right of travel: outside the loop
        rb = rng.uniform(0.15, 0.6) * min(rs[i], rs[j], d / 4)
        t = rng.uniform(0.35, 0.65)
        off = (rs[i] + rs[j]) / 2 + rb - rng.uniform(0.1, 0.7) * rb
        c = (x0 + t * (x1 - x0) + nx * off, y0 + t * (y1 - y0) + ny * off)
        if any(math.dist(c, o) < r + rb + 1e-3 * d for o, r in zip(cs, rs)):
            continue
        cs.insert(j if j else n, c)
        rs.insert(j if j else n, rb)
        turns.insert(j if j else n, -1)
    return cs, rs, turns


def geometry_ok(cs, rs, turns) -> bool:
    from physics.geometry import loop_geometry
    import numpy as np
    try:
        g = loop_geometry(np.asarray(cs, float), np.asarray(rs, float), np.asarray(turns, float))
        w = np.asarray(g.wrap_rad)
        return bool(np.all(np.isfinite(w)) and np.all(w > 0.05) and np.all(w < 2 * math.pi - 0.05))
    except Exception:
        return False


# --------------------------------------------------------------------------- the case builder


class Case:
    def __init__(self, seed: int, folder: Path):
        self.seed = seed
        self.rng = random.Random(seed)
        self.tags: list[str] = []
        self.dxf = folder / f"seed_{seed}.dxf"
        self.spec_path = folder / f"seed_{seed}.spanwise.toml"
        self.spec: dict[str, Any] | None = None
        self.spec_text: str | None = None
        self.post: list[Any] = []          # byte-level edits applied after saving

    def tag(self, t: str) -> None:
        self.tags.append(t)

    def chance(self, p: float) -> bool:
        return self.rng.random() < p


def _new_doc(case: Case):
    import ezdxf
    rng = case.rng
    ver = rng.choice(["R2010", "R2010", "R2000", "R2018", "R12"])
    if ver != "R2010":
        case.tag(f"dxf-{ver}")
    doc = ezdxf.new(ver, setup=rng.random() < 0.3)
    if ver != "R12":
        u = rng.choice(["mm", "mm", "mm", "cm", "m", "in", "ft", None, 0, 7, 13, 99])
        if u is None:
            try:
                del doc.header["$INSUNITS"]
            except Exception:
                doc.header["$INSUNITS"] = 0
            case.tag("insunits-none")
        elif isinstance(u, int):
            doc.header["$INSUNITS"] = u
            case.tag(f"insunits-{u}")
        else:
            doc.header["$INSUNITS"] = INSUNITS[u]
            if u != "mm":
                case.tag(f"insunits-{u}")
    return doc, ver


def _pieces_entities(case: Case, cs, rs, turns, form: str, layer: str) -> list[tuple]:
    """The belt path as a list of entity tuples, perturbed."""
    from layout.draw import path_pieces
    rng = case.rng
    pieces = path_pieces(cs, rs, turns)
    ents: list[tuple] = []
    if form in ("polyline", "polyline2d"):
        pts = []
        for i in range(0, len(pieces), 2):
            sp, wr = pieces[i], pieces[i + 1]
            pts.append((sp["start"][0], sp["start"][1], 0.0))
            pts.append((sp["end"][0], sp["end"][1], math.tan(wr["sweep"] / 4.0)))
        if case.chance(0.15):
            # reversed travel: the bulge of a segment sits on its start vertex
            m = len(pts)
            pts = [(pts[m - 1 - k][0], pts[m - 1 - k][1], -pts[(m - 2 - k) % m][2]) for k in range(m)]
            case.tag("polyline-reversed")
        if case.chance(0.1):
            k = rng.randrange(len(pts))
            pts = pts[k:] + pts[:k]
            case.tag("polyline-rotated-start")
        if case.chance(0.08):
            k = rng.randrange(len(pts))
            pts.insert(k, pts[k])
            case.tag("polyline-duplicate-vertex")
        closed = True
        if case.chance(0.08):
            pts.append(pts[0])
            closed = rng.random() < 0.5
            case.tag(f"polyline-explicit-closing-vertex-closed={closed}")
        if case.chance(0.05):
            k = rng.randrange(len(pts))
            x, y, b = pts[k]
            pts[k] = (x + rng.uniform(-1, 1) * 1e-3 * (abs(x) + 1), y, b)
            case.tag("polyline-vertex-jitter")
        ents.append((form, pts, closed, layer))
        return ents
    for p in pieces:
        if p["kind"] == "span":
            ents.append(("line", p["start"], p["end"], layer))
        elif form != "spans" and abs(p["sweep"]) > 0:
            cx, cy = p["center"]
            a0 = math.degrees(math.atan2(p["start"][1] - cy, p["start"][0] - cx))
            a1 = a0 + math.degrees(p["sweep"])
            lo, hi = min(a0, a1), max(a0, a1)
            if form == "shuffled" and case.chance(0.7):
                mid = (lo + hi) / 2
                ents.append(("arc", (cx, cy), p["radius"], lo, mid, layer))
                ents.append(("arc", (cx, cy), p["radius"], mid, hi, layer))
            else:
                ents.append(("arc", (cx, cy), p["radius"], lo, hi, layer))
    lines = [k for k, e in enumerate(ents) if e[0] == "line"]
    if case.chance(0.3):
        for k in lines:
            if rng.random() < 0.5:
                e = ents[k]
                ents[k] = ("line", e[2], e[1], e[3])
        case.tag("lines-reversed")
    if case.chance(0.15):
        gap = rng.choice([1e-9, 1e-6, 1e-3, 0.05, 0.5, 3.0])
        for k in lines:
            _, a, b, ly = ents[k]
            L = math.dist(a, b)
            if L > 2 * gap:
                ux, uy = (b[0] - a[0]) / L, (b[1] - a[1]) / L
                ents[k] = ("line", (a[0] + gap * ux, a[1] + gap * uy), (b[0] - gap * ux, b[1] - gap * uy), ly)
        case.tag(f"gap-{gap}")
    if case.chance(0.12) and lines:
        k = rng.choice(lines)
        _, a, b, ly = ents[k]
        ang = math.radians(rng.choice([0.001, 0.05, 0.5, 2.0, 10.0]) * rng.choice([-1, 1]))
        m = ((a[0] + b[0]) / 2, (a[1] + b[1]) / 2)
        ra = _rot((a[0] - m[0], a[1] - m[1]), ang)
        rb = _rot((b[0] - m[0], b[1] - m[1]), ang)
        ents[k] = ("line", (m[0] + ra[0], m[1] + ra[1]), (m[0] + rb[0], m[1] + rb[1]), ly)
        case.tag(f"span-rotated-{math.degrees(ang):.3g}deg")
    if case.chance(0.08) and lines:
        k = rng.choice(lines)
        _, a, b, ly = ents[k]
        m = ((a[0] + b[0]) / 2 + rng.uniform(-2, 2), (a[1] + b[1]) / 2 + rng.uniform(-2, 2))
        ents[k:k + 1] = [("line", a, m, ly), ("line", m, b, ly)]
        case.tag("span-split-with-kink")
    if case.chance(0.08) and lines:
        del ents[rng.choice(lines)]
        case.tag("span-missing")
    if form == "shuffled" or case.chance(0.2):
        rng.shuffle(ents)
        case.tag("shuffled")
    return ents


def _r12(lay) -> bool:
    return lay.doc.dxfversion == "AC1009"


def add_poly(lay, pts, close: bool, layer: str, fmt: str = "xyb"):
    """A LWPOLYLINE, or an old-style POLYLINE where the DXF version has no LWPOLYLINE."""
    if not _r12(lay):
        return lay.add_lwpolyline(pts, format=fmt, close=close, dxfattribs={"layer": layer})
    pts = [tuple(p) + (0.0,) * (3 - len(p)) if fmt == "xyb" else (p[0], p[1], 0.0) for p in pts]
    pl = lay.add_polyline2d([(p[0], p[1]) for p in pts], close=close, dxfattribs={"layer": layer})
    for v, p in zip(pl.vertices, pts):
        v.dxf.bulge = p[2]
    return pl


def _emit(case: Case, lay, ents: list[tuple]) -> None:
    rng = case.rng
    for e in ents:
        kind = e[0]
        if _r12(lay) and kind == "polyline":
            kind = "polyline2d"
        if _r12(lay) and kind == "ellipse":
            lay.add_circle(e[1], math.hypot(*e[2]), dxfattribs={"layer": e[4]})
            continue
        if kind == "line":
            lay.add_line(e[1], e[2], dxfattribs={"layer": e[3]})
        elif kind == "arc":
            lay.add_arc(e[1], e[2], e[3], e[4], dxfattribs={"layer": e[5]})
        elif kind == "circle":
            ent = lay.add_circle(e[1], e[2], dxfattribs={"layer": e[3]})
            if len(e) > 4 and e[4]:
                # the same circle seen from below: extrusion (0, 0, -1), centre in OCS
                ent.dxf.extrusion = (0, 0, -1)
                ent.dxf.center = (-e[1][0], e[1][1], 0)
        elif kind == "polyline":
            lay.add_lwpolyline(e[1], format="xyb", close=e[2], dxfattribs={"layer": e[3]})
        elif kind == "polyline2d":
            pl = lay.add_polyline2d([(x, y) for x, y, _ in e[1]], close=e[2], dxfattribs={"layer": e[3]})
            for v, p in zip(pl.vertices, e[1]):
                v.dxf.bulge = p[2]
        elif kind == "ellipse":
            lay.add_ellipse(e[1], major_axis=e[2], ratio=e[3], dxfattribs={"layer": e[4]})
        elif kind == "text":
            if e[3] == "mtext" and not _r12(lay):
                lay.add_mtext(e[1], dxfattribs={"insert": e[2], "layer": "LABELS",
                                                "char_height": max(e[4], 1e-9)})
            else:
                lay.add_text(e[1], height=max(e[4], 1e-9), dxfattribs={"insert": e[2], "layer": "LABELS"})
        else:
            raise ValueError(kind)
    del rng


def _labels(case: Case, cs, rs, ids: list[str], values: list[dict[str, str]]) -> list[tuple]:
    out = []
    rng = case.rng
    for c, r, pid, vals in zip(cs, rs, ids, values):
        if pid is None:
            continue
        words = [pid] + [f"{k}={v}" for k, v in vals.items()]
        kind = "mtext" if rng.random() < 0.3 else "text"
        text = (r"\P" if kind == "mtext" and rng.random() < 0.5 else " ").join(words)
        off = (rng.uniform(-0.4, 0.4) * r, rng.uniform(-0.4, 0.4) * r)
        out.append(("text", text, (c[0] + off[0], c[1] + off[1]), kind, r * 0.1))
    return out


ODD_LABELS = ["", " ", "=", "==", "role=", "=driver", "P1 role==driver", "P1 speed=", "P1 speed=abc rpm",
              "P1 power=1,5kW", "P1 at=1,2,3", "P1 orders=", "P1 orders=a,b", "P1 pivot=a,b",
              "P1 pivot=1", "P1 speed_range=1rpm", "P1 speed_range=2rpm,1rpm,3rpm", "P1 role=driver role=driven",
              "%%c100 role=driver", "Ø120", "M8", "P1\x01\x02", "Π1 role=driver", "P1 ROLE=DRIVER",
              "P1 speed=1e400rpm", "P1 speed=nan rpm", "P1 speed=-1450rpm", "P1 torque=-5Nm",
              "P1 direction=up", "P1 force=1e308kN", "P1 diameter=100mm", "P1 at=nan,nan",
              "P1 adjust=400deg", "L1", "belt", "1ABC role=idler", "P1 orders=0", "P1 orders=-1,inf",
              "\\P\\P", "{\\fArial|b1;MOTOR} role=driver", "P1 " + "x" * 3000, "🙂 role=driver",
              "P1 speed=1450rpm speed=1500rpm", "P1 power=3kW torque=5Nm", "P1 strands=2",
              "P1 role=tensioner arm_torque=5Nm", "P1 role=tensioner pivot=0,0 arm_torque=5Nm force=3N",
              "P1 force_direction=90", "P1 speed=1450 rpm", "_ role=driver", "P1 at=1e999,0"]


def _extras(case: Case, doc, msp, cs, rs, scale: float) -> None:
    """Unrelated geometry: frames, bolt holes, shaft bores, text, dimensions, hatches, blocks."""
    rng = case.rng
    xs = [c[0] for c in cs]
    ys = [c[1] for c in cs]
    rmax = max(rs)
    x0, x1, y0, y1 = min(xs) - 2 * rmax, max(xs) + 2 * rmax, min(ys) - 2 * rmax, max(ys) + 2 * rmax
    if case.chance(0.3):
        layer = rng.choice(["FRAME", "FRAME", "BELT", "0", "GUARD"])
        add_poly(msp, [(x0, y0), (x1, y0), (x1, y1), (x0, y1)], True, layer, "xy")
        case.tag(f"frame-on-{layer}")
    if case.chance(0.3):
        for _ in range(rng.randint(1, 6)):
            p = (rng.uniform(x0, x1), rng.uniform(y0, y1))
            msp.add_circle(p, rng.uniform(0.01, 0.1) * rmax, dxfattribs={"layer": rng.choice(["HOLES", "PULLEYS"])})
        case.tag("bolt-holes")
    if case.chance(0.25):
        for c, r in zip(cs, rs):
            if rng.random() < 0.6:
                msp.add_circle(c, r * rng.uniform(0.1, 0.5), dxfattribs={"layer": "PULLEYS"})
        case.tag("shaft-bores")
    if case.chance(0.1):
        c, r = cs[0], rs[0]
        msp.add_circle(c, r * rng.uniform(1.02, 1.2), dxfattribs={"layer": "PULLEYS"})
        case.tag("outer-diameter-circle")
    if case.chance(0.2):
        for _ in range(rng.randint(1, 4)):
            # callouts outside the drive, now and then one over it (it may land in a pulley)
            inside = rng.random() < 0.2
            at = ((rng.uniform(x0, x1), rng.uniform(y0, y1)) if inside else
                  (rng.uniform(x0, x1), y1 + rng.uniform(0.1, 1) * rmax))
            msp.add_text(rng.choice(["M8", "SECTION A-A", "NOTE: guard", "Ø12 H7", "x=3"]), height=rmax * 0.05,
                         dxfattribs={"insert": at, "layer": "NOTES"})
        case.tag("notes")
    if case.chance(0.2) and doc.dxfversion != "AC1009":
        try:
            dim = msp.add_linear_dim(base=(cs[0][0], y1), p1=cs[0], p2=cs[-1], dxfattribs={"layer": "DIMS"})
            dim.render()
            if len(cs) > 1:
                dim2 = msp.add_radius_dim(center=cs[1], radius=rs[1], angle=30, dxfattribs={"layer": "DIMS"})
                dim2.render()
            case.tag("dimensions")
        except Exception as err:  # the generator's own problem: note it, carry on
            case.tag(f"dimension-failed:{type(err).__name__}")
    if case.chance(0.15) and doc.dxfversion != "AC1009":
        h = msp.add_hatch(color=2, dxfattribs={"layer": "HATCH"})
        h.paths.add_polyline_path([(x0, y0), (x0 + rmax, y0), (x0 + rmax, y0 + rmax), (x0, y0 + rmax)], is_closed=True)
        if rng.random() < 0.5:
            ep = h.paths.add_edge_path()
            ep.add_arc(cs[0], rs[0] * 0.3, 0, 360)
        case.tag("hatch")
    if case.chance(0.2):
        # block references: bolt pattern, nested, mirrored, non-uniformly scaled
        name = f"BOLTS{rng.randint(0, 999)}"
        blk = doc.blocks.new(name)
        for k in range(4):
            blk.add_circle(_rot((rmax * 0.2, 0), k * math.pi / 2), rmax * 0.03)
        blk.add_line((0, 0), (rmax * 0.1, 0))
        sx = rng.choice([1.0, -1.0, 2.0, 0.5])
        sy = rng.choice([1.0, 1.0, 3.0, -1.0])
        ref = msp.add_blockref(name, (rng.uniform(x0, x1), rng.uniform(y0, y1)),
                               dxfattribs={"xscale": sx, "yscale": sy, "rotation": rng.uniform(0, 360)})
        del ref
        case.tag(f"bolt-block-scale-{sx}x{sy}")
        if case.chance(0.5):
            outer = doc.blocks.new(name + "_OUTER")
            outer.add_blockref(name, (rmax, 0), dxfattribs={"xscale": -1, "rotation": 45})
            msp.add_blockref(name + "_OUTER", (x0, y1), dxfattribs={"xscale": 1.5, "yscale": 0.7})
            case.tag("nested-nonuniform-block")
    if case.chance(0.05) and not _r12(msp):
        msp.add_spline([(x0, y0), (x0 + rmax, y1), (x1, y0)], dxfattribs={"layer": "BELT"})
        case.tag("spline-on-belt-layer")
    if case.chance(0.05):
        msp.add_point((x0, y0))
        msp.add_solid([(x0, y0), (x0 + 1, y0), (x0, y0 + 1)])
        case.tag("points-solids")
    del scale


def _drive_layout(case: Case, doc, msp, ents, pulleys, labels):
    """Put the drive in model space directly, or inside (nested, mirrored, scaled) block references.

    Returns the transform applied to drawing coordinates as (mirror, scale, rotation rad, offset).
    """
    rng = case.rng
    mode = rng.choices(["direct", "pulley-blocks", "drive-block", "nested"], [0.6, 0.15, 0.15, 0.1])[0]
    if mode == "direct":
        _emit(case, msp, pulleys + ents + labels)
        return
    if mode == "pulley-blocks":
        case.tag("pulleys-in-blocks")
        _emit(case, msp, ents + ([] if rng.random() < 0.5 else labels)
              + [e for e in pulleys if e[0] != "circle"])
        for k, e in enumerate(pulleys):
            if e[0] != "circle":
                continue
            name = f"PULLEY{k}"
            blk = doc.blocks.new(name)
            r = e[2]
            uni = rng.choice([1.0, 1.0, r / 10.0, 2.0])
            blk.add_circle((0, 0), r / uni, dxfattribs={"layer": "0"})
            if rng.random() < 0.3 and doc.dxfversion != "AC1009":
                blk.add_attdef("ID", (0, 0))
                blk.add_attdef("ROLE", (0, -1))
            mirror = rng.random() < 0.3
            ref = msp.add_blockref(name, e[1], dxfattribs={"xscale": -uni if mirror else uni, "yscale": uni,
                                                          "rotation": rng.uniform(0, 360),
                                                          "layer": "PULLEYS"})
            if doc.dxfversion != "AC1009" and blk.has_attdef("ID") and rng.random() < 0.7:
                ref.add_auto_attribs({"ID": f"B{k}", "ROLE": rng.choice(["idler", "driven", "bogus", ""])})
                case.tag("block-attribs")
        return
    # whole drive in a block, inserted with a similarity (maybe mirrored), maybe nested
    case.tag(f"drive-in-block-{mode}")
    blk = doc.blocks.new("DRIVE")
    _emit(case, blk, pulleys + ents + labels)
    s = rng.choice([1.0, 1.0, 2.0, 0.25, 25.4])
    sy = s
    if case.chance(0.1):
        sy = s * rng.choice([1.5, 0.5, 1 + 1e-6])
        case.tag(f"drive-block-nonuniform-{s}x{sy}")
    mirror = case.chance(0.3)
    if mirror:
        case.tag("drive-block-mirrored")
    attrs = {"xscale": -s if mirror else s, "yscale": sy, "rotation": rng.uniform(0, 360)}
    if mode == "nested":
        outer = doc.blocks.new("MACHINE")
        outer.add_blockref("DRIVE", (rng.uniform(-100, 100), rng.uniform(-100, 100)), dxfattribs=attrs)
        outer.add_line((0, 0), (10, 0), dxfattribs={"layer": "FRAME"})
        msp.add_blockref("MACHINE", (rng.uniform(-500, 500), rng.uniform(-500, 500)),
                         dxfattribs={"rotation": rng.uniform(0, 360), "xscale": rng.choice([1, -1])})
    else:
        msp.add_blockref("DRIVE", (rng.uniform(-500, 500), rng.uniform(-500, 500)), dxfattribs=attrs)
    if rng.random() < 0.3:
        msp.add_blockref("DRIVE", (1e4, 1e4), dxfattribs=attrs)
        case.tag("drive-block-inserted-twice")


def _spec_for(case: Case, ids: list[str], roles: list[str], loop_ids: list[str], length_mm: float | None,
              hostile: bool) -> dict[str, Any]:
    rng = case.rng
    sp: dict[str, Any] = {}

    def q(v: float, unit: str) -> str:
        return f"{v:.6g} {unit}"

    if rng.random() < 0.6:
        sp["units"] = rng.choice(["mm", "mm", "cm", "m", "in", "inch", "ft", "MM"])
    if rng.random() < 0.15 and loop_ids:
        sp["belt_layers"] = rng.choice([[loop_ids[0]], ["BELT*"], ["STAGE*"], "BELT", ["NOPE"]])
    belt: dict[str, Any] = {}
    r = rng.random()
    if r < 0.6:
        belt["section"] = rng.choice(SECTIONS)
        if belt["section"].upper().startswith("FLAT") and rng.random() < 0.6:
            belt["width"] = q(rng.uniform(10, 200), "mm")
            belt["thickness"] = q(rng.uniform(0.5, 6), "mm")
    elif r < 0.85:
        belt["mass_per_length"] = q(rng.uniform(0.005, 1.5), "kg/m")
        if rng.random() < 0.7:
            belt["friction"] = round(rng.uniform(0.1, 0.9), 3)
        if rng.random() < 0.3:
            belt["effective_friction"] = round(rng.uniform(0.1, 1.5), 3)
        if rng.random() < 0.3:
            belt["groove_angle"] = q(rng.uniform(20, 60), "deg")
        if rng.random() < 0.3:
            belt["height"] = q(rng.uniform(2, 20), "mm")
        if rng.random() < 0.2:
            belt["max_speed"] = q(rng.uniform(5, 60), "m/s")
        if rng.random() < 0.2:
            belt["min_diameter"] = q(rng.uniform(10, 200), "mm")
    case.tag("belt:" + ",".join(sorted(belt)) if belt else "belt:none")
    if rng.random() < 0.5:
        belt["install_tension"] = q(rng.choice([rng.uniform(10, 2000), 0.0, 1e-3, 5e5]), "N")
    if rng.random() < 0.4:
        belt["tensioning"] = rng.choice(["fixed", "constant", "Fixed"])
    if rng.random() < 0.3:
        belt["strands"] = rng.randint(1, 6)
    if rng.random() < 0.25:
        belt["axial_stiffness"] = q(rng.uniform(1, 500), "kN")
    if rng.random() < 0.25:
        belt["bending_stiffness"] = q(10 ** rng.uniform(-5, 1), rng.choice(["N*m^2", "N*m²", "N*mm^2"]))
        case.tag("bending_stiffness")
    adjust_on = None
    if length_mm and rng.random() < 0.25:
        belt["length"] = q(length_mm * rng.uniform(0.9, 1.1), "mm")
        if rng.random() < 0.7:
            adjust_on = rng.randrange(len(ids))
        case.tag("belt-length" + ("+adjust" if adjust_on is not None else ""))
    if rng.random() < 0.1:
        belt["stock_lengths"] = [q(length_mm or 1000 * rng.uniform(0.9, 1.1), "mm") for _ in range(3)]
    if len(loop_ids) > 1 and rng.random() < 0.5:
        belt[loop_ids[1]] = {"section": rng.choice(SECTIONS), "strands": rng.randint(1, 3)}
    sp["belt"] = belt
    if rng.random() < 0.2:
        g = rng.choice([[0, -1], [1, 0], [0.3, -0.7], [0, 1e-300]])
        sp["gravity"] = g
        case.tag("gravity")
    for key, lo, hi in (("service_factor", 0.8, 2.0), ("grip_margin", 0.3, 1.0), ("resonance_margin", 0.01, 0.5),
                        ("near_critical", 0.3, 1.0), ("sag_limit", 0.001, 0.2)):
        if rng.random() < 0.1:
            sp[key] = round(rng.uniform(lo, hi), 4)
    if rng.random() < 0.1:
        sp["modes"] = rng.randint(1, 12)
    if rng.random() < 0.1:
        sp["span_ends"] = rng.choice(["pinned", "clamped"])
    if rng.random() < 0.15:
        sp["keep_out_layers"] = rng.choice([["FRAME"], ["GUARD", "FRAME"], ["HOLES"], "FRAME*", ["PULLEYS"]])
        if rng.random() < 0.7:
            sp["clearance"] = q(rng.uniform(0, 30), "mm")
        case.tag("keep_out")
    if rng.random() < 0.1:
        sp["tolerances"] = {k: round(10 ** rng.uniform(-6, 0), 8) for k in
                            rng.sample(["join", "attach", "tangent_deg", "tangent_offset"], rng.randint(1, 3))}
        case.tag("tolerances")
    pulleys: dict[str, Any] = {}
    for k, (pid, role) in enumerate(zip(ids, roles)):
        if pid is None or rng.random() < 0.15:
            continue
        p: dict[str, Any] = {}
        if rng.random() < 0.7:
            p["role"] = role
        if role == "driver":
            p["speed"] = rng.choice([q(rng.uniform(50, 3600), "rpm"), q(rng.uniform(1, 60), "rev/s"),
                                     q(rng.uniform(5, 300), "rad/s")])
            if rng.random() < 0.6:
                p["direction"] = rng.choice(["ccw", "cw"])
            if rng.random() < 0.5:
                lo = rng.uniform(0, 2000)
                p["speed_range"] = [q(lo, "rpm"), q(lo * rng.uniform(1, 3), "rpm")]
                case.tag("speed_range")
            if rng.random() < 0.3:
                p["rating"] = q(rng.uniform(0.1, 50), "kW")
            if rng.random() < 0.15:
                p["orders"] = [1, 2, rng.choice([3, 0.5, 6])]
        elif role == "driven":
            w = rng.random()
            if w < 0.45:
                p["power"] = q(rng.uniform(0.01, 30), rng.choice(["kW", "hp", "W"]))
            elif w < 0.85:
                p["torque"] = q(rng.uniform(0.1, 300), rng.choice(["N*m", "Nm", "kNm", "N.m"]))
            if rng.random() < 0.1:
                p["drag_torque"] = q(rng.uniform(0, 5), "N*m")
        elif role == "tensioner":
            w = rng.random()
            if w < 0.4:
                p["force"] = q(rng.uniform(0, 2000), "N")
                case.tag("tensioner-force")
            elif w < 0.7:
                p["force"] = q(rng.uniform(0, 2000), "N")
                p["force_direction"] = q(rng.uniform(-360, 360), "deg")
                case.tag("tensioner-force_direction")
            else:
                p["pivot"] = [rng.uniform(-1000, 1000), rng.uniform(-1000, 1000)]
                p["arm_torque"] = q(rng.uniform(-20, 50), "N*m")
                case.tag("tensioner-pivot-arm_torque")
        if adjust_on == k:
            p["adjust"] = q(rng.uniform(-180, 360), "deg")
        if rng.random() < 0.05:
            p["groove_angle"] = q(rng.uniform(30, 40), "deg")
        if p:
            pulleys[pid] = p
    if pulleys:
        sp["pulley"] = pulleys
    if hostile and rng.random() < 0.8:
        _hostile_spec(case, sp)
    return sp


HOSTILE_VALUES = ["", "-5 N", "0 rpm", "-1450 rpm", "1e300 rpm", "1e-300 N", "1e308 kW", "nan N", "inf rpm",
                  "3 kW kW", "12 Nm/s", "1,5 kW", "1450 1/min", "50 Hz", "1e400 N", "0 deg", "1e30 deg",
                  0, -1, 1e308, float("nan"), float("inf"), True, [], ["1 rpm"], ["2 rpm", "1 rpm"],
                  ["0 rpm", "0 rpm"], [0, 0], [1e308, -1e308], {"a": 1}, "1e-30 kg/m", "0 N*m^2",
                  "-0 mm", "0 mm", "1e-300 mm", "5 rpm^2"]


def _hostile_spec(case: Case, sp: dict[str, Any]) -> None:
    rng = case.rng
    for _ in range(rng.randint(1, 3)):
        w = rng.random()
        v = rng.choice(HOSTILE_VALUES)
        if w < 0.4 and sp.get("pulley"):
            pid = rng.choice(list(sp["pulley"]))
            key = rng.choice(["speed", "speed_range", "power", "torque", "force", "force_direction", "pivot",
                              "arm_torque", "adjust", "orders", "at", "diameter", "rating", "drag_torque", "role"])
            sp["pulley"][pid][key] = v
            case.tag(f"hostile-spec:pulley.{key}={v!r}")
        elif w < 0.7:
            key = rng.choice(["install_tension", "mass_per_length", "bending_stiffness", "friction", "strands",
                              "length", "section", "axial_stiffness", "stock_lengths", "width", "height"])
            sp.setdefault("belt", {})[key] = rng.choice(BAD_SECTIONS) if key == "section" else v
            case.tag(f"hostile-spec:belt.{key}={sp['belt'][key]!r}")
        elif w < 0.8:
            key = rng.choice(["units", "gravity", "service_factor", "modes", "span_ends", "clearance",
                              "grip_margin", "sag_limit", "keep_out_layers"])
            sp[key] = v
            case.tag(f"hostile-spec:{key}={v!r}")
        elif w < 0.9:
            sp.setdefault("pulley", {})[rng.choice(["GHOST", "P9", "p1"])] = {"role": "driver", "speed": "100 rpm"}
            case.tag("hostile-spec:unknown-pulley")
        else:
            sp.setdefault("pulley", {})
            for pid in list(sp["pulley"])[:2]:
                sp["pulley"][pid].update({"role": rng.choice(["driver", "tensioner"]), "speed": "1000 rpm",
                                          "force": "100 N"})
            case.tag("hostile-spec:two-drivers-or-tensioners")


# --------------------------------------------------------------------------- case kinds


def build_valid(case: Case, *, hostile: bool = False) -> None:
    rng = case.rng
    doc, ver = _new_doc(case)
    msp = doc.modelspace()
    size = rng.choice([50.0, 100.0, 200.0, 400.0, 1000.0])
    kind = rng.choices(["ring", "crossed", "two-stage", "route"], [0.7, 0.1, 0.12, 0.08])[0]
    case.tag(f"drive:{kind}")
    loops: list[tuple[list, list, list, str]] = []
    if kind == "crossed":
        C = size * rng.uniform(2, 6)
        r1, r2 = size * rng.uniform(0.2, 0.9), size * rng.uniform(0.2, 0.9)
        a = rng.uniform(0, 2 * math.pi)
        cs = [(0.0, 0.0), (C * math.cos(a), C * math.sin(a))]
        loops.append((cs, [r1, r2], [1, -1], "BELT"))
    else:
        n = rng.randint(2, 5)
        nback = rng.randint(0, max(0, n - 2)) if rng.random() < 0.5 else 0
        for _ in range(20):
            cs, rs = convex_drive(rng, n - nback, size)
            cs, rs, turns = add_back_idlers(rng, cs, rs, nback)
            if geometry_ok(cs, rs, turns):
                break
        else:
            cs, rs, turns = [(0.0, 0.0), (size * 4, 0.0)], [size, size / 2], [1, 1]
            case.tag("fallback-two-pulley")
        if sum(t < 0 for t in turns):
            case.tag(f"back-idlers-{sum(t < 0 for t in turns)}")
        if rng.random() < 0.4:          # clockwise travel
            cs, rs, turns = cs[::-1], rs[::-1], [-t for t in turns[::-1]]
            case.tag("clockwise")
        layer = rng.choice(["BELT", "BELT", "STAGE1", "0", "Belt-Main", "L2"])
        loops.append((cs, rs, turns, layer))
        if kind == "two-stage":
            # a second loop from a concentric pulley on the last shaft
            c0 = cs[-1]
            r0 = rs[-1] * rng.uniform(0.3, 0.8)
            a = rng.uniform(0, 2 * math.pi)
            d = size * rng.uniform(3, 6) + rs[-1]
            c1 = (c0[0] + d * math.cos(a), c0[1] + d * math.sin(a))
            loops.append(([c0, c1], [r0, size * rng.uniform(0.3, 1.0)], [1, 1], "STAGE2"))
    form = rng.choice(["polyline", "polyline2d", "lines", "spans", "shuffled"])
    case.tag(f"form:{form}")
    # collect circles (unique by centre and radius), ids and roles
    circles: list[tuple[tuple[float, float], float]] = []
    turn_of: list[int] = []
    for cs, rs, turns, _ in loops:
        for c, r, t in zip(cs, rs, turns):
            if not any(math.dist(c, o) < 1e-9 and abs(r - orr) < 1e-9 for o, orr in circles):
                circles.append((c, r))
                turn_of.append(t)
    labelled = rng.random() < 0.5
    pool = rng.sample(NAMES, len(circles))
    ids = pool if labelled else [f"P{k + 1}" for k in range(len(circles))]
    roles = ["driver"] + ["idler" if t < 0 else "driven" for t in turn_of[1:]]
    if any(r == "idler" for r in roles) and rng.random() < 0.5:
        k = rng.choice([k for k, r in enumerate(roles) if r == "idler"])
        roles[k] = "tensioner"
    elif rng.random() < 0.15 and len(roles) > 2:
        roles[-1] = "tensioner"
    if labelled:
        case.tag("labels")
    # entities
    ents: list[tuple] = []
    loop_ids = []
    for cs, rs, turns, layer in loops:
        if kind == "route":
            break
        ents += _pieces_entities(case, cs, rs, turns, form, layer)
        loop_ids.append(layer)
    if kind == "two-stage" and len(loops) == 2 and ents:
        pass
    pulleys: list[tuple] = []
    for (c, r) in circles:
        if case.chance(0.03):
            pulleys.append(("ellipse", c, (0.0, r), 1.0, "PULLEYS"))
            case.tag("pulley-as-ellipse")
        elif case.chance(0.03):
            pulleys.append(("polyline", [(c[0] - r, c[1], 1.0), (c[0] + r, c[1], 1.0)], True, "PULLEYS"))
            case.tag("pulley-as-polyline")
        else:
            pulleys.append(("circle", c, r, "PULLEYS", case.chance(0.05)))
    if case.chance(0.1):
        k = rng.randrange(len(pulleys))
        pulleys.append(pulleys[k])
        case.tag("duplicate-circle")
    if case.chance(0.1) and ents:
        k = rng.randrange(len(ents))
        ents.append(ents[k])
        case.tag("duplicate-belt-entity")
    label_vals: list[dict[str, str]] = [{} for _ in circles]
    if labelled and rng.random() < 0.4:
        label_vals[0] = {"role": "driver", "speed": f"{rng.randint(100, 3000)}rpm"}
        case.tag("label-keys")
    labels = _labels(case, [c for c, _ in circles], [r for _, r in circles], ids, label_vals)
    if case.chance(0.1 if not hostile else 0.5):
        c, r = rng.choice(circles)
        labels.append(("text", rng.choice(ODD_LABELS), (c[0] + r * 0.1, c[1] - r * 0.1),
                       rng.choice(["text", "mtext"]), r * 0.1))
        case.tag(f"odd-label:{labels[-1][1][:40]!r}")
    _drive_layout(case, doc, msp, ents, pulleys, labels)
    _extras(case, doc, msp, [c for c, _ in circles], [r for _, r in circles], size)
    if hostile:
        _hostile_drawing(case, doc, msp, circles, size)
    length_mm = None
    try:
        from physics.geometry import loop_geometry
        import numpy as np
        cs, rs, turns, _ = loops[0]
        length_mm = float(loop_geometry(np.asarray(cs, float), np.asarray(rs, float),
                                        np.asarray(turns, float)).length_m)
    except Exception:
        pass
    spec_ids = ids if rng.random() < 0.9 else [None] * len(ids)
    if rng.random() < 0.85 or kind == "route":
        case.spec = _spec_for(case, spec_ids, roles, loop_ids, length_mm, hostile)
        if kind == "route":
            cs, rs, turns, _ = loops[0]
            order = [ids[[k for k, (c, r) in enumerate(circles) if math.dist(c, cc) < 1e-9 and abs(r - rr) < 1e-9][0]]
                     for cc, rr in zip(cs, rs)]
            route: dict[str, Any] = {"pulleys": order}
            back = [pid for pid, t in zip(order, turns) if t < 0]
            if back:
                route["back"] = back
            if rng.random() < 0.2:
                route["crossed"] = [f"{order[0]}-{order[1]}"]
                case.tag("route-crossed")
            if rng.random() < 0.1:
                route["pulleys"] = order + [order[0]]
                case.tag("route-repeats-pulley")
            case.spec["route"] = {rng.choice(["L1", "MAIN", "BELT"]): route}
            if not labelled:
                # auto ids are given to wrapped circles only: place the pulleys by `at`
                for pid, (c, _r) in zip(ids, circles):
                    case.spec.setdefault("pulley", {}).setdefault(pid, {})["at"] = [c[0], c[1]]
    _save(case, doc)


def _hostile_drawing(case: Case, doc, msp, circles, size) -> None:
    rng = case.rng
    picks = rng.sample(["zero-circle", "neg-circle", "huge-circle", "coincident", "zero-line", "zero-arc",
                        "nan", "huge-coords", "tiny", "missing-block", "self-block", "zero-scale-insert",
                        "nan-bulge", "single-vertex-poly", "huge-bulge", "tiny-circle-on-path",
                        "extrusion-x", "many-labels", "truncate"], rng.randint(1, 3))
    (c0, r0) = circles[0]
    for p in picks:
        case.tag(f"hostile:{p}")
        if p == "zero-circle":
            msp.add_circle(c0, 0.0, dxfattribs={"layer": "PULLEYS"})
        elif p == "neg-circle":
            e = msp.add_circle((c0[0] + r0 * 3, c0[1]), 10.0, dxfattribs={"layer": "PULLEYS"})
            e.dxf.radius = -abs(r0)
        elif p == "huge-circle":
            msp.add_circle(c0, rng.choice([1e9, 1e15, 1e300]), dxfattribs={"layer": "PULLEYS"})
        elif p == "coincident":
            c1, r1 = circles[-1]
            msp.add_circle(c1, r1 * (1 + rng.choice([0, 1e-12, 1e-7, 1e-3])), dxfattribs={"layer": "OTHER"})
            msp.add_circle(c0, r0 * 0.999999, dxfattribs={"layer": "PULLEYS"})
        elif p == "zero-line":
            pt = (c0[0] + r0, c0[1])
            msp.add_line(pt, pt, dxfattribs={"layer": "BELT"})
            msp.add_line((c0[0], c0[1] + r0), (c0[0], c0[1] + r0), dxfattribs={"layer": "BELT"})
        elif p == "zero-arc":
            msp.add_arc(c0, r0, 30, 30, dxfattribs={"layer": "BELT"})
            msp.add_arc(c0, 0.0, 0, 90, dxfattribs={"layer": "BELT"})
        elif p == "nan":
            case.post.append(("nan", rng.choice(["nan", "inf", "-inf", "1e309", "NaN", "1e-320"]), rng.random()))
        elif p == "huge-coords":
            case.post.append(("offset", rng.choice([1e9, 1e12, -1e9, 1e16])))
        elif p == "tiny":
            case.post.append(("scale", rng.choice([1e-6, 1e-9, 1e-12])))
        elif p == "missing-block":
            blk = doc.blocks.new("GONE")
            blk.add_circle((0, 0), r0)
            msp.add_blockref("GONE", c0)
            doc.blocks.delete_block("GONE", safe=False)
        elif p == "self-block":
            blk = doc.blocks.new("LOOPY")
            blk.add_circle((0, 0), r0 * 0.5)
            blk.add_blockref("LOOPY", (r0, 0))
            msp.add_blockref("LOOPY", c0)
        elif p == "zero-scale-insert":
            blk = doc.blocks.new("FLAT0")
            blk.add_circle((0, 0), r0)
            blk.add_line((0, 0), (r0, r0))
            msp.add_blockref("FLAT0", c0, dxfattribs={"xscale": 0.0, "yscale": rng.choice([0.0, 1.0])})
        elif p == "nan-bulge":
            add_poly(msp, [(0, 0, float("nan")), (size, 0, 1.0)], True, "BELT")
        elif p == "single-vertex-poly":
            add_poly(msp, [(c0[0], c0[1])], True, "BELT", "xy")
            add_poly(msp, [c0, c0], True, "BELT", "xy")
        elif p == "huge-bulge":
            add_poly(msp, [(c0[0] - r0, c0[1], 1e12), (c0[0] + r0, c0[1], -1e-12)], True, "BELT")
        elif p == "tiny-circle-on-path":
            msp.add_circle((c0[0] + r0, c0[1]), 1e-9, dxfattribs={"layer": "PULLEYS"})
        elif p == "extrusion-x":
            e = msp.add_circle((0, 0, 5), r0, dxfattribs={"layer": "PULLEYS"})
            e.dxf.extrusion = (1, 0, 0)
            e2 = msp.add_arc((0, 0, 0), r0, 0, 90, dxfattribs={"layer": "BELT"})
            e2.dxf.extrusion = (0, 0.6, 0.8)
        elif p == "many-labels":
            for _ in range(5):
                msp.add_text(rng.choice(ODD_LABELS), height=1.0,
                             dxfattribs={"insert": (c0[0] + rng.uniform(-.5, .5) * r0, c0[1]), "layer": "LABELS"})
        elif p == "truncate":
            case.post.append(("truncate", rng.random()))


def build_empty(case: Case) -> None:
    doc, _ = _new_doc(case)
    msp = doc.modelspace()
    w = case.rng.random()
    if w < 0.4:
        case.tag("empty-modelspace")
    elif w < 0.7:
        msp.add_circle((0, 0), 50)
        msp.add_circle((300, 0), 50)
        case.tag("circles-only-no-belt")
    else:
        msp.add_line((0, 0), (100, 0), dxfattribs={"layer": "BELT"})
        msp.add_arc((0, 0), 10, 0, 180, dxfattribs={"layer": "BELT"})
        case.tag("belt-without-pulleys")
    if case.rng.random() < 0.5:
        case.spec = _spec_for(case, ["P1", "P2"], ["driver", "driven"], [], None, hostile=False)
    _save(case, doc)


def build_slot(case: Case) -> None:
    """Two small equal circles joined by tangent lines: a slot drawn like a belt."""
    import ezdxf
    from layout.draw import add_belt_path
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    r = case.rng.choice([2.0, 4.0, 5.0, 30.0])
    L = case.rng.uniform(5, 80)
    msp.add_circle((0, 0), r)
    msp.add_circle((L, 0), r)
    add_belt_path(msp, [(0, 0), (L, 0)], [r, r], [1, 1], form=case.rng.choice(["spans", "lines", "polyline"]),
                  layer=case.rng.choice(["0", "BELT"]))
    case.tag(f"slot-like r={r} L={L:.3g}")
    _save(case, doc)


def build_bytes(case: Case, folder: Path) -> None:
    rng = case.rng
    w = rng.choice(["random", "empty", "whitespace", "dwg", "dxf-prefix", "binary-trunc", "utf16",
                    "text-trunc", "header-only", "no-eof", "garbled-lines", "pdf"])
    case.tag(f"bytes:{w}")
    data: bytes
    if w == "random":
        data = rng.randbytes(rng.randint(1, 5000))
    elif w == "empty":
        data = b""
    elif w == "whitespace":
        data = b"  \n\r\n\t "
    elif w == "dwg":
        data = b"AC1032" + rng.randbytes(200)
    elif w == "pdf":
        data = b"%PDF-1.7\n" + rng.randbytes(100)
    elif w == "dxf-prefix":
        data = b"  0\nSECTION\n  2\nENTITIES\n" + rng.randbytes(rng.randint(0, 2000))
    elif w == "header-only":
        data = b"  0\nSECTION\n  2\nHEADER\n  9\n$INSUNITS\n 70\n4\n  0\nENDSEC\n  0\nEOF\n"
    else:
        import ezdxf
        from layout.draw import add_belt_path
        doc = ezdxf.new("R2010")
        msp = doc.modelspace()
        msp.add_circle((0, 0), 100)
        msp.add_circle((500, 0), 50)
        add_belt_path(msp, [(0, 0), (500, 0)], [100, 50], [1, 1], form=rng.choice(["polyline", "lines", "spans"]))
        tmp = folder / f"seed_{case.seed}.tmp.dxf"
        if w == "binary-trunc":
            doc.saveas(tmp, fmt="bin")
        else:
            doc.saveas(tmp)
        full = tmp.read_bytes()
        tmp.unlink()
        if w == "binary-trunc":
            data = full[:rng.randint(22, len(full) - 1)]
        elif w == "utf16":
            data = full.decode("latin-1").encode("utf-16")
        elif w == "text-trunc":
            data = full[:rng.randint(1, len(full) - 1)]
        elif w == "no-eof":
            data = full[:full.rfind(b"EOF")]
        else:   # garbled-lines: flip a few lines to junk
            lines = full.split(b"\n")
            for _ in range(rng.randint(1, 10)):
                k = rng.randrange(len(lines))
                lines[k] = rng.choice([b"", b"xyz", b"999999999999999999999", b"-", b"1e", b"\x00\xff", b"nan"])
            data = b"\n".join(lines)
    case.dxf.write_bytes(data)
    if rng.random() < 0.3:
        case.spec = {"units": "mm", "belt": {"section": "SPA"}}


def _save(case: Case, doc) -> None:
    doc.saveas(case.dxf)
    if not case.post:
        return
    rng = case.rng
    text = case.dxf.read_bytes().decode("utf-8", "surrogateescape")
    lines = text.split("\n")
    start = next((k for k, ln in enumerate(lines) if ln.strip() == "ENTITIES"), 0)
    coord_codes = {"10", "20", "11", "21", "40"}
    for edit in case.post:
        if edit[0] == "nan":
            cands = [k for k in range(start, len(lines) - 1, 1) if lines[k].strip() in coord_codes
                     and re.fullmatch(r"\s*-?[\d.eE+-]+\s*", lines[k + 1] or "")]
            if cands:
                k = cands[int(edit[2] * len(cands))]
                lines[k + 1] = edit[1]
        elif edit[0] in ("offset", "scale"):
            for k in range(len(lines) - 1):
                code = lines[k].strip()
                if code in ("10", "20", "11", "21", "40") and k >= start:
                    try:
                        v = float(lines[k + 1])
                    except ValueError:
                        continue
                    if edit[0] == "offset" and code in ("10", "20", "11", "21"):
                        lines[k + 1] = repr(v + edit[1])
                    elif edit[0] == "scale":
                        lines[k + 1] = repr(v * edit[1])
    data = "\n".join(lines).encode("utf-8", "surrogateescape")
    for edit in case.post:
        if edit[0] == "truncate":
            data = data[:max(1, int(len(data) * edit[1]))]
    case.dxf.write_bytes(data)
    del rng


def generate(seed: int, folder: Path, case: Case | None = None) -> Case:
    case = case or Case(seed, folder)
    w = case.rng.random()
    if w < 0.62:
        case.tag("valid")
        build_valid(case)
    elif w < 0.85:
        case.tag("hostile")
        build_valid(case, hostile=True)
    elif w < 0.90:
        build_empty(case)
    elif w < 0.93:
        build_slot(case)
    else:
        build_bytes(case, folder)
    if case.spec is not None:
        case.spec_text = to_toml(case.spec)
        if case.rng.random() < 0.03:
            case.spec_text = case.spec_text[: case.rng.randint(0, len(case.spec_text))]
            case.tag("spec-truncated")
        case.spec_path.write_text(case.spec_text, encoding="utf-8")
    elif case.spec_path.exists():
        case.spec_path.unlink()
    return case


# --------------------------------------------------------------------------- running one case


def _innermost(tb: traceback.StackSummary) -> tuple[str, str]:
    proj = [f for f in tb if f.filename.startswith(PROJECT_DIRS)]
    p = f"{os.path.relpath(proj[-1].filename, ROOT)}:{proj[-1].lineno} in {proj[-1].name}" if proj else "-"
    last = tb[-1] if len(tb) else None
    inner = f"{last.filename}:{last.lineno} in {last.name}" if last else "-"
    return p, inner


def _alarm(signum, frame):
    raise CaseTimeout("case timed out")


def run_case(seed: int, folder: str, timeout: float) -> dict[str, Any]:
    """Generate and check one case; never raises."""
    import warnings
    warnings.simplefilter("ignore")
    import logging
    logging.disable(logging.CRITICAL)
    from layout.errors import FatalInput
    folder_p = Path(folder)
    res: dict[str, Any] = {"seed": seed, "dxf": str(folder_p / f"seed_{seed}.dxf")}
    t0 = time.perf_counter()
    case = Case(seed, folder_p)
    try:
        generate(seed, folder_p, case)
    except Exception as err:
        tb = traceback.extract_tb(err.__traceback__)
        res.update(outcome="generator-error", type=type(err).__name__, message=str(err)[:300],
                   frame=_innermost(tb)[0], inner=_innermost(tb)[1], tags=case.tags)
        (folder_p / f"seed_{seed}.traceback.txt").write_text(traceback.format_exc())
        return res
    res["tags"] = case.tags
    res["spec"] = str(case.spec_path) if case.spec_text is not None else None
    (folder_p / f"seed_{seed}.case.json").write_text(json.dumps({"seed": seed, "tags": case.tags}, indent=1))
    signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, timeout)
    try:
        from layout.pipeline import VERSION, check_drawing
        from layout.console import summary_text
        from layout.report import dumps, report_dict
        stage = "check_drawing"
        checked = check_drawing(case.dxf)
        stage = "report"
        rep = report_dict(checked.model, checked.results, checked.findings, version=VERSION)
        text = dumps(rep)
        summary_text(checked)
        signal.setitimer(signal.ITIMER_REAL, 0)
        res["outcome"] = "ok"
        res["codes"] = sorted({f.code for f in checked.findings})
        bad = _non_standard_numbers(text)
        if bad:
            res["anomaly"] = f"report JSON holds {sorted(set(bad))}"
        if (folder_p / f"seed_{seed}.traceback.txt").exists():
            (folder_p / f"seed_{seed}.traceback.txt").unlink()
    except FatalInput as err:
        signal.setitimer(signal.ITIMER_REAL, 0)
        res["outcome"] = "fatal"
        res["problems"] = [p[:200] for p in err.problems][:5]
    except CaseTimeout:
        res.update(outcome="timeout", type="Timeout", message=f"no answer in {timeout:g} s",
                   frame="-", inner="-")
    except BaseException as err:  # noqa: BLE001 - a crash is what we are looking for
        signal.setitimer(signal.ITIMER_REAL, 0)
        tb = traceback.extract_tb(err.__traceback__)
        proj, inner = _innermost(tb)
        res.update(outcome="crash", stage=stage, type=type(err).__name__, message=str(err)[:300],
                   frame=proj, inner=inner)
        (folder_p / f"seed_{seed}.traceback.txt").write_text(
            f"seed {seed}\ntags {case.tags}\n\n" + traceback.format_exc())
        if isinstance(err, (KeyboardInterrupt, SystemExit)):
            raise
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
    res["seconds"] = round(time.perf_counter() - t0, 3)
    return res


def run_cli(seed: int, folder: Path, outdir: Path, timeout: float) -> dict[str, Any]:
    dxf = folder / f"seed_{seed}.dxf"
    out = outdir / f"seed_{seed}.json"
    if out.exists():
        out.unlink()
    try:
        p = subprocess.run([SPANWISE, "check", str(dxf), "--json", str(out)], capture_output=True, text=True,
                           timeout=timeout, errors="replace")
    except subprocess.TimeoutExpired:
        return {"seed": seed, "problem": f"timed out after {timeout:g} s"}
    problems = []
    if "Traceback" in p.stdout or "Traceback" in p.stderr:
        problems.append("Traceback in output: " + (p.stderr.strip().splitlines() or ["?"])[-1][:200])
    if "internal error" in p.stderr:
        problems.append("internal error (a crash caught by the CLI): " + p.stderr.strip()[:200])
    if p.returncode not in (0, 1, 2):
        problems.append(f"exit status {p.returncode}")
    if p.returncode == 2:
        lines = [ln for ln in p.stderr.splitlines() if ln.strip()]
        if not lines or any(not ln.startswith("spanwise: ") for ln in lines):
            problems.append(f"status 2 but stderr not one 'spanwise:' line per problem: {p.stderr[:200]!r}")
    if p.returncode in (0, 1):
        if not out.is_file():
            problems.append("status 0/1 but no JSON report written")
        else:
            try:
                json.loads(out.read_text(), parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c)))
            except ValueError as err:
                problems.append(f"JSON report not standard JSON ({err})")
        if p.stderr.strip():
            problems.append(f"status {p.returncode} with stderr {p.stderr.strip()[:120]!r}")
    return {"seed": seed, "rc": p.returncode, "problem": "; ".join(problems) or None}


# --------------------------------------------------------------------------- main


def _norm(msg: str) -> str:
    return re.sub(r"[-+]?\d[\d.eE+-]*", "#", msg)[:120]


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--count", type=int, default=200)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--out", default="/tmp/fuzz")
    ap.add_argument("--jobs", type=int, default=min(2, os.cpu_count() or 1))
    ap.add_argument("--cli", type=int, default=20, help="cases also run through the command line")
    ap.add_argument("--timeout", type=float, default=60.0, help="seconds per case")
    ap.add_argument("--only", type=int, nargs="*", help="run just these seeds here and print tracebacks")
    args = ap.parse_args(argv)
    out = Path(args.out)
    folder = out / "cases"
    folder.mkdir(parents=True, exist_ok=True)
    (out / "cli").mkdir(exist_ok=True)

    if args.only:
        for s in args.only:
            r = run_case(s, str(folder), args.timeout)
            print(json.dumps(r, indent=1))
            tbf = folder / f"seed_{s}.traceback.txt"
            if r.get("outcome") in ("crash", "generator-error") and tbf.exists():
                print(tbf.read_text())
        return 0

    t0 = time.perf_counter()
    seeds = [args.seed + k for k in range(args.count)]
    results: list[dict[str, Any]] = []
    import multiprocessing as mp
    ctx = mp.get_context("fork" if sys.platform != "win32" else "spawn")
    with cf.ProcessPoolExecutor(max_workers=args.jobs, mp_context=ctx) as ex:
        futs = {ex.submit(run_case, s, str(folder), args.timeout): s for s in seeds}
        for k, f in enumerate(cf.as_completed(futs), 1):
            s = futs[f]
            try:
                r = f.result()
            except Exception as err:  # the worker died (segfault, memory)
                r = {"seed": s, "outcome": "worker-died", "type": type(err).__name__, "message": str(err)[:200],
                     "frame": "-", "inner": "-", "dxf": str(folder / f"seed_{s}.dxf"), "tags": []}
            results.append(r)
            if r["outcome"] not in ("ok", "fatal"):
                print(f"[{k}/{len(seeds)}] seed {s}: {r['outcome']} {r.get('type')}: {r.get('message', '')[:100]}",
                      flush=True)
    t_lib = time.perf_counter() - t0
    results.sort(key=lambda r: r["seed"])

    # command line on a sample
    rng = random.Random(args.seed)
    by_outcome = defaultdict(list)
    for r in results:
        by_outcome[r["outcome"]].append(r["seed"])
    sample: list[int] = []
    for o in ("crash", "fatal", "ok", "timeout"):           # some of each, crashes first
        pool = [s for s in by_outcome.get(o, []) if s not in sample]
        rng.shuffle(pool)
        sample += pool[: max(1, args.cli // 4)]
    rest = [r["seed"] for r in results if r["seed"] not in sample]
    rng.shuffle(rest)
    sample = (sample + rest)[: args.cli]
    cli: list[dict[str, Any]] = []
    with cf.ThreadPoolExecutor(max_workers=args.jobs) as tx:
        for c in tx.map(lambda s: run_cli(s, folder, out / "cli", max(args.timeout, 60.0)), sample):
            cli.append(c)
    t_all = time.perf_counter() - t0

    # summary
    counts = defaultdict(int)
    for r in results:
        counts[r["outcome"]] += 1
    groups: dict[tuple, list[dict[str, Any]]] = defaultdict(list)
    for r in results:
        if r["outcome"] in ("crash", "timeout", "worker-died", "generator-error"):
            groups[(r["outcome"], r.get("type"), r.get("frame"), _norm(r.get("message", "")))].append(r)
    summary = {"count": len(results), "seconds_library": round(t_lib, 1), "seconds_total": round(t_all, 1),
               "outcomes": dict(counts), "crashes": [], "anomalies": [], "cli": cli}
    print(f"\n{len(results)} cases in {t_lib:.1f} s (+ {len(cli)} command-line runs: {t_all:.1f} s in all); "
          f"outcomes {dict(counts)}")
    for key, rs in sorted(groups.items(), key=lambda kv: -len(kv[1])):
        rs.sort(key=lambda r: (len(r.get("tags", [])), r["seed"]))
        common = set(rs[0].get("tags", []))
        for r in rs[1:]:
            common &= set(r.get("tags", []))
        entry = {"outcome": key[0], "type": key[1], "frame": key[2], "message": rs[0].get("message"),
                 "inner": rs[0].get("inner"), "cases": len(rs), "seeds": [r["seed"] for r in rs],
                 "reproducer": rs[0]["dxf"], "spec": rs[0].get("spec"), "smallest_tags": rs[0].get("tags"),
                 "common_tags": sorted(common)}
        summary["crashes"].append(entry)
        print(f"\n{key[0].upper()} x{len(rs)}: {key[1]}: {rs[0].get('message', '')[:160]}")
        print(f"  at {key[2]}  (innermost: {rs[0].get('inner')})")
        print(f"  reproducer {rs[0]['dxf']}  (seed {rs[0]['seed']}; also {[r['seed'] for r in rs[1:6]]})")
        print(f"  smallest case: {rs[0].get('tags')}")
        if len(rs) > 1:
            print(f"  common to all: {sorted(common)}")
    for r in results:
        if r.get("anomaly"):
            summary["anomalies"].append({"seed": r["seed"], "dxf": r["dxf"], "anomaly": r["anomaly"]})
    if summary["anomalies"]:
        print(f"\nANOMALIES ({len(summary['anomalies'])}): " +
              "; ".join(f"seed {a['seed']}: {a['anomaly']}" for a in summary["anomalies"][:10]))
    bad_cli = [c for c in cli if c.get("problem")]
    print(f"\ncommand line: {len(cli)} runs, exit codes {sorted({c.get('rc') for c in cli}, key=str)}, "
          f"{len(bad_cli)} problems")
    for c in bad_cli:
        print(f"  seed {c['seed']} (rc {c.get('rc')}): {c['problem']}")
    (out / "summary.json").write_text(json.dumps(summary, indent=1, default=str))
    print(f"\nsummary: {out / 'summary.json'}")
    return 1 if groups or bad_cli or summary["anomalies"] else 0


if __name__ == "__main__":
    sys.exit(main())
