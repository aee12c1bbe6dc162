"""Read a DXF file into flat drawing primitives, in drawing units.

The reader refuses what is not a DXF by its first bytes (a DWG, a PDF, random bytes),
reads the header's version and units from the raw file (ezdxf upgrades old versions
on load and reports metres for a drawing without header). Unless the document is to be
kept (for writing back), a well-formed text DXF is read from its tags alone
(:mod:`layout.stream`, ``Drawing.streamed``), with the same result. Otherwise it tries ezdxf's normal reader
first and its recovery reader second; a text DXF both reject, or whose entities the
recovery reader loses (measured against a walk of the raw tags), is rebuilt from its raw
tags by :mod:`layout.rawread` (``Drawing.rebuilt``). It then flattens model space: block
references are expanded with their transforms (nested, rotated, mirrored, scaled), each
entity's object coordinate system is resolved, and every curve that can be part of a belt
path becomes a *segment* ``(p0, p1, centre, radius, sweep)`` (``sweep`` = 0 for a straight
piece, signed radians counter-clockwise for an arc).

Entities that cannot take part (dimensions, hatches, splines, 3D solids) are skipped.

Hostile input is bounded: block nesting (:data:`MAX_BLOCK_DEPTH`), MINSERT cells
(:data:`MAX_MINSERT_CELLS`) and the entities expansion produces (:data:`MAX_EXPANDED_ENTITIES`,
more in proportion to a larger model space) are checked before the work, a drawing past one
refused with one line naming it; coordinates beyond :data:`MAX_COORDINATE` are skipped like
non-finite ones (``bad-coordinates``); texts over :data:`MAX_TEXT_CHARS` are not decoded; a
file cut off before any entity is refused as truncated.
"""

from __future__ import annotations

import gc
import hashlib
import logging
import math
import re
from collections import defaultdict
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np
from numpy.typing import NDArray

from physics.findings import Finding, Severity

from ._own import is_own_name
from .errors import FatalInput, NotADrawing
from .rawread import MAX_NESTING

__all__ = ["Drawing", "Circles", "fmt_point", "Segments", "Texts", "AttribSet", "read_drawing", "read_document",
           "INSUNITS_NAMES", "UNIFORM_SCALE_TOL", "CIRCLE_RATIO_TOL", "MAX_BLOCK_DEPTH",
           "MAX_EXPANDED_ENTITIES", "EXPANSION_PER_ENTITY", "MAX_MINSERT_CELLS", "MAX_COORDINATE", "MAX_TEXT_CHARS"]

log = logging.getLogger(__name__)

#: Relative tolerance on the two scale factors of a block reference for it to keep circles round.
UNIFORM_SCALE_TOL = 1e-9
#: An ellipse with axis ratio within this of 1 is a circle.
CIRCLE_RATIO_TOL = 1e-6
#: A closed polyline of arcs is a circle when its arcs share centre and radius within this (relative).
POLY_CIRCLE_TOL = 1e-6

# Limits on the work block references can ask for: beyond one, the drawing is refused with one
# line naming the limit (never expanded in part, which would give findings about a drawing
# that is not the one drawn). A few bytes of DXF can otherwise ask for any amount of work.
#: Deepest nesting of block references expanded (model space is level 0; the raw-tag reader's
#: :data:`layout.rawread.MAX_NESTING`).
MAX_BLOCK_DEPTH = MAX_NESTING
#: Most entities produced by expanding block references, over the whole drawing (every
#: placement of every entity of a block counts, nested ones included), or
#: :data:`EXPANSION_PER_ENTITY` per entity and reference model space holds itself when that
#: is more: the work stays in proportion to the file, so a large drawing full of small parts
#: is read while a few kilobytes asking for millions of entities are refused.
MAX_EXPANDED_ENTITIES = 500_000
#: Entities block expansion may produce per entity or reference of model space (above the floor).
EXPANSION_PER_ENTITY = 4
#: Most cells (rows x columns) of one MINSERT array.
MAX_MINSERT_CELLS = 100_000

#: Largest coordinate magnitude read, drawing units: float64 keeps steps under 1e-4 units up to
#: here (2**-13 at 1e12), finer than every tolerance; a circle, an end point or a text anchor
#: beyond it is skipped with the ``bad-coordinates`` warning, as one that is not finite is (near
#: 1e15 two distinct points 0.1 apart compare equal, and entities were said to repeat themselves).
MAX_COORDINATE = 1e12

#: Longest TEXT/MTEXT content (raw, formatting codes included) decoded to plain text. Texts
#: matter only as pulley labels (at most :data:`layout.naming.MAX_LABEL_CHARS` characters); a
#: longer one is kept as its first ``MAX_TEXT_CHARS + 1`` raw characters, undecoded (ezdxf's
#: MTEXT decoding takes time quadratic in the length: about two minutes for 2 MB).
MAX_TEXT_CHARS = 1000

#: $INSUNITS codes spanwise understands, by name.
INSUNITS_NAMES: dict[int, str] = {1: "in", 2: "ft", 4: "mm", 5: "cm", 6: "m", 7: "km",
                                  10: "yd", 13: "um", 14: "dm"}

_DWG = re.compile(rb"^AC\d\.?\d")
_BINARY_DXF = b"AutoCAD Binary DXF"
_HEADER_UNITS = re.compile(rb"\$INSUNITS\s*\r?\n\s*70\s*\r?\n\s*(-?\d+)")
_HEADER_VERSION = re.compile(rb"\$ACADVER\s*\r?\n\s*1\s*\r?\n\s*([^\r\n]+)")
# Line-anchored, whitespace within a line only: linear in the file, whatever it holds (a lazy
# ".*?" between multi-line "\s*" runs backtracks cubically on a HEADER without its ENDSEC).
_HEADER_START = re.compile(rb"(?m)^[ \t]*2[ \t]*\r?\n[ \t]*HEADER[ \t]*\r?$")
_SECTION_END = re.compile(rb"(?m)^[ \t]*ENDSEC[ \t]*\r?$")
#: The raw header is looked for in the file's first bytes only.
HEADER_WINDOW = 2_000_000


@dataclass(frozen=True, slots=True)
class Circles:
    """Full circles (candidate pulleys), drawing units. Arrays of shape ``(n,)``."""

    x: NDArray[np.float64]
    y: NDArray[np.float64]
    r: NDArray[np.float64]
    layer: list[str]
    handle: list[str]          # the entity's handle; inside a block "INSERT/ENTITY"
    owner: list[str]           # handle of the top-level block reference, or ""
    order: NDArray[np.int64] = field(default_factory=lambda: np.zeros(0, np.int64))
    """Drawing order: position in model space of the entity (or of its block reference)."""

    def __len__(self) -> int:
        return int(self.x.shape[0])

    def center(self, i: int) -> tuple[float, float]:
        """Circle ``i``'s centre, drawing units."""
        return (float(self.x[i]), float(self.y[i]))


