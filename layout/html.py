"""The HTML report: one self-contained, printable page that leads with the drawing and its
findings.

Order: what was read and the cautions; the findings, numbered, each with its place; the
drawing as inline SVG (ezdxf's drawing add-on, SVG backend) with every located finding
marked by its number; per loop its pulleys and spans; the pluck frequencies for setting
the tension in the field; the speed-sweep figures (matplotlib, imported only here, when a
report is rendered). No script, no external file: it opens and prints anywhere.
"""

from __future__ import annotations

import html
import re
import xml.etree.ElementTree as ET
from typing import Any

from ._own import is_own_name

__all__ = ["render_html", "drawing_svg", "MAX_PICTURE_ENTITIES"]

#: Above this many entities the drawing's picture is left out (about 1 s per 10 000).
MAX_PICTURE_ENTITIES = 200_000
#: Marker colours by severity (as in the drawing's indexed colours: red, orange, blue).
MARK_COLOURS = {"error": "#d00000", "warning": "#e07000", "note": "#0050c0"}

_STYLE = """
body{font:14px/1.45 system-ui,Segoe UI,Helvetica,Arial,sans-serif;color:#111;margin:24px auto;max-width:1100px;padding:0 16px}
h1{font-size:22px;margin:0 0 4px}h2{font-size:18px;margin:28px 0 8px;border-bottom:1px solid #ccc}
h3{font-size:15px;margin:18px 0 6px}.read{color:#444;font-size:13px}
.caution{border:2px solid #b00;background:#fff4f4;padding:8px 12px;margin:12px 0;font-size:13px}
table{border-collapse:collapse;margin:6px 0 12px;font-size:13px}th,td{border:1px solid #bbb;padding:3px 7px}
th{background:#f0f0f0;text-align:left}td.n{text-align:right;font-variant-numeric:tabular-nums}
.sev-error{color:#b00000;font-weight:600}.sev-warning{color:#b05000;font-weight:600}.sev-note{color:#0050c0}
.picture svg{width:100%;height:auto;max-height:720px;border:1px solid #ccc}
.figure svg{width:100%;height:auto;max-width:760px}.signs{font-size:12px;color:#444}
@media print{body{margin:0;max-width:none;font-size:11px}h2{break-after:avoid}table,figure,.picture{break-inside:avoid}
.picture svg{max-height:none}}
"""


def _e(v: Any) -> str:
    return html.escape(str(v), quote=True)


def _num(v: Any, fmt: str) -> str:
    return "–" if v is None else format(v, fmt)


def _where(f: dict[str, Any], units: str) -> str:
    if f.get("at") is None:
        return "whole drawing"
    return f"({f['at'][0]:.6g}, {f['at'][1]:.6g}) {units}"


def _header(rep: dict[str, Any], report: Any) -> str:
    d = rep["drawing"]
    spec = rep.get("spec") or {}
    used = (f"spec <code>{_e(spec['path'])}</code> (sha256 {_e(str(spec.get('sha256'))[:12])}…)"
            if spec.get("path") else "no spec file found")
    name = d["path"].replace("\\", "/").rsplit("/", 1)[-1]
    rec = ", recovered from a damaged file" if d.get("recovered") else ""
    return (f"<h1>spanwise check of {_e(name)}</h1><p class=read>Read <code>{_e(d['path'])}</code> "
            f"(DXF {_e(d.get('version', ''))}, units {_e(d['units'])}{rec}); {used}; spanwise "
            f"{_e(rep['tool']['version'])}.</p>" + _caution(rep))


def _caution(rep: dict[str, Any]) -> str:
    return ("<div class=caution><b>Caution.</b> Belt drives hurt people. " + _e(rep.get("caution", "")) +
            " Local codes and licensed engineering practice take precedence over this report.</div>")


def _findings(rep: dict[str, Any]) -> str:
    fs = rep["findings"]
    counts = {s: sum(1 for f in fs if f["severity"] == s) for s in ("error", "warning", "note")}
    head = (f"<h2>Findings</h2><p>{counts['error']} error(s), {counts['warning']} warning(s), "
            f"{counts['note']} note(s). Numbers match the markers on the drawing.</p>")
    if not fs:
        return head + "<p>Nothing to report: the drawing checks clean.</p>"
    rows = "".join(f"<tr><td class=n>{k}</td><td class=sev-{_e(f['severity'])}>{_e(f['severity'])}</td>"
                   f"<td><code>{_e(f['code'])}</code></td><td>{_e(f['message'])}</td>"
                   f"<td>{_e(_where(f, rep['drawing']['units']))}</td></tr>" for k, f in enumerate(fs, 1))
    return head + ("<table><tr><th>#</th><th>severity</th><th>code</th><th>what</th><th>where</th></tr>"
                   f"{rows}</table>")


