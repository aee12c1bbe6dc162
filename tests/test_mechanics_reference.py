"""Mechanics against published equations and textbook worked examples.

Sources, cited beside each check:
- Capstan (Euler–Eytelwein) equation: Hibbeler, Engineering Mechanics: Statics, ch. 8 (from memory).
- Centrifugal term and V-groove wedge factor: Budynas & Nisbett, Shigley's Mechanical
  Engineering Design, 9th ed., ch. 17, Eqs. 17-7 ff. (from memory).
- Worked examples: Shigley 9th ed., Example 17-1 (flat belt) and Example 17-4 (V-belt);
  inputs and published answers from memory, recomputed from the equations cited beside
  each check; all agree.
"""

from __future__ import annotations

import math

import pytest

from physics import tension as ten
from physics.analysis import Options, analyse
from physics.geometry import open_belt
from physics.length import center_distance_approx, center_distance_exact
from physics.model import Belt, Drive, Loop, Pulley, Role, Side

IN = 0.0254
LBF = 4.4482216152605
HP = 745.69987158227022
RPM = math.pi / 30.0
G0 = 9.80665


def two_pulley(d_small, d_large, c, *, speed_rpm, belt: Belt, load: dict, small_drives=True,
               speed_range=None) -> Drive:
    """Small pulley (driver) at the origin, large one at (c, 0); travel counter-clockwise."""
    drv = Pulley("S", (0.0, 0.0), d_small / 2, Role.DRIVER, speed_rad_s=speed_rpm * RPM, direction=1,
                 speed_range_rad_s=speed_range)
    out = Pulley("L", (c, 0.0), d_large / 2, Role.DRIVEN, **load)
    loop = Loop("V", ("S", "L"), (1, 1), (Side.INSIDE, Side.INSIDE), (False, False), belt)
    return Drive({"S": drv, "L": out}, (loop,))


# ---------------------------------------------------------------- published equations

@pytest.mark.parametrize("mu,wrap_deg,expected,source", [
    (0.25, 135.0, 1.80227, "Hibbeler Statics, cord over a drum, 135 deg, mu 0.25 (from memory)"),
    (0.3, 180.0, 2.56633, "hand: exp(0.3 pi)"),
    (0.8, 172.833, 11.16969, "Shigley Ex. 17-1: exp(f phi) = 11.17"),
    (0.5123, 180.0, 5.0, "Shigley ch. 17: f' = 0.5123 gives exp(f' pi) = 5 (derived)"),
])
def test_capstan_ratio(mu, wrap_deg, expected, source):
    assert ten.capstan_ratio(mu, math.radians(wrap_deg)) == pytest.approx(expected, rel=2e-5)


@pytest.mark.parametrize("mu,groove_deg,expected,source", [
    (0.2, 36.0, 0.647, "homework key of a machine-design text: 0.2 / sin 18 deg"),
    (0.15, 34.0, 0.5130, "computed: mu / sin(phi/2) = 0.15 / sin 17 deg (Shigley ch. 17, from memory)"),
    (0.25, 40.0, 0.7310, "computed: mu / sin(phi/2) = 0.25 / sin 20 deg (Shigley ch. 17, from memory)"),
])
def test_wedge_factor(mu, groove_deg, expected, source):
    assert ten.wedge_friction(mu, math.radians(groove_deg)) == pytest.approx(expected, abs=6e-4)


def test_centrifugal_term_at_the_slip_limit():
    # Shigley Eq. 17-7 form (from memory): (T1 - m v^2)/(T2 - m v^2) = exp(mu theta).
    # P = 5 kW at v = 15 m/s, mu' = 0.5, theta = 160 deg, m = 0.12 kg/m: T1 = 469.98 N,
    # T2 = 136.65 N (derived: with Te = T1 - T2 = P/v and Tc = m v^2, the slip limit
    # (T1 - Tc) = e (T2 - Tc) gives T1 = Tc + Te e/(e - 1), T2 = Tc + Te/(e - 1); computed
    # with e = exp(0.5 * 160 deg) = 4.0401, Te = 333.33 N, Tc = 27 N).
    e = ten.capstan_ratio(0.5, math.radians(160))
    te = 5000.0 / 15.0
    tc = 0.12 * 15.0**2
    t1 = tc + te * e / (e - 1)
    t2 = tc + te / (e - 1)
    assert (t1, t2) == pytest.approx((469.98, 136.65), abs=0.01)
    # the same through the analysis at the slip limit: grip utilisation 1 on a 160 deg wrap
    # needs a drive whose small wrap is 160 deg: (D - d)/(2C) = sin(10 deg)
    d, D = 0.1, 0.3
    c = (D - d) / (2 * math.sin(math.radians(10)))
    v = 15.0
    n_rpm = v / (d / 2) / RPM
    belt = Belt(mass_per_length_kg_m=0.12, friction=0.5, tensioning="constant",
                install_tension_n=(te / 2) * (e + 1) / (e - 1))
    res = analyse(two_pulley(d, D, c, speed_rpm=n_rpm, belt=belt, load={"power_w": 5000.0}))
    mech = res.loops["V"].mechanics
    assert mech.speed_m_s[0] == pytest.approx(15.0, rel=1e-12)
    assert sorted(mech.tension_n[0]) == pytest.approx([136.65, 469.98], abs=0.01)
    assert mech.utilisation[0, 0] == pytest.approx(1.0, abs=1e-9)


