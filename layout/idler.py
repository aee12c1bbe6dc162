"""``spanwise suggest-idler``: the drawing's side of idler placement.

Finds the span the user names, turns an allowed region drawn on a layer into polygons in
the drive's frame, calls :func:`physics.placement.place_idler`, words the answer for the
console (the suggestions, how the added belt length is taken up, or which constraints ruled
every position out), and can draw the suggestions (idler circles, labels and the belt's new
tangent path) into a copy of the drawing on spanwise's own layers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from physics.catalogue import find_section
from physics.model import Side
from physics.placement import (CONSTRAINT_TEXT, NEW_IDLER_ID, Constraint, IdlerSuggestion, Placement, TakeUp,
                               TakeUpMode, place_idler)

from .errors import FatalInput
from .pipeline import Checked, options_for
from .quantity import QuantityError, parse_quantity
from .recognize import layer_matches

__all__ = ["IDLER_LAYER", "PATH_LAYER", "find_span", "region_polygons", "suggest", "place", "suggestions_document", "write_suggestions",
           "suggestion_dict", "placement_dict", "console_lines", "length_option"]

#: spanwise's own layers for suggested idlers and the belt path through them.
IDLER_LAYER = "SPANWISE-IDLER"
PATH_LAYER = "SPANWISE-IDLER-PATH"


def length_option(name: str, text: str | None, problems: list[str], *, positive: bool) -> float | None:
    """A length option of the command line (``'90 mm'``, ``'0.2 in'``) in metres, or ``None``
    when not given; a bad value adds one line to ``problems``."""
    if text is None:
        return None
    try:
        value = parse_quantity(text, "length")
    except QuantityError as err:
        problems.append(f"{name}: {err}")
        return None
    if value < 0 or (positive and value == 0):
        problems.append(f"{name} {text}: expected a length {'greater than' if positive else 'of at least'} 0")
        return None
    return value


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


def place(checked: Checked, ref: SpanRef, *, radius_m: float | None, side: Side,
          region: list[np.ndarray] | None, count: int, clearance_m: float | None = None) -> Placement:
    """Run the placement search for ``ref`` with the drawing's analysis options (its results
    already computed serve as the drive without the idler)."""
    opts = options_for(checked.model.spec)
    r = radius_m if radius_m is not None else default_radius(checked, ref)
    return place_idler(checked.model.drive, ref.loop_id, ref.index, r, side=side, options=opts, region=region,
                       count=count, clearance_m=clearance_m, base=checked.results)


def suggest(checked: Checked, ref: SpanRef, *, radius_m: float | None, side: Side, region: list[np.ndarray] | None,
            count: int, clearance_m: float | None = None) -> list[IdlerSuggestion]:
    """The suggestions of :func:`place` alone, best first (empty when no idler is needed)."""
    return list(place(checked, ref, radius_m=radius_m, side=side, region=region, count=count,
                      clearance_m=clearance_m).suggestions)


def _take_up_dict(t: TakeUp) -> dict[str, Any]:
    return {"mode": t.mode.value, "added_length_m": t.added_length_m, "belt_length_m": t.belt_length_m,
            "axial_stiffness_n": t.axial_stiffness_n, "tension_rise_n": t.tension_rise_n,
            "adjust_pulley": t.adjust_pulley, "adjust_travel_m": t.adjust_travel_m}


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
        "install_tension_n": None if mech is None else mech.install_tension_n,
        "loop_resonance_clearance": s.loop_clearance, "resonances_left": s.resonance_count,
        "loop_resonances_left": s.loop_resonance_count, "gap_m": s.gap_m, "spans": spans,
        "take_up": None if s.take_up is None else _take_up_dict(s.take_up),
    }


def placement_dict(drawing: str, placement: Placement, rows: list[dict[str, Any]]) -> dict[str, Any]:
    """The JSON of ``suggest-idler`` (``schema: "spanwise-idlers/1"``) as plain values."""
    return {"schema": "spanwise-idlers/1", "drawing": drawing, "span": placement.span_id,
            "loop": placement.loop_id, "idler_needed": placement.needed, "clearance_m": placement.clearance_m,
            "positions_tried": placement.tried,
            "ruled_out": {c.value: placement.ruled_out.get(c, 0) for c in Constraint}, "suggestions": rows}


def _head(units: str) -> str:
    return (f"  {'#':>2} {'centre (' + units + ')':>24} {'along':>6} {'push mm':>8} {'wrap':>6} {'gap mm':>7} {'hub N':>7} "
         f"{'grip':>5} {'clear':>6} {'left':>4} {'+path mm':>8} {'take-up':>14}  new spans f1 Hz")


def _take_up_cell(t: TakeUp | None) -> str:
    if t is None:
        return "-"
    if t.mode is TakeUpMode.STRETCH:
        return f"T {t.tension_rise_n:+.0f} N"
    if t.mode is TakeUpMode.ADJUST and t.adjust_travel_m is not None:
        return f"{t.adjust_pulley} {t.adjust_travel_m * 1e3:+.2f} mm"
    return {TakeUpMode.TENSIONER: "tensioner", TakeUpMode.CONSTANT: "held", TakeUpMode.NO_LENGTH: "longer belt",
            TakeUpMode.UNKNOWN: "move a pulley"}.get(t.mode, "-")


def _row_line(row: dict[str, Any], s: IdlerSuggestion) -> str:
    cx, cy = row["center"]
    f1 = ", ".join(f"{k} {v['frequencies_hz'][0]:.1f}" for k, v in row["spans"].items())
    added = s.take_up.added_length_m * 1e3 if s.take_up is not None else math.nan
    return (f"  {row['rank']:>2} {f'({cx:.2f}, {cy:.2f})':>24} {row['along']:>6.2f} "
            f"{row['deflection_m'] * 1e3:>8.2f} {row['wrap_deg']:>6.1f} {row['gap_m'] * 1e3:>7.1f} "
            f"{row['hub_load_n']:>7.0f} {row['worst_grip_utilisation']:>5.2f} {row['resonance_clearance']:>6.3f} "
            f"{row['resonances_left']:>4} {added:>8.2f} {_take_up_cell(s.take_up):>14}  {f1}")


def _take_up_note(t: TakeUp, pulley_ids: tuple[str, ...]) -> str:
    """What the take-up column means for this loop (one line)."""
    belt = "" if t.belt_length_m is None else f"the chosen {t.belt_length_m * 1e3:.0f} mm belt"
    if t.mode is TakeUpMode.STRETCH:
        return (f"take-up: fixed centres and {belt}: the install tension rises by EA*dL/L (EA "
                f"{t.axial_stiffness_n:.0f} N per strand); each position is analysed at the raised tension")
    if t.mode is TakeUpMode.ADJUST:
        return (f"take-up: with {belt}, the adjustable pulley must slide by the travel shown (signed along its "
                f"`adjust` direction, from where it sits without the idler) to take up the added path; the install "
                f"tension stays")
    if t.mode is TakeUpMode.UNKNOWN:
        return (f"take-up: fixed centres and {belt}, but no axial_stiffness: the tension rise is unknown; an "
                f"adjustable pulley ({'/'.join(p for p in pulley_ids if p != NEW_IDLER_ID)}: mark one with "
                f"`adjust`) must take up the added path")
    if t.mode is TakeUpMode.NO_LENGTH:
        return "take-up: no belt length chosen: the belt must be longer by the added path (+path)"
    if t.mode is TakeUpMode.TENSIONER:
        return "take-up: the loop's tensioner takes up the added path"
    return "take-up: constant tensioning holds the tension while the added path is taken up"


def _ruled_out_line(placement: Placement) -> str:
    counts = [f"{n} {CONSTRAINT_TEXT[c]}" for c in Constraint if (n := placement.ruled_out.get(c, 0))]
    return f"  of {placement.tried} positions tried: " + ("; ".join(counts) if counts else "none evaluated")


def console_lines(src: str, checked: Checked, placement: Placement, suggestions: list[IdlerSuggestion],
                  rows: list[dict[str, Any]], *, quiet: bool = False) -> list[str]:
    """The console answer: the suggestion rows (alone when ``quiet``), headed and explained."""
    where = f"span {placement.span_id} of loop {placement.loop_id}"
    table = [_row_line(row, s) for row, s in zip(rows, suggestions)]
    if quiet:
        return table
    if not placement.needed:
        return [f"{src}: {where} has no resonance over the speed range: no idler needed"]
    out = []
    if not any(s.clear for s in suggestions):
        out += [f"{src}: no valid idler position on {where} (clearance "
                f"{placement.clearance_m * 1e3:.1f} mm): every position tried broke a constraint",
                _ruled_out_line(placement)]
        if not rows:
            return out
        out.append("  the best positions within the other constraints, resonance not cleared:")
    else:
        out.append(f"{src}: idler positions for {where} (pitch diameter {rows[0]['pitch_diameter_m'] * 1e3:.1f} mm, "
                   f"{suggestions[0].side.value} side, clearance {placement.clearance_m * 1e3:.1f} mm)")
    out += [_head(checked.model.units), *table]
    out.append("  clear: smallest |excitation/f - 1| of the new spans over the speed range; left: their resonance "
               "bands; gap: to the nearest pulley or other span; +path: added belt path")
    if suggestions[0].take_up is not None:
        out.append("  " + _take_up_note(suggestions[0].take_up, suggestions[0].results.loops[placement.loop_id].loop.pulleys))
    return out


def suggestions_document(checked: Checked, suggestions: list[IdlerSuggestion]) -> Any:
    """The drawing's document, read once by ``check_drawing(..., keep_document=True)``, with
    the suggested idlers and their belt paths added on our layers (each entity tagged with
    spanwise's XDATA, so spanwise never reads them as drawing) and the placeholder of the
    seal (:func:`layout.output.seal`), so a later run knows the copy as its own."""
    from ._own import APPID
    from .draw import add_belt_path
    from .output import DIGEST_PLACEHOLDER

    doc = checked.document
    if doc is None:
        raise ValueError("the drawing's document was not kept: check it with keep_document=True")
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
    for k, e in enumerate(added):
        tags = [(1000, "suggested idler")] + ([(1000, DIGEST_PLACEHOLDER)] if k == 0 else [])
        e.set_xdata(APPID, tags)
    return doc


def write_suggestions(checked: Checked, suggestions: list[IdlerSuggestion], out: Path) -> None:
    """Write :func:`suggestions_document` to ``out`` atomically, sealed."""
    from .output import save_document

    save_document(suggestions_document(checked, suggestions), out)
