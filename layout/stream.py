"""Read the entities a check needs straight from a text DXF's tags, without loading the document.

A read-only check (no annotated copy) needs circles, arcs, lines, polylines, ellipses, texts,
block definitions and block references, and nothing else: not the tables, the objects, the
hatches and dimensions a drawing library is full of, nor an ezdxf object per entity. This
module splits the file into its group-code/value pairs once (the same decoding and line
endings as ezdxf's own text loader), walks the entity boundaries, and collects the entity
types spanwise reads into the collectors of :mod:`layout.read`, with the same values, the
same drawing order and the same block expansion as reading the whole document.

It reads only well-formed files. Whatever it cannot read exactly as the whole-document reader
would (a group code that is not a number, no end-of-file marker, a value that is not a
number, a group code given twice in one entity, a polyline or block reference whose
sub-entities are out of place, entities without handles, a subclass marker missing where
ezdxf requires it, a binary DXF) raises :class:`NotStreamable`, and :func:`layout.read.read_drawing`
then loads the whole document, with its recovery readers. Damage in the parts it skips (the
tables, the objects, entity types spanwise never reads) is noticed only by the whole-document
reader, as a check writing an annotated copy uses.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._own import OWN_PREFIX, is_own_name
from . import _tagcheck as tc
from . import read as rd

__all__ = ["NotStreamable", "stream_drawing"]

_CODEPAGE = re.compile(rb"\$DWGCODEPAGE[ \t]*\r?\n[ \t]*3[ \t]*\r?\n([^\r\n]*)")
#: Group codes never read from an entity: subclass markers, application data, owners, reactors.
_IGNORED = frozenset({100, 102, 330, 360, 999})
#: The subclass markers each entity type read must start with, when it has any (as ezdxf loads
#: them: a value in a missing subclass is silently not read there).
_MARKERS = {"LINE": ("AcDbLine",), "CIRCLE": ("AcDbCircle",), "ARC": ("AcDbCircle",),
            "ELLIPSE": ("AcDbEllipse",), "TEXT": ("AcDbText",), "MTEXT": ("AcDbMText",),
            "LWPOLYLINE": ("AcDbPolyline",),
            "POLYLINE": ("AcDb2dPolyline", "AcDb3dPolyline", "AcDbPolyFaceMesh", "AcDbPolygonMesh"),
            "INSERT": ("AcDbBlockReference", "AcDbMInsertBlock")}
#: Types ezdxf refuses without their subclass marker, whatever the version.
_MARKER_REQUIRED = frozenset({"LWPOLYLINE", "MTEXT"})
#: Group codes an entity type may repeat (read in order, not as one value).
_REPEATS = {"LWPOLYLINE": frozenset({10, 20, 40, 41, 42, 91}), "MTEXT": frozenset({3})}
_READ = frozenset(rd._COLLECT) | {"INSERT"}
#: The tables ezdxf loads (a TABLE of another name is damage to it).
_TABLES = frozenset({"LAYER", "LTYPE", "APPID", "DIMSTYLE", "STYLE", "UCS", "VIEW", "VPORT", "BLOCK_RECORD"})
#: A code line holding group code 0 (which lines are code lines is decided by parity).
_ZERO_LINE = re.compile(rb"(?m)^[ \t]*0[ \t]*\r?$")
#: A layer tag (group code 8) naming one of spanwise's own layers (:mod:`layout._own`).
#: (It starts at the line end before the code: over twice as fast as a multi-line ``^``.)
_OWN_LAYER = re.compile(rb"\n[ \t]*8[ \t]*\r?\n(?i:" + re.escape(OWN_PREFIX.encode()) + rb")")


class NotStreamable(Exception):
    """The file is not one the stream reads exactly as the whole-document reader would."""


@dataclass(slots=True)
class _Ref:
    """One block reference read from its tags (an INSERT, a MINSERT array)."""

    name: str
    handle: str
    layer: str
    order: int
    insert: tuple[float, float, float]
    scale: tuple[float, float, float]
    rotation: float
    extrusion: tuple[float, float, float] | None
    rows: int
    columns: int
    row_spacing: float
    column_spacing: float
    attribs: list[tuple[str, str]] = field(default_factory=list)

    @property
    def cells(self) -> int:
        """ezdxf's MINSERT count: rows and columns count only with a spacing."""
        return (self.rows if self.row_spacing else 1) * (self.columns if self.column_spacing else 1)


