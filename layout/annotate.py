"""Write the findings back into the drawing: spanwise's own layers, one concern each.

:func:`annotate` adds to an ezdxf document, after removing whatever spanwise wrote there
before (so re-running replaces, never piles up):

* ``SPANWISE-PATH``: the computed belt path of every loop (drawn and routed) as LINE and
  ARC entities, with a travel arrow on every span;
* ``SPANWISE-SPAN-LABELS``: per span the quasi-static tension P and tension T, the first
  frequency at the operating speed, the static pluck frequency, the wave speeds;
* ``SPANWISE-PULLEY-LABELS``: per pulley its wrap, speed and grip utilisation;
* ``SPANWISE-HUB-LOADS``: an arrow per pulley along its hub load, scaled to the largest;
* ``SPANWISE-FINDINGS``: a numbered marker at every located finding, coloured by severity;
* ``SPANWISE-SUMMARY``: the list of findings and the cautions, beside the drawing.

Only entities every DXF version has (LINE, ARC, CIRCLE, TEXT, SOLID, INSERT) and indexed
colours are used, and every entity carries XDATA of the ``SPANWISE`` application (strings
of at most 255 characters), so an R12 drawing stays R12 and loses nothing.
:func:`strip` removes exactly what spanwise wrote: its layers, entities and blocks.
"""

from __future__ import annotations

import math
import textwrap
from typing import Any

import numpy as np

from physics.findings import Severity

from ._own import APPID, is_own_name
from .output import DIGEST_PLACEHOLDER

__all__ = ["LAYERS", "SEVERITY_COLOR", "MARK_BLOCKS", "annotate", "strip", "overlay", "text_height"]

#: spanwise's layers: name -> (indexed colour, what the layer holds).
LAYERS: dict[str, tuple[int, str]] = {
    "SPANWISE-PATH": (4, "computed belt path and travel arrows"),
    "SPANWISE-SPAN-LABELS": (3, "span tensions, frequencies and wave speeds"),
    "SPANWISE-PULLEY-LABELS": (3, "pulley wraps, speeds and grip"),
    "SPANWISE-HUB-LOADS": (6, "hub-load arrows, scaled to the largest"),
    "SPANWISE-FINDINGS": (7, "numbered finding markers"),
    "SPANWISE-SUMMARY": (7, "list of findings and cautions"),
}
PATH, SPANS, PULLEYS, HUBS, FINDINGS, SUMMARY = LAYERS
#: Indexed colours of the severities: red, orange, blue.
SEVERITY_COLOR = {Severity.ERROR: 1, Severity.WARNING: 30, Severity.NOTE: 5}
#: The marker block of each severity.
MARK_BLOCKS = {s: f"SPANWISE-MARK-{s.value.upper()}" for s in Severity}
#: Text height as a fraction of the drawing's larger extent, and its floor.
TEXT_FRACTION = 0.008
#: Characters per line of the summary list.
SUMMARY_WIDTH = 100
#: An XDATA string holds at most this many characters (R12 and later).
XDATA_MAX = 255


# --------------------------------------------------------------------------- strip


def _is_ours(e: Any) -> bool:
    dxf = e.dxf
    if is_own_name(dxf.get("layer", "0")):
        return True
    if e.dxftype() == "INSERT" and is_own_name(dxf.get("name", "")):
        return True
    return bool(e.has_xdata(APPID)) if hasattr(e, "has_xdata") else False


def strip(doc: Any) -> int:
    """Remove spanwise's entities, block definitions, layers and application id from
    ``doc``; return the number of entities removed. Nothing else is touched."""
    removed = 0
    for layout in doc.layouts:
        for e in [e for e in layout if _is_ours(e)]:
            layout.delete_entity(e)
            removed += 1
    for name in [b.name for b in doc.blocks if is_own_name(b.name)]:
        doc.blocks.delete_block(name, safe=False)
    for name in [layer.dxf.name for layer in doc.layers if is_own_name(layer.dxf.name)]:
        doc.layers.remove(name)
    if APPID in doc.appids:
        doc.appids.remove(APPID)
    return removed


# --------------------------------------------------------------------------- writer


