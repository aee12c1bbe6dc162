"""Resonance over the speed range, found by hand, and an idler that clears it.

The hand computation: with constant tensioning and a constant-torque load, the slack span
carries P = T0 - dP/2 at every speed (dP = Q / r), and T = P + m v^2; its fundamental is
f1 = P / (2 L sqrt(m T)) (moving string: Archibald and Emslie 1958, Wickert and Mote 1990,
from memory). The driver's first order is n / 60. Equal: with x = (n/60)^2,
4 L^2 m (P x + m (2 pi r)^2 x^2) = P^2, a quadratic in x.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import shapely

from conftest import add_drive, new_doc, save
from layout.idler import find_span, suggest
from layout.pipeline import check_drawing
from physics.model import Side
from test_findings import run_cli

SPEC = '''
[belt]
mass_per_length = "0.1 kg/m"
friction = 0.3
tensioning = "constant"
install_tension = "200 N"
[pulley.A]
role = "driver"
speed = "1000 rpm"
direction = "ccw"
speed_range = ["600 rpm", "1300 rpm"]
[pulley.B]
role = "driven"
torque = "10 N*m"
'''


def _drawing(tmp: Path, name: str, centers, radii, turns, labels=("A", "B")) -> Path:
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, centers, radii, turns, "spans")
    for t, c in zip(labels, centers):
        msp.add_text(t, dxfattribs={"insert": tuple(c)})
    path = save(doc, tmp, f"{name}.dxf")
    (tmp / f"{name}.spanwise.toml").write_text(SPEC)
    return path


def _hand_crossing_rpm() -> float:
    r, R, C, m, t0, dP = 0.05, 0.10, 1.0, 0.1, 200.0, 10.0 / 0.10
    L = math.sqrt(C**2 - (R - r) ** 2)
    P = t0 - dP / 2
    a = 4 * L * L * m * m * (2 * math.pi * r) ** 2
    b = 4 * L * L * m * P
    x = (-b + math.sqrt(b * b + 4 * a * P * P)) / (2 * a)
    return 60 * math.sqrt(x)


def test_driver_order_crossing_a_span_frequency(tmp):
    path = _drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    checked = check_drawing(path)
    res = [f for f in checked.findings if f.code == "resonance"]
    assert len(res) == 1
    f = res[0]
    assert f.severity.value == "warning" and set(f.refs) == {"BELT", "A-B"}
    assert f.data["kind"] == "direct" and f.data["mode"] == 1 and f.data["excitation"] == "A x1"
    assert f.data["speed_rpm"] == pytest.approx(_hand_crossing_rpm(), rel=1e-7)      # 1149.55 rpm
    lo, hi = f.data["speed_range_rpm"]
    assert 600 < lo < f.data["speed_rpm"] < hi < 1300
    # at the band's edges the excitation is 10 % off the span's frequency (default margin)
    assert f.data["frequency_hz"] == pytest.approx(f.data["speed_rpm"] / 60, rel=1e-7)
    assert not [x for x in checked.findings if x.severity.value == "error"]


def test_suggested_idler_clears_it_and_the_redrawn_drive_is_clean(tmp):
    path = _drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    r = run_cli("suggest-idler", path, "--span", "A-B", "--json", tmp / "idlers.json", "--out", tmp / "idlers.dxf")
    assert r.returncode == 0, r.stdout + r.stderr
    rows = json.loads((tmp / "idlers.json").read_text())["suggestions"]
    assert len(rows) == 3 and all(row["resonances_left"] == 0 for row in rows)
    best = rows[0]
    assert best["side"] == "back" and best["worst_grip_utilisation"] <= 0.8
    # redraw the drive with that idler (its pitch circle and the belt's new tangent spans)
    cx, cy = best["center"]
    ri = best["pitch_diameter_m"] / 2 * 1e3
    redrawn = _drawing(tmp, "with_idler", [(0.0, 0.0), (cx, cy), (1000.0, 0.0)], [50.0, ri, 100.0], [1, -1, 1],
                       labels=("A", "IDL", "B"))
    checked = check_drawing(redrawn)
    bad = [f for f in checked.findings if f.severity.value in ("error", "warning")]
    assert not bad, [f.message for f in bad]
    (lp,) = checked.model.loops
    assert lp.pulleys == ["A", "IDL", "B"] and [s.value for s in lp.sides] == ["inside", "back", "inside"]
    # the drawing the command wrote holds the suggestions on spanwise's own layers
    import ezdxf
    doc = ezdxf.readfile(tmp / "idlers.dxf")
    assert len(doc.modelspace().query('CIRCLE[layer=="SPANWISE-IDLER"]')) == 3


def test_idler_suggestions_stay_inside_an_allowed_region(tmp):
    path = _drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    import ezdxf
    doc = ezdxf.readfile(path)
    box = [(450, -220), (750, -220), (750, -60), (450, -60)]
    doc.modelspace().add_lwpolyline(box, close=True, dxfattribs={"layer": "IDLER_ZONE"})
    doc.saveas(path)
    checked = check_drawing(path)
    found = suggest(checked, find_span(checked, "A-B"), radius_m=0.05, side=Side.BACK,
                    region=__import__("layout.idler", fromlist=["x"]).region_polygons(checked, "IDLER_ZONE"), count=2)
    assert found
    poly = shapely.Polygon(box)
    for s in found:
        x, y = checked.model.to_drawing(s.center_m)
        assert poly.contains(shapely.Point(x, y))


def test_sweep_in_the_report(tmp):
    path = _drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    r = run_cli("check", path, "--json", tmp / "r.json")
    assert r.returncode == 0
    lp = json.loads((tmp / "r.json").read_text())["loops"][0]
    sweep = lp["sweep"]
    assert len(sweep["speed_rpm"]) == 200
    assert sweep["speed_rpm"][0] == pytest.approx(600) and sweep["speed_rpm"][-1] == pytest.approx(1300)
    assert set(sweep["frequencies_hz"]) == {"A-B", "B-A"}
    assert len(sweep["frequencies_hz"]["A-B"][0]) == 5
    assert set(sweep["excitations_hz"]) == {"A x1", "B x1", "belt pass"}
    assert np.allclose(sweep["excitations_hz"]["A x1"], np.asarray(sweep["speed_rpm"]) / 60)
    span = lp["spans"][0]
    c = span["wave_speed_m_s"]
    v = lp["speed_m_s"]
    assert span["downstream_wave_m_s"] == pytest.approx(c + v) and span["upstream_wave_m_s"] == pytest.approx(c - v)


def test_campbell_figure_draws_the_sweep(tmp):
    from layout.figures import campbell_figure, tension_figure, to_svg
    path = _drawing(tmp, "drive", [(0.0, 0.0), (1000.0, 0.0)], [50.0, 100.0], [1, 1])
    checked = check_drawing(path)
    mech = checked.results.loops["BELT"].mechanics
    fig = campbell_figure(checked.results, "BELT")
    lines = {ln.get_gid(): ln for ln in fig.axes[0].get_lines()}
    # every span mode and every excitation is a line holding exactly the sweep's numbers
    assert np.allclose(lines["span A-B mode 1"].get_ydata(), mech.dynamics.frequencies_hz[1:, 0, 0])
    assert np.allclose(lines["excitation A x1"].get_ydata(), mech.dynamics.excitations_hz["A x1"][1:])
    assert len([g for g in lines if g.startswith("span")]) == 2 * 5
    svg = to_svg(fig)
    assert svg.lstrip().startswith("<?xml") and "<svg" in svg
    fig2 = tension_figure(checked.results, "BELT")
    assert np.allclose(fig2.axes[0].get_lines()[0].get_ydata(), mech.quasi_static_n[1:, 0])
    to_svg(fig2)
