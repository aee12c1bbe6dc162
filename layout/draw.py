"""Draw an exact belt path into a DXF layout (model space or a block).

Used to draw the tangent path of a loop routed from the spec, by the sample-drawing
generator and by tests that build drawings in memory. Coordinates in drawing units.
"""

from __future__ import annotations

import math
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike

from physics.geometry import loop_geometry

__all__ = ["add_belt_path", "path_pieces"]

Form = Literal["polyline", "lines", "spans"]


def path_pieces(centers: ArrayLike, radii: ArrayLike, turns: ArrayLike) -> list[dict[str, Any]]:
    """The exact path as pieces in travel order: spans and wraps.

    Each piece is ``{"kind": "span", "start": (x, y), "end": (x, y)}`` or ``{"kind":
    "wrap", "center": (x, y), "radius": r, "start": (x, y), "end": (x, y), "sweep": rad}``
    (``sweep`` signed, counter-clockwise positive). Span ``k`` leaves pulley ``k``.
    """
    c = np.asarray(centers, dtype=float)
    r = np.asarray(radii, dtype=float)
    t = np.asarray(turns, dtype=float)
    g = loop_geometry(c, r, t)
    n = len(r)
    pieces: list[dict[str, Any]] = []
    for k in range(n):
        pieces.append({"kind": "span", "start": tuple(g.span_start_m[k]), "end": tuple(g.span_end_m[k])})
        j = (k + 1) % n
        pieces.append({"kind": "wrap", "center": tuple(c[j]), "radius": float(r[j]),
                       "start": tuple(g.span_end_m[k]), "end": tuple(g.span_start_m[j]),
                       "sweep": float(t[j] * g.wrap_rad[j])})
    return pieces


def add_belt_path(layout: Any, centers: ArrayLike, radii: ArrayLike, turns: ArrayLike, *,
                  form: Form = "polyline", layer: str = "BELT") -> list[Any]:
    """Add the exact belt path to an ezdxf layout; return the entities added.

    Parameters
    ----------
    form
        ``polyline``: one closed LWPOLYLINE with bulges; ``lines``: LINE and ARC entities;
        ``spans``: the free spans only, as LINEs (wraps left to the circles).
    """
    pieces = path_pieces(centers, radii, turns)
    attribs = {"layer": layer}
    added: list[Any] = []
    if form == "polyline":
        pts = []
        for i in range(0, len(pieces), 2):
            span, wrap = pieces[i], pieces[i + 1]
            pts.append((span["start"][0], span["start"][1], 0.0))
            pts.append((span["end"][0], span["end"][1], math.tan(wrap["sweep"] / 4.0)))
        added.append(layout.add_lwpolyline(pts, format="xyb", close=True, dxfattribs=attribs))
        return added
    for p in pieces:
        if p["kind"] == "span":
            added.append(layout.add_line(p["start"], p["end"], dxfattribs=attribs))
        elif form == "lines" and abs(p["sweep"]) > 0:
            cx, cy = p["center"]
            a0 = math.degrees(math.atan2(p["start"][1] - cy, p["start"][0] - cx))
            a1 = math.degrees(math.atan2(p["end"][1] - cy, p["end"][0] - cx))
            if p["sweep"] < 0:
                a0, a1 = a1, a0
            added.append(layout.add_arc((cx, cy), p["radius"], a0, a1, dxfattribs=attribs))
    return added
