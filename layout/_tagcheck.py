"""Find the tag values ezdxf's text loader refuses, without a Python object per tag.

The streamed reading (:mod:`layout.stream`) decodes only the entities a check reads. The
whole-document reader would still have refused a number that is not one, a point without its
y coordinate, a bad handle or binary chunk, or a HEADER out of step anywhere in the file, and
then read the drawing with its recovery reader and said so. These checks find the same damage
in the parts the stream skips, with numpy over the line positions: every code line is parsed
as a number, and every value line of a numeric, handle or binary group code is checked the
way ezdxf's loader reads it (``ezdxf.lldxf.tagger.tag_compiler`` and the header validator).
They are at least as strict as ezdxf: a value they cannot vouch for (a number longer than
:data:`MAX_NUMBER_WIDTH` characters, a NUL byte) also sends the file to the whole-document
reader.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = ["TagDamage", "app_data_problem", "check_values", "header_problem"]

#: The highest group code DXF defines; codes above it (and negative ones) are read as strings.
MAX_CODE = 1071
#: The longest group code line vouched for (ezdxf writes three characters).
MAX_CODE_WIDTH = 16
#: The longest number vouched for without the whole-document reader.
MAX_NUMBER_WIDTH = 48
#: The longest handle or binary chunk vouched for (DXF writes binary data in 254-digit lines).
MAX_HEX_WIDTH = 512
#: Value lines checked per numpy step (bounds the temporary arrays).
LINES_PER_STEP = 1 << 17

_STR, _INT, _FLOAT, _BINARY = range(4)
_POINT_CODES = np.array([10, 11, 12, 13, 14, 15, 16, 17, 18, 110, 111, 112,
                         210, 211, 212, 213, 1010, 1011, 1012, 1013])
_HEX = np.zeros(256, bool)
_HEX[list(b"0123456789abcdefABCDEF")] = True


class TagDamage(Exception):
    """A tag ezdxf's loader would refuse, or one these checks cannot vouch for."""


def _kinds() -> NDArray[np.int8]:
    """How ezdxf's loader reads each group code (index ``MAX_CODE + 1``: any code outside DXF's)."""
    from ezdxf.lldxf.types import BINARY_DATA, TYPE_TABLE

    kind = np.full(MAX_CODE + 2, _STR, np.int8)
    for code, typ in TYPE_TABLE.items():
        if 0 <= code <= MAX_CODE:
            kind[code] = _INT if typ is int else _FLOAT if typ is float else _STR
    kind[sorted(BINARY_DATA)] = _BINARY
    return kind


_KIND = _kinds()


def _gather(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64],
            lines: NDArray[np.int64], cap: int) -> tuple[NDArray[np.uint8], NDArray[np.bool_]]:
    """The bytes of ``lines`` as rows of one zero-padded matrix, and which bytes are the lines'."""
    first = start[lines]
    length = end[lines] - first
    width = max(1, int(length.max(initial=0)))
    if width > cap:
        raise TagDamage(f"a value line of {width} characters")
    cols = np.arange(width)
    buf = arr[np.minimum(first[:, None] + cols, arr.size - 1)]
    inside = cols < length[:, None]
    buf[~inside] = 0
    return buf, inside


def _fixed(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64],
           lines: NDArray[np.int64], cap: int) -> NDArray[np.bytes_]:
    """The bytes of ``lines`` as one fixed-width bytes array (trailing ``\\r`` kept)."""
    buf, inside = _gather(arr, start, end, lines, cap)
    if np.any(buf[inside] == 0):
        raise TagDamage("a NUL byte in a number")
    return np.ascontiguousarray(buf).view(f"S{buf.shape[1]}").ravel()


def _codes(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64], tags: int
           ) -> NDArray[np.int32]:
    """The group code of each of the first ``tags`` tags (its code line is line ``2 * tag``)."""
    out = np.empty(tags, np.int32)
    for lo in range(0, tags, LINES_PER_STEP):
        lines = 2 * np.arange(lo, min(lo + LINES_PER_STEP, tags), dtype=np.int64)
        try:
            values = _fixed(arr, start, end, lines, MAX_CODE_WIDTH).astype(np.int64)
        except (ValueError, OverflowError) as err:
            raise TagDamage("a group code is not a number") from err
        out[lo:lo + lines.size] = np.clip(values, -1, MAX_CODE + 1)
    return out


def _numbers(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64],
             lines: NDArray[np.int64], integer: bool) -> None:
    """Refuse a value line that ezdxf's ``float()`` (or ``int(float())`` for integers) refuses."""
    for lo in range(0, lines.size, LINES_PER_STEP):
        part = lines[lo:lo + LINES_PER_STEP]
        try:
            values = _fixed(arr, start, end, part, MAX_NUMBER_WIDTH).astype(np.float64)
        except ValueError as err:
            raise TagDamage(f"a value of line {_first_bad(arr, start, end, part)} is not a number") from err
        if integer and not np.isfinite(values).all():
            raise TagDamage("an integer value that is not finite")