# ---------------------------------------------------------------- Shigley Example 17-1

def _flat_belt_example(install_lbf: float, tensioning: str = "constant"):
    # polyamide A-3 flat belt, 6 in wide, 0.13 in thick, 0.042 lbf/in^3; 6 in driver at
    # 1750 rpm, 18 in driven, 8 ft centres; 15 hp with Ks = 1.25, nd = 1.1: design
    # power 20.625 hp; f = 0.8 (Shigley 9th ed., Example 17-1, from memory)
    w_lbf_ft = 12 * 0.042 * 6 * 0.13
    m = w_lbf_ft * LBF / 0.3048 / G0
    belt = Belt(mass_per_length_kg_m=m, friction=0.8, tensioning=tensioning,
                install_tension_n=install_lbf * LBF)
    drive = two_pulley(6 * IN, 18 * IN, 96 * IN, speed_rpm=1750, belt=belt,
                       load={"power_w": 15 * 1.25 * 1.1 * HP})
    return analyse(drive, Options(grip_margin=1.0)).loops["V"]


def test_shigley_flat_belt_example():
    lr = _flat_belt_example(270.6)       # published Fi = 270.6 lbf
    g, mech = lr.geometry, lr.mechanics
    assert g.wrap_rad[0] == pytest.approx(3.0165, abs=5e-5)                 # phi = 3.0165 rad
    assert mech.speed_m_s[0] / 0.3048 * 60 == pytest.approx(2749, abs=0.5)  # V = 2749 ft/min
    assert mech.torque_nm[0, 0] / (LBF * IN) == pytest.approx(742.8, abs=0.05)   # T = 742.8 lbf in
    fc = mech.tension_n[0, 0] - mech.quasi_static_n[0, 0]
    assert fc / LBF == pytest.approx(25.6, abs=0.05)                         # Fc = 25.6 lbf
    t_tight = mech.tension_n[0, 1] / LBF      # span L-S arrives at the driver: tight
    t_slack = mech.tension_n[0, 0] / LBF
    assert t_tight == pytest.approx(420.0, abs=0.1)                          # F1a = 420 lbf
    assert t_slack == pytest.approx(172.4, abs=0.1)                          # F2 = 172.4 lbf
    assert mech.utilisation[0, 0] * 0.8 == pytest.approx(0.328, abs=5e-4)   # f' = 0.328


def test_shigley_flat_belt_lowest_install_tension():
    # at the slip limit (margin 1) the textbook model needs Fi = (T/d)(e + 1)/(e - 1)
    # (Shigley Eq. 17-9, from memory): 742.8/6 * 12.17/10.17 = 148.1 lbf
    mech = _flat_belt_example(270.6).mechanics
    e = math.exp(0.8 * 3.0165)
    assert mech.min_install_tension_n / LBF == pytest.approx(742.8 / 6 * (e + 1) / (e - 1), rel=2e-4)
    # fixed centres need the centrifugal part on top: 148.1 + 25.6 (derived: fixed centres
    # keep the mean running tension T = P + m v^2 at the install tension T0, and the slip
    # limit needs mean P = Fi above, so T0 = Fi + Fc)
    fixed = _flat_belt_example(270.6, "fixed").mechanics
    fc = 25.65
    assert fixed.min_install_tension_n / LBF == pytest.approx(742.8 / 6 * (e + 1) / (e - 1) + fc, abs=0.05)


# ---------------------------------------------------------------- Shigley Example 17-4

