"""The HTML report: one self-contained, printable page that leads with the drawing and its
findings.

Order: what was read, and the cautions; the findings, numbered (errors, warnings, notes),
each with its place; the drawing as inline SVG (ezdxf's drawing add-on, SVG backend)
with every located finding marked by its number; per loop its pulleys and spans; the
pluck frequencies for setting the tension in the field; the speed-sweep figures
(matplotlib, imported only when a report is rendered); the cautions again.

No script, no external file, no web font: it opens and prints anywhere. Every number
comes from the JSON report (:meth:`layout.pipeline.Report.to_dict`), so the page shows
what the JSON says; every text from the drawing or the spec is escaped.

Finding numbers are positions in the JSON's ``findings`` list, counted from 1: the same
numbers as the markers that ``layout.annotate`` writes into the annotated drawing.
"""

from __future__ import annotations

import gc
import html
import logging
import math
import re
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable

from ._own import is_own_name

if TYPE_CHECKING:
    from .pipeline import Report

__all__ = ["render_html", "drawing_svg", "MAX_PICTURE_ENTITIES", "MARK_COLOURS"]

log = logging.getLogger(__name__)

#: Above this many entities the drawing's picture is left out (drawing costs ~1 s per 10 000).
MAX_PICTURE_ENTITIES = 200_000
#: Marker colours by severity.
MARK_COLOURS = {"error": "#c62828", "warning": "#b35c00", "note": "#1f5fbf"}
#: Width of the drawing's page (mm): the picture scales to the page's width on screen and paper.
PAGE_WIDTH_MM = 260.0
#: The page's height stays within these fractions of its width, whatever the drawing's shape.
PAGE_ASPECT = (0.35, 1.1)
#: Margin round the drawing's extents, as a fraction of their larger side.
EXTENT_PAD = 0.04
#: Marker radius as a fraction of the picture's width.
MARK_RADIUS = 0.014
#: Line colours of the picture: curves and text near black, filled areas light grey.
INK, FILL = "#1a1a1a", "#c8c8c8"
#: Line weight (mm on the picture's page) of the belt paths, drawn heavier than the rest.
BELT_LINEWEIGHT_MM = 0.6

_SEVERITIES = ("error", "warning", "note")
_TENSIONING = {"fixed": "fixed centres (tension set at install)", "constant": "constant tension",
               "tensioner": "tension set by a tensioner"}
_FILLED = {"HATCH", "SOLID", "TRACE", "3DFACE", "MPOLYGON"}
_RELEASES = {"AC1009": "R12", "AC1012": "R13", "AC1014": "R14", "AC1015": "2000", "AC1018": "2004",
             "AC1021": "2007", "AC1024": "2010", "AC1027": "2013", "AC1032": "2018"}

CAUTIONS = (
    "Guard every nip point, where a belt runs onto a pulley: it draws in hands and clothing.",
    "Lock out and tag out the drive before tensioning, plucking or inspecting a belt.",
    "These results are estimates from the drawing as drawn and from catalogue values: check them "
    "against the belt maker's data before building or setting the drive.",
    "Local codes and licensed engineering practice take precedence over this report.",
)

SIGNS = ("Signs and terms: speed in rpm is positive counter-clockwise as seen in the drawing; torque and "
         "power are + where the pulley drives the belt and − where it takes power out (an idler's drag is "
         "−). P is the quasi-static tension, the span tension T less its centrifugal part m v²; both are per "
         "strand, torques and hub loads for all strands. Grip utilisation is the share of the friction grip "
         "a pulley uses (loads times the service factor). The install tension “set” is the one analysed; "
         "“lowest” is the lowest setting that keeps every pulley within the grip margin.")

