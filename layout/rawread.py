"""Read a text DXF from its raw tags when ezdxf's readers reject it, and rebuild it.

General-purpose CAD programs open files that ezdxf's normal and recovery readers both
refuse, or that the recovery reader reads with entities missing: the usual case is an
LWPOLYLINE written without its ``100/AcDbPolyline`` subclass marker (and often without
``AcDbEntity``, handles or a header), as vector-graphics programs export it. This module
walks the group-code/value pairs with ezdxf's low-level loader for untrusted input
(:func:`ezdxf.recover.bytes_loader`: no structure checks, no decoding of the whole file)
and rebuilds a fresh ezdxf document holding the entity types spanwise reads, so the rest
of :mod:`layout.read` and the writers work unchanged.

Read: CIRCLE, ARC, LINE, ELLIPSE, LWPOLYLINE, POLYLINE (2D and 3D; with VERTEX/SEQEND),
TEXT, MTEXT, INSERT (with ATTRIB) and the BLOCK definitions they use, layer names, and
the header's ``$ACADVER``, ``$INSUNITS`` and ``$DWGCODEPAGE``. Everything else is skipped
and counted by type, as is what cannot be rebuilt: an entity cut off by the end of the
file, a number that is not a number, paper space, a reference to an undefined block, one
that makes a block contain itself, or one nesting blocks deeper than :data:`MAX_NESTING`.

The walk is one pass over the tags, without recursion; it holds only the entities it
rebuilds (their tags), never the whole file's.
"""

from __future__ import annotations

import io
import logging
from collections import Counter
from dataclasses import dataclass, field
from typing import Any, Callable

__all__ = ["RawEntity", "RawBlock", "RawDrawing", "walk", "build", "lost_entities", "READ_TYPES",
           "MAX_NESTING"]

log = logging.getLogger(__name__)

#: The entity types the raw reader rebuilds (the ones :mod:`layout.read` uses).
READ_TYPES = frozenset({"CIRCLE", "ARC", "LINE", "ELLIPSE", "LWPOLYLINE", "POLYLINE", "TEXT", "MTEXT",
                        "INSERT"})
#: Deepest nesting of block references kept (model space is level 0).
MAX_NESTING = 32
#: Versions a rebuilt document may keep; older drawings are rebuilt as AC1015 (R2000, which has LWPOLYLINE).
_NEW_VERSIONS = ("AC1015", "AC1018", "AC1021", "AC1024", "AC1027", "AC1032")
_LAYOUT_BLOCKS = ("*MODEL_SPACE", "*PAPER_SPACE", "$MODEL_SPACE", "$PAPER_SPACE")
_HEADER_VARS = {b"$ACADVER": "version", b"$INSUNITS": "insunits", b"$DWGCODEPAGE": "codepage"}
_BAD_NAME = str.maketrans({c: "_" for c in '<>/\\":;?*|=`'})


@dataclass(slots=True, eq=False)
class RawEntity:
    """One entity as raw ``(code, value bytes)`` tags; VERTEX or ATTRIB sub-entities in ``children``."""

    type: str
    tags: list[tuple[int, bytes]] = field(default_factory=list)
    children: list["RawEntity"] = field(default_factory=list)

    def first(self, code: int, default: bytes | None = None) -> bytes | None:
        """The value of the first tag with ``code``."""
        for c, v in self.tags:
            if c == code:
                return v
        return default


@dataclass(slots=True)
class RawBlock:
    """One BLOCK definition: its header tags and the entities it holds."""

    head: RawEntity
    entities: list[RawEntity] = field(default_factory=list)

    @property
    def name(self) -> str:
        return (self.head.first(2) or b"").decode("utf-8", "replace").strip()


@dataclass(slots=True)
class RawDrawing:
    """What one walk of the tags found."""

    header: dict[str, bytes]
    entities: list[RawEntity]                  # model space, in file order
    blocks: list[RawBlock]
    skipped: Counter[str]                      # entity type (or what went wrong) -> count
    stopped: str = ""                          # why the walk ended before the end of the file
    ended_in: str = ""
    """The section still open where the tags ran out without ``0 EOF`` (``"SECTION"`` before its
    name), else ``""``: a file cut off inside its HEADER, TABLES, BLOCKS or ENTITIES."""

    def modelspace_counts(self) -> Counter[str]:
        """Model space entities by type."""
        return Counter(e.type for e in self.entities)


