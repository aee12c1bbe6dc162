"""Read a DXF file into flat drawing primitives, in drawing units.

The reader refuses what is not a DXF by its first bytes (a DWG, a PDF, random bytes),
reads the header's version and units from the raw file (ezdxf upgrades old versions
on load and reports metres for a drawing without header), tries ezdxf's normal reader
first and its recovery reader second, and flattens model space: block references are
expanded with their transforms (nested, rotated, mirrored, scaled), each entity's
object coordinate system is resolved, and every curve that can be part of a belt path
becomes a *segment* ``(p0, p1, centre, radius, sweep)`` (``sweep`` = 0 for a straight
piece, signed radians counter-clockwise for an arc).

Entities that cannot take part (dimensions, hatches, splines, 3D solids) are skipped.
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
from typing import Any

import numpy as np
from numpy.typing import NDArray

from physics.findings import Finding, Severity

from ._own import is_own_name
from .errors import NotADrawing

__all__ = ["Drawing", "Circles", "Segments", "Texts", "AttribSet", "read_drawing", "read_document",
           "INSUNITS_NAMES", "UNIFORM_SCALE_TOL", "CIRCLE_RATIO_TOL"]

log = logging.getLogger(__name__)

#: Relative tolerance on the two scale factors of a block reference for it to keep circles round.
UNIFORM_SCALE_TOL = 1e-9
#: An ellipse with axis ratio within this of 1 is a circle.
CIRCLE_RATIO_TOL = 1e-6
#: A closed polyline of arcs is a circle when its arcs share centre and radius within this (relative).
POLY_CIRCLE_TOL = 1e-6

#: $INSUNITS codes spanwise understands, by name.
INSUNITS_NAMES: dict[int, str] = {1: "in", 2: "ft", 4: "mm", 5: "cm", 6: "m", 7: "km",
                                  10: "yd", 13: "um", 14: "dm"}

_DWG = re.compile(rb"^AC\d\.?\d")
_BINARY_DXF = b"AutoCAD Binary DXF"
_HEADER_UNITS = re.compile(rb"\$INSUNITS\s*\r?\n\s*70\s*\r?\n\s*(-?\d+)")
_HEADER_VERSION = re.compile(rb"\$ACADVER\s*\r?\n\s*1\s*\r?\n\s*([^\r\n]+)")
_HEADER_SECTION = re.compile(rb"\n\s*2\s*\r?\n\s*HEADER\s*\r?\n(.*?)\n\s*0\s*\r?\n\s*ENDSEC", re.S)


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
    document: Any = field(default=None, repr=False, compare=False)
    """The ezdxf document, when the caller asked to keep it (for writing back)."""


# --------------------------------------------------------------------------- raw file


def _check_signature(data: bytes, path: str) -> bool:
    """Raise NotADrawing unless ``data`` looks like a DXF; return True for binary DXF."""
    if not data.strip():
        raise NotADrawing(f"{path}: the file is empty; expected a DXF drawing")
    if _DWG.match(data[:6]):
        raise NotADrawing(f"{path}: this is a DWG file ({data[:6].decode('ascii', 'replace')}); "
                          f"spanwise reads DXF: save the drawing as DXF and check that")
    if data.startswith(_BINARY_DXF):
        return True
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
    m = _HEADER_SECTION.search(data[:2_000_000])
    header = m.group(1) if m else b""
    mv = _HEADER_VERSION.search(header)
    if mv:
        version = mv.group(1).strip().decode("ascii", "replace")
    mu = _HEADER_UNITS.search(header)
    if mu and version not in ("AC1009", "AC1006", "AC1004", "AC1002"):
        units = INSUNITS_NAMES.get(int(mu.group(1)))
    return version, units


def _has_eof(data: bytes, binary: bool) -> bool:
    tail = data[-64:]
    if binary:
        return b"EOF" in tail
    return tail.rstrip().endswith(b"EOF")


def _load(path: str, data: bytes, binary: bool) -> tuple[Any, bool, list[Finding]]:
    import ezdxf
    from ezdxf import recover

    findings: list[Finding] = []
    complete = _has_eof(data, binary)
    first_error: Exception | None = None
    if complete or binary:
        try:
            return ezdxf.readfile(path), False, findings
        except Exception as err:  # the third-party reader raises many kinds; all mean "damaged"
            first_error = err
    if binary:
        raise NotADrawing(f"{path}: damaged binary DXF ({type(first_error).__name__}: "
                          f"{first_error}); expected a readable DXF drawing")
    try:
        doc, auditor = recover.readfile(path)
    except Exception as err:
        raise NotADrawing(f"{path}: not a readable DXF drawing ({type(err).__name__}: {err})") from err
    why = "the file has no end-of-file marker (truncated?)" if not complete else (
        f"the normal reader failed ({type(first_error).__name__}: {first_error})")
    fixes = len(getattr(auditor, "fixes", []))
    errors = len(getattr(auditor, "errors", []))
    findings.append(Finding(Severity.NOTE, "recovered",
                            f"{Path(path).name}: read with the recovery reader: {why}; "
                            f"{fixes} repair(s), {errors} unrecoverable problem(s); check the "
                            f"drawing is complete", data={"fixes": fixes, "errors": errors}))
    if not complete:
        findings[-1] = Finding(Severity.WARNING, "recovered", findings[-1].message,
                               data=findings[-1].data)
    return doc, True, findings


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
    ext = entity.dxf.get("extrusion", None)
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


def _collect_entity(col: _Collector, e: Any, inserts: list[Any] | None, layer0: str | None = None) -> None:
    """Add one entity to ``col``; block references go to ``inserts`` for later expansion."""
    t = e.dxftype()
    dxf = e.dxf
    layer = dxf.layer
    if layer0 is not None and layer == "0":
        layer = layer0
    if is_own_name(layer) or (t == "INSERT" and is_own_name(dxf.name)):
        col.own += 1                  # spanwise's own annotation: never drawing content
        return
    handle = dxf.handle or ""
    if t == "LINE":
        s, en = dxf.start, dxf.end
        if s.x != en.x or s.y != en.y:
            col.seg((s.x, s.y), (en.x, en.y), 0.0, 0.0, 0.0, 0.0, -1, layer, handle, t)
    elif t == "CIRCLE":
        sign = _ocs_sign(e)
        if sign is None:
            return
        c = dxf.center
        r = dxf.radius
        if r > 0:
            col.circle(sign * c.x, c.y, r, layer, handle)
    elif t == "ARC":
        sign = _ocs_sign(e)
        if sign is None:
            return
        c = dxf.center
        r = dxf.radius
        a0 = math.radians(dxf.start_angle)
        a1 = math.radians(dxf.end_angle)
        sw = (a1 - a0) % (2 * math.pi)
        if r <= 0 or sw == 0.0:
            return
        p0 = (sign * (c.x + r * math.cos(a0)), c.y + r * math.sin(a0))
        p1 = (sign * (c.x + r * math.cos(a1)), c.y + r * math.sin(a1))
        col.seg(p0, p1, sign * c.x, c.y, r, sign * sw, -1, layer, handle, t)
    elif t == "LWPOLYLINE":
        sign = _ocs_sign(e)
        if sign is None:
            return
        pts = [(float(x), float(y), float(b)) for x, y, b in e.get_points("xyb")]
        _add_polyline(col, pts, bool(e.closed), sign, layer, handle, t)
    elif t == "POLYLINE":
        if e.is_2d_polyline:
            sign = _ocs_sign(e)
            if sign is None:
                return
            pts = [(v.dxf.location.x, v.dxf.location.y, v.dxf.get("bulge", 0.0)) for v in e.vertices]
            _add_polyline(col, pts, bool(e.is_closed), sign, layer, handle, t)
        elif e.is_3d_polyline:
            pts = [(v.dxf.location.x, v.dxf.location.y, 0.0) for v in e.vertices]
            _add_polyline(col, pts, bool(e.is_closed), 1.0, layer, handle, t)
    elif t == "ELLIPSE":
        sign = _ocs_sign(e)   # ELLIPSE is in WCS; its extrusion only orients the sweep
        if sign is None:
            return
        if abs(dxf.ratio - 1.0) > CIRCLE_RATIO_TOL:
            return
        c = dxf.center
        major = dxf.major_axis
        r = math.hypot(major.x, major.y)
        if r <= 0 or abs(major.z) > 1e-9 * r:
            return
        p0, p1 = dxf.start_param, dxf.end_param
        sw = (p1 - p0) % (2 * math.pi)
        if sw < 1e-9 or sw > 2 * math.pi - 1e-9:      # a full ellipse of axis ratio 1
            col.circle(c.x, c.y, r, layer, handle)
            return
        base = math.atan2(major.y, major.x)
        a0 = base + sign * p0
        a1 = base + sign * p1
        col.seg((c.x + r * math.cos(a0), c.y + r * math.sin(a0)),
                (c.x + r * math.cos(a1), c.y + r * math.sin(a1)), c.x, c.y, r, sign * sw, -1,
                layer, handle, t)
    elif t == "TEXT":
        p = dxf.insert
        if (dxf.get("halign", 0) or dxf.get("valign", 0)) and dxf.hasattr("align_point"):
            p = dxf.align_point
        sign = _ocs_sign(e) or 1.0
        col.text(sign * p.x, p.y, e.plain_text(), layer, handle)
    elif t == "MTEXT":
        p = dxf.insert
        col.text(p.x, p.y, e.plain_text(split=False), layer, handle)
    elif t == "INSERT":
        if inserts is not None:
            inserts.append(e)
    else:
        return
    col.count += 1


def _matrix(insert: Any) -> NDArray[np.float64]:
    return np.array(list(insert.matrix44().rows()), dtype=float)


def _expand(target: _Collector, local: _Collector, mats: NDArray[np.float64], owners: list[str],
            layers: list[str], names: list[str], orders: list[int]) -> None:
    """Append ``local`` primitives transformed by each 4x4 row-vector matrix in ``mats``.

    Vectorised over the block references: one numpy operation per array, whatever the
    number of references to the block.
    """
    k = mats.shape[0]
    if k == 0:
        return
    a = mats[:, :2, :2]                       # linear part, rows = images of x and y axes
    tr = mats[:, 3, :2]
    n0 = np.hypot(a[:, 0, 0], a[:, 0, 1])
    n1 = np.hypot(a[:, 1, 0], a[:, 1, 1])
    dotp = a[:, 0, 0] * a[:, 1, 0] + a[:, 0, 1] * a[:, 1, 1]
    scale = np.maximum(n0, n1)
    uniform = (np.abs(n0 - n1) <= UNIFORM_SCALE_TOL * scale) & (
        np.abs(dotp) <= UNIFORM_SCALE_TOL * scale * scale)
    planar = (np.abs(mats[:, 0, 2]) <= 1e-9 * scale) & (np.abs(mats[:, 1, 2]) <= 1e-9 * scale) & (scale > 0)
    det = a[:, 0, 0] * a[:, 1, 1] - a[:, 0, 1] * a[:, 1, 0]
    flip = np.where(det < 0, -1.0, 1.0)
    own = np.asarray(owners, dtype=object)
    ins_layer = np.asarray(layers, dtype=object)
    ins_order = np.asarray(orders, dtype=np.int64)

    def xf(x: list[float], y: list[float]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        xa = np.asarray(x, dtype=float)
        ya = np.asarray(y, dtype=float)
        X = xa[None, :] * a[:, 0, 0, None] + ya[None, :] * a[:, 1, 0, None] + tr[:, 0, None]
        Y = xa[None, :] * a[:, 0, 1, None] + ya[None, :] * a[:, 1, 1, None] + tr[:, 1, None]
        return X, Y

    def strings(local_layers: list[str], local_handles: list[str], mask: NDArray[np.bool_]
                ) -> tuple[list[str], list[str], list[str]]:
        ll = np.asarray(local_layers, dtype=object)
        lay = np.where((ll == "0")[None, :], ins_layer[:, None], ll[None, :])
        hnd = own[:, None] + ("/" + np.asarray(local_handles, dtype=object))[None, :]
        ownr = np.broadcast_to(own[:, None], mask.shape)
        return lay[mask].tolist(), hnd[mask].tolist(), ownr[mask].tolist()

    if local.c_handle:
        X, Y = xf(local.c[0], local.c[1])
        R = np.asarray(local.c[2])[None, :] * scale[:, None]
        for i in np.flatnonzero(planar & ~uniform):
            for j, h in enumerate(local.c_handle):
                target.findings.append(Finding(
                    Severity.WARNING, "circle-distorted",
                    f"CIRCLE #{h} in block '{names[i]}' (INSERT #{owners[i]}) at "
                    f"({X[i, j]:.6g}, {Y[i, j]:.6g}): the block reference scales x and y "
                    f"differently, so the circle is an ellipse and not taken as a pulley",
                    at=(float(X[i, j]), float(Y[i, j])), refs=(owners[i],)))
        mask = np.broadcast_to((planar & uniform)[:, None], X.shape)
        target.c[0].extend(X[mask].tolist())
        target.c[1].extend(Y[mask].tolist())
        target.c[2].extend(R[mask].tolist())
        lay, hnd, ownr = strings(local.c_layer, local.c_handle, mask)
        target.c_layer.extend(lay)
        target.c_handle.extend(hnd)
        target.c_owner.extend(ownr)
        target.c_order.extend(np.broadcast_to(ins_order[:, None], mask.shape)[mask].tolist())
    if local.s_handle:
        X0, Y0 = xf(local.s[0], local.s[1])
        X1, Y1 = xf(local.s[2], local.s[3])
        CX, CY = xf(local.s[4], local.s[5])
        rr = np.asarray(local.s[6])
        sw = np.asarray(local.s[7])
        is_arc = sw != 0.0
        mask = planar[:, None] & (uniform[:, None] | ~is_arc[None, :])
        groups = np.asarray(local.s_group)
        base = target.n_groups + local.n_groups * np.arange(k)
        G = np.where(groups[None, :] >= 0, groups[None, :] + base[:, None], -1)
        target.n_groups += local.n_groups * k
        for arr, src in zip(target.s, (X0, Y0, X1, Y1, np.where(is_arc[None, :], CX, 0.0),
                                       np.where(is_arc[None, :], CY, 0.0),
                                       rr[None, :] * scale[:, None], sw[None, :] * flip[:, None])):
            arr.extend(src[mask].tolist())
        target.s_group.extend(G[mask].tolist())
        lay, hnd, _ = strings(local.s_layer, local.s_handle, mask)
        target.s_layer.extend(lay)
        target.s_handle.extend(hnd)
        target.s_kind.extend(np.broadcast_to(np.asarray(local.s_kind, dtype=object)[None, :], mask.shape)[mask].tolist())
        target.s_order.extend(np.broadcast_to(ins_order[:, None], mask.shape)[mask].tolist())
    if local.t_handle:
        X, Y = xf(local.t[0], local.t[1])
        mask = np.broadcast_to(planar[:, None], X.shape)
        target.t[0].extend(X[mask].tolist())
        target.t[1].extend(Y[mask].tolist())
        target.t_text.extend(np.broadcast_to(np.asarray(local.t_text, dtype=object)[None, :], mask.shape)[mask].tolist())
        lay, hnd, _ = strings(local.t_layer, local.t_handle, mask)
        target.t_layer.extend(lay)
        target.t_handle.extend(hnd)
    target.count += k * local.count
    target.own += k * local.own


def _flatten(doc: Any) -> tuple[_Collector, list[AttribSet]]:
    msp = doc.modelspace()
    top = _Collector()
    inserts: list[Any] = []
    insert_order: dict[int, int] = {}
    for k, e in enumerate(msp):
        top.current_order = k
        before = len(inserts)
        _collect_entity(top, e, inserts)
        if len(inserts) > before:
            insert_order[id(inserts[-1])] = k
    cache: dict[str, _Collector] = {}
    attribs: list[AttribSet] = []

    def block_collector(name: str, stack: tuple[str, ...]) -> _Collector:
        if name in cache:
            return cache[name]
        col = _Collector()
        if name in stack:
            log.warning("block %r references itself; skipped", name)
            return col
        block = doc.blocks.get(name)
        if block is None:
            return col
        nested: list[Any] = []
        for be in block:
            if be.dxftype() in ("ATTDEF",):
                continue
            _collect_entity(col, be, nested)
        for ins in nested:
            _expand_inserts(col, [ins], stack + (name,))
        cache[name] = col
        return col

    def _expand_inserts(target: _Collector, ins_list: list[Any], stack: tuple[str, ...]) -> None:
        by_block: dict[str, list[tuple[NDArray[np.float64], str, str, int]]] = defaultdict(list)
        for ins in ins_list:
            name = ins.dxf.name
            handle = ins.dxf.handle or ""
            layer = ins.dxf.layer
            order = insert_order.get(id(ins), 0)
            try:
                if ins.mcount > 1:
                    for vi in ins.multi_insert():
                        by_block[name].append((_matrix(vi), handle, layer, order))
                else:
                    by_block[name].append((_matrix(ins), handle, layer, order))
            except Exception as err:   # a broken reference must not end the run
                log.warning("INSERT #%s of block %r skipped: %s", handle, name, err)
        for name, items in by_block.items():
            local = block_collector(name, stack)
            if local.count == 0 and not local.c_handle and not local.s_handle and not local.t_handle:
                continue
            mats = np.stack([m for m, _, _, _ in items])
            _expand(target, local, mats, [h for _, h, _, _ in items], [lay for _, _, lay, _ in items],
                    [name] * len(items), [o for _, _, _, o in items])

    _expand_inserts(top, inserts, ())
    for ins in inserts:
        if not ins.attribs:
            continue
        tags = {a.dxf.tag.strip().upper(): a.dxf.text.strip() for a in ins.attribs}
        p = ins.dxf.insert
        attribs.append(AttribSet(ins.dxf.handle or "", float(p.x), float(p.y), tags, ins.dxf.name))
    for col in cache.values():
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


def _drop_non_finite(c: Circles, s: Segments, t: Texts) -> tuple[Circles, Segments, Texts, tuple[int, str] | None]:
    """Drop entities whose coordinates are NaN or infinite (ezdxf reads them as given)."""
    kc = np.isfinite(c.x) & np.isfinite(c.y) & np.isfinite(c.r) & (c.r > 0)
    ks = (np.isfinite(s.x0) & np.isfinite(s.y0) & np.isfinite(s.x1) & np.isfinite(s.y1)
          & np.isfinite(s.cx) & np.isfinite(s.cy) & np.isfinite(s.r) & np.isfinite(s.sweep))
    kt = np.isfinite(t.x) & np.isfinite(t.y)
    n = int((~kc).sum() + (~ks).sum() + (~kt).sum())
    if n == 0:
        return c, s, t, None
    if (~kc).any():
        i = int(np.flatnonzero(~kc)[0])
        first = f"CIRCLE #{c.handle[i]} on {c.layer[i]}"
    elif (~ks).any():
        i = int(np.flatnonzero(~ks)[0])
        first = f"{s.kind[i]} #{s.handle[i]} on {s.layer[i]}"
    else:
        i = int(np.flatnonzero(~kt)[0])
        first = f"TEXT #{t.handle[i]} on {t.layer[i]}"
    return _mask(c, kc), _mask(s, ks), _mask(t, kt), (n, first)


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
        raise NotADrawing(f"{p}: is a folder; spanwise check reads one DXF drawing (check the drawings "
                          f"in a folder one by one, or with spanwise audit where it is installed)")
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
        doc, recovered, findings = _load(p, data, binary)
        col, attribs = _flatten(doc)
    finally:
        if was_enabled:
            gc.enable()
    return _drawing(col, attribs, findings, path=p, sha256=hashlib.sha256(data).hexdigest(),
                    version=version or doc.dxfversion, units=units, recovered=recovered,
                    document=doc if keep_document else None)


def read_document(doc: Any, *, path: str = "<document>") -> Drawing:
    """A :class:`Drawing` from an ezdxf document already in memory (kept in ``document``).

    Its units are the header's ``$INSUNITS`` (0, unitless, counts as none declared); it has
    no file, so no ``sha256``.
    """
    code = int(doc.header.get("$INSUNITS", 0) or 0) if doc.dxfversion > "AC1009" else 0
    col, attribs = _flatten(doc)
    return _drawing(col, attribs, [], path=path, sha256="", version=doc.dxfversion,
                    units=INSUNITS_NAMES.get(code), recovered=False, document=doc)


def _drawing(col: _Collector, attribs: list[AttribSet], findings: list[Finding], *, path: str, sha256: str,
             version: str, units: str | None, recovered: bool, document: Any) -> Drawing:
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
                                f"{Path(p).name}: {n} entit{'y' if n == 1 else 'ies'} with coordinates that are not "
                                f"finite numbers skipped, the first {first}; the file may be damaged",
                                data={"skipped": n}))
    return Drawing(path=p, sha256=sha256, version=version, units=units, recovered=recovered, circles=circles,
                   segments=segments, texts=texts, attribs=attribs, findings=findings, entity_count=col.count,
                   own_count=col.own, document=document)