_STYLE = """
:root{--ink:#1b1f24;--dim:#57606a;--rule:#d0d7de;--head:#f3f5f7}
*{box-sizing:border-box}
body{font:15px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,Helvetica,Arial,sans-serif;color:var(--ink);
 margin:0 auto;max-width:1120px;padding:24px 28px 40px}
h1{font-size:1.55em;margin:0 0 .25em;overflow-wrap:anywhere}
h2{font-size:1.2em;margin:1.8em 0 .5em;padding-bottom:.2em;border-bottom:2px solid var(--rule)}
h3{font-size:1.02em;margin:1.3em 0 .35em}
p{margin:.4em 0}.read{color:var(--dim);font-size:.9em;overflow-wrap:anywhere}
code{font:.92em ui-monospace,"SFMono-Regular",Menlo,Consolas,monospace;overflow-wrap:anywhere}
.caution{border:2px solid #b35c00;border-left-width:8px;background:#fff7eb;padding:.5em 1em;margin:1em 0;
 font-size:.92em;break-inside:avoid}
.caution ul{margin:.2em 0 .1em;padding-left:1.2em}.caution li{margin:.1em 0}
.wide{overflow-x:auto}
table{border-collapse:collapse;width:100%;margin:.3em 0 .8em;font-size:.88em;font-variant-numeric:tabular-nums}
th,td{border-bottom:1px solid var(--rule);padding:.28em .5em;text-align:left;vertical-align:top}
th{background:var(--head);font-weight:600;vertical-align:bottom}
th .u{display:block;font-weight:400;color:var(--dim);font-size:.92em}
td.n,th.n{text-align:right;white-space:nowrap}td.t{overflow-wrap:anywhere}td.k{white-space:nowrap}
.num{display:inline-block;white-space:nowrap;min-width:1.75em;padding:0 .35em;border-radius:1em;color:#fff;font-weight:700;
 text-align:center;font-size:.9em;line-height:1.5}
.num.loose{background:#fff;border:2px solid currentColor;line-height:1.3}
.sev-error{color:#c62828;font-weight:600}.sev-warning{color:#b35c00;font-weight:600}.sev-note{color:#1f5fbf}
.bad{color:#c62828;font-weight:600}
.counts{font-weight:600}.signs,.small{font-size:.85em;color:var(--dim)}
.picture{margin:.5em 0}.picture svg{display:block;width:100%;height:auto;max-height:680px;
 border:1px solid var(--rule);background:#fff}
.legend{font-size:.85em;color:var(--dim)}
.swatch{display:inline-block;width:.9em;height:.9em;border-radius:50%;vertical-align:-.1em;print-color-adjust:exact;-webkit-print-color-adjust:exact}
figure{margin:.6em 0 1.2em}figure svg{display:block;width:100%;max-width:800px;height:auto}
figcaption{font-size:.85em;color:var(--dim)}
footer{margin-top:2em;font-size:.85em;color:var(--dim)}
@page{margin:12mm}
@media print{
 body{max-width:none;padding:0;font-size:9.5pt}
 .wide{overflow:visible}table{font-size:8pt}th,td{padding:.18em .35em}
 thead{display:table-header-group}tr{break-inside:avoid}
 h2,h3{break-after:avoid}figure,.picture{break-inside:avoid}
 .picture svg{max-height:none}.num{print-color-adjust:exact;-webkit-print-color-adjust:exact}
 .caution{print-color-adjust:exact;-webkit-print-color-adjust:exact}
}
"""


# --------------------------------------------------------------------------- formatting


def _e(v: Any) -> str:
    """Text escaped for HTML (element content and quoted attributes)."""
    return html.escape(str(v), quote=True)


def _f(v: Any, decimals: int = 1, scale: float = 1.0) -> str:
    """A number for people: fixed decimals, a true minus sign, an em dash where there is none."""
    if v is None or not math.isfinite(float(v)):
        return "—"
    s = f"{float(v) * scale:.{decimals}f}"
    if s.startswith("-") and float(s) == 0.0:
        s = s[1:]
    return s.replace("-", "−")


def _coord(v: float) -> str:
    return format(float(v), ".6g").replace("-", "−")


def _where(f: dict[str, Any], units: str) -> str:
    """A finding's place: drawing coordinates with the drawing's units, or the whole drawing."""
    if f.get("at") is None:
        return "whole drawing"
    return f"({_coord(f['at'][0])}, {_coord(f['at'][1])}) {units}"


def _file_name(path: str) -> str:
    return path.replace("\\", "/").rsplit("/", 1)[-1] or path


def _numbered(rep: dict[str, Any]) -> list[tuple[int, dict[str, Any]]]:
    """The findings with their numbers (JSON positions from 1), errors, warnings, notes."""
    rank = {s: i for i, s in enumerate(_SEVERITIES)}
    items = list(enumerate(rep["findings"], 1))
    return sorted(items, key=lambda kf: rank.get(kf[1]["severity"], len(rank)))