def test_shigley_v_belt_example():
    # 10 hp at 1750 rpm, Ks = 1.3, three B112 belts (pitch length 113.8 in) on 7.4 in and
    # 11 in sheaves, f' = 0.5123, Kc = 0.965 (Shigley 9th ed., Example 17-4, from memory).
    # Published: C = 42.4 in, phi = 3.057 rad, exp(f phi) = 4.788, V = 3390 ft/min,
    # Fc = 11.1 lbf, dF = 42.2 lbf, F1 = 64.4 lbf, F2 = 22.2 lbf, Fi = 32.2 lbf.
    c = center_distance_exact(11 * IN, 7.4 * IN, 113.8 * IN)
    assert c / IN == pytest.approx(42.4, abs=0.05)
    v_fpm = math.pi * 7.4 * 1750 / 12
    m = 0.965 * LBF / (1000 * 0.3048 / 60) ** 2          # Fc = Kc (V/1000)^2 lbf
    belt = Belt(mass_per_length_kg_m=m, friction=0.25, effective_friction=0.5123, groove_angle_rad=math.radians(38),
                strands=3, tensioning="constant", install_tension_n=32.23 * LBF)
    drive = two_pulley(7.4 * IN, 11 * IN, c, speed_rpm=1750, belt=belt, load={"power_w": 10 * 1.3 * HP})
    lr = analyse(drive, Options(grip_margin=1.0)).loops["V"]
    g, mech = lr.geometry, lr.mechanics
    assert g.wrap_rad[0] == pytest.approx(3.057, abs=5e-4)
    assert math.exp(0.5123 * g.wrap_rad[0]) == pytest.approx(4.788, abs=2e-3)
    assert mech.speed_m_s[0] / 0.3048 * 60 == pytest.approx(v_fpm, rel=1e-12)
    assert (mech.tension_n[0, 0] - mech.quasi_static_n[0, 0]) / LBF == pytest.approx(11.1, abs=0.05)
    assert (mech.tension_n[0, 1] - mech.tension_n[0, 0]) / LBF == pytest.approx(42.2, abs=0.05)
    assert mech.tension_n[0, 1] / LBF == pytest.approx(64.4, abs=0.05)
    assert mech.tension_n[0, 0] / LBF == pytest.approx(22.2, abs=0.05)
    # the belts are sized at the slip limit in the example: Fi is the lowest install tension
    assert mech.min_install_tension_n / LBF == pytest.approx(32.2, abs=0.05)
    assert mech.utilisation[0, 0] == pytest.approx(1.0, abs=2e-3)


# ---------------------------------------------------------------- centre distance

@pytest.mark.parametrize("D,d,L", [(11 * IN, 7.4 * IN, 113.8 * IN), (0.4, 0.1, 2.0), (0.4, 0.1, 1.6),
                                   (0.25, 0.25, 1.2), (0.6, 0.08, 2.5)])
def test_centre_distance_inverse(D, d, L):
    # exact: root of Shigley Eq. 17-1 (from memory) gives L back to 1e-9
    c = center_distance_exact(D, d, L)
    assert open_belt(D, d, c)[2] == pytest.approx(L, rel=1e-9)
    # the textbook's approximate inverse (Shigley ch. 17, from memory) errs by about half
    # the length formula's error, (D - d)^4 / (384 C^3) to leading order (derived: the
    # exact length is L_approx(C) + (D - d)^4 / (192 C^3), see test_geometry's series test;
    # the inverse solves L_approx(C_a) = L exactly, and dL_approx/dC = 2 - (D - d)^2/(4 C^2)
    # ~ 2, so C_a - C ~ (D - d)^4 / (384 C^3)); the next order adds about 25 % at
    # (D - d)/C = 0.8, the largest ratio here
    approx = center_distance_approx(D, d, L)
    bound = (D - d) ** 4 / (384 * c**3)
    assert abs(approx - c) <= 1.2 * bound + 1e-15
    if D != d:
        assert approx > c and abs(approx - c) >= 0.99 * bound


def test_shigley_centre_distance_reference_value():
    # Shigley Example 17-4's belt and sheaves (from memory): Lp = 113.8 in, D = 11, d = 7.4
    # -> C = 42.4105 in by both (computed: the root of Eq. 17-1's exact length, and
    # C = (A + sqrt(A^2 - 2 (D - d)^2)) / 4, A = Lp - pi (D + d)/2; published C = 42.4 in)
    assert center_distance_exact(11.0, 7.4, 113.8) == pytest.approx(42.4105, abs=5e-5)
    assert center_distance_approx(11.0, 7.4, 113.8) == pytest.approx(42.4105, abs=5e-4)
    # L = 2000, D = 400, d = 100: exact 588.0646, approximate inverse 588.1739
    assert center_distance_exact(400.0, 100.0, 2000.0) == pytest.approx(588.0646, abs=5e-5)
    assert center_distance_approx(400.0, 100.0, 2000.0) == pytest.approx(588.1739, abs=5e-5)