# --------------------------------------------------------------------------- the walk


class _Walker:
    """State of one pass over the tags: section, block, entity, and open POLYLINE/INSERT."""

    def __init__(self) -> None:
        self.raw = RawDrawing({}, [], [], Counter())
        self.section: str | None = None
        self.block: RawBlock | None = None
        self.current: RawEntity | None = None     # the entity receiving tags
        self.parent: RawEntity | None = None      # a POLYLINE or INSERT taking VERTEX/ATTRIB
        self.var: str | None = None

    def tag(self, code: int, value: bytes) -> None:
        if code == 0:
            self.finish()
            self.start(value.strip().decode("ascii", "replace").upper())
        elif self.current is not None:
            self.current.tags.append((code, value))
        elif self.section == "":
            if code == 2:
                self.section = value.strip().decode("ascii", "replace").upper()
        elif self.section == "HEADER":
            self.header(code, value)

    def header(self, code: int, value: bytes) -> None:
        if code == 9:
            self.var = _HEADER_VARS.get(value.strip())
        elif self.var is not None:
            self.raw.header.setdefault(self.var, value.strip())
            self.var = None

    def start(self, name: str) -> None:
        """A ``0`` tag opened ``name``."""
        if name == "SECTION":
            self.close_parent()
            self.section = ""
        elif name in ("ENDSEC", "EOF"):
            self.close_parent()
            self.section = None
        elif self.section == "BLOCKS" and name in ("BLOCK", "ENDBLK"):
            self.close_parent()
            self.block = RawBlock(RawEntity(name)) if name == "BLOCK" else None
            if self.block is not None:
                self.current = self.block.head
                self.raw.blocks.append(self.block)
        elif self.section in ("ENTITIES", "BLOCKS"):
            self.entity(name)

    def entity(self, name: str) -> None:
        if self.parent is not None:
            if name in ("VERTEX", "ATTRIB"):
                self.current = RawEntity(name)
                self.parent.children.append(self.current)
                return
            self.close_parent()
            if name == "SEQEND":
                return
        if name in READ_TYPES:
            self.current = RawEntity(name)
        else:
            self.raw.skipped[name] += 1

    def finish(self) -> None:
        """The entity being read is complete: keep it where it belongs."""
        e, self.current = self.current, None
        if e is None or e.type in ("BLOCK", "VERTEX", "ATTRIB"):
            return
        if self.section == "BLOCKS":
            blk = self.block
            where = blk.name.upper() if blk is not None else ""
            if blk is None or where.startswith(_LAYOUT_BLOCKS):
                place = "paper space" if "PAPER" in where else (f"block {where}" if where else "no block")
                self.raw.skipped[f"{e.type} in {place}"] += 1
                return
            blk.entities.append(e)
        elif e.first(67, b"0").strip() not in (b"", b"0"):
            self.raw.skipped[f"{e.type} in paper space"] += 1
            return
        else:
            self.raw.entities.append(e)
        if e.type == "POLYLINE" or (e.type == "INSERT" and e.first(66, b"0").strip() == b"1"):
            self.parent = e

    def close_parent(self) -> None:
        self.parent = None

    def cut_off(self) -> None:
        """The tags ended inside an entity (or a POLYLINE/INSERT before its SEQEND): drop it."""
        e = self.parent or self.current
        if e is None or e.type == "BLOCK":
            return
        for target in (self.raw.entities, self.block.entities if self.block else []):
            if target and target[-1] is e:
                target.pop()
        self.raw.skipped[f"{e.type} cut off by the end of the file"] += 1
        self.current = self.parent = None


def walk(data: bytes) -> RawDrawing:
    """Walk the tags of a text DXF once and keep what :func:`build` rebuilds.

    Parameters
    ----------
    data
        The bytes of the file.

    Returns
    -------
    RawDrawing
        Model space entities, block definitions, header values and the skipped counts.
        A group code that is not a number ends the walk (``stopped`` says where); what
        came before it is kept.
    """
    from ezdxf.lldxf.const import DXFStructureError
    from ezdxf.recover import bytes_loader

    w = _Walker()
    ended = False
    try:
        for code, value in bytes_loader(io.BytesIO(data)):
            if code == 0 and value.strip() == b"EOF":
                ended = True
            w.tag(code, value)
    except DXFStructureError as err:
        w.raw.stopped = str(err)
    if not ended and w.section is not None:
        w.raw.ended_in = w.section or "SECTION"
        w.cut_off()
    else:
        w.finish()
    return w.raw