def _badge(k: int, severity: str, located: bool = True) -> str:
    """The finding's number as on the drawing: filled in the severity's colour where it is
    marked, outlined where it concerns the whole drawing."""
    colour = MARK_COLOURS.get(severity, "#444444")
    if located:
        return f'<span class="num" style="background:{colour}">{k}</span>'
    return f'<span class="num loose" style="color:{colour}">{k}</span>'


def _table(heads: list[tuple[str, str, bool | str]], rows: list[list[str]]) -> str:
    """A table; ``heads`` are ``(name, unit, kind)``, kind ``True`` for a number (right,
    unbroken), ``False`` for text (wrapped anywhere), ``"k"`` for a short token kept whole;
    cells are HTML already."""
    kinds = ["n" if k is True else "t" if k is False else str(k) for _, _, k in heads]
    th = "".join(f'<th class="{kind}">{_e(name)}' + (f'<span class="u">{_e(unit)}</span>' if unit else "") + "</th>"
                 for (name, unit, _), kind in zip(heads, kinds))
    body = "".join("<tr>" + "".join(f'<td class="{kinds[i]}">{c}</td>' for i, c in enumerate(r)) + "</tr>"
                   for r in rows)
    return f'<div class="wide"><table><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table></div>'


# --------------------------------------------------------------------------- head, cautions, findings


def _header(rep: dict[str, Any]) -> str:
    d = rep["drawing"]
    spec = rep.get("spec") or {}
    if spec.get("path"):
        sha = f", sha256 {_e(str(spec['sha256'])[:12])}" if spec.get("sha256") else ""
        used = f"spec <code>{_e(spec['path'])}</code>{sha}"
    else:
        used = "no spec file found"
    version = str(d.get("version") or "unknown")
    release = f" (AutoCAD {_RELEASES[version]})" if version in _RELEASES else ""
    recovered = "recovered by the repair reader" if d.get("recovered") else "read without repair"
    bits = [f"Read <code>{_e(d['path'])}</code>", f"units {_e(d.get('units'))}", f"DXF {_e(version)}{release}",
            recovered, used, f"spanwise {_e(rep['tool']['version'])}"]
    return (f"<header><h1>Belt drive check: {_e(_file_name(d['path']))}</h1>"
            f'<p class="read">{" · ".join(bits)}</p></header>')


def _cautions() -> str:
    items = "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
    return f'<aside class="caution"><strong>Caution</strong><ul>{items}</ul></aside>'


def _findings(rep: dict[str, Any]) -> str:
    fs = rep["findings"]
    counts = [sum(1 for f in fs if f["severity"] == s) for s in _SEVERITIES]
    words = ", ".join(f"{n} {s}{'' if n == 1 else 's'}" for n, s in zip(counts, _SEVERITIES))
    head = f'<section id="findings"><h2>Findings</h2><p class="counts">{words}</p>'
    if not fs:
        return head + "<p>Nothing to report: the drawing passed every check.</p></section>"
    units = rep["drawing"].get("units") or ""
    rows = [[_badge(k, f["severity"], f.get("at") is not None), f'<span class="sev-{_e(f["severity"])}">'
             f'{_e(f["severity"])}</span>', f"<code>{_e(f['code'])}</code>", _e(f["message"]),
             _e(_where(f, units))] for k, f in _numbered(rep)]
    table = _table([("no.", "", "k"), ("severity", "", "k"), ("code", "", "k"), ("what", "", False),
                    ("where", "", "k")], rows)
    return (head + table + '<p class="small">Each number is marked on the drawing below at the finding’s place; '
            "an outlined number concerns the whole drawing.</p></section>")


# --------------------------------------------------------------------------- the drawing


