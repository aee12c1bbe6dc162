"""``spanwise suggest-idler``: the drawing's side of idler placement.

Finds the span the user names, turns an allowed region drawn on a layer into polygons in
the drive's frame, calls :func:`physics.placement.suggest_idler`, and can draw the
suggestions (idler circles, labels and the belt's new tangent path) into a copy of the
drawing on spanwise's own layers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from physics.catalogue import find_section
from physics.model import Side
from physics.placement import NEW_IDLER_ID, IdlerSuggestion, suggest_idler

from .errors import FatalInput
from .pipeline import Checked, options_for
from .recognize import layer_matches

__all__ = ["IDLER_LAYER", "PATH_LAYER", "find_span", "region_polygons", "suggest", "write_suggestions",
           "suggestion_dict"]

#: spanwise's own layers for suggested idlers and the belt path through them.
IDLER_LAYER = "SPANWISE-IDLER"
PATH_LAYER = "SPANWISE-IDLER-PATH"


@dataclass(frozen=True, slots=True)
class SpanRef:
    loop_id: str
    index: int
    span_id: str


def find_span(checked: Checked, span: str, loop: str | None = None) -> SpanRef:
    """The span called ``span`` (``FROM-TO``, case-insensitive), in ``loop`` if given."""
    hits = []
    for lp in checked.model.loops:
        if loop is not None and lp.id.lower() != loop.lower():
            continue
        n = len(lp.pulleys)
        for k in range(n):
            sid = f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % n]}"
            if sid.lower() == span.lower():
                hits.append(SpanRef(lp.id, k, sid))
    if not hits:
        known = ", ".join(f"{lp.id}: " + " ".join(f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % len(lp.pulleys)]}"
                                                  for k in range(len(lp.pulleys))) for lp in checked.model.loops)
        raise FatalInput(f"--span {span}: no such span{'' if loop is None else f' in loop {loop}'}; spans are "
                         f"named FROM-TO in travel order ({known})")
    if len(hits) > 1:
        raise FatalInput(f"--span {span}: in loops {', '.join(h.loop_id for h in hits)}; add --loop")
    return hits[0]


def region_polygons(checked: Checked, layer: str) -> list[np.ndarray]:
    """Closed polylines (and closed line/arc chains drawn as one polyline) on ``layer``, as
    polygons in the drive's frame (metres); arcs are followed in steps of at most 5 degrees."""
    d = checked.model.drawing
    S = d.segments
    model = checked.model
    groups: dict[int, list[int]] = {}
    for i in range(len(S)):
        if S.group[i] >= 0 and layer_matches(S.layer[i], (layer,)):
            groups.setdefault(int(S.group[i]), []).append(i)
    polys = []
    for idx in groups.values():
        first, last = idx[0], idx[-1]
        if math.hypot(S.x1[last] - S.x0[first], S.y1[last] - S.y0[first]) > 1e-9 * max(1.0, abs(S.x0[first])):
            continue                          # an open polyline
        pts = []
        for i in idx:
            if S.sweep[i] == 0.0:
                pts.append((S.x0[i], S.y0[i]))
            else:
                a0 = math.atan2(S.y0[i] - S.cy[i], S.x0[i] - S.cx[i])
                steps = max(2, int(abs(S.sweep[i]) / math.radians(5)) + 1)
                for t in np.linspace(0.0, S.sweep[i], steps, endpoint=False):
                    pts.append((S.cx[i] + S.r[i] * math.cos(a0 + t), S.cy[i] + S.r[i] * math.sin(a0 + t)))
        o = np.asarray(model.origin)
        polys.append((np.asarray(pts) - o) * model.factor)
    if not polys:
        raise FatalInput(f"--region {layer}: no closed polyline on that layer")
    return polys


def default_radius(checked: Checked, ref: SpanRef) -> float:
    """A new idler's pitch radius when none is given: the smaller of the span's two pulleys,
    but not under the belt section's minimum."""
    drive = checked.model.drive
    loop = next(lp for lp in drive.loops if lp.id == ref.loop_id)
    n = len(loop.pulleys)
    r = min(drive.pulleys[loop.pulleys[ref.index]].radius_m, drive.pulleys[loop.pulleys[(ref.index + 1) % n]].radius_m)
    sec = find_section(loop.belt.section) if loop.belt.section else None
    if sec is not None and sec.min_pitch_diameter_m:
        r = max(r, sec.min_pitch_diameter_m / 2)
    return r