def lost_entities(raw: RawDrawing, doc: Any) -> dict[str, int]:
    """Model space entities of the types spanwise reads that ``raw`` holds and ``doc`` lacks, by type."""
    held = Counter(e.dxftype() for e in doc.modelspace())
    return {t: n - held[t] for t, n in sorted(raw.modelspace_counts().items()) if n > held[t]}


# --------------------------------------------------------------------------- values


class _BadValue(ValueError):
    """A tag value that is not what its group code needs."""


class _Unsupported(Exception):
    """An entity of a read type in a form spanwise does not use (a polygon mesh)."""


def _num(v: bytes | None, default: float | None = None) -> float:
    if v is None:
        if default is None:
            raise _BadValue("missing")
        return default
    try:
        return float(v)
    except ValueError as err:
        raise _BadValue(v.decode("latin-1")) from err


def _int(v: bytes | None, default: int = 0) -> int:
    if v is None:
        return default
    try:
        return int(v)
    except ValueError:
        return int(_num(v))


def _point(e: RawEntity, code: int, default: tuple[float, float, float] | None = None
           ) -> tuple[float, float, float]:
    """The point of group codes ``code``, ``code + 10``, ``code + 20`` (z defaults to 0)."""
    x, y = e.first(code), e.first(code + 10)
    if x is None and y is None and default is not None:
        return default
    return _num(x), _num(y), _num(e.first(code + 20), 0.0)


class _Text:
    """Decodes text values with the file's encoding (and ``\\U+XXXX`` escapes)."""

    def __init__(self, header: dict[str, bytes]) -> None:
        from ezdxf.tools.codepage import toencoding

        version = header.get("version", b"").decode("ascii", "replace")
        page = header.get("codepage")
        self.encoding = "utf-8" if version >= "AC1021" else (
            toencoding(page.decode("ascii", "replace")) if page else "")

    def __call__(self, v: bytes | None, default: str = "") -> str:
        from ezdxf.lldxf.encoding import decode_dxf_unicode, has_dxf_unicode

        if v is None:
            return default
        if self.encoding:
            s = v.decode(self.encoding, "replace")
        else:                          # nothing declared: UTF-8 when it is, else ANSI 1252
            try:
                s = v.decode("utf-8")
            except UnicodeDecodeError:
                s = v.decode("cp1252", "replace")
        return decode_dxf_unicode(s) if has_dxf_unicode(s) else s


# --------------------------------------------------------------------------- rebuilding


class _Builder:
    """Adds raw entities to a layout of a new document; counts what it cannot add."""

    def __init__(self, doc: Any, raw: RawDrawing) -> None:
        self.doc = doc
        self.text = _Text(raw.header)
        self.skipped = raw.skipped
        self.blocks: set[str] = set()
        self.count = 0

    def name(self, e: RawEntity) -> str:
        """The block name (group code 2) of a BLOCK or INSERT."""
        return self.text(e.first(2)).strip()

    def layer(self, e: RawEntity) -> str:
        name = self.text(e.first(8), "0").strip().translate(_BAD_NAME) or "0"
        if name not in self.doc.layers:
            self.doc.layers.add(name)
        return name

    def common(self, e: RawEntity) -> dict[str, Any]:
        attribs: dict[str, Any] = {"layer": self.layer(e)}
        if e.first(210) is not None:
            attribs["extrusion"] = _point(e, 210)
        if e.first(62) is not None:
            attribs["color"] = _int(e.first(62))
        return attribs

    def add(self, layout: Any, e: RawEntity) -> None:
        from ezdxf.lldxf.const import DXFError

        if e.type == "INSERT" and self.name(e) not in self.blocks:
            self.skipped["INSERT of an undefined block"] += 1
            return
        try:
            _ADDERS[e.type](self, layout, e, self.common(e))
        except _Unsupported as err:
            self.skipped[f"{e.type} ({err})"] += 1
            return
        except (ValueError, TypeError, DXFError) as err:   # a value ezdxf refuses: that entity only
            log.info("%s skipped by the raw reader: %s", e.type, err)
            self.skipped[f"{e.type} with a bad value"] += 1
            return
        self.count += 1