def _extents(report: Report, findings: list[dict[str, Any]]) -> tuple[float, float, float, float]:
    """The box ``(xmin, ymin, xmax, ymax)`` that must be in the picture, drawing units:
    circles, curves (arcs by their ends and middles), texts' anchors and the findings' places."""
    import numpy as np

    d = report.model.drawing
    c, s, t = d.circles, d.segments, d.texts
    arc = np.asarray(s.sweep, float) != 0.0
    a0 = np.arctan2(s.y0[arc] - s.cy[arc], s.x0[arc] - s.cx[arc]) + s.sweep[arc] / 2.0
    at = np.asarray([f["at"] for f in findings if f.get("at") is not None], float).reshape(-1, 2)
    xs = [c.x - c.r, c.x + c.r, s.x0, s.x1, s.cx[arc] + s.r[arc] * np.cos(a0), t.x, at[:, 0]]
    ys = [c.y - c.r, c.y + c.r, s.y0, s.y1, s.cy[arc] + s.r[arc] * np.sin(a0), t.y, at[:, 1]]
    x = np.concatenate([np.asarray(v, float).ravel() for v in xs])
    y = np.concatenate([np.asarray(v, float).ravel() for v in ys])
    ok = np.isfinite(x) & np.isfinite(y)
    if not ok.any():
        return (-1.0, -1.0, 1.0, 1.0)
    return float(x[ok].min()), float(y[ok].min()), float(x[ok].max()), float(y[ok].max())


def _padded(box: tuple[float, float, float, float]) -> tuple[float, float, float, float]:
    """``box`` with a margin of :data:`EXTENT_PAD` of its larger side (1 unit if it is a point)."""
    pad = EXTENT_PAD * max(box[2] - box[0], box[3] - box[1]) or 1.0
    return box[0] - pad, box[1] - pad, box[2] + pad, box[3] + pad


def _read_document(path: str, recovered: bool) -> Any:
    """The drawing's ezdxf document read again (the recovery reader where it was needed)."""
    import ezdxf
    from ezdxf import recover

    was_enabled = gc.isenabled()
    gc.disable()            # as in layout.read: loading makes many objects the collector need not walk
    try:
        if not recovered:
            try:
                return ezdxf.readfile(path)
            except ezdxf.DXFStructureError:
                pass
        doc, _ = recover.readfile(path)
        return doc
    finally:
        if was_enabled:
            gc.enable()


def _entity_estimate(doc: Any) -> int:
    """Entities to draw: model space plus one level of each block reference's contents."""
    msp = doc.modelspace()
    count = len(msp)
    sizes: dict[str, int] = {}
    for ins in msp.query("INSERT"):
        name = ins.dxf.name
        if name not in sizes:
            block = doc.blocks.get(name)
            sizes[name] = 0 if block is None else len(block)
        count += sizes[name]
    return count


def _restyler(belt_layers: set[str]) -> Callable[[Any, Any], None]:
    """A property override for the drawing add-on: spanwise's own layers hidden, lines and
    text near black, filled areas light grey (it prints), belt paths heavier."""
    def restyle(entity: Any, props: Any) -> None:
        if is_own_name(props.layer):
            props.is_visible = False
            return
        alpha = props.color[7:9]
        props.color = (FILL if entity.dxftype() in _FILLED else INK) + alpha
        if props.layer.upper() in belt_layers:
            props.lineweight = max(props.lineweight, BELT_LINEWEIGHT_MM)
    return restyle


def _keep(entity: Any) -> bool:
    """Not one of spanwise's own entities: its layers and its block references."""
    if is_own_name(entity.dxf.get("layer", "0")):
        return False
    return not (entity.dxftype() == "INSERT" and is_own_name(entity.dxf.get("name", "")))


def _render(doc: Any, box: tuple[float, float, float, float], belt_layers: set[str]) -> tuple[ET.Element, Any]:
    """Model space drawn by ezdxf's SVG backend onto a page fitted to ``box`` and all that
    was drawn, with a margin; the SVG root and the backend's placement matrix (drawing units
    to the SVG's viewBox coordinates)."""
    from ezdxf.addons.drawing import Frontend, RenderContext, config, layout, svg
    from ezdxf.math import BoundingBox2d

    cfg = config.Configuration(background_policy=config.BackgroundPolicy.WHITE,
                               color_policy=config.ColorPolicy.COLOR, image_policy=config.ImagePolicy.RECT)
    backend = svg.SVGBackend()
    frontend = Frontend(RenderContext(doc), backend, config=cfg)
    frontend.push_property_override_function(_restyler(belt_layers))
    frontend.draw_layout(doc.modelspace(), finalize=True, filter_func=_keep)
    drawn = backend.player().bbox()         # all that was drawn (texts' full extents too), drawing units
    if drawn.has_data:
        box = (min(box[0], drawn.extmin.x), min(box[1], drawn.extmin.y),
               max(box[2], drawn.extmax.x), max(box[3], drawn.extmax.y))
    box = _padded(box)
    dx, dy = box[2] - box[0], box[3] - box[1]
    aspect = min(max(dy / dx, PAGE_ASPECT[0]), PAGE_ASPECT[1])
    page = layout.Page(PAGE_WIDTH_MM, round(PAGE_WIDTH_MM * aspect, 1), layout.Units.mm, layout.Margins.all(2))
    root = backend.get_xml_root_element(page, settings=layout.Settings(fit_page=True),
                                        render_box=BoundingBox2d([(box[0], box[1]), (box[2], box[3])]))
    return root, backend.transformation_matrix