def _first_bad(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64],
               lines: NDArray[np.int64]) -> int:
    """The 1-based line number of the first line in ``lines`` numpy cannot parse (for messages)."""
    for q in lines.tolist():
        try:
            float(bytes(arr[start[q]:end[q]]))
        except ValueError:
            return q + 1
    return int(lines[0]) + 1


def _hex_lines(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64],
               lines: NDArray[np.int64], even: bool, what: str) -> None:
    """Refuse a value line that is not hexadecimal digits (of even count for binary chunks)."""
    for lo in range(0, lines.size, LINES_PER_STEP):
        buf, inside = _gather(arr, start, end, lines[lo:lo + LINES_PER_STEP], MAX_HEX_WIDTH)
        length = inside.sum(axis=1)
        last = buf[np.arange(buf.shape[0]), np.maximum(length - 1, 0)]
        cr = (length > 0) & (last == 13)
        inside[np.flatnonzero(cr), length[cr] - 1] = False
        digits = length - cr
        if np.any(digits == 0) or not _HEX[buf[inside]].all() or (even and np.any(digits % 2)):
            raise TagDamage(f"{what} that is not hexadecimal")


def _handle_tags(codes: NDArray[np.int32]) -> NDArray[np.int64]:
    """The tag of each entity's handle: its first group code 5 or 105 (as ezdxf's
    ``Tags.get_handle``; a later 5, like a DIMSTYLE's arrow block, is a string)."""
    tags = np.flatnonzero((codes == 5) | (codes == 105))
    entity = np.searchsorted(np.flatnonzero(codes == 0), tags, "right")
    _, first = np.unique(entity, return_index=True)
    return tags[first]


def check_values(arr: NDArray[np.uint8], start: NDArray[np.int64], end: NDArray[np.int64],
                 tags: int) -> NDArray[np.int32]:
    """Check the first ``tags`` tags as ezdxf's loader would; return their group codes.

    Raises :class:`TagDamage` on the first tag ezdxf would refuse (or that is not vouched for).
    """
    codes = _codes(arr, start, end, tags)
    kind = _KIND[np.where(codes < 0, MAX_CODE + 1, codes)]
    values = 2 * np.arange(tags, dtype=np.int64) + 1
    _numbers(arr, start, end, values[kind == _FLOAT], integer=False)
    _numbers(arr, start, end, values[kind == _INT], integer=True)
    _hex_lines(arr, start, end, values[_handle_tags(codes)], False, "a handle")
    _hex_lines(arr, start, end, values[kind == _BINARY], True, "binary data")
    x = np.flatnonzero(np.isin(codes, _POINT_CODES))
    follow = np.minimum(x + 1, tags - 1)
    if np.any((x + 1 >= tags) | (codes[follow] != codes[x] + 10)):
        raise TagDamage("a point without its y coordinate")
    return codes


def header_problem(codes: NDArray[np.int32], values: list[bytes]) -> str | None:
    """What ezdxf's header validator refuses in a HEADER's tags (after SECTION/HEADER), or None.

    The tags alternate a variable name (group code 9, starting with ``$``) and one value; a
    point's coordinates are one value.
    """
    points = set(_POINT_CODES.tolist())
    name_due = True
    t, n = 0, len(values)
    while t < n:
        code = int(codes[t])
        if name_due:
            if code != 9:
                return f"header variable tag {code} where a name was expected"
            if not values[t].startswith(b"$"):
                return "a header variable name without its leading $"
        elif code in points:
            t += 2 if t + 2 < n and int(codes[t + 2]) == code + 20 else 1
        name_due = not name_due
        t += 1
    return None


def _first_per_entity(codes: NDArray[np.int32], which: NDArray[np.bool_]) -> NDArray[np.int64]:
    """For each entity (0-tag), the first of its tags marked in ``which`` (``len(codes)`` if none)."""
    starts = np.flatnonzero(codes == 0)
    out = np.full(starts.size, codes.size, np.int64)
    tags = np.flatnonzero(which)
    entity = np.searchsorted(starts, tags, "right") - 1
    keep = entity >= 0
    ent, first = np.unique(entity[keep], return_index=True)
    out[ent] = tags[keep][first]
    return out


def app_data_problem(codes: NDArray[np.int32], value: Any) -> str | None:
    """An application data group ezdxf's loader refuses (an opening ``{`` in an entity's base
    class never closed by ``}`` or ``APPID}`` in that entity), or None.

    ``value(tag)`` gives a tag's raw value; only the 102 tags are looked at, one by one.
    """
    starts = np.flatnonzero(codes == 0)
    base_end = _first_per_entity(codes, (codes == 100) | (codes == 101) | (codes == 1001))
    tags = np.flatnonzero(codes == 102)
    entities = np.searchsorted(starts, tags, "right") - 1
    closing: tuple[bytes, ...] = ()
    open_in = -1
    for t, e in zip(tags.tolist(), entities.tolist()):
        if open_in >= 0 and e != open_in:
            return "application data without its closing tag"
        v = value(t)
        if open_in >= 0:
            if v in closing:
                open_in = -1
        elif v.startswith(b"{") and e >= 0 and t < base_end[e]:
            open_in, closing = e, (b"}", v[1:] + b"}")
    return "application data without its closing tag" if open_in >= 0 else None
