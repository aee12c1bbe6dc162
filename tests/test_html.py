"""The HTML report: parses, holds the drawing and the figures, names every finding and
every span's pluck frequency, has no external asset, marks findings at their places
(checked against the circles the renderer drew, not against its placement matrix),
escapes the drawing's texts, leaves spanwise's own layers out, bounds its cost, and
renders in a real browser."""

from __future__ import annotations

import html
import re
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from conftest import add_drive, new_doc, save
from layout.html import FILL, INK, render_html
from layout.pipeline import check_document, check_drawing
from test_findings import run_cli

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_drawings"
SVG = re.compile(r"<svg\b.*?</svg>", re.S)


class _Collect(HTMLParser):
    """Start tags in order, with their attributes, and every element's text."""

    def __init__(self) -> None:
        super().__init__()
        self.tags: list[tuple[str, dict]] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data):
        self.text.append(data)


def _parse(text: str) -> _Collect:
    p = _Collect()
    p.feed(text)
    p.close()
    return p


def _drawing_svg(text: str) -> ET.Element:
    (svg,) = [s for s in SVG.findall(text) if 'class="drawing"' in s[:400]]
    return ET.fromstring(svg)


def _assert_self_contained(text: str) -> None:
    tags = _parse(text).tags
    assert not any(t in ("script", "link", "img", "iframe", "object", "embed") for t, _ in tags)
    assert not re.search(r'\b(src|href)\s*=\s*["\']?\s*(https?:|//|file:)', text, re.I)
    assert "@import" not in text and "url(http" not in text and "@font-face" not in text


def _marked_drive(tmp: Path, name: str = "drive.dxf", units: str | None = "mm") -> Path:
    """Two pulleys off the origin, an SPA belt on a 60 mm pulley (``diameter-small`` at its
    centre) and a driver asking too much of it (slack spans, grip)."""
    doc = new_doc(units)
    msp = doc.modelspace()
    add_drive(msp, [(120.0, 40.0), (720.0, 290.0)], [150.0, 30.0], [1, 1], "polyline")
    msp.add_text("A role=driver speed=1450rpm direction=ccw power=15kW", dxfattribs={"insert": (120, 40), "height": 9})
    msp.add_text("B role=driven power=15kW", dxfattribs={"insert": (720, 290), "height": 9})
    path = save(doc, tmp, name)
    spec = path.with_name(path.name[: -len(".dxf")] + ".spanwise.toml")
    spec.write_text('[belt]\nsection = "SPA"\ninstall_tension = "300 N"\n'
                    '[pulley.A]\nspeed_range = ["900 rpm", "1500 rpm"]\n')
    return path


# --------------------------------------------------------------------------- contents


@pytest.mark.parametrize("name", ["mixer_two_stage", "bottling_conveyor"])
def test_html_holds_drawing_figures_findings_and_pluck_frequencies(name):
    report = check_drawing(SAMPLES / f"{name}.dxf")
    text = render_html(report)
    parsed = _parse(text)
    svgs = SVG.findall(text)
    for s in svgs:
        ET.fromstring(s)                                    # every inline SVG is well-formed XML
    rep = report.to_dict()
    swept = [lp for lp in rep["loops"] if lp.get("sweep")]
    assert len(swept) == len(rep["loops"])                  # both samples have a speed range
    assert len(svgs) == 1 + 2 * len(swept)                  # the drawing, then two figures per loop
    assert "<?xml" not in text and "<!DOCTYPE svg" not in text
    ids = re.findall(r'\bid="([^"]*)"', text)
    assert len(ids) == len(set(ids)) and not any(re.search(r"\s", i) or not i for i in ids)
    refs = set(re.findall(r'(?:href="#|url\(#)([^")]+)', text))
    assert refs <= set(ids)                                 # every reference finds its target
    for lp in rep["loops"]:
        for s in lp["spans"]:
            assert f"{s['static_frequency_hz']:.1f}" in text
    _assert_self_contained(text)
    assert text.count("Lock out and tag out") == 2          # the cautions, near the top and at the end
    assert text.index("Lock out and tag out") < text.index('id="findings"')
    assert "nip point" in text and "belt maker" in text and "take precedence" in text
    order = [a.get("id") for t, a in parsed.tags if t == "section"]
    assert order == ["findings", "drawing", "loops", "field", "sweep", "cautions"]
    assert "@media print" in text and "@page" in text