class _Pen:
    """Adds entities to model space on spanwise's layers, each tagged with XDATA."""

    def __init__(self, doc: Any, height: float) -> None:
        self.msp = doc.modelspace()
        self.h = height
        self.count = 0

    def tag(self, e: Any, what: str) -> Any:
        e.set_xdata(APPID, [(1000, what[:XDATA_MAX])])
        self.count += 1
        return e

    def line(self, a: Any, b: Any, layer: str, what: str, color: int = 256) -> None:
        self.tag(self.msp.add_line(_xy(a), _xy(b), dxfattribs={"layer": layer, "color": color}), what)

    def text(self, s: str, at: Any, layer: str, what: str, *, height: float | None = None,
             rotation: float = 0.0, color: int = 256) -> Any:
        e = self.msp.add_text(s, height=height or self.h, rotation=rotation,
                              dxfattribs={"layer": layer, "color": color, "insert": _xy(at)})
        return self.tag(e, what)

    def arrow(self, tail: Any, tip: Any, layer: str, what: str, head: float, color: int = 256) -> None:
        """A line from ``tail`` to ``tip`` with a filled head of length ``head``."""
        t, p = np.asarray(tail, float), np.asarray(tip, float)
        d = p - t
        n = float(np.hypot(*d))
        if n <= 0:
            return
        u = d / n
        w = np.array([-u[1], u[0]]) * head * 0.35
        base = p - u * min(head, n)
        self.line(t, base, layer, what, color)
        solid = self.msp.add_solid([_xy(p), _xy(base + w), _xy(base - w)],
                                   dxfattribs={"layer": layer, "color": color})
        self.tag(solid, what)


def _xy(p: Any) -> tuple[float, float]:
    return (float(p[0]), float(p[1]))


def _setup(doc: Any) -> None:
    """spanwise's application id, layers and marker blocks."""
    if APPID not in doc.appids:
        doc.appids.add(APPID)
    for name, (color, _) in LAYERS.items():
        if name not in doc.layers:
            doc.layers.add(name, color=color)
    for sev, name in MARK_BLOCKS.items():
        if name in doc.blocks:
            continue
        blk = doc.blocks.new(name)
        # a ring with a cross: unit radius, coloured by the reference (BYBLOCK)
        blk.add_circle((0, 0), 1.0, dxfattribs={"color": 0, "layer": "0"})
        blk.add_line((-1.4, 0), (1.4, 0), dxfattribs={"color": 0, "layer": "0"})
        blk.add_line((0, -1.4), (0, 1.4), dxfattribs={"color": 0, "layer": "0"})
        if sev is Severity.ERROR:
            blk.add_circle((0, 0), 0.6, dxfattribs={"color": 0, "layer": "0"})


def extents(report: Any) -> tuple[float, float, float, float]:
    """The drawing's extents ``(xmin, ymin, xmax, ymax)`` from its circles and curves, in
    drawing units (what the analysis read; spanwise's own entities are not in it)."""
    d = report.model.drawing
    c, s = d.circles, d.segments
    xs = [c.x - c.r, c.x + c.r, s.x0, s.x1]
    ys = [c.y - c.r, c.y + c.r, s.y0, s.y1]
    x = np.concatenate([np.asarray(a, float) for a in xs])
    y = np.concatenate([np.asarray(a, float) for a in ys])
    ok = np.isfinite(x) & np.isfinite(y)
    if not ok.any():
        return (0.0, 0.0, 1.0, 1.0)
    return float(x[ok].min()), float(y[ok].min()), float(x[ok].max()), float(y[ok].max())


def text_height(ext: tuple[float, float, float, float]) -> float:
    """Text height following the drawing's size: a fixed fraction of its larger extent."""
    size = max(ext[2] - ext[0], ext[3] - ext[1])
    return TEXT_FRACTION * size if size > 0 else 1.0


def annotate(doc: Any, report: Any) -> Any:
    """Write ``report``'s results and findings into ``doc`` on spanwise's own layers.

    Whatever spanwise wrote into ``doc`` before is removed first, so annotating twice
    leaves one set of annotations. Returns ``doc``.

    Parameters
    ----------
    doc
        An ezdxf document: the drawing the report was made from (or a copy of it).
    report
        A :class:`layout.pipeline.Report`.
    """
    strip(doc)
    _setup(doc)
    rep = report.to_dict()
    ext = extents(report)
    pen = _Pen(doc, text_height(ext))
    for lp, row in zip(report.model.loops, rep["loops"]):
        _draw_path(pen, lp, row)
        _span_labels(pen, row)
        _pulley_labels(pen, row)
    _hub_arrows(pen, rep, ext)
    _markers(pen, rep["findings"])
    _summary(pen, rep, ext)
    return doc