def fmt_point(p: Any) -> str:
    """A point in drawing units as messages write it: ``(x, y)`` to six significant digits."""
    return f"({p[0]:.6g}, {p[1]:.6g})"


@dataclass(frozen=True, slots=True)
class Segments:
    """Straight and circular pieces of curves, drawing units. Arrays of shape ``(n,)``.

    A piece runs from ``(x0, y0)`` to ``(x1, y1)``; arcs have centre ``(cx, cy)``,
    radius ``r`` and a signed ``sweep`` (radians, counter-clockwise positive); lines
    have ``sweep == 0``. Pieces of one polyline share ``group`` (``-1`` for single
    entities) and are joined exactly at their vertices.
    """

    x0: NDArray[np.float64]
    y0: NDArray[np.float64]
    x1: NDArray[np.float64]
    y1: NDArray[np.float64]
    cx: NDArray[np.float64]
    cy: NDArray[np.float64]
    r: NDArray[np.float64]
    sweep: NDArray[np.float64]
    group: NDArray[np.int64]
    layer: list[str]
    handle: list[str]
    kind: list[str]
    order: NDArray[np.int64] = field(default_factory=lambda: np.zeros(0, np.int64))
    """Drawing order: position in model space of the entity (or of its block reference)."""

    def __len__(self) -> int:
        return int(self.x0.shape[0])


@dataclass(frozen=True, slots=True)
class Texts:
    """TEXT and MTEXT contents with their anchor points, drawing units."""

    x: NDArray[np.float64]
    y: NDArray[np.float64]
    text: list[str]
    layer: list[str]
    handle: list[str]

    def __len__(self) -> int:
        return int(self.x.shape[0])


@dataclass(frozen=True, slots=True)
class AttribSet:
    """The attributes of one top-level block reference."""

    handle: str
    x: float
    y: float
    tags: dict[str, str]
    block: str


@dataclass(frozen=True, slots=True)
class Drawing:
    """Everything spanwise uses from one DXF file."""

    path: str
    sha256: str
    version: str
    units: str | None          # from the raw header; None when none is declared
    recovered: bool
    circles: Circles
    segments: Segments
    texts: Texts
    attribs: list[AttribSet]
    findings: list[Finding] = field(default_factory=list)
    entity_count: int = 0
    own_count: int = 0
    """Entities on spanwise's own layers or of its own blocks: skipped, never drawing content."""
    rebuilt: bool = False
    """Read from the raw DXF tags into a new document (:mod:`layout.rawread`): ``document`` then
    holds spanwise's rebuilt copy of the entities, not the user's own, and must not replace the file."""
    document: Any = field(default=None, repr=False, compare=False)
    """The ezdxf document, when the caller asked to keep it (for writing back)."""
    streamed: bool = field(default=False, repr=False, compare=False)
    """Read from the tags alone (:mod:`layout.stream`), without loading the document."""


# --------------------------------------------------------------------------- raw file


#: Byte-order marks some text editors put before a DXF (which neither CAD programs nor ezdxf read).
_BYTE_ORDER_MARKS = ((b"\xef\xbb\xbf", "UTF-8"), (b"\xff\xfe", "UTF-16"), (b"\xfe\xff", "UTF-16"))


def _check_signature(data: bytes, path: str) -> bool:
    """Raise NotADrawing unless ``data`` looks like a DXF; return True for binary DXF."""
    if not data.strip():
        raise NotADrawing(f"{path}: the file is empty; expected a DXF drawing")
    if _DWG.match(data[:6]):
        raise NotADrawing(f"{path}: this is a DWG file ({data[:6].decode('ascii', 'replace')}); "
                          f"spanwise reads DXF: save the drawing as DXF and check that")
    if data.startswith(_BINARY_DXF):
        return True
    for mark, name in _BYTE_ORDER_MARKS:
        if data.startswith(mark):
            raise NotADrawing(f"{path}: starts with a {name} byte-order mark ({mark.hex(' ')}), which a DXF "
                              f"file does not have (a text editor added it?); expected the first tag's code: "
                              f"save the drawing again from the CAD program, or remove those first bytes")
    head = data[:4096].decode("latin-1")
    lines = [ln.strip() for ln in head.splitlines()]
    lines = [ln for ln in lines if ln]
    if len(lines) < 2 or not lines[0].lstrip("-").isdigit() or "SECTION" not in head:
        shown = data[:8].hex(" ")
        raise NotADrawing(f"{path}: not a DXF file (first bytes {shown}); expected a text or "
                          f"binary DXF drawing")
    return False


def _raw_header(data: bytes, binary: bool) -> tuple[str, str | None]:
    """Version string and declared unit name (None when not declared) from the raw file."""
    version = ""
    units: str | None = None
    if binary:
        k = data.find(b"$ACADVER\x00")
        if k >= 0:
            end = data.find(b"\x00", k + 12)
            version = data[k + 11:end].decode("ascii", "replace")
        k = data.find(b"$INSUNITS\x00")
        if k >= 0:
            code = int.from_bytes(data[k + 10:k + 12], "little")
            if code == 70:
                value = int.from_bytes(data[k + 12:k + 14], "little", signed=True)
                units = INSUNITS_NAMES.get(value)
        return version, units
    header = _header_text(data[:HEADER_WINDOW])
    mv = _HEADER_VERSION.search(header)
    if mv:
        version = mv.group(1).strip().decode("ascii", "replace")
    mu = _HEADER_UNITS.search(header)
    if mu and version not in ("AC1009", "AC1006", "AC1004", "AC1002"):
        units = INSUNITS_NAMES.get(int(mu.group(1)))
    return version, units


def _header_text(window: bytes) -> bytes:
    """The raw HEADER section's text: from its name to its ENDSEC, or to the window's end."""
    m = _HEADER_START.search(window)
    if m is None:
        return b""
    end = _SECTION_END.search(window, m.end())
    return window[m.end():end.start() if end else len(window)]


def _has_eof(data: bytes, binary: bool) -> bool:
    tail = data[-64:]
    if binary:
        return b"EOF" in tail
    return tail.rstrip().endswith(b"EOF")


@dataclass(frozen=True, slots=True)
class _Loaded:
    """A loaded document and how it was read."""

    doc: Any
    recovered: bool = False         # not by the normal reader
    rebuilt: bool = False           # rebuilt from the raw tags by :mod:`layout.rawread`
    findings: list[Finding] = field(default_factory=list)