def test_mixer_numbers_are_the_json_numbers():
    report = check_drawing(SAMPLES / "mixer_two_stage.dxf")
    text = render_html(report)
    rep = report.to_dict()
    cells = _parse(text).text
    for lp in rep["loops"]:
        assert f"Loop {lp['id']}" in cells
        for p in lp["pulleys"]:
            assert f"{p['torque_nm']:.2f}".replace("-", "\u2212") in cells
            assert f"{p['hub_load_n']:.0f}" in cells
            assert f"{p['pitch_diameter_m'] * 1e3:.1f}" in cells
        for s in lp["spans"]:
            assert f"{s['quasi_static_tension_n']:.1f}" in cells and f"{s['upstream_wave_m_s']:.1f}" in cells
    (shaft,) = [s for s in rep["shafts"] if len(s["pulleys"]) > 1]
    assert f"{shaft['hub_load_n']:.0f}" in cells
    assert "sample_drawings/mixer_two_stage.spanwise.toml" in text and rep["spec"]["sha256"][:12] in text
    assert "DXF AC1024" in text and "units mm" in text and "read without repair" in text


def test_html_names_every_finding_with_its_number_and_place(tmp):
    report = check_drawing(_marked_drive(tmp))
    text = render_html(report)
    rep = report.to_dict()
    fs = rep["findings"]
    assert {"error", "warning"} <= {f["severity"] for f in fs}
    for f in fs:
        assert f["code"] in text and html.escape(f["message"], quote=True) in text
    # the list runs errors, warnings, notes; each row's number is the finding's JSON position
    rows = re.findall(r'<tr><td class="k"><span class="num[^"]*"[^>]*>(\d+)</span></td><td class="k">'
                      r'<span class="sev-(\w+)">', text)
    assert [int(k) for k, _ in rows] == list(range(1, len(fs) + 1))
    rank = {"error": 0, "warning": 1, "note": 2}
    assert [rank[s] for _, s in rows] == sorted(rank[s] for _, s in rows)
    # every located finding has one marker with its number; unlocated ones say so
    svg = _drawing_svg(text)
    marks = {int(g.get("data-finding")): g for g in svg.iter() if g.get("class", "").startswith("mark ")}
    located = {k for k, f in enumerate(fs, 1) if f["at"] is not None}
    assert set(marks) == located
    for k in located:
        assert marks[k].find("{*}text").text == str(k)
        assert f"mark-{fs[k - 1]['severity']}" in marks[k].get("class")
    where = f"({fs[0]['at'][0]:.6g}, {fs[0]['at'][1]:.6g}) mm".replace("-", "\u2212")
    assert where in text


def test_unlocated_findings_say_whole_drawing(tmp):
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (500.0, 0.0)], [60.0, 120.0], [1, 1], "spans")
    doc.modelspace().add_text("A role=driver speed=1450rpm power=2kW", dxfattribs={"insert": (0, 0), "height": 9})
    report = check_document(doc)
    assert any(f.at is None for f in report.findings)      # direction-assumed concerns the whole drawing
    text = render_html(report)
    assert "whole drawing" in text and 'class="num loose"' in text
    assert len(_drawing_svg(text).findall(".//{*}g[@data-finding]")) == sum(f.at is not None for f in report.findings)


# --------------------------------------------------------------------------- the drawing


def _circle_boxes(svg: ET.Element) -> list[tuple[float, float, float, float]]:
    """Bounding box (x0, y0, x1, y1) of the on-curve points of every path made of an ``M``
    and relative ``c`` curves: how the SVG backend draws a CIRCLE (four quarter arcs, whose
    end points are the circle's extremes), independent of its placement matrix."""
    out = []
    for el in svg.iter():
        d = (el.get("d") or "").strip()
        m = re.fullmatch(r"M (-?\d+) (-?\d+)((?: c(?: -?\d+){6})+)", d)
        if not el.tag.endswith("path") or m is None:
            continue
        x, y = float(m.group(1)), float(m.group(2))
        pts = [(x, y)]
        for seg in re.findall(r"c((?: -?\d+){6})", m.group(3)):
            v = [float(t) for t in seg.split()]
            x, y = x + v[4], y + v[5]
            pts.append((x, y))
        a = np.asarray(pts)
        w, h = np.ptp(a, axis=0)
        if w > 0 and abs(w / h - 1.0) < 0.02:
            out.append((*a.min(axis=0), *a.max(axis=0)))
    return sorted(out, key=lambda b: b[2] - b[0])