def overlay(report: Any) -> Any:
    """A new document holding only spanwise's annotations of ``report``, at the drawing's
    own coordinates, in the drawing's DXF version and units: to attach as an external
    reference."""
    import ezdxf

    src = report.document
    version = src.dxfversion if src is not None else "R2010"
    doc = ezdxf.new(version)
    if src is not None and version > "AC1009" and "$INSUNITS" in src.header:
        doc.header["$INSUNITS"] = src.header["$INSUNITS"]
    return annotate(doc, report)


# --------------------------------------------------------------------------- pieces


def _draw_path(pen: _Pen, lp: Any, row: dict[str, Any]) -> None:
    from .draw import add_belt_path

    centers = [p["center"] for p in row["pulleys"]]
    if row.get("length_m") is None:
        return
    for e in add_belt_path(pen.msp, centers, lp.radii, lp.turns, form="lines", layer=PATH):
        pen.tag(e, f"path loop={row['id']}")
    for s in row["spans"]:
        a, b = np.asarray(s["start"], float), np.asarray(s["end"], float)
        mid = (a + b) / 2
        u = (b - a) / max(float(np.hypot(*(b - a))), 1e-300)
        pen.arrow(mid - u * pen.h * 1.5, mid + u * pen.h * 1.5, PATH, f"travel span={s['id']}", pen.h * 1.2)


def _fmt(v: Any, fmt: str) -> str:
    return "-" if v is None else format(v, fmt)


def _span_text(s: dict[str, Any]) -> list[str]:
    lines = [f"{s['id']}  P {_fmt(s.get('quasi_static_tension_n'), '.0f')} N  "
             f"T {_fmt(s.get('tension_n'), '.0f')} N"]
    f1 = (s.get("frequencies_hz") or [None])[0]
    lines.append(f"f1 {_fmt(f1, '.1f')} Hz running  pluck {_fmt(s.get('static_frequency_hz'), '.1f')} Hz")
    if s.get("downstream_wave_m_s") is not None:
        lines.append(f"waves {s['downstream_wave_m_s']:.1f} down / {_fmt(s.get('upstream_wave_m_s'), '.1f')} "
                     f"up m/s")
    return lines


def _span_labels(pen: _Pen, row: dict[str, Any]) -> None:
    centers = np.asarray([p["center"] for p in row["pulleys"]], float)
    middle = centers.mean(axis=0)
    for s in row["spans"]:
        if s.get("start") is None:
            continue
        a, b = np.asarray(s["start"], float), np.asarray(s["end"], float)
        d = b - a
        ang = math.degrees(math.atan2(d[1], d[0]))
        if ang > 90 or ang <= -90:               # keep text upright
            ang -= 180 * math.copysign(1, ang)
        u = np.array([math.cos(math.radians(ang)), math.sin(math.radians(ang))])
        nrm = np.array([-u[1], u[0]])
        mid = (a + b) / 2
        away = 1.0 if float(np.dot(mid - middle, nrm)) >= 0 else -1.0
        lines = _span_text(s)
        for k, text in enumerate(lines):
            # outward from the loop: first line nearest the span
            step = (1.2 + 1.5 * k) if away > 0 else -(2.2 + 1.5 * k)
            at = mid + nrm * step * pen.h * 0.8 - u * pen.h * 0.55 * len(text) / 2
            pen.text(text, at, SPANS, f"span={s['id']} loop={row['id']}", height=pen.h * 0.8, rotation=ang)