# --------------------------------------------------------------------------- values


def _f(d: dict[int, bytes], code: int, default: float | None = None) -> float:
    v = d.get(code)
    if v is None:
        if default is None:
            raise NotStreamable(f"group code {code} missing")
        return default
    try:
        return float(v)
    except ValueError as err:
        raise NotStreamable(f"group code {code}: {v[:40]!r} is not a number") from err


def _i(d: dict[int, bytes], code: int, default: int = 0) -> int:
    v = d.get(code)
    if v is None:
        return default
    try:
        return int(v)
    except ValueError:
        try:
            return int(float(v))          # as ezdxf reads integers written as floats
        except ValueError as err:
            raise NotStreamable(f"group code {code}: {v[:40]!r} is not an integer") from err


def _pt(d: dict[int, bytes], code: int, default: tuple[float, float, float] | None = None
        ) -> tuple[float, float, float]:
    if code not in d and default is not None:
        return default
    return _f(d, code), _f(d, code + 10), _f(d, code + 20, 0.0)


def _extrusion(d: dict[int, bytes]) -> tuple[float, float, float] | None:
    return _pt(d, 210) if 210 in d else None


def _sign(d: dict[int, bytes]) -> float | None:
    """:func:`layout.read._ocs_sign` from the tags."""
    return rd.extrusion_sign(_extrusion(d))


# --------------------------------------------------------------------------- the tags