def _own_classes(root: ET.Element) -> None:
    """The backend's style classes (``C1``, ``C2``, …) renamed ``dw-C1``, … : its ``<style>``
    applies to the whole page once inlined, so its names must not meet the page's."""
    for el in root.iter():
        if el.tag == "style" and el.text:
            el.text = re.sub(r"\.(C\d+)\b", r".dw-\1", el.text)
        cls = el.get("class")
        if cls and re.fullmatch(r"C\d+", cls):
            el.set("class", f"dw-{cls}")


def _add_markers(root: ET.Element, matrix: Any, numbered: list[tuple[int, dict[str, Any]]]) -> None:
    """A numbered circle in the severity's colour at every located finding. Findings at one
    place form a row of circles, the first centred on the place; the row runs to the right,
    or to the left where it would leave the picture."""
    vb = [float(v) for v in root.get("viewBox", "0 0 1 1").split()]
    r = MARK_RADIUS * vb[2]
    rows: dict[tuple[int, int], list[tuple[int, dict[str, Any], Any]]] = {}
    for k, f in numbered:
        if f.get("at") is not None:
            p = matrix.transform((float(f["at"][0]), float(f["at"][1]), 0.0))
            rows.setdefault((round(p.x / (1.6 * r)), round(p.y / (1.6 * r))), []).append((k, f, p))
    group = ET.SubElement(root, "g", {"class": "findings"})
    for row in rows.values():
        x0, y0 = row[0][2].x, row[0][2].y
        step = 2.15 * r if x0 + 2.15 * r * (len(row) - 1) + r <= vb[2] else -2.15 * r
        for j, (k, f, _) in enumerate(row):
            _marker(group, k, f, (x0 + step * j, y0), r)


def _marker(group: ET.Element, k: int, f: dict[str, Any], centre: tuple[float, float], r: float) -> None:
    """One marker: a circle of radius ``r`` (viewBox units) with the finding's number."""
    cx, cy = centre
    colour = MARK_COLOURS.get(f["severity"], "#444444")
    mark = ET.SubElement(group, "g", {"class": f"mark mark-{f['severity']}", "data-finding": str(k),
                                      "data-at": f"{float(f['at'][0])!r} {float(f['at'][1])!r}"})
    ET.SubElement(mark, "title").text = f"{k} {f['severity']} {f['code']}: {f['message']}"
    ET.SubElement(mark, "circle", {"class": "badge", "cx": f"{cx:.2f}", "cy": f"{cy:.2f}", "r": f"{r:.2f}",
                                   "fill": colour, "fill-opacity": "0.92", "stroke": "#ffffff",
                                   "stroke-width": f"{0.16 * r:.2f}"})
    size = (1.15 if k < 100 else 0.85) * r
    label = ET.SubElement(mark, "text", {"x": f"{cx:.2f}", "y": f"{cy + 0.36 * size:.2f}", "fill": "#ffffff",
                                         "font-size": f"{size:.2f}", "font-weight": "700",
                                         "font-family": "system-ui, Helvetica, Arial, sans-serif",
                                         "text-anchor": "middle"})
    label.text = str(k)


