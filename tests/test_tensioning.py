"""Tension models, power flow and sizing against hand-derived closed forms.

The closed forms are derived by hand (torque steps from each pulley's torque balance
Q = r (P_arriving - P_leaving), the length-weighted mean for fixed centres, force balance
on a tensioner idler) and cited as such; the worked numbers of the hand check are derived
in the comments of the tensioner-numbers test below.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from physics import geometry as geo
from physics.analysis import Options, analyse
from physics.model import Belt, Drive, Loop, Pulley, Role, Side

RPM = math.pi / 30.0


def _two(belt: Belt, speed_rpm=1450.0, speed_range=None, power=3000.0) -> Drive:
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=speed_rpm * RPM, direction=1,
               speed_range_rad_s=speed_range)
    b = Pulley("B", (0.5, 0.0), 0.125, Role.DRIVEN, power_w=power)
    return Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))


@pytest.mark.parametrize("tensioning", ["fixed", "constant"])
def test_mean_tension_with_speed(tensioning):
    # hand: with torque steps dP = Q/(s r) and the two equal span weights of an open
    # two-pulley drive, P_tight, P_slack = level +/- dP/2 with level = T0 - m v^2 (fixed)
    # or T0 (constant): the mean quasi-static tension falls by m v^2 only at fixed centres
    m, t0 = 0.12, 600.0
    belt = Belt(mass_per_length_kg_m=m, friction=0.3, effective_friction=0.5, groove_angle_rad=math.radians(38),
                tensioning=tensioning, install_tension_n=t0)
    res = analyse(_two(belt, speed_range=(200 * RPM, 3000 * RPM)))
    mech = res.loops["V"].mechanics
    v = mech.speed_m_s
    dP = np.abs(mech.torque_nm[:, 0]) / 0.05
    level = t0 - (m * v * v if tensioning == "fixed" else 0.0)
    assert mech.quasi_static_n[:, 1] == pytest.approx(level + dP / 2, rel=1e-12)   # tight: arrives at A
    assert mech.quasi_static_n[:, 0] == pytest.approx(level - dP / 2, rel=1e-12)
    mean = mech.quasi_static_n.mean(axis=1)
    assert mean == pytest.approx(level, rel=1e-12)
    # T = P + m v^2 on every span
    assert mech.tension_n == pytest.approx(mech.quasi_static_n + m * (v * v)[:, None], rel=1e-12)


def _with_tensioner(**ten_kw) -> tuple[Drive, geo.LoopGeometry]:
    # A drives (r 0.05, +20 N m), I is a back-side tensioner on the slack span, B is the
    # load (r 0.10, -40 N m): steps of -400 N at A and +400 N at B (derived: the torque
    # balance Q = r (P_arriving - P_leaving) gives P_leaving = P_arriving - Q/r, so
    # -20/0.05 = -400 N at A and +40/0.10 = +400 N at B)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=100.0, direction=1)
    i = Pulley("I", (0.25, -0.03), 0.03, Role.TENSIONER, **ten_kw)
    b = Pulley("B", (0.5, 0.0), 0.10, Role.DRIVEN, torque_nm=40.0)
    loop = Loop("V", ("A", "I", "B"), (1, -1, 1), (Side.INSIDE, Side.BACK, Side.INSIDE), (False,) * 3,
                Belt(mass_per_length_kg_m=0.12, friction=0.3))
    d = Drive({"A": a, "I": i, "B": b}, (loop,))
    g = geo.loop_geometry([p.center_m for p in (a, i, b)], [0.05, 0.03, 0.10], [1, -1, 1])
    return d, g


def test_tensioner_along_its_bisector():
    d, g = _with_tensioner(force_n=250.0)
    mech = analyse(d).loops["V"].mechanics
    theta = g.wrap_rad[1]
    # force balance on the idler: P = F / |e_a + e_b| = F / (2 sin(theta/2)) (hand)
    p = 250.0 / (2 * math.sin(theta / 2))
    assert mech.quasi_static_n[0, 0] == pytest.approx(p, rel=1e-12)       # A-I
    assert mech.quasi_static_n[0, 1] == pytest.approx(p, rel=1e-12)       # I-B
    assert mech.quasi_static_n[0, 2] == pytest.approx(p + 400.0, rel=1e-12)  # B-A, tight
    # the tensioner sets P, not T: the running tension carries m v^2 on top
    v = mech.speed_m_s[0]
    assert mech.tension_n[0, 0] == pytest.approx(p + 0.12 * v * v, rel=1e-12)
    # at rest every span carries the tensioner's P
    assert mech.static_quasi_static_n == pytest.approx([p, p, p], rel=1e-12)


def test_tensioner_on_a_slide_and_on_an_arm():
    d, g = _with_tensioner(force_n=250.0, force_direction=(0.0, 1.0))
    e = -g.span_dir[0] + g.span_dir[1]
    mech = analyse(d).loops["V"].mechanics
    assert mech.quasi_static_n[0, 0] == pytest.approx(250.0 / abs(e[1]), rel=1e-12)
    pivot = (0.35, -0.03)
    d, g = _with_tensioner(pivot_m=pivot, arm_torque_nm=12.0)
    mech = analyse(d).loops["V"].mechanics
    c = np.array([0.25, -0.03]) - pivot
    lever = abs(c[0] * e[1] - c[1] * e[0])
    assert mech.quasi_static_n[0, 0] == pytest.approx(12.0 / lever, rel=1e-12)


def test_tensioner_hand_numbers():
    # derived: force balance on the idler along its bisector, F = 2 P sin(theta/2), so
    # F = 250 N on a 70 deg wrap gives P = 250 / (2 sin 35 deg) = 217.931 N on both its
    # spans and 617.931 N on the tight span after the +400 N step (40 N m / 0.10 m); at
    # 20 m/s and 0.12 kg/m the running tension T = P + m v^2 on the tensioner's spans is
    # 217.931 + 0.12 * 20^2 = 265.931 N
    p = 250.0 / (2 * math.sin(math.radians(35)))
    assert p == pytest.approx(217.931, abs=5e-4)
    assert p + 400 == pytest.approx(617.931, abs=5e-4)
    assert p + 0.12 * 20**2 == pytest.approx(265.931, abs=5e-4)


@pytest.mark.parametrize("tensioning", ["fixed", "constant", "tensioner"])
def test_install_tension_solver_meets_the_margin(tensioning):
    margin = 0.8
    if tensioning == "tensioner":
        d, _ = _with_tensioner()
        res = analyse(d, Options(grip_margin=margin))
        setting = res.loops["V"].mechanics.min_tensioner_setting
        d, _ = _with_tensioner(force_n=setting)
    else:
        belt = Belt(mass_per_length_kg_m=0.12, friction=0.3, tensioning=tensioning)
        d = _two(belt, speed_range=(600 * RPM, 1800 * RPM))
        setting = analyse(d, Options(grip_margin=margin)).loops["V"].mechanics.min_install_tension_n
        d = _two(Belt(mass_per_length_kg_m=0.12, friction=0.3, tensioning=tensioning, install_tension_n=setting),
                 speed_range=(600 * RPM, 1800 * RPM))
    mech = analyse(d, Options(grip_margin=margin)).loops["V"].mechanics
    worst = np.nanmax(mech.utilisation)
    assert worst == pytest.approx(margin, abs=1e-6)


def test_service_factor_scales_the_sizing_load():
    belt = Belt(mass_per_length_kg_m=0.0, friction=0.3, tensioning="constant")
    base = analyse(_two(belt), Options(service_factor=1.0)).loops["V"].mechanics.min_install_tension_n
    sf = analyse(_two(belt), Options(service_factor=1.5)).loops["V"].mechanics.min_install_tension_n
    assert sf == pytest.approx(1.5 * base, rel=1e-12)       # linear in the load with m = 0


def test_two_stage_speeds_and_power_balance():
    # motor 1440 rpm, 100 -> 250 mm, then 120 -> 300 mm: final 1440 * 0.4 * 0.4 = 230.4 rpm
    m = Pulley("M", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=1440 * RPM, direction=1)
    j1 = Pulley("J1", (0.42, 0.0), 0.125)
    j2 = Pulley("J2", (0.42, 0.0), 0.06)
    x = Pulley("X", (0.42, 0.52), 0.15, Role.DRIVEN, power_w=2200.0)
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, install_tension_n=400.0)
    loops = (Loop("S1", ("M", "J1"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),
             Loop("S2", ("J2", "X"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt))
    res = analyse(Drive({"M": m, "J1": j1, "J2": j2, "X": x}, loops, (("J1", "J2"),)))
    s1, s2 = res.loops["S1"].mechanics, res.loops["S2"].mechanics
    assert s2.omega_rad_s[0, 1] / RPM == pytest.approx(1440 * (100 / 250) * (120 / 300), rel=1e-12)
    assert s1.omega_rad_s[0, 1] == pytest.approx(s2.omega_rad_s[0, 0], rel=1e-12)   # one shaft
    # power balances round every loop and through the shaft
    assert s1.power_w[0].sum() == pytest.approx(0.0, abs=1e-9)
    assert s2.power_w[0].sum() == pytest.approx(0.0, abs=1e-9)
    assert s2.power_w[0, 0] == pytest.approx(-s1.power_w[0, 1], rel=1e-12)
    assert s1.power_w[0, 0] == pytest.approx(2200.0, rel=1e-12)
    assert res.kinematics.order == ("S1", "S2")