class _Tags:
    """The file's lines located once (numpy), its 0-tags named; an entity's tags split when read.

    Nothing is decoded or split for the entities skipped: a drawing's hatches, dimensions and
    tables cost one vectorised pass over the bytes. Code lines are checked to be numbers the
    same way, so a line lost or added anywhere (every tag after it misread) is refused.
    """

    def __init__(self, data: bytes, version: str) -> None:
        if data.count(b"\r") != data.count(b"\r\n"):
            raise NotStreamable("lines ended by a lone carriage return")
        self.data = data
        self.crlf = b"\r" in data
        self.encoding = _encoding(data, version)
        arr = np.frombuffer(data, np.uint8)
        nl = np.flatnonzero(arr == 10)
        self.line_start = np.concatenate(([0], nl + 1))
        self.line_end = np.concatenate((nl, [len(data)]))
        zl = self._zero_lines()
        names = [data[self.line_start[q + 1]:self.line_end[q + 1]].strip().decode("ascii", "replace")
                 for q in zl.tolist()]
        try:
            eof = names.index("EOF")
        except ValueError as err:
            raise NotStreamable("no end-of-file marker") from err
        self.zero = zl[:eof + 1].tolist()          # line index of each 0-tag, EOF last
        self.names = names[:eof + 1]
        if data[self.line_start[self.zero[-1] + 1]:self.line_end[self.zero[-1] + 1]].rstrip(b"\r") != b"EOF":
            raise NotStreamable("an end-of-file marker with spaces")
        self.codes = _checked_codes(arr, self.line_start, self.line_end, self.zero)
        problem = tc.app_data_problem(self.codes, lambda t: self.values(t, t + 1)[0])
        if problem:
            raise NotStreamable(problem)

    def _zero_lines(self) -> NDArray[np.int64]:
        """Line indices of the code lines that are group code 0."""
        pos = np.fromiter((m.start() for m in _ZERO_LINE.finditer(self.data)), np.int64)
        lines = np.searchsorted(self.line_start, pos, "right") - 1
        return lines[lines % 2 == 0]

    def tags(self, k: int) -> tuple[list[int], list[bytes]]:
        """Group codes and raw values of entity ``k`` (the tags after its 0-tag)."""
        first, stop = self.zero[k] + 2, self.zero[k + 1]
        if stop <= first:
            return [], []
        return self.codes[first // 2:stop // 2].tolist(), self.values(first // 2, stop // 2)

    def values(self, first: int, stop: int) -> list[bytes]:
        """The raw values of tags ``first`` to ``stop`` (not including it), line ends removed."""
        if stop <= first:
            return []
        lines = self.data[self.line_start[2 * first + 1]:self.line_end[2 * stop - 1]].split(b"\n")[0::2]
        return [v[:-1] if v.endswith(b"\r") else v for v in lines] if self.crlf else lines

    def own_layer_entities(self) -> set[int]:
        """The 0-tag indices of the entities with a layer tag naming one of spanwise's layers."""
        pos = np.fromiter((m.start() + 1 for m in _OWN_LAYER.finditer(self.data)), np.int64)
        lines = np.searchsorted(self.line_start, pos, "right") - 1
        lines = lines[lines % 2 == 0]
        return set((np.searchsorted(np.asarray(self.zero), lines, "right") - 1).tolist())

    def section_name(self, k: int) -> str:
        """The name of the section 0-tag ``k`` opens: the value of its first tag, when that is a 2."""
        q = self.zero[k] + 2
        if q + 1 >= self.zero[k + 1]:
            return ""
        line = self.data[self.line_start[q]:self.line_end[q + 1]].split(b"\n")
        return line[1].strip().decode("ascii", "replace") if line[0].strip() == b"2" else ""

    def fields(self, k: int, repeats: frozenset[int] = frozenset()) -> dict[int, bytes]:
        """Entity ``k``'s tags as one value per group code; a code given twice is refused.

        Codes in ``repeats`` (vertices, text chunks) are left for :meth:`tags`. Subclass markers
        are kept, in order, under the key ``100`` joined by ``/``; the owner handle (the first
        330 outside application data) under ``330``.
        """
        d: dict[int, bytes] = {}
        markers: list[bytes] = []
        in_app = False
        codes, values = self.tags(k)
        for c, v in zip(codes, values):
            if c == 100:
                markers.append(v.strip())
            elif c == 102:
                in_app = v.strip().startswith(b"{")
            elif c == 330:
                if not in_app and 330 not in d:
                    d[330] = v
            elif c == 101:                        # an embedded object: not the entity's own tags
                break
            elif c in _IGNORED or c >= 1000 or c in repeats:
                continue
            elif c in d:
                raise NotStreamable(f"group code {c} given twice in one entity")
            else:
                d[c] = v
        if in_app:
            raise NotStreamable("application data without its closing tag")
        if markers:
            d[100] = b"/".join(markers)
        return d

    def text(self, v: bytes | None, default: str = "") -> str:
        """A string value as ezdxf decodes it."""
        return default if v is None else v.decode(self.encoding, "surrogateescape")


def _checked_codes(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64],
                   zero: list[int]) -> NDArray[np.int32]:
    """The group code of every tag up to EOF, each value checked as ezdxf's loader reads it.

    The 0-tags found by :data:`_ZERO_LINE` must be exactly the tags whose code is 0: a line
    lost or added anywhere (every tag after it misread) is refused.
    """
    try:
        codes = tc.check_values(arr, start, end, zero[-1] // 2 + 1)
    except tc.TagDamage as err:
        raise NotStreamable(str(err)) from err
    if not np.array_equal(np.flatnonzero(codes == 0) * 2, zero):
        raise NotStreamable("a group code 0 written in an unusual way")
    return codes


def _encoding(data: bytes, version: str) -> str:
    """The text encoding ezdxf decodes the file with."""
    if version >= "AC1021":
        return "utf-8"
    from ezdxf.tools.codepage import toencoding

    m = _CODEPAGE.search(rd._header_text(data[:rd.HEADER_WINDOW]))
    return toencoding(m.group(1).decode("ascii", "replace")) if m else "cp1252"


# --------------------------------------------------------------------------- the walk


class _Stream(rd._Flattener):
    """A flattener over the tags: model space collected in one walk, blocks as they are referenced."""

    def __init__(self, data: bytes, version: str, name: str) -> None:
        super().__init__(None, name)
        self.tags = _Tags(data, version)
        self.block_spans: dict[str, tuple[int, int]] = {}     # lower-case name -> its entities (0-tags)
        self.bases: dict[str, tuple[float, float, float]] = {}
        self.top = rd._Collector()
        self.inserts: list[_Ref] = []
        self.owners: dict[str, int] = {}          # block record handle -> 0 model space, 1 paper space
        self.own_unread = self.tags.own_layer_entities()   # annotations of types not read: counted only
        self.walk()

    # ---- sections

    def walk(self) -> None:
        t = self.tags
        names = t.names
        i, n = 0, len(names) - 1                  # the last 0-tag is EOF
        entities = None
        while i < n:
            if names[i] != "SECTION":
                raise NotStreamable(f"{names[i]!r} outside a section")
            section = t.section_name(i)
            j = i + 1
            while j < n and names[j] != "ENDSEC":
                if names[j] == "SECTION":
                    raise NotStreamable(f"section {section or '(unnamed)'} has no ENDSEC")
                j += 1
            if j == n:
                raise NotStreamable(f"section {section or '(unnamed)'} has no ENDSEC")
            if section == "HEADER":
                self.header(i, j)
            elif section == "TABLES":
                self.tables(i + 1, j)
            elif section == "BLOCKS":
                self.block_section(i + 1, j)
            elif section == "ENTITIES":
                entities = (i + 1, j)
            i = j + 1
        if entities is not None:                   # after the tables: owners decide the space
            self.entities(*entities, self.top, self.inserts, top=True)

    def header(self, i: int, j: int) -> None:
        """Refuse a HEADER section ezdxf's header validator would refuse."""
        t = self.tags
        first, stop = t.zero[i] // 2 + 2, t.zero[j] // 2
        codes, values = t.codes[first:stop], t.values(first, stop)
        problem = tc.header_problem(codes, values)
        if problem:
            raise NotStreamable(problem)

    def tables(self, i: int, j: int) -> None:
        """The handles of the model and paper space block records (the owners of entities)."""
        t = self.tags
        self.table_structure(i, j)
        for k in range(i, j):
            if t.names[k] == "BLOCK_RECORD":
                d = t.fields(k)
                name = t.text(d.get(2)).strip().upper()
                if name in ("*MODEL_SPACE", "*PAPER_SPACE") and 5 in d:
                    self.owners[t.text(d[5])] = 0 if name == "*MODEL_SPACE" else 1

    def table_structure(self, i: int, j: int) -> None:
        """Refuse TABLES ezdxf loads only with its recovery reader: each table a TABLE head of a
        known table, its named entries and an ENDTAB (checked tag by tag: tables are small)."""
        t = self.tags
        table = None
        for k in range(i, j):
            name = t.names[k]
            if name == "ENDTAB" and table is not None:
                table = None
                continue
            if table is None and (name != "TABLE" or t.text(t.fields(k).get(2)).strip() not in _TABLES):
                raise NotStreamable(f"{name!r} where a table of TABLES was expected")
            _check_entry(name, *t.tags(k))
            table = table or name

    def block_section(self, i: int, j: int) -> None:
        t = self.tags
        k = i
        while k < j:
            if t.names[k] != "BLOCK":
                raise NotStreamable(f"{t.names[k]!r} outside a block definition")
            end = k + 1
            while end < j and t.names[end] != "ENDBLK":
                end += 1
            if end == j:
                raise NotStreamable("a block definition has no ENDBLK")
            d = t.fields(k)
            name = t.text(d.get(2))
            key = name.lower()
            if key.startswith(("*model_space", "$model_space")):
                if end > k + 1:
                    raise NotStreamable(f"entities in the {name} block")
            elif key.startswith(("*paper_space", "$paper_space")):
                pass
            elif key in self.block_spans:
                raise NotStreamable(f"block {name!r} defined twice")
            else:
                self.block_spans[key] = (k + 1, end)
                self.bases[key] = _pt(d, 10, (0.0, 0.0, 0.0))
            k = end + 1

    def entities(self, i: int, j: int, col: rd._Collector, inserts: list[_Ref], *, top: bool) -> None:
        """Entities ``i`` to ``j`` (0-tag indices) into ``col``; sub-entities follow their parent.

        In model space the drawing order counts every entity of the section, read or not: the
        same relative order as ezdxf's model space (only the entities read are looked into, so
        paper space ones are told apart there, by their owner, else by their 67 flag).
        """
        names = self.tags.names
        order = 0
        k = i
        while k < j:
            name = names[k]
            follow = self.children(k, j)
            if name in _READ:
                col.current_order = order
                self.entity(col, inserts, name, k, follow, order, top)
            elif k in self.own_unread:
                self.own_entity(col, k, top)
            order += top
            k = follow

    def children(self, k: int, j: int) -> int:
        """The 0-tag index after entity ``k`` and its VERTEX/ATTRIB sub-entities and SEQEND."""
        t = self.tags
        name = t.names[k]
        if name not in ("POLYLINE", "INSERT"):
            return k + 1
        if name == "INSERT" and not _i(t.fields(k), 66):
            return k + 1
        want = "VERTEX" if name == "POLYLINE" else "ATTRIB"
        m = k + 1
        while m < j and t.names[m] == want:
            m += 1
        if m >= j or t.names[m] != "SEQEND":
            raise NotStreamable(f"{name} without its SEQEND")
        return m + 1

    def paper_space(self, d: dict[int, bytes]) -> bool:
        """Whether a top-level entity is in paper space: by its owner first, else its 67 flag."""
        space = self.owners.get(self.tags.text(d[330])) if 330 in d else None
        if space is not None:
            return space == 1
        return bool(_i(d, 67))

    # ---- entities

    def own_entity(self, col: rd._Collector, k: int, top: bool) -> None:
        """Count an entity of a type not read (an arrowhead SOLID) on one of spanwise's layers."""
        d = self.tags.fields(k)
        if not (top and self.paper_space(d)) and is_own_name(self.tags.text(d.get(8), "0")):
            col.own += 1

    def entity(self, col: rd._Collector, inserts: list[_Ref], name: str, k: int, follow: int,
               order: int, top: bool) -> None:
        """One entity of a read type, as :func:`layout.read._collect_entity` adds it."""
        t = self.tags
        d = t.fields(k, _REPEATS.get(name, frozenset()))
        if top and self.paper_space(d):
            return
        if 5 not in d:
            raise NotStreamable(f"{name} without a handle")
        _check_markers(name, d)
        layer = t.text(d.get(8), "0")
        handle = t.text(d[5])
        if is_own_name(layer) or (name == "INSERT" and is_own_name(t.text(d.get(2)))):
            col.own += 1
            return
        if name == "INSERT":
            inserts.append(self.reference_of(d, layer, handle, order, k, follow))
            col.count += 1
            return
        if _ADD[name](self, col, d, k, follow, layer, handle):
            col.count += 1

    def reference_of(self, d: dict[int, bytes], layer: str, handle: str, order: int, k: int,
                     follow: int) -> _Ref:
        """A block reference and its attributes (the ATTRIBs before its SEQEND)."""
        t = self.tags
        ref = _Ref(t.text(d.get(2)), handle, layer, order, _pt(d, 10, (0.0, 0.0, 0.0)),
                   (_f(d, 41, 1.0), _f(d, 42, 1.0), _f(d, 43, 1.0)), _f(d, 50, 0.0), _extrusion(d),
                   _i(d, 71, 1), _i(d, 70, 1), _f(d, 45, 0.0), _f(d, 44, 0.0))
        for m in range(k + 1, follow - 1):
            a = t.fields(m)
            ref.attribs.append((t.text(a.get(2)), t.text(a.get(1))))
        return ref

    # ---- the flattener's sources

    def model_space(self) -> tuple[rd._Collector, list[Any]]:
        return self.top, self.inserts

    def block_contents(self, name: str) -> tuple[rd._Collector, list[Any]] | None:
        span = self.block_spans.get(name.lower())
        if span is None:
            return None
        col, nested = rd._Collector(), []
        self.entities(*span, col, nested, top=False)
        return col, nested

    def reference(self, ins: _Ref) -> rd._Reference:
        return rd._Reference(ins.name, ins.handle, ins.layer, ins.order, ins.cells, ins.rows, ins.columns,
                             ins.insert[0], ins.insert[1])

    def matrices(self, ins: _Ref, cells: int) -> list[NDArray[np.float64]]:
        base = self.bases.get(ins.name.lower())
        if cells <= 1:
            return [_matrix(ins, ins.insert, base)]
        return [_matrix(ins, p, base) for p in _cells(ins)]

    def attrib_sets(self, inserts: list[_Ref]) -> list[rd.AttribSet]:
        return [rd.AttribSet(ins.handle, ins.insert[0], ins.insert[1],
                             {tag.strip().upper(): text.strip() for tag, text in ins.attribs}, ins.name)
                for ins in inserts if ins.attribs]


def _check_entry(name: str, codes: list[int], values: list[bytes]) -> None:
    """Refuse a table head or entry without its name where ezdxf reads it: an entry with
    subclass markers names itself after its second marker, the first being the symbol table
    record's."""
    if 2 not in codes:
        raise NotStreamable(f"a {name} table entry without its name")
    markers = [q for q, c in enumerate(codes) if c == 100]
    if name == "TABLE" or not markers:
        return
    if (len(markers) < 2 or values[markers[0]].strip() != b"AcDbSymbolTableRecord"
            or 2 not in codes[markers[1]:]):
        raise NotStreamable(f"a {name} table entry whose subclass markers are out of place")


def _check_markers(name: str, d: dict[int, bytes]) -> None:
    """Refuse an entity whose subclass markers are not the ones ezdxf loads its values from."""
    markers = d[100].decode("ascii", "replace").split("/") if 100 in d else []
    if not markers:
        if name in _MARKER_REQUIRED:
            raise NotStreamable(f"{name} without its {_MARKERS[name][0]} subclass")
        return
    if markers[0] != "AcDbEntity" or len(markers) < 2 or markers[1] not in _MARKERS[name]:
        raise NotStreamable(f"{name} with subclass markers {'/'.join(markers[:3])}")


def _cells(ins: _Ref) -> list[tuple[float, float, float]]:
    """Insert points of a MINSERT's cells, as ezdxf's ``multi_insert`` gives them."""
    from ezdxf.math import Vec3

    done: set[Vec3] = set()
    points = []
    base = Vec3(ins.insert)
    for row in range(ins.rows):
        for col in range(ins.columns):
            offset = Vec3(col * ins.column_spacing, row * ins.row_spacing)
            if offset in done:
                continue
            done.add(offset)
            if ins.rotation:
                offset = offset.rotate_deg(ins.rotation)
            points.append((base + offset).xyz)
    return points


def _matrix(ins: _Ref, insert: tuple[float, float, float], base: tuple[float, float, float] | None
            ) -> NDArray[np.float64]:
    """The block reference's transform, by the very steps of ezdxf's ``Insert.matrix44``."""
    from ezdxf.math import OCS, X_AXIS, Y_AXIS, Matrix44, Vec3

    ocs = OCS(ins.extrusion if ins.extrusion is not None else (0, 0, 1))
    sx, sy, sz = ins.scale
    extrusion = ocs.uz
    ux = Vec3(ocs.to_wcs(X_AXIS))
    uy = Vec3(ocs.to_wcs(Y_AXIS))
    m = Matrix44.ucs(ux=ux * sx, uy=uy * sy, uz=extrusion * sz)
    angle = math.radians(ins.rotation)
    if angle:
        m *= Matrix44.axis_rotate(extrusion, angle)
    p = ocs.to_wcs(insert)
    if base is not None:
        p -= m.transform_direction(base)
    m.set_row(3, p.xyz)
    return np.array(list(m.rows()), dtype=float)


# --------------------------------------------------------------------------- one function per type
# Each mirrors its ``layout.read._collect_*`` over an ezdxf entity: same values, same defaults.


def _line(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str, handle: str) -> bool:
    x0, y0, _ = _pt(d, 10, (0.0, 0.0, 0.0))
    x1, y1, _ = _pt(d, 11, (0.0, 0.0, 0.0))
    if x0 != x1 or y0 != y1:
        col.seg((x0, y0), (x1, y1), 0.0, 0.0, 0.0, 0.0, -1, layer, handle, "LINE")
    return True


def _circle(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str,
            handle: str) -> bool:
    sign = _sign(d)
    if sign is None:
        return False
    x, y, _ = _pt(d, 10, (0.0, 0.0, 0.0))
    r = _f(d, 40, 1.0)
    if r > 0:
        col.circle(sign * x, y, r, layer, handle)
    return True


def _arc(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str, handle: str) -> bool:
    sign = _sign(d)
    if sign is None:
        return False
    x, y, _ = _pt(d, 10, (0.0, 0.0, 0.0))
    r = _f(d, 40, 1.0)
    a0 = math.radians(_f(d, 50, 0.0))
    a1 = math.radians(_f(d, 51, 360.0))
    if not (math.isfinite(a0) and math.isfinite(a1) and math.isfinite(r)):
        rd._not_finite(col, layer, handle, "ARC")
        return True
    sw = (a1 - a0) % (2 * math.pi)
    if r <= 0 or sw == 0.0:
        return False
    p0 = (sign * (x + r * math.cos(a0)), y + r * math.sin(a0))
    p1 = (sign * (x + r * math.cos(a1)), y + r * math.sin(a1))
    col.seg(p0, p1, sign * x, y, r, sign * sw, -1, layer, handle, "ARC")
    return True


def _lwpolyline(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str,
                handle: str) -> bool:
    sign = _sign(d)
    if sign is None:
        return False
    t = s.tags
    pts: list[list[float]] = []
    pending_y = False
    for code, value in zip(*t.tags(k)):
        if code in (10, 20, 42):
            try:
                v = float(value)
            except ValueError as err:
                raise NotStreamable(f"LWPOLYLINE #{handle}: a vertex value is not a number") from err
            if code == 10:
                if pending_y:
                    raise NotStreamable(f"LWPOLYLINE #{handle}: a vertex without its y")
                pts.append([v, 0.0, 0.0])
                pending_y = True
            elif not pts or (code == 20) != pending_y:
                raise NotStreamable(f"LWPOLYLINE #{handle}: vertex values out of order")
            elif code == 20:
                pts[-1][1] = v
                pending_y = False
            else:
                pts[-1][2] = v
    if pending_y:
        raise NotStreamable(f"LWPOLYLINE #{handle}: a vertex without its y")
    rd._add_polyline(col, [(p[0], p[1], p[2]) for p in pts], bool(_i(d, 70) & 1), sign, layer, handle,
                     "LWPOLYLINE")
    return True


def _polyline(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str,
              handle: str) -> bool:
    flags = _i(d, 70)
    t = s.tags
    verts = [t.fields(m) for m in range(k + 1, follow - 1)]
    if flags & (8 | 16 | 64) == 0:                    # a 2D polyline
        sign = _sign(d)
        if sign is None:
            return False
        pts = [_pt(v, 10, (0.0, 0.0, 0.0))[:2] + (_f(v, 42, 0.0),) for v in verts]
        rd._add_polyline(col, pts, bool(flags & 1), sign, layer, handle, "POLYLINE")
    elif flags & 8:
        pts = [_pt(v, 10, (0.0, 0.0, 0.0))[:2] + (0.0,) for v in verts]
        rd._add_polyline(col, pts, bool(flags & 1), 1.0, layer, handle, "POLYLINE")
    return True


def _ellipse(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str,
             handle: str) -> bool:
    sign = _sign(d)
    ratio = _f(d, 40, 1.0)
    if sign is None or abs(ratio - 1.0) > rd.CIRCLE_RATIO_TOL:
        return False
    cx, cy, _ = _pt(d, 10, (0.0, 0.0, 0.0))
    mx, my, mz = _pt(d, 11, (1.0, 0.0, 0.0))
    r = math.hypot(mx, my)
    if r <= 0 or abs(mz) > 1e-9 * r:
        return False
    p0, p1 = _f(d, 41, 0.0), _f(d, 42, math.tau)
    if not (math.isfinite(p0) and math.isfinite(p1) and math.isfinite(r)):
        rd._not_finite(col, layer, handle, "ELLIPSE")
        return True
    sw = (p1 - p0) % (2 * math.pi)
    if sw < 1e-9 or sw > 2 * math.pi - 1e-9:
        col.circle(cx, cy, r, layer, handle)
        return False
    base = math.atan2(my, mx)
    a0 = base + sign * p0
    a1 = base + sign * p1
    col.seg((cx + r * math.cos(a0), cy + r * math.sin(a0)), (cx + r * math.cos(a1), cy + r * math.sin(a1)),
            cx, cy, r, sign * sw, -1, layer, handle, "ELLIPSE")
    return True


def _text(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str,
          handle: str) -> bool:
    from ezdxf.tools.text import plain_text

    p = _pt(d, 10, (0.0, 0.0, 0.0))
    if (_i(d, 72) or _i(d, 73)) and 11 in d:
        p = _pt(d, 11)
    sign = _sign(d) or 1.0
    raw = s.tags.text(d.get(1))
    col.text(sign * p[0], p[1], plain_text(raw) if len(raw) <= rd.MAX_TEXT_CHARS else raw[:rd.MAX_TEXT_CHARS + 1],
             layer, handle)
    return True


def _mtext(s: _Stream, col: rd._Collector, d: dict[int, bytes], k: int, follow: int, layer: str,
           handle: str) -> bool:
    from ezdxf.tools.text import escape_dxf_line_endings, fast_plain_mtext

    t = s.tags
    tail, parts = "", []
    for code, value in zip(*t.tags(k)):
        if code == 101:
            break
        if code == 1:
            tail = t.text(value)
        elif code == 3:
            parts.append(t.text(value))
    raw = escape_dxf_line_endings("".join(parts + [tail]))
    x, y, _ = _pt(d, 10, (0.0, 0.0, 0.0))
    col.text(x, y, fast_plain_mtext(raw, split=False) if len(raw) <= rd.MAX_TEXT_CHARS else raw[:rd.MAX_TEXT_CHARS + 1],
             layer, handle)
    return True


_ADD = {"LINE": _line, "CIRCLE": _circle, "ARC": _arc, "LWPOLYLINE": _lwpolyline, "POLYLINE": _polyline,
        "ELLIPSE": _ellipse, "TEXT": _text, "MTEXT": _mtext}


def stream_drawing(data: bytes, version: str, name: str) -> tuple[rd._Collector, list[rd.AttribSet]]:
    """Model space of a text DXF's bytes, block references expanded, and the attribute sets.

    Raises
    ------
    NotStreamable
        When the file is not one this reader reads exactly as the whole-document reader.
    FatalInput
        When the block references ask for more than the limits of :mod:`layout.read`.
    """
    return rd.flatten_with(_Stream(data, version, name))