def _pulley_labels(pen: _Pen, row: dict[str, Any]) -> None:
    for p in row["pulleys"]:
        r = p["pitch_diameter_m"] / 2
        parts = [p["id"], f"wrap {_fmt(p.get('wrap_deg'), '.1f')} deg"]
        if p.get("speed_rpm") is not None:
            parts.append(f"{p['speed_rpm']:.0f} rpm")
        if p.get("grip_utilisation") is not None:
            parts.append(f"grip {p['grip_utilisation']:.2f}")
        elif p.get("grip") in ("slip", "slack"):
            parts.append(f"grip {p['grip']}")
        cx, cy = p["center"]
        text = "  ".join(parts)
        # below the centre, inside or just under the circle whatever the drawing's unit
        at = (cx - pen.h * 0.3 * len(text) / 2, cy - pen.h * 2.0)
        pen.text(text, at, PULLEYS, f"pulley={p['id']} loop={row['id']} r={r:.6g}", height=pen.h * 0.8)


def _hub_arrows(pen: _Pen, rep: dict[str, Any], ext: tuple[float, float, float, float]) -> None:
    rows = [p for lp in rep["loops"] for p in lp["pulleys"] if p.get("hub_load_n") is not None]
    biggest = max((p["hub_load_n"] for p in rows), default=0.0)
    if biggest <= 0:
        return
    longest = 0.08 * max(ext[2] - ext[0], ext[3] - ext[1])
    for p in rows:
        n = p["hub_load_n"]
        if n <= 0:
            continue
        ang = math.radians(p["hub_load_deg"])
        c = np.asarray(p["center"], float)
        tip = c + longest * n / biggest * np.array([math.cos(ang), math.sin(ang)])
        pen.arrow(c, tip, HUBS, f"hub pulley={p['id']} n={n:.6g}", pen.h * 1.5)
        pen.text(f"{n:.0f} N", tip + pen.h * 0.5, HUBS, f"hub pulley={p['id']}", height=pen.h * 0.8)


def _markers(pen: _Pen, findings: list[dict[str, Any]]) -> None:
    for k, f in enumerate(findings, 1):
        if f.get("at") is None:
            continue
        sev = Severity(f["severity"])
        color = SEVERITY_COLOR[sev]
        size = pen.h * 1.2
        ins = pen.msp.add_blockref(MARK_BLOCKS[sev], _xy(f["at"]), dxfattribs={
            "layer": FINDINGS, "color": color, "xscale": size, "yscale": size})
        pen.tag(ins, f"finding={k} code={f['code']} refs={','.join(f.get('refs', []))}")
        label = f"[{k}] {f['code']}"
        pen.text(label, (f["at"][0] + size * 1.6, f["at"][1] + size * 0.4), FINDINGS, f"finding={k}",
                 color=color)


def _summary(pen: _Pen, rep: dict[str, Any], ext: tuple[float, float, float, float]) -> None:
    h = pen.h
    x = ext[2] + 6 * h
    y = ext[3]
    counts = {s: sum(1 for f in rep["findings"] if f["severity"] == s) for s in ("error", "warning", "note")}
    head = pen.text(f"spanwise {rep['tool']['version']}: findings", (x, y), SUMMARY, "summary title",
                    height=h * 1.5)
    # the digest that tells spanwise's own untouched output from a file a person changed
    head.set_xdata(APPID, [(1000, "summary title"), (1000, DIGEST_PLACEHOLDER)])
    spec = rep.get("spec", {}).get("path") or "no spec file"
    lines = [f"{rep['drawing']['path']}  (units {rep['drawing']['units']}, spec: {spec})",
             f"{counts['error']} error(s), {counts['warning']} warning(s), {counts['note']} note(s)", ""]
    for k, f in enumerate(rep["findings"], 1):
        where = "" if f.get("at") is None else f" at ({f['at'][0]:.6g}, {f['at'][1]:.6g})"
        first = f"[{k}] {f['severity'].upper()} {f['code']}{where}: {f['message']}"
        lines.extend(textwrap.wrap(first, SUMMARY_WIDTH, subsequent_indent="      ") or [first])
    lines += ["", *textwrap.wrap("Caution: " + rep.get("caution", ""), SUMMARY_WIDTH)]
    y -= 2.5 * h
    for k, text in enumerate(lines):
        if text:
            color = _line_color(text)
            pen.text(text, (x, y - 1.6 * h * k), SUMMARY, f"summary line={k}", color=color)


def _line_color(text: str) -> int:
    for sev, color in SEVERITY_COLOR.items():
        if f"] {sev.value.upper()} " in text:
            return color
    return 256
