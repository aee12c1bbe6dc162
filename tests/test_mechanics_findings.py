"""Mechanics findings and the stock-length and adjustment results."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from conftest import add_drive, new_doc, save
from layout.pipeline import check_drawing
from physics import geometry as geo
from physics.analysis import Options, analyse
from physics.model import Belt, Drive, Loop, Pulley, Role, Side
from test_findings import run_cli

RPM = math.pi / 30.0


def _codes(res) -> list[str]:
    return [f.code for f in res.findings]


def _two(belt: Belt, *, rpm=1450.0, power=3000.0, speed_range=None, rating=None, driver_power=None) -> Drive:
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=rpm * RPM, direction=1,
               speed_range_rad_s=speed_range, rating_w=rating, power_w=driver_power)
    b = Pulley("B", (0.5, 0.0), 0.125, Role.DRIVEN, power_w=power)
    return Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))


def test_slip_and_grip_low():
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, tensioning="constant", install_tension_n=150.0)
    res = analyse(_two(belt))
    assert "slip" in _codes(res)
    f = next(f for f in res.findings if f.code == "slip")
    assert f.severity.value == "error" and "A" in f.refs
    mech = res.loops["V"].mechanics
    # a setting between the slip limit and the margin gives grip-low only
    limit = analyse(_two(belt), Options(grip_margin=1.0)).loops["V"].mechanics.min_install_tension_n
    margin = mech.min_install_tension_n
    mid = Belt(mass_per_length_kg_m=0.1, friction=0.3, tensioning="constant", install_tension_n=(limit + margin) / 2)
    assert _codes(analyse(_two(mid))) == ["grip-low"]


def test_fixed_centre_drive_goes_slack_at_the_critical_speed():
    # unloaded, fixed centres: P = T0 - m v^2 on every span, zero at v = sqrt(T0/m)
    # (derived: fixed centres keep the mean T = P + m v^2 at T0, and with no load every span
    # carries the mean; at P = 0 the moving string's f_n = n P / (2 L sqrt(m T)) is 0:
    # Archibald and Emslie, J. Appl. Mech., 1958, from memory)
    t0, m = 400.0, 0.12
    v_crit = math.sqrt(t0 / m)
    rpm_crit = v_crit / 0.05 / RPM
    belt = Belt(mass_per_length_kg_m=m, friction=0.3, install_tension_n=t0)
    below = analyse(_two(belt, power=0.0, rpm=0.99 * rpm_crit))
    assert "slack-span" not in _codes(below)
    above = analyse(_two(belt, power=0.0, rpm=1.01 * rpm_crit))
    assert "slack-span" in _codes(above)
    mech = below.loops["V"].mechanics
    assert mech.quasi_static_n[0] == pytest.approx(t0 - m * (0.99 * v_crit) ** 2, rel=1e-12)


def test_belt_speed_over_the_section_limit():
    belt = Belt(section="SPA", mass_per_length_kg_m=0.123, friction=0.25, effective_friction=0.5123,
                groove_angle_rad=math.radians(38), install_tension_n=500.0, max_speed_m_s=40.0)
    assert "belt-speed" not in _codes(analyse(_two(belt, rpm=1450)))
    res = analyse(_two(belt, rpm=1450, speed_range=(500 * RPM, 8000 * RPM)))   # 41.9 m/s at the top
    f = next(f for f in res.findings if f.code == "belt-speed")
    assert f.data["speed_m_s"] == pytest.approx(8000 * RPM * 0.05, rel=1e-9)


def test_power_over_the_driver_rating_and_mismatch():
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, install_tension_n=800.0)
    assert "power-mismatch" not in _codes(analyse(_two(belt, rating=4000.0)))
    assert "power-mismatch" in _codes(analyse(_two(belt, rating=2500.0)))
    assert "power-mismatch" in _codes(analyse(_two(belt, driver_power=4000.0)))


def test_driven_pulley_without_load():
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, install_tension_n=800.0)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=150.0, direction=1)
    b = Pulley("B", (0.5, 0.0), 0.125, Role.DRIVEN)
    d = Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))
    assert "load-missing" in _codes(analyse(d))


def test_ambiguous_drives():
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, install_tension_n=800.0)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=150.0, direction=1)
    b = Pulley("B", (0.5, 0.0), 0.125, Role.DRIVEN, power_w=100.0)
    c = Pulley("C", (2.0, 0.0), 0.05, Role.DRIVER)
    e = Pulley("E", (2.5, 0.0), 0.125, Role.DRIVEN, power_w=100.0)
    loops = (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),
             Loop("W", ("C", "E"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt))
    res = analyse(Drive({"A": a, "B": b, "C": c, "E": e}, loops))
    f = [f for f in res.findings if f.code == "ambiguous-drive"]
    assert len(f) == 1 and f[0].refs == ("W",)
    # two loops between the same two shafts close a cycle
    a2 = Pulley("A2", (0.0, 0.0), 0.04)
    b2 = Pulley("B2", (0.5, 0.0), 0.1)
    loops = (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),
             Loop("V2", ("A2", "B2"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt))
    res = analyse(Drive({"A": a, "B": b, "A2": a2, "B2": b2}, loops, (("A", "A2"), ("B", "B2"))))
    assert "ambiguous-drive" in _codes(res)


def test_tensioner_lever_too_short_and_slide_square():
    belt = Belt(mass_per_length_kg_m=0.12, friction=0.3)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=100.0, direction=1)
    b = Pulley("B", (0.5, 0.0), 0.10, Role.DRIVEN, torque_nm=40.0)
    g = geo.loop_geometry([(0.0, 0.0), (0.25, -0.03), (0.5, 0.0)], [0.05, 0.03, 0.1], [1, -1, 1])
    e = -g.span_dir[0] + g.span_dir[1]
    e /= np.hypot(*e)
    perp = np.array([-e[1], e[0]])
    for kw, code in (({"pivot_m": tuple(np.array([0.25, -0.03]) + 0.05 * e + 0.001 * perp), "arm_torque_nm": 1.0},
                      "tensioner-lever"),
                     ({"force_n": 200.0, "force_direction": (-e[1], e[0])}, "tensioner-slide")):
        i = Pulley("I", (0.25, -0.03), 0.03, Role.TENSIONER, **kw)
        loop = Loop("V", ("A", "I", "B"), (1, -1, 1), (Side.INSIDE, Side.BACK, Side.INSIDE), (False,) * 3, belt)
        assert code in _codes(analyse(Drive({"A": a, "I": i, "B": b}, (loop,))))


def test_stock_lengths_and_adjusting_pulley(tmp):
    # a motor on a slide (adjust along +x) and a 1600 mm SPA belt
    doc = new_doc("mm")
    msp = doc.modelspace()
    add_drive(msp, [(0.0, 0.0), (560.0, 0.0)], [56.0, 140.0], [1, 1], "polyline")
    msp.add_text("MOTOR", dxfattribs={"insert": (0, 0)})
    msp.add_text("FAN", dxfattribs={"insert": (560, 0)})
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('''
[belt]
section = "SPA"
length = "1600 mm"
axial_stiffness = "60 kN"
install_tension = "450 N"
[pulley.MOTOR]
role = "driver"
speed = "1450 rpm"
adjust = "180 deg"
[pulley.FAN]
power = "2 kW"
''')
    r = run_cli("check", path, "--json", tmp / "r.json")
    assert r.returncode == 0, r.stdout + r.stderr
    lp = json.loads((tmp / "r.json").read_text())["loops"][0]
    stock = lp["stock"]
    assert stock["length_m"] == pytest.approx(1.6)
    below, above = stock["nearest_m"]
    assert below <= stock["unstretched_path_m"] <= above      # R20 series: 1.4, 1.6 m
    adj = stock["adjust"]
    assert adj["pulley"] == "MOTOR"
    # the path through the new position measures the stretched length 1.6 (1 + 450/60000)
    target = 1.6 * (1 + 450 / 60000)
    x, y = adj["position"]
    g = geo.loop_geometry([(x * 1e-3, y * 1e-3), (0.56, 0.0)], [0.056, 0.14], [1, 1])
    assert g.length_m == pytest.approx(target, rel=1e-9)
    assert y == pytest.approx(0.0, abs=1e-9) and adj["travel_m"] == pytest.approx(-x * 1e-3, rel=1e-9)
    # installing needs the motor closer in, take-up further out, by common-practice allowances
    assert adj["install_travel_m"] < adj["travel_m"] < adj["take_up_travel_m"]


def test_flat_belt_mass_from_width_and_thickness(tmp):
    # polyamide flat belt 60 mm x 3 mm: 1160 kg/m3 * 0.06 * 0.003 = 0.2088 kg/m
    # (density of Shigley Table 17-2's polyamide, 0.042 lbf/in^3, from memory)
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (700.0, 0.0)], [80.0, 200.0], [1, 1], "polyline")
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text(
        '[belt]\nsection = "flat-polyamide"\nwidth = "60 mm"\nthickness = "3 mm"\ninstall_tension = "300 N"\n')
    checked = check_drawing(path)
    (loop,) = checked.model.drive.loops
    assert loop.belt.mass_per_length_kg_m == pytest.approx(1160 * 0.06 * 0.003, rel=1e-12)
    assert loop.belt.friction == pytest.approx(0.8)
    assert loop.belt.effective_friction is None or loop.belt.effective_friction == pytest.approx(0.8)