def _load(path: str, data: bytes, binary: bool) -> _Loaded:
    """The document, by ezdxf's normal reader, else its recovery reader, else the raw tags."""
    import ezdxf

    complete = _has_eof(data, binary)
    first_error: Exception | None = None
    if complete or binary:
        try:
            return _Loaded(ezdxf.readfile(path))
        except Exception as err:  # the third-party reader raises many kinds; all mean "damaged"
            first_error = err
    if binary:
        raise NotADrawing(f"{path}: damaged binary DXF ({type(first_error).__name__}: "
                          f"{first_error}); expected a readable DXF drawing")
    why = "the file has no end-of-file marker (truncated?)" if not complete else (
        f"the normal reader failed ({type(first_error).__name__}: {first_error})")
    return _recover(path, data, complete, why)


def _recover(path: str, data: bytes, complete: bool, why: str) -> _Loaded:
    """The recovery reader's document, unless the raw tags hold entities it could not read.

    The raw walk (:func:`layout.rawread.walk`) is the judge: when the recovery reader
    raises, or its model space holds fewer entities of some type spanwise reads than the
    raw tags do, the drawing is rebuilt from the raw tags (:func:`layout.rawread.build`).
    """
    from ezdxf import recover

    from . import rawread

    doc = auditor = failure = None
    try:
        doc, auditor = recover.readfile(path)
    except Exception as err:    # the recovery reader raises many kinds too
        failure = err
    raw = rawread.walk(data)
    if not complete and not raw.entities and not _model_space_entities(doc):
        where = f"inside its {raw.ended_in} section" if raw.ended_in else "between two sections"
        early = f" (its tags stop early: {raw.stopped.rstrip('.')}; or it is damaged)" if raw.stopped else ""
        raise NotADrawing(f"{path}: the file is truncated: it ends {where} after {len(data)} bytes, before any "
                          f"drawing entity{early}; expected the sections through ENTITIES and the end-of-file "
                          f"marker (0 EOF): save or copy the drawing again")
    lost = rawread.lost_entities(raw, doc) if doc is not None else {}
    severity = Severity.NOTE if complete else Severity.WARNING
    name = Path(path).name
    if raw.ended_in:
        why += f", cut off inside its {raw.ended_in} section"
    if doc is not None and not lost:
        fixes = len(getattr(auditor, "fixes", []))
        errors = len(getattr(auditor, "errors", []))
        return _Loaded(doc, True, False, [Finding(
            severity, "recovered", f"{name}: read with the recovery reader: {why}; {fixes} repair(s), "
            f"{errors} unrecoverable problem(s); check the drawing is complete",
            data={"fixes": fixes, "errors": errors, "truncated_in": raw.ended_in})])
    if doc is None and not raw.entities:
        raise NotADrawing(f"{path}: not a readable DXF drawing ({type(failure).__name__}: {failure})") from failure
    units = _raw_header(data, False)[1]
    code = next((k for k, v in INSUNITS_NAMES.items() if v == units), 0)
    rebuilt, count = rawread.build(raw, insunits=code)
    if doc is not None:
        then = "the recovery reader lost " + _counted(lost)
    else:
        then = "the recovery reader failed too" + ("" if str(failure) in why else
                                                   f" ({type(failure).__name__}: {failure})")
    stopped = f"; the tags end early ({raw.stopped})" if raw.stopped else ""
    message = (f"{name}: read from its raw DXF tags and rebuilt ({count} entities): {why}, and {then}; "
               f"skipped {_counted(raw.skipped) or 'nothing'}{stopped}; check the drawing is complete")
    return _Loaded(rebuilt, True, True, [Finding(
        Severity.WARNING if raw.stopped else severity, "recovered", " ".join(message.split()),
        data={"reader": "raw-tags", "rebuilt": count, "skipped": dict(sorted(raw.skipped.items())),
              "lost": lost, "truncated_in": raw.ended_in})])


def _model_space_entities(doc: Any) -> int:
    """How many entities the model space of ``doc`` holds (0 without a document)."""
    if doc is None:
        return 0
    try:
        return len(doc.modelspace())
    except Exception:   # a damaged document without a usable model space holds none
        return 0