def test_a_marker_lands_on_the_circle_it_concerns(tmp):
    report = check_drawing(_marked_drive(tmp))
    fs = report.to_dict()["findings"]
    (k,) = [k for k, f in enumerate(fs, 1) if f["code"] == "diameter-small"]
    assert fs[k - 1]["at"] == pytest.approx([720.0, 290.0])
    svg = _drawing_svg(render_html(report))
    small, large = _circle_boxes(svg)                       # the 30 and the 150 circle, as drawn
    assert (small[2] - small[0]) / (large[2] - large[0]) == pytest.approx(30 / 150, rel=0.01)
    size = small[2] - small[0]
    # the drawing's own geometry: centres 600 right and 250 up of each other (the SVG's y is down)
    scale = (large[2] - large[0]) / 300.0
    c_small = np.array([(small[0] + small[2]) / 2, (small[1] + small[3]) / 2])
    c_large = np.array([(large[0] + large[2]) / 2, (large[1] + large[3]) / 2])
    assert c_small - c_large == pytest.approx([600.0 * scale, -250.0 * scale], abs=0.01 * size)
    # the findings at that centre stand in a row, the first (in the list's order) on the centre
    row = [g for g in svg.iter() if g.get("data-finding") and np.allclose(
        [float(v) for v in g.get("data-at").split()], [720.0, 290.0])]
    assert str(k) in [g.get("data-finding") for g in row]
    badges = [g.find("{*}circle") for g in row]
    assert float(badges[0].get("cx")) == pytest.approx(c_small[0], abs=0.01 * size)
    assert all(float(b.get("cy")) == pytest.approx(c_small[1], abs=0.01 * size) for b in badges)
    xs = [float(b.get("cx")) for b in badges]
    assert xs == sorted(xs) and len(set(xs)) == len(xs)
    # and a marker of a span (at its middle) lies between the two centres
    span = next(g for g in svg.iter() if g.get("data-finding") and fs[int(g.get("data-finding")) - 1]["code"]
                == "slack-span")
    at = np.array([float(v) for v in span.get("data-at").split()])
    expect = c_large + (at - [120.0, 40.0]) * [scale, -scale]
    first = span.find("{*}circle")
    assert float(first.get("cy")) == pytest.approx(expect[1], abs=0.01 * size)


def test_own_layers_are_left_out_and_the_picture_prints(tmp):
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0.0, 0.0), (500.0, 0.0)], [60.0, 120.0], [1, 1], "lines")
    msp.add_circle((250.0, 0.0), 40.0, dxfattribs={"layer": "SPANWISE-FINDINGS", "color": 1})
    block = doc.blocks.new("SPANWISE-MARK")
    block.add_circle((0.0, 0.0), 10.0)
    msp.add_blockref("SPANWISE-MARK", (250.0, 100.0))
    report = check_document(doc)
    svg = _drawing_svg(render_html(report))
    assert len(_circle_boxes(svg)) == 2                     # the two pulleys, not spanwise's own circles
    styles = " ".join(el.text or "" for el in svg.iter() if el.tag.endswith("style"))
    colours = set(re.findall(r"(?:stroke|fill): (#[0-9a-f]{6})", styles))
    assert colours and colours <= {INK, FILL}               # dark lines, light grey fills: it prints
    rect = svg.find("{*}rect")
    assert rect.get("fill") == "#ffffff"                    # on white
    assert svg.get("width") is None and svg.get("viewBox")  # scales with the page