def drawing_svg(report: Report, findings: list[dict[str, Any]] | None = None, *, doc: Any = None) -> str:
    """The drawing as an ``<svg>`` element (text) with a numbered marker at every located finding.

    Parameters
    ----------
    report
        The checked drawing.
    findings
        The JSON report's findings (default: ``report.to_dict()["findings"]``); markers carry
        their positions in this list, from 1.
    doc
        The ezdxf document to draw; default ``report.document``, else the drawing file read again.

    Notes
    -----
    Drawn by ezdxf's drawing add-on (SVG backend) with dark lines on white, spanwise's own
    layers and blocks left out, onto a page fitted to all that was drawn and to the extents
    of what the analysis read and of the findings (:func:`_extents`). A marker's centre is the finding's ``at`` mapped by the backend's
    own placement matrix, so it lands where the backend draws that point.
    """
    if findings is None:
        findings = report.to_dict()["findings"]
    if doc is None:
        d = report.model.drawing
        doc = report.document if report.document is not None else _read_document(d.path, d.recovered)
    belt_layers = {lp.chain.layer.upper() for lp in report.model.loops if lp.chain is not None}
    root, matrix = _render(doc, _extents(report, findings), belt_layers)
    _own_classes(root)
    for name in ("width", "height"):
        root.attrib.pop(name, None)
    root.set("class", "drawing")
    root.set("role", "img")
    root.set("aria-label", f"the drawing {_file_name(report.model.drawing.path)} with its findings marked")
    _add_markers(root, matrix, _numbered({"findings": findings}))
    return ET.tostring(root, encoding="unicode")


def _picture_document(report: Report, max_entities: int) -> tuple[Any, str | None]:
    """The document to draw, or ``None`` and a one-line reason for leaving the picture out."""
    d = report.model.drawing
    too_many = ("The drawing has about {n:,} entities, more than the {m:,} this report draws "
                "(about a second per 10 000): its picture is left out; the findings’ places are listed above.")
    if d.entity_count > max_entities:
        return None, too_many.format(n=d.entity_count, m=max_entities)
    doc = report.document
    if doc is None:
        if not Path(d.path).is_file():
            return None, "The drawing was checked in memory and not kept, so it is not pictured here."
        doc = _read_document(d.path, d.recovered)
    n = _entity_estimate(doc)
    if n > max_entities:
        return None, too_many.format(n=n, m=max_entities)
    return doc, None


def _picture(report: Report, rep: dict[str, Any], max_entities: int) -> str:
    head = '<section id="drawing"><h2>The drawing</h2>'
    try:
        doc, note = _picture_document(report, max_entities)
        pic = None if doc is None else drawing_svg(report, rep["findings"], doc=doc)
    except Exception as err:   # noqa: BLE001 - a picture the add-on cannot draw must not cost the report
        log.warning("drawing the picture of %s failed: %r", report.model.drawing.path, err)
        pic, note = None, f"The drawing could not be pictured ({type(err).__name__}: {err})."
    if pic is None:
        return head + f'<p class="small">{_e(note)}</p></section>'
    legend = ", ".join(f'<span class="swatch" style="background:{MARK_COLOURS[s]}"></span> {s}' for s in _SEVERITIES)
    return (head + f'<div class="picture">{pic}<p class="legend">Markers: {legend}. Each number is a '
            "finding’s number in the list above; findings at one place stand in a row from it. spanwise’s own "
            "layers are left out.</p></div></section>")


# --------------------------------------------------------------------------- loops


def _grip(p: dict[str, Any]) -> str:
    g = p.get("grip")
    if g is None:
        return "—"
    text = _e(str(g).replace("-", " "))
    return f'<span class="bad">{text}</span>' if g in ("slip", "slack") else text


def _utilisation(p: dict[str, Any]) -> str:
    u = p.get("grip_utilisation")
    if u is None:
        return "—"
    text = f"{_f(u, 0, 100.0)} %"
    return f'<span class="bad">{text}</span>' if u > 1.0 else text


def _pulley_table(lp: dict[str, Any]) -> str:
    heads = [("pulley", "", False), ("role", "", False), ("side", "", False), ("pitch diameter", "mm", True),
             ("wrap", "deg", True), ("speed", "rpm", True), ("torque", "N·m", True), ("power", "kW", True),
             ("grip", "", False), ("grip utilisation", "", True), ("hub load", "N", True)]
    rows = [[_e(p["id"]), _e(p.get("role", "")), _e(p.get("side", "")), _f(p.get("pitch_diameter_m"), 1, 1e3),
             _f(p.get("wrap_deg"), 1), _f(p.get("speed_rpm"), 1), _f(p.get("torque_nm"), 2),
             _f(p.get("power_w"), 3, 1e-3), _grip(p), _utilisation(p), _f(p.get("hub_load_n"), 0)]
            for p in lp["pulleys"]]
    return _table(heads, rows)