def _add_circle(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    layout.add_circle(_point(e, 10), _num(e.first(40)), dxfattribs=attribs)


def _add_arc(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    layout.add_arc(_point(e, 10), _num(e.first(40)), _num(e.first(50), 0.0), _num(e.first(51), 360.0),
                   dxfattribs=attribs)


def _add_line(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    layout.add_line(_point(e, 10), _point(e, 11), dxfattribs=attribs)


def _add_ellipse(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    layout.add_ellipse(_point(e, 10), _point(e, 11), _num(e.first(40), 1.0), _num(e.first(41), 0.0),
                       _num(e.first(42), 6.283185307179586), dxfattribs=attribs)


def _add_lwpolyline(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    points: list[list[float]] = []           # x, y, start width, end width, bulge
    at = {20: 1, 40: 2, 41: 3, 42: 4}
    for code, value in e.tags:
        if code == 10:
            points.append([_num(value), 0.0, 0.0, 0.0, 0.0])
        elif code in at and points:
            points[-1][at[code]] = _num(value)
    flags = _int(e.first(70))
    attribs.update(flags=flags, elevation=_num(e.first(38), 0.0), const_width=_num(e.first(43), 0.0))
    layout.add_lwpolyline(points, format="xyseb", close=bool(flags & 1), dxfattribs=attribs)


def _add_polyline(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    flags = _int(e.first(70))
    if flags & (16 | 64):
        raise _Unsupported("polygon mesh")
    vertices = [(_point(v, 10), _num(v.first(42), 0.0), _int(v.first(70))) for v in e.children]
    attribs["flags"] = flags
    if flags & 8:
        pl = layout.add_polyline3d([p for p, _, _ in vertices], close=bool(flags & 1), dxfattribs=attribs)
    else:
        attribs["elevation"] = _point(e, 10, (0.0, 0.0, 0.0))
        pl = layout.add_polyline2d([(p[0], p[1], bulge) for p, bulge, _ in vertices], format="xyb",
                                   close=bool(flags & 1), dxfattribs=attribs)
    for v, (_, _, vflags) in zip(pl.vertices, vertices):
        v.dxf.flags |= vflags


def _add_text(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    attribs.update(insert=_point(e, 10), height=_num(e.first(40), 1.0), rotation=_num(e.first(50), 0.0),
                   halign=_int(e.first(72)), valign=_int(e.first(73)))
    if e.first(11) is not None:
        attribs["align_point"] = _point(e, 11)
    layout.add_text(b.text(e.first(1)), dxfattribs=attribs)


def _add_mtext(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    chunks = [b.text(v) for c, v in e.tags if c == 3] + [b.text(e.first(1))]
    attribs.update(insert=_point(e, 10), char_height=_num(e.first(40), 1.0), rotation=_num(e.first(50), 0.0),
                   attachment_point=_int(e.first(71), 1) or 1)
    if e.first(41) is not None:
        attribs["width"] = _num(e.first(41))
    if e.first(11) is not None:
        attribs["text_direction"] = _point(e, 11)
    layout.add_mtext("".join(chunks), dxfattribs=attribs)


def _add_insert(b: _Builder, layout: Any, e: RawEntity, attribs: dict[str, Any]) -> None:
    attribs.update(xscale=_num(e.first(41), 1.0), yscale=_num(e.first(42), 1.0), zscale=_num(e.first(43), 1.0),
                   rotation=_num(e.first(50), 0.0), column_count=_int(e.first(70), 1) or 1,
                   row_count=_int(e.first(71), 1) or 1, column_spacing=_num(e.first(44), 0.0),
                   row_spacing=_num(e.first(45), 0.0))
    ref = layout.add_blockref(b.name(e), _point(e, 10), dxfattribs=attribs)
    for a in e.children:
        ref.add_attrib(b.text(a.first(2)).strip(), b.text(a.first(1)), _point(a, 10, (0.0, 0.0, 0.0)),
                       dxfattribs={"layer": b.layer(a), "height": _num(a.first(40), 1.0)})


_ADDERS: dict[str, Callable[[_Builder, Any, RawEntity, dict[str, Any]], None]] = {
    "CIRCLE": _add_circle, "ARC": _add_arc, "LINE": _add_line, "ELLIPSE": _add_ellipse,
    "LWPOLYLINE": _add_lwpolyline, "POLYLINE": _add_polyline, "TEXT": _add_text, "MTEXT": _add_mtext,
    "INSERT": _add_insert}


def _drop_cycles(blocks: dict[str, RawBlock], name_of: Callable[[RawEntity], str],
                 skipped: Counter[str]) -> list[str]:
    """Remove the references that make a block contain itself; the block names, parents first.

    One depth-first pass with an explicit stack (each block entered once): a reference to
    a block on the current path closes a cycle and is removed. The reversed finishing order
    of what remains is a topological order.
    """
    finished: list[str] = []
    done: set[str] = set()
    dropped: set[int] = set()
    for root in blocks:
        if root in done:
            continue
        path = {root}
        stack = [(root, iter(blocks[root].entities))]
        while stack:
            name, todo = stack[-1]
            e = next(todo, None)
            if e is None:
                stack.pop()
                path.discard(name)
                done.add(name)
                finished.append(name)
                continue
            child = name_of(e) if e.type == "INSERT" else ""
            if child in path:
                dropped.add(id(e))
            elif child in blocks and child not in done:
                path.add(child)
                stack.append((child, iter(blocks[child].entities)))
    if dropped:
        skipped["INSERT making a block contain itself"] += len(dropped)
        for blk in blocks.values():
            blk.entities = [e for e in blk.entities if id(e) not in dropped]
    return finished[::-1]


def _prune_nesting(blocks: dict[str, RawBlock], roots: list[str], name_of: Callable[[RawEntity], str],
                   skipped: Counter[str], *, limit: int = MAX_NESTING) -> None:
    """Drop the references that make a block contain itself or nest blocks deeper than ``limit``.

    ``roots`` are the blocks model space references (level 1). Levels are pushed down the
    blocks in topological order (the deepest level each block is reached at); a block at
    level ``limit`` loses its own references, so no chain from model space is longer.
    """
    level = {name: 1 for name in roots if name in blocks}
    for name in _drop_cycles(blocks, name_of, skipped):
        at = level.get(name)
        if at is None:
            continue                     # not reached from model space
        blk = blocks[name]
        refs = [e for e in blk.entities if e.type == "INSERT"]
        if at >= limit and refs:
            skipped[f"INSERT nesting blocks deeper than {limit} levels"] += len(refs)
            blk.entities = [e for e in blk.entities if e.type != "INSERT"]
            continue
        for e in refs:
            child = name_of(e)
            if child in blocks:
                level[child] = max(level.get(child, 0), at + 1)


def build(raw: RawDrawing, *, insunits: int = 0) -> tuple[Any, int]:
    """A new ezdxf document holding the entities of ``raw``; with the number rebuilt.

    Parameters
    ----------
    raw
        What :func:`walk` found; ``raw.skipped`` gains what could not be rebuilt.
    insunits
        The ``$INSUNITS`` code to declare (0: none), as the caller read the header: the
        header's value is not one for drawings of R12 and older.

    Returns
    -------
    tuple
        The document (the file's version when ezdxf can create it, else AC1015; a layer
        per layer name used, one block per definition) and the number of entities rebuilt
        (model space and blocks).
    """
    import ezdxf

    version = raw.header.get("version", b"").decode("ascii", "replace").strip().upper()
    doc = ezdxf.new(version if version in _NEW_VERSIONS else "AC1015")
    doc.header["$INSUNITS"] = insunits
    b = _Builder(doc, raw)
    blocks: dict[str, RawBlock] = {}
    for blk in raw.blocks:
        name = b.name(blk.head)
        if not name or name.upper().startswith(_LAYOUT_BLOCKS):
            continue
        if name in blocks:
            raw.skipped["BLOCK defined twice"] += 1
            continue
        blocks[name] = blk
    _prune_nesting(blocks, [b.name(e) for e in raw.entities if e.type == "INSERT"], b.name, raw.skipped)
    made: list[tuple[Any, RawBlock]] = []
    for name, blk in blocks.items():
        try:
            layout = doc.blocks.new(name, base_point=_point(blk.head, 10, (0.0, 0.0, 0.0)))
        except (ValueError, _BadValue) as err:     # an invalid name or base point
            log.info("BLOCK %r skipped by the raw reader: %s", name, err)
            raw.skipped["BLOCK with a bad name or base point"] += 1
            continue
        made.append((layout, blk))
        b.blocks.add(name)
    for layout, blk in made:
        for e in blk.entities:
            b.add(layout, e)
    msp = doc.modelspace()
    for e in raw.entities:
        b.add(msp, e)
    return doc, b.count