def drawing_svg(report: Any, findings: list[dict[str, Any]]) -> str:
    """The drawing as an SVG element (text) with a numbered marker at every located finding.

    Drawn from ``report.document`` (else the drawing file read again) by ezdxf's SVG
    backend, black on white, spanwise's own layers left out; the markers are placed with
    the backend's own placement matrix, so they land where the drawing puts the point.
    """
    import ezdxf
    from ezdxf.addons.drawing import Frontend, RenderContext, config, layout, svg
    from ezdxf.math import BoundingBox2d

    from .annotate import extents

    doc = report.document if report.document is not None else ezdxf.readfile(report.model.drawing.path)
    backend = svg.SVGBackend()
    cfg = config.Configuration(background_policy=config.BackgroundPolicy.WHITE,
                               color_policy=config.ColorPolicy.BLACK)
    Frontend(RenderContext(doc), backend, config=cfg).draw_layout(
        doc.modelspace(), finalize=True, filter_func=lambda e: not is_own_name(e.dxf.get("layer", "0")))
    x0, y0, x1, y1 = extents(report)
    pad = 0.04 * max(x1 - x0, y1 - y0, 1e-9)
    box = BoundingBox2d([(x0 - pad, y0 - pad), (x1 + pad, y1 + pad)])
    root = backend.get_xml_root_element(layout.Page(0, 0, layout.Units.mm, margins=layout.Margins.all(4)),
                                        render_box=box)
    _add_markers(root, backend.transformation_matrix, findings)
    return ET.tostring(root, encoding="unicode")


def _add_markers(root: ET.Element, m: Any, findings: list[dict[str, Any]]) -> None:
    vb = [float(v) for v in root.get("viewBox", "0 0 1 1").split()]
    size = 0.012 * max(vb[2], vb[3])
    group = ET.SubElement(root, "g", {"id": "spanwise-findings"})
    for k, f in enumerate(findings, 1):
        if f.get("at") is None:
            continue
        p = m.transform((float(f["at"][0]), float(f["at"][1]), 0.0))
        colour = MARK_COLOURS.get(f["severity"], "#000")
        mark = ET.SubElement(group, "g", {"class": f"mark sev-{f['severity']}", "data-finding": str(k)})
        ET.SubElement(mark, "circle", {"cx": f"{p.x:.1f}", "cy": f"{p.y:.1f}", "r": f"{size:.1f}", "fill": "none",
                                       "stroke": colour, "stroke-width": f"{size / 4:.1f}"})
        label = ET.SubElement(mark, "text", {"x": f"{p.x + 1.3 * size:.1f}", "y": f"{p.y - 0.9 * size:.1f}",
                                             "fill": colour, "font-size": f"{1.6 * size:.1f}",
                                             "font-family": "sans-serif", "font-weight": "bold"})
        label.text = str(k)


def _picture(report: Any, rep: dict[str, Any]) -> str:
    n = report.model.drawing.entity_count
    if n > MAX_PICTURE_ENTITIES:
        return (f"<h2>Drawing</h2><p>The drawing has {n} entities, more than the {MAX_PICTURE_ENTITIES} this "
                f"report draws; the findings' places are listed above.</p>")
    try:
        pic = drawing_svg(report, rep["findings"])
    except Exception as err:   # the renderer's many failure kinds must not cost the report
        return f"<h2>Drawing</h2><p>The drawing could not be pictured ({_e(type(err).__name__)}).</p>"
    return f"<h2>Drawing</h2><div class=picture>{pic}</div>"


SIGNS = ("Signs: rpm is positive counter-clockwise in the drawing; torque and power are positive where the "
         "pulley drives the belt and negative where it takes power out. P is the quasi-static tension (the "
         "tension less its centrifugal part m v²), T the belt's tension, both per strand; torques and hub "
         "loads are for all strands.")


def _table(heads: list[str], rows: list[list[str]]) -> str:
    th = "".join(f"<th>{_e(h)}</th>" for h in heads)
    body = "".join("<tr>" + "".join(f"<td class=n>{c}</td>" if i else f"<td>{c}</td>" for i, c in enumerate(r))
                   + "</tr>" for r in rows)
    return f"<table><tr>{th}</tr>{body}</table>"


def _pulley_table(lp: dict[str, Any]) -> str:
    rows = [[_e(p["id"]), _e(p["role"]), _e(p["side"]), _num(p["pitch_diameter_m"] * 1e3, ".1f"),
             _num(p.get("wrap_deg"), ".1f"), _num(p.get("speed_rpm"), ".1f"), _num(p.get("torque_nm"), ".2f"),
             _num(None if p.get("power_w") is None else p["power_w"] / 1e3, ".3f"), _e(p.get("grip", "–")),
             _num(p.get("grip_utilisation"), ".2f"), _num(p.get("hub_load_n"), ".0f"),
             _num(p.get("max_hub_load_n"), ".0f")] for p in lp["pulleys"]]
    return _table(["pulley", "role", "side", "pitch dia mm", "wrap deg", "speed rpm", "torque N·m", "power kW",
                   "grip", "grip utilisation", "hub load N", "largest hub N"], rows)