def _span_table(lp: dict[str, Any]) -> str:
    heads = [("span", "", False), ("length", "mm", True), ("P quasi-static", "N", True), ("T tension", "N", True),
             ("f1 running", "Hz", True), ("pluck at rest", "Hz", True), ("wave downstream", "m/s", True),
             ("wave upstream", "m/s", True)]
    sag = any(s.get("sag_m") is not None for s in lp["spans"])
    if sag:
        heads.append(("sag running", "mm", True))
    rows = []
    for s in lp["spans"]:
        row = [_e(s["id"]), _f(s.get("length_m"), 1, 1e3), _f(s.get("quasi_static_tension_n"), 1),
               _f(s.get("tension_n"), 1), _f((s.get("frequencies_hz") or [None])[0], 1),
               _f(s.get("static_frequency_hz"), 1), _f(s.get("downstream_wave_m_s"), 1),
               _f(s.get("upstream_wave_m_s"), 1)]
        if sag:
            row.append(_f(s.get("sag_m"), 2, 1e3))
        rows.append(row)
    return _table(heads, rows)


def _belt_words(lp: dict[str, Any]) -> str:
    b = lp.get("belt") or {}
    bits = []
    if b.get("section"):
        bits.append(f"section {b['section']}")
    if b.get("strands", 1) != 1:
        bits.append(f"{b['strands']} strands")
    if b.get("mass_per_length_kg_m") is not None:
        bits.append(f"{_f(b['mass_per_length_kg_m'], 3)} kg/m per strand")
    return "belt " + ", ".join(bits) if bits else ""


def _loop_line(lp: dict[str, Any]) -> str:
    """One sentence on the loop (not a data sheet): path, length, belt, speed, tension."""
    bits = [f"{lp.get('path', 'drawn')} path, pitch length {_f(lp.get('length_m'), 1, 1e3)} mm", _belt_words(lp)]
    if lp.get("speed_m_s") is not None:
        bits.append(f"belt speed {_f(lp['speed_m_s'], 2)} m/s")
    if lp.get("tensioning"):
        bits.append(_TENSIONING.get(lp["tensioning"], f"tensioning {lp['tensioning']}"))
    if lp.get("install_tension_n") is not None:
        bits.append(f"install tension set {_f(lp['install_tension_n'], 0)} N per strand, lowest within the grip "
                    f"margin {_f(lp.get('min_install_tension_n'), 0)} N")
    nearest = (lp.get("stock") or {}).get("nearest_m")
    if nearest:
        bits.append("nearest stock lengths " + ", ".join(_f(v, 0, 1e3) for v in nearest) + " mm")
    return _e("; ".join(b for b in bits if b) + ".")


def _shafts(rep: dict[str, Any]) -> str:
    rows = [[_e(" + ".join(s["pulleys"])), _f(s.get("speed_rpm"), 1), _f(s.get("hub_load_n"), 0)]
            for s in rep.get("shafts", []) if s.get("hub_load_n") is not None and len(s["pulleys"]) > 1]
    if not rows:
        return ""
    return ("<h3>Shafts shared by loops</h3>"
            + _table([("pulleys on the shaft", "", False), ("speed", "rpm", True), ("resultant hub load", "N", True)],
                     rows))


def _loops(rep: dict[str, Any]) -> str:
    parts = ['<section id="loops"><h2>Loops</h2>', f'<p class="signs">{_e(SIGNS)}</p>']
    for lp in rep["loops"]:
        parts += [f"<h3>Loop {_e(lp['id'])}</h3>", f"<p>{_loop_line(lp)}</p>", _pulley_table(lp)]
        if any(s.get("quasi_static_tension_n") is not None for s in lp["spans"]):
            parts.append(_span_table(lp))
    parts += [_shafts(rep), "</section>"]
    return "".join(parts)


# --------------------------------------------------------------------------- field, figures, page