def _counted(counts: dict[str, int]) -> str:
    """``{"HATCH": 3, "SPLINE": 1}`` as "3 HATCH, 1 SPLINE" (most first)."""
    return ", ".join(f"{n} {what}" for what, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


# --------------------------------------------------------------------------- collecting


class _Collector:
    """Primitives in one coordinate system (model space, or one block definition)."""

    def __init__(self) -> None:
        self.c: list[list[float]] = [[], [], []]          # x, y, r
        self.c_layer: list[str] = []
        self.c_handle: list[str] = []
        self.c_owner: list[str] = []
        self.c_order: list[int] = []
        self.s: list[list[float]] = [[], [], [], [], [], [], [], []]   # x0 y0 x1 y1 cx cy r sweep
        self.s_group: list[int] = []
        self.s_layer: list[str] = []
        self.s_handle: list[str] = []
        self.s_kind: list[str] = []
        self.s_order: list[int] = []
        self.current_order = 0
        self.t: list[list[float]] = [[], []]
        self.t_text: list[str] = []
        self.t_layer: list[str] = []
        self.t_handle: list[str] = []
        self.n_groups = 0
        self.findings: list[Finding] = []
        self.count = 0
        self.own = 0

    def primitives(self) -> int:
        """How many circles, segments and texts are collected."""
        return len(self.c_handle) + len(self.s_handle) + len(self.t_handle)

    def circle(self, x: float, y: float, r: float, layer: str, handle: str, owner: str = "") -> None:
        self.c[0].append(x)
        self.c[1].append(y)
        self.c[2].append(r)
        self.c_layer.append(layer)
        self.c_handle.append(handle)
        self.c_owner.append(owner)
        self.c_order.append(self.current_order)

    def seg(self, p0: tuple[float, float], p1: tuple[float, float], cx: float, cy: float,
            r: float, sweep: float, group: int, layer: str, handle: str, kind: str) -> None:
        s = self.s
        s[0].append(p0[0])
        s[1].append(p0[1])
        s[2].append(p1[0])
        s[3].append(p1[1])
        s[4].append(cx)
        s[5].append(cy)
        s[6].append(r)
        s[7].append(sweep)
        self.s_group.append(group)
        self.s_layer.append(layer)
        self.s_handle.append(handle)
        self.s_kind.append(kind)
        self.s_order.append(self.current_order)

    def text(self, x: float, y: float, text: str, layer: str, handle: str) -> None:
        self.t[0].append(x)
        self.t[1].append(y)
        self.t_text.append(text)
        self.t_layer.append(layer)
        self.t_handle.append(handle)

    def new_group(self) -> int:
        self.n_groups += 1
        return self.n_groups - 1


def _ocs_sign(entity: Any) -> float | None:
    """+1 for an entity in the drawing plane, -1 for one seen from below, None if tilted."""
    return extrusion_sign(entity.dxf.get("extrusion", None))


def extrusion_sign(ext: Any) -> float | None:
    """:func:`_ocs_sign` of an extrusion vector (None: the default, +z)."""
    if ext is None:
        return 1.0
    ex, ey, ez = ext
    if abs(ex) > 1e-9 or abs(ey) > 1e-9:
        return None
    return 1.0 if ez > 0 else -1.0


def _bulge_arc(p0: tuple[float, float], p1: tuple[float, float], bulge: float) -> tuple[float, float, float, float]:
    """Centre, radius and signed sweep of a polyline arc segment with ``bulge``."""
    sweep = 4.0 * math.atan(bulge)
    dx, dy = p1[0] - p0[0], p1[1] - p0[1]
    chord = math.hypot(dx, dy)
    r = chord / (2.0 * abs(math.sin(sweep / 2.0)))
    # distance from chord midpoint to centre, towards the left for a positive bulge
    h = (chord / 2.0) * (1.0 - bulge * bulge) / (2.0 * bulge)
    mx, my = (p0[0] + p1[0]) / 2.0, (p0[1] + p1[1]) / 2.0
    cx = mx - h * dy / chord
    cy = my + h * dx / chord
    return cx, cy, r, sweep


def _add_polyline(col: _Collector, pts: list[tuple[float, float, float]], closed: bool, sign: float,
                  layer: str, handle: str, kind: str) -> None:
    """Add a 2D polyline given as OCS (x, y, bulge) vertices."""
    if sign < 0:
        pts = [(-x, y, -b) for x, y, b in pts]
    n = len(pts)
    if n < 2:
        return
    m = n if closed else n - 1
    pieces = []
    for i in range(m):
        x0, y0, b = pts[i]
        x1, y1, _ = pts[(i + 1) % n]
        if x0 == x1 and y0 == y1:
            continue
        if abs(b) > 1e-12:
            cx, cy, r, sw = _bulge_arc((x0, y0), (x1, y1), b)
        else:
            cx = cy = r = sw = 0.0
        pieces.append(((x0, y0), (x1, y1), cx, cy, r, sw))
    if not pieces:
        return
    if closed and all(p[5] != 0.0 for p in pieces):
        # a closed polyline made only of arcs of one centre and radius is a circle
        cx, cy, r = pieces[0][2], pieces[0][3], pieces[0][4]
        tol = POLY_CIRCLE_TOL * max(r, 1e-300)
        if all(abs(p[2] - cx) <= tol and abs(p[3] - cy) <= tol and abs(p[4] - r) <= tol for p in pieces):
            total = sum(p[5] for p in pieces)
            if abs(abs(total) - 2 * math.pi) < 1e-6:
                col.circle(cx, cy, r, layer, handle)
                return
    group = col.new_group()
    for p0, p1, cx, cy, r, sw in pieces:
        col.seg(p0, p1, cx, cy, r, sw, group, layer, handle, kind)


def _not_finite(col: _Collector, layer: str, handle: str, kind: str) -> None:
    """An entity whose angles or parameters are not finite: a NaN piece, skipped and counted as
    ``bad-coordinates`` by :func:`_drop_non_finite` with the others."""
    nan = math.nan
    col.seg((nan, nan), (nan, nan), nan, nan, nan, nan, -1, layer, handle, kind)


def _collect_line(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    s, en = e.dxf.start, e.dxf.end
    if s.x != en.x or s.y != en.y:
        col.seg((s.x, s.y), (en.x, en.y), 0.0, 0.0, 0.0, 0.0, -1, layer, handle, "LINE")
    return True


def _collect_circle(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    sign = _ocs_sign(e)
    if sign is None:
        return False
    c = e.dxf.center
    r = e.dxf.radius
    if r > 0:
        col.circle(sign * c.x, c.y, r, layer, handle)
    return True


def _collect_arc(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    sign = _ocs_sign(e)
    if sign is None:
        return False
    dxf = e.dxf
    c = dxf.center
    r = dxf.radius
    a0 = math.radians(dxf.start_angle)
    a1 = math.radians(dxf.end_angle)
    if not (math.isfinite(a0) and math.isfinite(a1) and math.isfinite(r)):
        _not_finite(col, layer, handle, "ARC")
        return True
    sw = (a1 - a0) % (2 * math.pi)
    if r <= 0 or sw == 0.0:
        return False
    p0 = (sign * (c.x + r * math.cos(a0)), c.y + r * math.sin(a0))
    p1 = (sign * (c.x + r * math.cos(a1)), c.y + r * math.sin(a1))
    col.seg(p0, p1, sign * c.x, c.y, r, sign * sw, -1, layer, handle, "ARC")
    return True


def _collect_lwpolyline(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    sign = _ocs_sign(e)
    if sign is None:
        return False
    pts = [(float(x), float(y), float(b)) for x, y, b in e.get_points("xyb")]
    _add_polyline(col, pts, bool(e.closed), sign, layer, handle, "LWPOLYLINE")
    return True


def _collect_polyline(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    """A 2D (OCS, with bulges) or 3D polyline; meshes and polyfaces are counted, not read."""
    if e.is_2d_polyline:
        sign = _ocs_sign(e)
        if sign is None:
            return False
        pts = [(v.dxf.location.x, v.dxf.location.y, v.dxf.get("bulge", 0.0)) for v in e.vertices]
        _add_polyline(col, pts, bool(e.is_closed), sign, layer, handle, "POLYLINE")
    elif e.is_3d_polyline:
        pts = [(v.dxf.location.x, v.dxf.location.y, 0.0) for v in e.vertices]
        _add_polyline(col, pts, bool(e.is_closed), 1.0, layer, handle, "POLYLINE")
    return True


def _collect_ellipse(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    """An ELLIPSE of axis ratio 1 in the drawing plane: a circle, or an arc of one.

    A full one is added as a circle but, as before, not counted among the entities read.
    """
    sign = _ocs_sign(e)   # ELLIPSE is in WCS; its extrusion only orients the sweep
    dxf = e.dxf
    if sign is None or abs(dxf.ratio - 1.0) > CIRCLE_RATIO_TOL:
        return False
    c = dxf.center
    major = dxf.major_axis
    r = math.hypot(major.x, major.y)
    if r <= 0 or abs(major.z) > 1e-9 * r:
        return False
    p0, p1 = dxf.start_param, dxf.end_param
    if not (math.isfinite(p0) and math.isfinite(p1) and math.isfinite(r)):
        _not_finite(col, layer, handle, "ELLIPSE")
        return True
    sw = (p1 - p0) % (2 * math.pi)
    if sw < 1e-9 or sw > 2 * math.pi - 1e-9:      # a full ellipse of axis ratio 1
        col.circle(c.x, c.y, r, layer, handle)
        return False
    base = math.atan2(major.y, major.x)
    a0 = base + sign * p0
    a1 = base + sign * p1
    col.seg((c.x + r * math.cos(a0), c.y + r * math.sin(a0)),
            (c.x + r * math.cos(a1), c.y + r * math.sin(a1)), c.x, c.y, r, sign * sw, -1,
            layer, handle, "ELLIPSE")
    return True


def _collect_text(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    dxf = e.dxf
    p = dxf.insert
    if (dxf.get("halign", 0) or dxf.get("valign", 0)) and dxf.hasattr("align_point"):
        p = dxf.align_point
    sign = _ocs_sign(e) or 1.0
    raw = dxf.get("text", "") or ""
    col.text(sign * p.x, p.y, e.plain_text() if len(raw) <= MAX_TEXT_CHARS else raw[:MAX_TEXT_CHARS + 1],
             layer, handle)
    return True


def _collect_mtext(col: _Collector, e: Any, layer: str, handle: str) -> bool:
    p = e.dxf.insert
    raw = e.text or ""
    col.text(p.x, p.y, e.plain_text(split=False) if len(raw) <= MAX_TEXT_CHARS else raw[:MAX_TEXT_CHARS + 1],
             layer, handle)
    return True


#: One function per entity type that can hold a pulley, a piece of belt or a label: each adds
#: the entity to the collector and says whether it counts among the entities read.
_COLLECT: dict[str, Callable[[_Collector, Any, str, str], bool]] = {
    "LINE": _collect_line, "CIRCLE": _collect_circle, "ARC": _collect_arc,
    "LWPOLYLINE": _collect_lwpolyline, "POLYLINE": _collect_polyline, "ELLIPSE": _collect_ellipse,
    "TEXT": _collect_text, "MTEXT": _collect_mtext}


def _collect_entity(col: _Collector, e: Any, inserts: list[Any] | None, layer0: str | None = None) -> None:
    """Add one entity to ``col``; block references go to ``inserts`` for later expansion.

    Parameters
    ----------
    col
        The primitives of the coordinate system ``e`` lives in.
    e
        An ezdxf entity; types without a collector in :data:`_COLLECT` are skipped.
    inserts
        Where block references are kept (``None``: not kept, only counted).
    layer0
        The layer that replaces layer ``"0"`` (an entity of a block takes its reference's).
    """
    t = e.dxftype()
    dxf = e.dxf
    if not dxf.is_supported("layer"):
        return                        # not a graphical entity (an unknown type in the file)
    layer = dxf.layer
    if layer0 is not None and layer == "0":
        layer = layer0
    if is_own_name(layer) or (t == "INSERT" and is_own_name(dxf.name)):
        col.own += 1                  # spanwise's own annotation: never drawing content
        return
    if t == "INSERT":
        if inserts is not None:
            inserts.append(e)
        col.count += 1
        return
    collect = _COLLECT.get(t)
    if collect is not None and collect(col, e, layer, dxf.handle or ""):
        col.count += 1


def _matrix(insert: Any) -> NDArray[np.float64]:
    return np.array(list(insert.matrix44().rows()), dtype=float)


@dataclass(frozen=True, slots=True)
class _References:
    """The block references of one block, as arrays over the references (shape ``(k, ...)``)."""

    a: NDArray[np.float64]              # (k, 2, 2) linear part, rows = images of the x and y axes
    tr: NDArray[np.float64]             # (k, 2) translation
    scale: NDArray[np.float64]          # (k,) the larger axis scale
    uniform: NDArray[np.bool_]          # x and y scaled alike, axes kept square: circles stay round
    planar: NDArray[np.bool_]           # maps the drawing plane onto itself
    flip: NDArray[np.float64]           # -1 where the reference mirrors
    owners: NDArray[Any]                # handles of the references (object array)
    layers: NDArray[Any]                # their layers (object array)
    orders: NDArray[np.int64]           # their drawing order
    names: list[str]                    # the block name, per reference

    @classmethod
    def of(cls, mats: NDArray[np.float64], owners: list[str], layers: list[str], names: list[str],
           orders: list[int]) -> "_References":
        a = mats[:, :2, :2]
        n0 = np.hypot(a[:, 0, 0], a[:, 0, 1])
        n1 = np.hypot(a[:, 1, 0], a[:, 1, 1])
        dotp = a[:, 0, 0] * a[:, 1, 0] + a[:, 0, 1] * a[:, 1, 1]
        scale = np.maximum(n0, n1)
        uniform = (np.abs(n0 - n1) <= UNIFORM_SCALE_TOL * scale) & (
            np.abs(dotp) <= UNIFORM_SCALE_TOL * scale * scale)
        planar = (np.abs(mats[:, 0, 2]) <= 1e-9 * scale) & (np.abs(mats[:, 1, 2]) <= 1e-9 * scale) & (scale > 0)
        det = a[:, 0, 0] * a[:, 1, 1] - a[:, 0, 1] * a[:, 1, 0]
        return cls(a, mats[:, 3, :2], scale, uniform, planar, np.where(det < 0, -1.0, 1.0),
                   np.asarray(owners, dtype=object), np.asarray(layers, dtype=object),
                   np.asarray(orders, dtype=np.int64), names)

    def xf(self, x: list[float], y: list[float]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Points ``(x, y)`` of the block in every reference: two arrays of shape ``(k, n)``."""
        a, tr = self.a, self.tr
        xa = np.asarray(x, dtype=float)
        ya = np.asarray(y, dtype=float)
        X = xa[None, :] * a[:, 0, 0, None] + ya[None, :] * a[:, 1, 0, None] + tr[:, 0, None]
        Y = xa[None, :] * a[:, 0, 1, None] + ya[None, :] * a[:, 1, 1, None] + tr[:, 1, None]
        return X, Y

    def strings(self, local_layers: list[str], local_handles: list[str], mask: NDArray[np.bool_]
                ) -> tuple[list[str], list[str], list[str]]:
        """Layers (``"0"`` takes the reference's), handles ``INSERT/ENTITY`` and owners of the kept rows."""
        ll = np.asarray(local_layers, dtype=object)
        lay = np.where((ll == "0")[None, :], self.layers[:, None], ll[None, :])
        hnd = self.owners[:, None] + ("/" + np.asarray(local_handles, dtype=object))[None, :]
        ownr = np.broadcast_to(self.owners[:, None], mask.shape)
        return lay[mask].tolist(), hnd[mask].tolist(), ownr[mask].tolist()

    def orders_of(self, mask: NDArray[np.bool_]) -> list[int]:
        return np.broadcast_to(self.orders[:, None], mask.shape)[mask].tolist()


def _repeat(values: list[str], mask: NDArray[np.bool_]) -> list[str]:
    """Per-entity ``values`` repeated over the references, kept rows only."""
    return np.broadcast_to(np.asarray(values, dtype=object)[None, :], mask.shape)[mask].tolist()


def _expand_circles(target: _Collector, local: _Collector, refs: _References) -> None:
    """The circles of ``local`` in every reference; a reference that makes them ellipses is reported."""
    X, Y = refs.xf(local.c[0], local.c[1])
    R = np.asarray(local.c[2])[None, :] * refs.scale[:, None]
    for i in np.flatnonzero(refs.planar & ~refs.uniform):
        for j, h in enumerate(local.c_handle):
            target.findings.append(Finding(
                Severity.WARNING, "circle-distorted",
                f"CIRCLE #{h} in block '{refs.names[i]}' (INSERT #{refs.owners[i]}) at "
                f"({X[i, j]:.6g}, {Y[i, j]:.6g}): the block reference scales x and y "
                f"differently, so the circle is an ellipse and not taken as a pulley",
                at=(float(X[i, j]), float(Y[i, j])), refs=(refs.owners[i],)))
    mask = np.broadcast_to((refs.planar & refs.uniform)[:, None], X.shape)
    target.c[0].extend(X[mask].tolist())
    target.c[1].extend(Y[mask].tolist())
    target.c[2].extend(R[mask].tolist())
    lay, hnd, ownr = refs.strings(local.c_layer, local.c_handle, mask)
    target.c_layer.extend(lay)
    target.c_handle.extend(hnd)
    target.c_owner.extend(ownr)
    target.c_order.extend(refs.orders_of(mask))


def _expand_segments(target: _Collector, local: _Collector, refs: _References) -> None:
    """The segments of ``local`` in every reference; arcs only where the reference keeps them round.

    The polylines of each reference get groups of their own, after the target's.
    """
    k = refs.a.shape[0]
    X0, Y0 = refs.xf(local.s[0], local.s[1])
    X1, Y1 = refs.xf(local.s[2], local.s[3])
    CX, CY = refs.xf(local.s[4], local.s[5])
    rr = np.asarray(local.s[6])
    sw = np.asarray(local.s[7])
    is_arc = sw != 0.0
    mask = refs.planar[:, None] & (refs.uniform[:, None] | ~is_arc[None, :])
    groups = np.asarray(local.s_group)
    base = target.n_groups + local.n_groups * np.arange(k)
    G = np.where(groups[None, :] >= 0, groups[None, :] + base[:, None], -1)
    target.n_groups += local.n_groups * k
    for arr, src in zip(target.s, (X0, Y0, X1, Y1, np.where(is_arc[None, :], CX, 0.0),
                                   np.where(is_arc[None, :], CY, 0.0),
                                   rr[None, :] * refs.scale[:, None], sw[None, :] * refs.flip[:, None])):
        arr.extend(src[mask].tolist())
    target.s_group.extend(G[mask].tolist())
    lay, hnd, _ = refs.strings(local.s_layer, local.s_handle, mask)
    target.s_layer.extend(lay)
    target.s_handle.extend(hnd)
    target.s_kind.extend(_repeat(local.s_kind, mask))
    target.s_order.extend(refs.orders_of(mask))


def _expand_texts(target: _Collector, local: _Collector, refs: _References) -> None:
    """The texts of ``local`` at their place in every reference in the drawing plane."""
    X, Y = refs.xf(local.t[0], local.t[1])
    mask = np.broadcast_to(refs.planar[:, None], X.shape)
    target.t[0].extend(X[mask].tolist())
    target.t[1].extend(Y[mask].tolist())
    target.t_text.extend(_repeat(local.t_text, mask))
    lay, hnd, _ = refs.strings(local.t_layer, local.t_handle, mask)
    target.t_layer.extend(lay)
    target.t_handle.extend(hnd)


def _expand(target: _Collector, local: _Collector, mats: NDArray[np.float64], owners: list[str],
            layers: list[str], names: list[str], orders: list[int]) -> None:
    """Append ``local`` primitives transformed by each 4x4 row-vector matrix in ``mats``.

    Vectorised over the block references: one numpy operation per array, whatever the
    number of references to the block.

    Parameters
    ----------
    target
        The collector of the coordinate system the references live in.
    local
        The primitives of the block, in its own coordinates.
    mats
        Shape ``(k, 4, 4)``: the transforms of the ``k`` references (row vectors).
    owners, layers, names, orders
        Per reference: its handle, layer, block name and drawing order.
    """
    if mats.shape[0] == 0:
        return
    refs = _References.of(mats, owners, layers, names, orders)
    if local.c_handle:
        _expand_circles(target, local, refs)
    if local.s_handle:
        _expand_segments(target, local, refs)
    if local.t_handle:
        _expand_texts(target, local, refs)
    target.count += mats.shape[0] * local.count
    target.own += mats.shape[0] * local.own


#: One placement of a block: its transform, the reference's handle, layer and drawing order.
_Placement = tuple[NDArray[np.float64], str, str, int]


@dataclass(frozen=True, slots=True)
class _Reference:
    """One block reference: its block, handle, layer, drawing order, MINSERT cells and insert point."""

    name: str
    handle: str
    layer: str
    order: int
    cells: int
    rows: int
    columns: int
    x: float
    y: float


class _Flattener:
    """Model space of one document with its block references expanded, each block collected once."""

    def __init__(self, doc: Any, name: str = "<document>") -> None:
        self.doc = doc
        self.name = name                           # the file's name, for the messages
        self.cache: dict[str, _Collector] = {}
        self.insert_order: dict[int, int] = {}     # id of a model space INSERT -> drawing order
        self.expanded = 0                          # entities produced by expansion so far
        self.expansion_limit = MAX_EXPANDED_ENTITIES

    def model_space(self) -> tuple[_Collector, list[Any]]:
        """The primitives of model space itself, and its block references in drawing order."""
        top = _Collector()
        inserts: list[Any] = []
        for k, e in enumerate(self.doc.modelspace()):
            top.current_order = k
            before = len(inserts)
            _collect_entity(top, e, inserts)
            if len(inserts) > before:
                self.insert_order[id(inserts[-1])] = k
        return top, inserts

    def block(self, name: str, stack: tuple[str, ...]) -> _Collector:
        """The primitives of block ``name`` in its own coordinates (nested references expanded).

        ``stack`` holds the blocks being collected; a block that references itself through it is
        skipped (an empty collector), as is a reference to a block that does not exist.
        """
        if name in self.cache:
            return self.cache[name]
        if name in stack:
            log.warning("block %r references itself; skipped", name)
            return _Collector()
        if len(stack) >= MAX_BLOCK_DEPTH:
            raise FatalInput(f"{self.name}: block '{name}' is nested more than {MAX_BLOCK_DEPTH} levels "
                             f"deep (through '{stack[0]}', '{stack[1] if len(stack) > 1 else name}', ...); "
                             f"expected at most {MAX_BLOCK_DEPTH} levels of block references "
                             f"(layout.read.MAX_BLOCK_DEPTH)")
        contents = self.block_contents(name)
        if contents is None:
            return _Collector()
        col, nested = contents
        for ins in nested:
            self.expand_inserts(col, [ins], stack + (name,))
        self.cache[name] = col
        return col

    def block_contents(self, name: str) -> tuple[_Collector, list[Any]] | None:
        """Block ``name``'s own primitives and its block references (not expanded); None if undefined."""
        block = self.doc.blocks.get(name)
        if block is None:
            return None
        col = _Collector()
        nested: list[Any] = []
        for be in block:
            if be.dxftype() in ("ATTDEF",):
                continue
            _collect_entity(col, be, nested)
        return col, nested

    def placements(self, ins_list: list[Any]) -> dict[str, list[_Placement]]:
        """The placements of each block referenced in ``ins_list`` (a MINSERT gives one per cell)."""
        by_block: dict[str, list[_Placement]] = defaultdict(list)
        for ins in ins_list:
            ref = self.reference(ins)
            try:
                if ref.cells > MAX_MINSERT_CELLS:
                    raise FatalInput(
                        f"{self.name}: MINSERT #{ref.handle} of block '{ref.name}' on {ref.layer} at "
                        f"({ref.x:.6g}, {ref.y:.6g}): {ref.rows} rows x {ref.columns} columns = {ref.cells} cells; "
                        f"expected at most {MAX_MINSERT_CELLS} cells in one array (layout.read.MAX_MINSERT_CELLS)")
                for m in self.matrices(ins, ref.cells):
                    by_block[ref.name].append((m, ref.handle, ref.layer, ref.order))
            except FatalInput:
                raise
            except Exception as err:   # a broken reference must not end the run
                log.warning("INSERT #%s of block %r skipped: %s", ref.handle, ref.name, err)
        return by_block

    def reference(self, ins: Any) -> "_Reference":
        """What the messages and the placements need of one block reference."""
        dxf = ins.dxf
        p = dxf.insert
        return _Reference(dxf.name, dxf.handle or "", dxf.layer, self.insert_order.get(id(ins), 0),
                          ins.mcount, dxf.row_count, dxf.column_count, p.x, p.y)

    def matrices(self, ins: Any, cells: int) -> list[NDArray[np.float64]]:
        """The transforms of ``ins``: one, or one per cell of a MINSERT array."""
        if cells > 1:
            return [_matrix(vi) for vi in ins.multi_insert()]
        return [_matrix(ins)]

    def attrib_sets(self, inserts: list[Any]) -> list[AttribSet]:
        """The attributes of the top-level block references ``inserts``."""
        return _attrib_sets(inserts)

    def count_expansion(self, name: str, k: int, local: _Collector) -> None:
        """Count the entities ``k`` placements of ``local`` produce; refuse past the limit, before the work."""
        each = local.primitives()
        self.expanded += k * each
        if self.expanded > self.expansion_limit:
            raise FatalInput(f"{self.name}: expanding the block references gives over {self.expansion_limit} "
                             f"entities ({k} placement(s) of block '{name}' with {each} each, {self.expanded} "
                             f"so far); expected at most {self.expansion_limit} (layout.read.MAX_EXPANDED_ENTITIES, "
                             f"or layout.read.EXPANSION_PER_ENTITY per entity of model space)")

    def limit_expansion(self, top: _Collector, inserts: list[Any]) -> None:
        """Set the expansion limit from what model space holds itself (``top`` and its ``inserts``)."""
        held = top.primitives() + len(inserts)
        self.expansion_limit = max(MAX_EXPANDED_ENTITIES, EXPANSION_PER_ENTITY * held)

    def expand_inserts(self, target: _Collector, ins_list: list[Any], stack: tuple[str, ...]) -> None:
        """Add the contents of the blocks ``ins_list`` references to ``target``, one call per block."""
        for name, items in self.placements(ins_list).items():
            local = self.block(name, stack)
            if local.count == 0 and not local.primitives():
                continue
            self.count_expansion(name, len(items), local)
            mats = np.stack([m for m, _, _, _ in items])
            _expand(target, local, mats, [h for _, h, _, _ in items], [lay for _, _, lay, _ in items],
                    [name] * len(items), [o for _, _, _, o in items])


def _attrib_sets(inserts: list[Any]) -> list[AttribSet]:
    """The attributes of each block reference that has any (tags upper case, values stripped)."""
    attribs: list[AttribSet] = []
    for ins in inserts:
        if not ins.attribs:
            continue
        tags = {a.dxf.tag.strip().upper(): a.dxf.text.strip() for a in ins.attribs}
        p = ins.dxf.insert
        attribs.append(AttribSet(ins.dxf.handle or "", float(p.x), float(p.y), tags, ins.dxf.name))
    return attribs


def _flatten(doc: Any, name: str = "<document>") -> tuple[_Collector, list[AttribSet]]:
    """Model space of ``doc`` as primitives, block references expanded, and their attributes.

    Raises :class:`~layout.errors.FatalInput` (one line, ``name`` first) when the expansion
    passes :data:`MAX_BLOCK_DEPTH`, :data:`MAX_MINSERT_CELLS` or :data:`MAX_EXPANDED_ENTITIES`.

    Returns
    -------
    tuple
        The collector (with the findings of every block collected) and the attribute sets
        of the top-level block references.
    """
    return flatten_with(_Flattener(doc, name))


def flatten_with(flat: _Flattener) -> tuple[_Collector, list[AttribSet]]:
    """Model space as ``flat`` reads it, block references expanded, and their attributes."""
    top, inserts = flat.model_space()
    flat.limit_expansion(top, inserts)
    flat.expand_inserts(top, inserts, ())
    attribs = flat.attrib_sets(inserts)
    for col in flat.cache.values():
        top.findings.extend(col.findings)
    return top, attribs


def _mask(obj: Any, keep: NDArray[np.bool_]) -> Any:
    """A copy of a Circles/Segments/Texts with only the rows ``keep``."""
    from dataclasses import fields as dc_fields

    vals = {}
    for f in dc_fields(obj):
        v = getattr(obj, f.name)
        vals[f.name] = v[keep] if isinstance(v, np.ndarray) else [x for x, k in zip(v, keep) if k]
    return type(obj)(**vals)


def _in_range(*values: NDArray[np.float64], limit: float = MAX_COORDINATE) -> NDArray[np.bool_]:
    """Where every one of ``values`` is a finite number within ``limit`` in magnitude."""
    keep = np.ones(values[0].shape, bool)
    for v in values:
        keep &= np.abs(v) <= limit          # False for NaN and infinity too
    return keep


def _drop_non_finite(c: Circles, s: Segments, t: Texts) -> tuple[Circles, Segments, Texts, tuple[int, str] | None]:
    """Drop entities whose coordinates are NaN, infinite or beyond :data:`MAX_COORDINATE`.

    ezdxf reads numbers as given. Circles: centre and radius; pieces: their end points (an
    arc's centre and radius only finite: a nearly straight arc has its centre far out);
    texts: the anchor.
    """
    kc = _in_range(c.x, c.y, c.r) & (c.r > 0)
    ks = (_in_range(s.x0, s.y0, s.x1, s.y1) & np.isfinite(s.cx) & np.isfinite(s.cy)
          & np.isfinite(s.r) & np.isfinite(s.sweep))
    kt = _in_range(t.x, t.y)
    n = int((~kc).sum() + (~ks).sum() + (~kt).sum())
    if n == 0:
        return c, s, t, None
    if (~kc).any():
        i = int(np.flatnonzero(~kc)[0])
        first = f"CIRCLE #{c.handle[i]} on {c.layer[i]} at {_shown(c.x[i], c.y[i])} radius {c.r[i]:.6g}"
    elif (~ks).any():
        i = int(np.flatnonzero(~ks)[0])
        first = f"{s.kind[i]} #{s.handle[i]} on {s.layer[i]} from {_shown(s.x0[i], s.y0[i])} to {_shown(s.x1[i], s.y1[i])}"
    else:
        i = int(np.flatnonzero(~kt)[0])
        first = f"TEXT #{t.handle[i]} on {t.layer[i]} at {_shown(t.x[i], t.y[i])}"
    return _mask(c, kc), _mask(s, ks), _mask(t, kt), (n, first)


def _shown(x: float, y: float) -> str:
    return f"({x:.6g}, {y:.6g})"


def read_drawing(path: str | Path, *, keep_document: bool = False) -> Drawing:
    """Read ``path`` into a :class:`Drawing`.

    Parameters
    ----------
    keep_document
        Keep the ezdxf document in ``Drawing.document`` (for writing the findings back
        into a copy of the very drawing that was analysed).

    Raises
    ------
    NotADrawing
        When the file cannot be read as DXF, with one line saying why.
    """
    p = str(path)
    if Path(p).is_dir():
        raise NotADrawing(f"{p}: is a folder; spanwise check reads one DXF drawing (check every drawing "
                          f"of a folder with: spanwise audit {p})")
    if Path(p).exists() and not Path(p).is_file():
        raise NotADrawing(f"{p}: is not a regular file (a pipe, a device or a socket); expected a DXF "
                          f"drawing file")
    try:
        data = Path(p).read_bytes()
    except OSError as err:
        raise NotADrawing(f"{p}: cannot read the file ({err.strerror or err})") from err
    binary = _check_signature(data, p)
    version, units = _raw_header(data, binary)
    # Loading creates about ten objects per entity; the cyclic collector would walk the
    # growing document again and again (measured: flattening 100k entities 0.4 s without,
    # 2.0 s with). Nothing created here needs it; it is switched back on afterwards.
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        streamed = None if keep_document or binary or not _has_eof(data, binary) else _streamed(data, version, p)
        if streamed is not None:
            return _drawing(*streamed, [], path=p, sha256=hashlib.sha256(data).hexdigest(),
                            version=version or "AC1009", units=units, recovered=False, document=None,
                            streamed=True)
        loaded = _load(p, data, binary)
        col, attribs = _flatten(loaded.doc, Path(p).name)
    finally:
        if was_enabled:
            gc.enable()
    return _drawing(col, attribs, loaded.findings, path=p, sha256=hashlib.sha256(data).hexdigest(),
                    version=version or loaded.doc.dxfversion, units=units, recovered=loaded.recovered,
                    rebuilt=loaded.rebuilt, document=loaded.doc if keep_document else None)


def _streamed(data: bytes, version: str, path: str) -> tuple[_Collector, list[AttribSet]] | None:
    """The drawing read from its tags alone (:mod:`layout.stream`), or None when the whole
    document must be loaded to read it as ezdxf does."""
    from .stream import NotStreamable, stream_drawing

    try:
        return stream_drawing(data, version, Path(path).name)
    except NotStreamable as why:
        log.info("%s: reading the whole document: %s", path, why)
        return None


def read_document(doc: Any, *, path: str = "<document>") -> Drawing:
    """A :class:`Drawing` from an ezdxf document already in memory (kept in ``document``).

    Its units are the header's ``$INSUNITS`` (0, unitless, counts as none declared); it has
    no file, so no ``sha256``.
    """
    code = int(doc.header.get("$INSUNITS", 0) or 0) if doc.dxfversion > "AC1009" else 0
    col, attribs = _flatten(doc, path)
    return _drawing(col, attribs, [], path=path, sha256="", version=doc.dxfversion,
                    units=INSUNITS_NAMES.get(code), recovered=False, document=doc)


def _drawing(col: _Collector, attribs: list[AttribSet], findings: list[Finding], *, path: str, sha256: str,
             version: str, units: str | None, recovered: bool, document: Any,
             rebuilt: bool = False, streamed: bool = False) -> Drawing:
    """The collected primitives as a :class:`Drawing`, entities that are not finite dropped."""
    p = path
    findings.extend(col.findings)
    circles = Circles(np.asarray(col.c[0], float), np.asarray(col.c[1], float),
                      np.asarray(col.c[2], float), col.c_layer, col.c_handle, col.c_owner,
                      np.asarray(col.c_order, np.int64))
    s = col.s
    segments = Segments(*(np.asarray(a, float) for a in s), np.asarray(col.s_group, np.int64),
                        col.s_layer, col.s_handle, col.s_kind, np.asarray(col.s_order, np.int64))
    texts = Texts(np.asarray(col.t[0], float), np.asarray(col.t[1], float), col.t_text,
                  col.t_layer, col.t_handle)
    circles, segments, texts, bad = _drop_non_finite(circles, segments, texts)
    if bad:
        n, first = bad
        findings.append(Finding(Severity.WARNING, "bad-coordinates",
                                f"{Path(p).name}: {n} entit{'y' if n == 1 else 'ies'} skipped with coordinates that are "
                                f"not finite numbers or beyond {MAX_COORDINATE:.0e} drawing units "
                                f"(layout.read.MAX_COORDINATE), the first {first}; the file may be damaged",
                                data={"skipped": n, "limit": MAX_COORDINATE}))
    return Drawing(path=p, sha256=sha256, version=version, units=units, recovered=recovered, circles=circles,
                   segments=segments, texts=texts, attribs=attribs, findings=findings, entity_count=col.count,
                   own_count=col.own, rebuilt=rebuilt, document=document, streamed=streamed)
