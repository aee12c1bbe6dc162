"""The HTML report: parses, holds the drawing and the figures, names every finding and
every span's pluck frequency, has no external asset, marks findings at their places, and
renders in a real browser."""

from __future__ import annotations

import html
import re
import shutil
import subprocess
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from conftest import add_drive, new_doc, save
from layout.html import render_html
from layout.pipeline import check_drawing
from test_findings import _spans_drawing, run_cli

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"
SVG = re.compile(r"<svg\b.*?</svg>", re.S)


class _Collect(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[tuple[str, dict]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


def _parse(text: str) -> _Collect:
    p = _Collect()
    p.feed(text)
    p.close()
    return p


@pytest.mark.parametrize("name", ["mixer_two_stage", "bottling_conveyor"])
def test_html_holds_drawing_figures_findings_and_pluck_frequencies(name):
    report = check_drawing(SAMPLES / f"{name}.dxf")
    text = render_html(report)
    tags = _parse(text).tags
    svgs = SVG.findall(text)
    for s in svgs:
        ET.fromstring(s)                                    # every inline SVG is well-formed XML
    loops = len(report.model.loops)
    assert len(svgs) == 1 + 2 * loops                       # the drawing, then two figures per loop
    ids = re.findall(r'\bid="([^"]+)"', text)
    assert len(ids) == len(set(ids))                        # figures' ids do not collide
    rep = report.to_dict()
    for lp in rep["loops"]:
        for s in lp["spans"]:
            assert f"{s['static_frequency_hz']:.1f}" in text
    assert not any(t in ("script", "link", "img", "iframe") for t, _ in tags)
    assert not re.search(r'(src|href)="(https?:)?//', text)
    assert "nip point" in text and "lock out" in text and "belt maker" in text


def test_html_names_every_finding_and_marks_it(tmp):
    path, _ = _spans_drawing(tmp, rotate_deg=1.0)
    report = check_drawing(path)
    text = render_html(report)
    assert report.findings
    for f in report.findings:
        assert f.code in text and html.escape(f.message, quote=True) in text
    located = [f for f in report.findings if f.at is not None]
    assert text.count('class="mark sev-') == len(located)


def _path_boxes(svg: ET.Element) -> list[tuple[float, float, float, float]]:
    """Bounding box (x0, y0, x1, y1) of the on-curve points of every path made of an ``M``
    and relative ``c`` curves (how the renderer draws a circle: four quarter arcs, whose
    end points are the circle's extremes)."""
    out = []
    for el in svg.iter():
        d = el.get("d") or ""
        m = re.fullmatch(r"M (-?\d+) (-?\d+)((?: c(?: -?\d+){6})+)", d.strip())
        if not el.tag.endswith("path") or m is None:
            continue
        x, y = float(m.group(1)), float(m.group(2))
        pts = [(x, y)]
        for seg in re.findall(r"c((?: -?\d+){6})", m.group(3)):
            v = [float(t) for t in seg.split()]
            x, y = x + v[4], y + v[5]
            pts.append((x, y))
        a = np.asarray(pts)
        out.append((*a.min(axis=0), *a.max(axis=0)))
    return out


def test_a_marker_lands_on_the_circle_it_concerns(tmp):
    # an SPA belt on a 60 mm pulley: `diameter-small`, located at that pulley's centre
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (600.0, 250.0)], [150.0, 30.0], [1, 1], "polyline")
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('[belt]\nsection = "SPA"\ninstall_tension = "300 N"\n')
    report = check_drawing(path)
    (f,) = [f for f in report.findings if f.code == "diameter-small"]
    assert f.at == pytest.approx((600.0, 250.0))
    svg = ET.fromstring(SVG.findall(render_html(report))[0])
    # independent of the renderer's placement matrix: a full circle is drawn as a closed
    # curve symmetric about its centre, so the centre of its path's box is the circle's
    # centre in the picture. The two circles are the square boxes, sizes in ratio 30 : 150.
    boxes = sorted((b for b in _path_boxes(svg) if b[2] - b[0] > 0 and
                    abs((b[2] - b[0]) / (b[3] - b[1]) - 1) < 0.02), key=lambda b: b[2] - b[0])
    small, large = boxes[0], boxes[-1]
    assert (small[2] - small[0]) / (large[2] - large[0]) == pytest.approx(30 / 150, rel=0.02)
    mark = next(el for el in svg.iter() if el.tag.endswith("circle"))
    size = small[2] - small[0]
    assert float(mark.get("cx")) == pytest.approx((small[0] + small[2]) / 2, abs=0.01 * size)
    assert float(mark.get("cy")) == pytest.approx((small[1] + small[3]) / 2, abs=0.01 * size)


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

    (tmp / "r.html").write_text(render_html(check_drawing(SAMPLES / "mixer_two_stage.dxf")), encoding="utf-8")
    subprocess.run(["chromium", "--headless", "--no-sandbox", "--disable-gpu", f"--screenshot={tmp / 'shot.png'}",
                    "--window-size=1200,2000", (tmp / "r.html").as_uri()], capture_output=True, timeout=120)
    img = mpimg.imread(tmp / "shot.png")[..., :3]
    assert img.shape[0] >= 1000 and (img.mean(axis=2) < 0.5).mean() > 0.005     # text and lines, not blank