def _field_loop(lp: dict[str, Any]) -> str:
    mass = (lp.get("belt") or {}).get("mass_per_length_kg_m")
    rows = [[_e(s["id"]), _f(s.get("length_m"), 1, 1e3), _f(s.get("static_tension_n"), 0),
             f"<strong>{_f(s.get('static_frequency_hz'), 1)}</strong>"] for s in lp["spans"]]
    line = [f"belt mass m = {_f(mass, 3)} kg/m per strand" if mass is not None else
            "no belt mass per length given, so no pluck frequency: give the belt's section or mass_per_length"]
    if lp.get("install_tension_n") is not None:
        line.append(f"install tension set {_f(lp['install_tension_n'], 0)} N per strand (lowest within the grip "
                    f"margin {_f(lp.get('min_install_tension_n'), 0)} N)")
    if lp.get("tensioning") == "tensioner":
        line.append("a tensioner sets these tensions: the frequencies check its setting")
    heads = [("span", "", False), ("free length L", "mm", True), ("tension at rest T", "N per strand", True),
             ("pluck frequency f", "Hz", True)]
    return f"<h3>Loop {_e(lp['id'])}</h3><p>{_e('; '.join(line))}.</p>" + _table(heads, rows)


def _field(rep: dict[str, Any]) -> str:
    loops = [lp for lp in rep["loops"] if any(s.get("static_tension_n") is not None for s in lp["spans"])]
    if not loops:
        return ""
    intro = ("<p>With the drive stopped, locked out and tagged out, pluck each free span at its middle and read "
             "its first frequency (a belt-tension meter or a frequency app held near the span). At rest a span of "
             "free length L and mass m per length under tension T sounds at <strong>f = √(T/m) / (2 L)</strong>: "
             "the frequency below proves the tension beside it. A lower reading means a slacker belt; the "
             "tension goes with the square of the frequency.</p>")
    return '<section id="field"><h2>Setting the tension in the field</h2>' + intro + "".join(
        _field_loop(lp) for lp in loops) + "</section>"


def _figures(report: Report, rep: dict[str, Any]) -> str:
    """Per loop with a speed sweep, its two figures as inline SVG (matplotlib imported here)."""
    swept = [lp["id"] for lp in rep["loops"] if lp.get("sweep")]
    if not swept:
        return ""
    from .figures import campbell_figure, tension_figure, to_inline_svg

    parts = ['<section id="sweep"><h2>Over the speed range</h2>']
    captions = {"campbell": "Span frequencies (solid, one colour per span, every mode) against the source speed; "
                            "excitations dashed; resonance bands shaded; the dotted line is the operating speed.",
                "tension": "Quasi-static tension P of every span over the speed range; a span whose P reaches "
                           "the red zero line goes slack."}
    for i, lid in enumerate(swept, 1):
        parts.append(f"<h3>Loop {_e(lid)}</h3>")
        for kind, make in (("campbell", campbell_figure), ("tension", tension_figure)):
            fig = make(report.results, lid)
            if fig is not None:
                parts.append(f"<figure>{to_inline_svg(fig, f'fig{i}-{kind}')}"
                             f"<figcaption>{_e(captions[kind])}</figcaption></figure>")
    return "".join(parts) + "</section>"


def render_html(report: Report, *, max_entities: int = MAX_PICTURE_ENTITIES) -> str:
    """The HTML report of a checked drawing, as one self-contained page.

    Parameters
    ----------
    report
        What :func:`layout.pipeline.check_drawing` returns.
    max_entities
        Above this many entities the drawing's picture is left out, with a one-line note.

    Returns
    -------
    str
        The page: no script, no external file, a print stylesheet. matplotlib is imported
        only here, and only for a loop with a speed sweep.

    Examples
    --------
    >>> from layout.pipeline import check_drawing
    >>> page = render_html(check_drawing("sample_drawings/fan_motor.dxf"))
    >>> page.startswith("<!DOCTYPE html>") and "<svg" in page and "Setting the tension" in page
    True
    """
    rep = report.to_dict()
    body = [_header(rep), _cautions(), _findings(rep), _picture(report, rep, max_entities), _loops(rep),
            _field(rep), _figures(report, rep), '<section id="cautions"><h2>Cautions</h2>' + _cautions() + "</section>",
            f'<footer>spanwise {_e(rep["tool"]["version"])} · drawing sha256 '
            f'{_e(str(rep["drawing"].get("sha256") or "—")[:12])}</footer>']
    title = _e(f"Belt drive check: {_file_name(rep['drawing']['path'])}")
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>{title}</title>\n<style>{_STYLE}</style>\n</head>\n<body>\n"
            + "\n".join(body) + "\n</body>\n</html>\n")