def suggest(checked: Checked, ref: SpanRef, *, radius_m: float | None, side: Side, region: list[np.ndarray] | None,
            count: int) -> list[IdlerSuggestion]:
    """Run the placement search for ``ref`` with the drawing's analysis options."""
    opts = options_for(checked.model.spec)
    r = radius_m if radius_m is not None else default_radius(checked, ref)
    return suggest_idler(checked.model.drive, ref.loop_id, ref.index, r, side=side, options=opts, region=region,
                         count=count)


def suggestion_dict(checked: Checked, s: IdlerSuggestion, rank: int) -> dict[str, Any]:
    """One suggestion as plain values (points in drawing units)."""
    model = checked.model
    res = s.results
    lr = res.loops[s.loop_id]
    g, mech = lr.geometry, lr.mechanics
    loop = lr.loop
    n = len(loop.pulleys)
    k = loop.pulleys.index(NEW_IDLER_ID)
    spans = {}
    for j in range(n):
        sid = f"{loop.pulleys[j]}-{loop.pulleys[(j + 1) % n]}"
        if sid in s.spans and mech is not None and mech.dynamics is not None:
            spans[sid] = {"length_m": float(g.span_length_m[j]),
                          "frequencies_hz": [float(f) for f in mech.dynamics.frequencies_hz[0, j]]}
    hub = mech.hub_n[:, k, :] if mech is not None else np.zeros((1, 2))
    return {
        "rank": rank, "loop": s.loop_id, "center": list(model.to_drawing(s.center_m)),
        "pitch_diameter_m": 2 * s.radius_m, "side": s.side.value, "along": s.along,
        "deflection_m": s.deflection_m, "wrap_deg": math.degrees(float(g.wrap_rad[k])),
        "wraps_deg": {p: math.degrees(float(w)) for p, w in zip(loop.pulleys, g.wrap_rad)},
        "hub_load_n": float(np.hypot(*hub[0])), "max_hub_load_n": float(np.hypot(hub[:, 0], hub[:, 1]).max()),
        "worst_grip_utilisation": s.worst_grip, "resonance_clearance": s.clearance,
        "loop_resonance_clearance": s.loop_clearance, "resonances_left": s.resonance_count, "spans": spans,
    }


def write_suggestions(checked: Checked, suggestions: list[IdlerSuggestion], out: Path) -> None:
    """A copy of the drawing with the suggested idlers and their belt paths on our layers
    (each entity tagged with spanwise's XDATA, so spanwise never reads them as drawing)."""
    import ezdxf

    from ._own import APPID
    from .draw import add_belt_path
    from .output import save_document

    doc = checked.document if checked.document is not None else ezdxf.readfile(checked.model.drawing.path)
    if APPID not in doc.appids:
        doc.appids.add(APPID)
    for name, color in ((IDLER_LAYER, 3), (PATH_LAYER, 4)):
        if name not in doc.layers:
            doc.layers.add(name, color=color)
    msp = doc.modelspace()
    model = checked.model
    added = []
    for rank, s in enumerate(suggestions, 1):
        c = model.to_drawing(s.center_m)
        r = s.radius_m / model.factor
        added.append(msp.add_circle(c, r, dxfattribs={"layer": IDLER_LAYER}))
        added.append(msp.add_text(f"IDLER {rank}", height=r / 3,
                                  dxfattribs={"layer": IDLER_LAYER, "insert": (c[0] - r / 2, c[1])}))
        loop = s.results.loops[s.loop_id].loop
        drive = s.drive
        centers = [model.to_drawing(drive.pulleys[p].center_m) for p in loop.pulleys]
        radii = [drive.pulleys[p].radius_m / model.factor for p in loop.pulleys]
        added += add_belt_path(msp, centers, radii, loop.turns, form="spans", layer=PATH_LAYER)
    for e in added:
        e.set_xdata(APPID, [(1000, "suggested idler")])
    save_document(doc, out)