def _span_table(lp: dict[str, Any]) -> str:
    rows = [[_e(s["id"]), _num(s.get("length_m") and s["length_m"] * 1e3, ".1f"),
             _num(s.get("quasi_static_tension_n"), ".1f"), _num(s.get("tension_n"), ".1f"),
             _num((s.get("frequencies_hz") or [None])[0], ".1f"), _num(s.get("static_frequency_hz"), ".1f"),
             _num(s.get("downstream_wave_m_s"), ".1f"), _num(s.get("upstream_wave_m_s"), ".1f")]
            for s in lp["spans"]]
    return _table(["span", "length mm", "P N", "T N", "f1 running Hz", "pluck at rest Hz", "wave down m/s",
                   "wave up m/s"], rows)


def _loop_head(lp: dict[str, Any]) -> str:
    bits = [f"{lp['path']} path", f"pitch length {_num(lp.get('length_m') and lp['length_m'] * 1e3, '.1f')} mm"]
    if lp.get("speed_m_s") is not None:
        bits.append(f"belt speed {lp['speed_m_s']:.2f} m/s")
    if lp.get("tensioning"):
        bits.append(f"tensioning {lp['tensioning']}")
    if lp.get("install_tension_n") is not None:
        bits.append(f"install tension set {lp['install_tension_n']:.0f} N per strand (lowest within the grip "
                    f"margin {_num(lp.get('min_install_tension_n'), '.0f')} N)")
    return f"<h3>Loop {_e(lp['id'])}</h3><p>{_e('; '.join(bits))}.</p>"


def _loops(rep: dict[str, Any]) -> str:
    parts = ["<h2>Loops</h2>", f"<p class=signs>{_e(SIGNS)}</p>"]
    for lp in rep["loops"]:
        parts += [_loop_head(lp), _pulley_table(lp)]
        if any(s.get("quasi_static_tension_n") is not None for s in lp["spans"]):
            parts.append(_span_table(lp))
    return "".join(parts)


def _pluck(rep: dict[str, Any]) -> str:
    rows = []
    for lp in rep["loops"]:
        for s in lp["spans"]:
            if s.get("static_frequency_hz") is None:
                continue
            rows.append([_e(lp["id"]), _e(s["id"]), _num(s.get("length_m") and s["length_m"] * 1e3, ".1f"),
                         _num(s.get("static_tension_n"), ".0f"), _num(s["static_frequency_hz"], ".1f")])
    if not rows:
        return ""
    return ("<h2>Setting the tension in the field</h2><p>With the drive stopped and locked out, pluck each span "
            "at its middle and read its first frequency: it proves the tension at rest, f = √(T/m) / (2 L).</p>"
            + _table(["loop", "span", "free length mm", "tension at rest N", "pluck frequency Hz"], rows))


def _figures(report: Any) -> str:
    from .figures import campbell_figure, tension_figure, to_svg

    parts = []
    for k, lp in enumerate(report.model.loops):
        for kind, make in (("sweep", campbell_figure), ("tension", tension_figure)):
            fig = make(report.results, lp.id)
            if fig is not None:
                parts.append(f"<figure class=figure>{_inline(to_svg(fig), f'f{k}{kind}')}</figure>")
    return ("<h2>Over the speed range</h2>" + "".join(parts)) if parts else ""


def _inline(svg_text: str, prefix: str) -> str:
    """matplotlib's SVG without its prolog, its ids made unique to this figure."""
    body = svg_text[svg_text.index("<svg"):]
    return re.sub(r'(id="|url\(#|href="#)([^")]+)', lambda m: f"{m.group(1)}{prefix}-{m.group(2)}", body)


def render_html(report: Any) -> str:
    """The HTML report of a :class:`layout.pipeline.Report`, as one self-contained page."""
    rep = report.to_dict()
    body = [_header(rep, report), _findings(rep), _picture(report, rep), _loops(rep), _pluck(rep),
            _figures(report), "<h2>Caution</h2>" + _caution(rep)]
    title = _e(rep["drawing"]["path"].replace("\\", "/").rsplit("/", 1)[-1])
    return ("<!DOCTYPE html>\n<html lang=en><head><meta charset=utf-8>"
            f"<title>spanwise: {title}</title><style>{_STYLE}</style></head><body>"
            + "".join(body) + "</body></html>\n")