def test_labels_and_names_from_the_drawing_are_escaped(tmp):
    report = check_drawing(_marked_drive(tmp, "odd <b> & name.dxf"))
    text = render_html(report)
    assert "<b>" not in text
    assert "odd &lt;b&gt; &amp; name.dxf" in text
    ET.fromstring(SVG.findall(text)[0])                     # the markers' titles too


def test_enormous_drawing_skips_the_picture_with_a_note(tmp):
    report = check_drawing(SAMPLES / "mixer_two_stage.dxf")
    text = render_html(report, max_entities=3)
    assert 'class="drawing"' not in text
    assert "its picture is left out" in text
    assert len(SVG.findall(text)) == 2 * len(report.model.loops)   # the figures are still there


def test_picture_from_the_kept_document_or_the_file():
    kept = render_html(check_drawing(SAMPLES / "fan_motor.dxf", keep_document=True))
    read = render_html(check_drawing(SAMPLES / "fan_motor.dxf"))
    assert SVG.findall(kept)[0] == SVG.findall(read)[0]


def test_import_does_not_load_matplotlib():
    code = "import sys, layout.html; print('matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-X", "importtime", "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert out.stdout.strip() == "False" and "matplotlib" not in out.stderr


def test_figure_ids_are_prefixed_and_references_follow():
    from layout.figures import svg_fragment

    doc = ('<?xml version="1.0"?>\n<!DOCTYPE svg PUBLIC "-//W3C//DTD SVG 1.1//EN" "x.dtd">\n'
           '<svg xmlns:xlink="http://www.w3.org/1999/xlink" width="5pt" height="4pt" viewBox="0 0 5 4" '
           'xmlns="http://www.w3.org/2000/svg"><metadata><x/></metadata><defs><style>*{stroke: red}</style>'
           '<path id="p 1" d="M0 0"/><clipPath id="c1"/></defs><use xlink:href="#p 1"/>'
           '<g clip-path="url(#c1)" id="c1"/></svg>')
    a, b = svg_fragment(doc, "fa"), svg_fragment(doc, "fb")
    ids = re.findall(r'\bid="([^"]+)"', a + b)
    assert len(ids) == len(set(ids)) and "fa-p_1" in ids
    assert 'xlink:href="#fa-p_1"' in a and "url(#fa-c1)" in a and "#fa *{" in a
    assert "<metadata" not in a and 'width="' not in a and a.startswith('<svg id="fa"')
    ET.fromstring(a)


# --------------------------------------------------------------------------- outputs and browser


def test_html_command_writes_a_sealed_report(tmp):
    for suffix in (".dxf", ".spanwise.toml"):
        shutil.copy(SAMPLES / f"fan_motor{suffix}", tmp / f"fan_motor{suffix}")
    r = run_cli("check", tmp / "fan_motor.dxf", "--html", tmp / "r.html")
    assert r.returncode == 0, r.stderr
    assert not (tmp / "fan_motor.spanwise.dxf").exists()
    assert run_cli("check", tmp / "fan_motor.dxf", "--html", tmp / "r.html").returncode == 0   # its own
    (tmp / "r.html").write_text((tmp / "r.html").read_text() + "<!-- my notes -->")
    assert run_cli("check", tmp / "fan_motor.dxf", "--html", tmp / "r.html").returncode == 2    # changed


@pytest.mark.skipif(shutil.which("chromium") is None, reason="chromium is not installed")
def test_html_renders_in_a_browser(tmp):
    import matplotlib.image as mpimg

    page = tmp / "r.html"
    page.write_text(render_html(check_drawing(_marked_drive(tmp))), encoding="utf-8")
    shot = tmp / "shot.png"
    subprocess.run(["chromium", "--headless", "--no-sandbox", "--disable-gpu", f"--screenshot={shot}",
                    "--window-size=1280,2400", page.as_uri()], capture_output=True, timeout=180)
    assert shot.is_file()
    img = mpimg.imread(shot)[..., :3]
    assert img.shape[:2] == (2400, 1280)
    dark = img.mean(axis=2) < 0.5
    assert dark.mean() > 0.005                              # text and lines, not a blank page
    red = (img[..., 0] > 0.6) & (img[..., 1] < 0.35) & (img[..., 2] < 0.35)
    assert red.sum() > 200                                  # the error markers and badges show in colour
