"""Numbers at the edges of the models: the install position of an adjustable pulley, and
groove friction when a section's own groove angle is restated."""

from __future__ import annotations

import math

import pytest

from conftest import add_drive, new_doc, save
from layout.pipeline import check_drawing
from physics.analysis import analyse
from physics.geometry import open_belt
from physics.length import INSTALL_ALLOWANCE
from physics.model import Belt, Drive, Loop, Pulley, Role, Side

RPM = math.pi / 30.0


def test_the_belt_goes_on_at_the_install_position():
    # a 1600 mm belt of EA 40 kN installed at 700 N runs on a path 1600 * (1 + 700/40000)
    # = 1628.0 mm; to put it on, the path must be shorter than the belt itself by the
    # installation allowance: 1600 * (1 - 0.015) = 1576.0 mm (not 1628 * 0.985 = 1603.6 mm)
    belt = Belt(section="SPA", mass_per_length_kg_m=0.074, axial_stiffness_n=40e3, install_tension_n=700.0,
                length_m=1.6, friction=0.3, effective_friction=0.5123)
    a = Pulley("A", (0.0, 0.0), 0.0625, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1, adjust=(-1.0, 0.0))
    b = Pulley("B", (0.55, 0.0), 0.125, Role.DRIVEN, power_w=2000.0)
    d = Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))
    mech = analyse(d).loops["V"].mechanics
    pid, res = mech.adjust
    assert pid == "A"
    # independent: the open-belt length (Shigley 9th ed. Eq. 17-1) at each position along the slide
    run_c = 0.55 + res.offset_m           # A slides along (-1, 0), away from B
    inst_c = 0.55 + res.install_offset_m
    assert open_belt(0.25, 0.125, run_c)[2] == pytest.approx(1.6 * (1 + 700 / 40e3), rel=1e-9)
    assert open_belt(0.25, 0.125, inst_c)[2] == pytest.approx(1.6 * (1 - INSTALL_ALLOWANCE), rel=1e-9)
    assert open_belt(0.25, 0.125, inst_c)[2] < 1.6


SPEC = """units = "mm"
[belt]
section = "SPA"
{belt_groove}
[pulley.P1]
role = "driver"
speed = "1450 rpm"
{pulley_groove}
[pulley.P2]
power = "3 kW"
"""


@pytest.mark.parametrize("belt_groove,pulley_groove", [
    ('groove_angle = "38 deg"', ""), ("", 'groove_angle = "38 deg"'),
    ('groove_angle = "38 deg"', 'groove_angle = "38 deg"')])
def test_restating_the_sections_groove_keeps_its_groove_friction(tmp, belt_groove, pulley_groove):
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (500.0, 0.0)], [62.5, 125.0], [1, 1], "lines")
    path = save(doc, tmp)

    def run(text: str):
        path.with_suffix(".spanwise.toml").write_text(text)
        return check_drawing(path)

    plain = run(SPEC.format(belt_groove="", pulley_groove=""))
    restated = run(SPEC.format(belt_groove=belt_groove, pulley_groove=pulley_groove))
    # the SPA design groove friction 0.5123 (Shigley 9th ed., ch. 17, from memory), not
    # 0.25 / sin(19 deg) = 0.768
    for rep in (plain, restated):
        mech = rep.results.loops["BELT"].mechanics
        assert list(mech.mu) == pytest.approx([0.5123, 0.5123], rel=1e-12)
    assert (restated.results.loops["BELT"].mechanics.min_install_tension_n
            == pytest.approx(plain.results.loops["BELT"].mechanics.min_install_tension_n, rel=1e-12))
    assert not [f for f in restated.findings if f.code == "friction-derived"]


def test_a_derived_groove_friction_above_the_design_value_is_a_warning():
    # no section: mu 0.3 on a 34 deg groove gives 0.3 / sin(17 deg) = 0.3 / 0.29237 = 1.0261
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, groove_angle_rad=math.radians(34), install_tension_n=300.0)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1)
    b = Pulley("B", (0.5, 0.0), 0.1, Role.DRIVEN, power_w=1000.0)
    res = analyse(Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),)))
    fs = [f for f in res.findings if f.code == "friction-derived"]
    assert fs and all(f.severity.value == "warning" for f in fs)
    assert fs[0].data["effective_friction"] == pytest.approx(0.3 / math.sin(math.radians(17)), rel=1e-12)
    assert 0.3 / math.sin(math.radians(17)) == pytest.approx(1.0261, abs=1e-4)


# --------------------------------------------------------------------------- sag and span weight


def _catenary_offset(a: float, h: float, k: float) -> float:
    """Largest distance square to the chord of the catenary y = k cosh((x - x0) / k) + c
    through (0, 0) and (a, h), fitted with scipy (an independent solution: root finding for
    x0, then a bounded search along the span)."""
    from scipy.optimize import brentq, minimize_scalar

    def rise(x0: float) -> float:
        return k * (math.cosh((a - x0) / k) - math.cosh(-x0 / k)) - h

    x0 = brentq(rise, -50 * a - 10 * k, 50 * a + 10 * k, xtol=1e-14)
    L = math.hypot(a, h)

    def minus_offset(x: float) -> float:
        y = k * (math.cosh((x - x0) / k) - math.cosh(-x0 / k))
        return -abs(h * x - a * y) / L                  # distance of (x, y) to the chord line

    return -minimize_scalar(minus_offset, bounds=(0.0, a), method="bounded",
                            options={"xatol": 1e-12 * a}).fun


def _hanging(incline_deg: float) -> Drive:
    """Two equal pulleys 8 m apart on a line inclined at ``incline_deg``, a heavy belt at rest."""
    t = math.radians(incline_deg)
    belt = Belt(mass_per_length_kg_m=1.5, friction=0.3, install_tension_n=400.0)
    a = Pulley("A", (0.0, 0.0), 0.2)
    b = Pulley("B", (8.0 * math.cos(t), 8.0 * math.sin(t)), 0.2)
    return Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))


@pytest.mark.parametrize("incline", [0.0, 45.0, 80.0, 90.0])
def test_sag_of_an_inclined_span_is_its_deflection_square_to_the_chord(incline):
    from physics.analysis import Options
    res = analyse(_hanging(incline), Options(gravity=(0.0, -1.0)))
    lr = res.loops["V"]
    g, mech = lr.geometry, lr.mechanics
    sag = mech.dynamics.static_sag_m
    w = 1.5 * 9.80665
    for k in range(2):
        chord = g.span_end_m[k] - g.span_start_m[k]
        a, h = abs(chord[0]), abs(chord[1])
        P = float(mech.static_quasi_static_n[k])
        cosb = a / math.hypot(a, h)
        if cosb < 1e-12:
            assert sag[k] == pytest.approx(0.0, abs=1e-12)        # a vertical span hangs straight
            continue
        # the catenary's constant is the tension's component square to gravity, H = P cos(beta)
        assert sag[k] == pytest.approx(_catenary_offset(a, h, P * cosb / w), rel=1e-6)
        # small sag: w cos(beta) L^2 / (8 P) (derived: the load across the chord is w cos(beta))
        L = math.hypot(a, h)
        assert sag[k] == pytest.approx(w * cosb * L * L / (8 * P), rel=0.02)


def test_an_inclined_wire_rope_haul_grips_with_the_end_tensions():
    # a 30 degree haul: sheaves of radius 0.5 m 200 m apart along the incline, rope 2.0 kg/m,
    # mu 0.2, each sheave wrapped 180 deg; the top sheave driven takes 15 kW, the bottom drives.
    t = math.radians(30.0)
    rope = Belt(mass_per_length_kg_m=2.0, friction=0.2, install_tension_n=12e3, tensioning="constant")
    bottom = Pulley("BOT", (0.0, 0.0), 0.5, Role.DRIVER, speed_rad_s=60 * RPM, direction=1)
    top = Pulley("TOP", (200 * math.cos(t), 200 * math.sin(t)), 0.5, Role.DRIVEN, power_w=15e3)
    d = Drive({"BOT": bottom, "TOP": top},
              (Loop("H", ("BOT", "TOP"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, rope),))
    from physics.analysis import Options
    res = analyse(d, Options(gravity=(0.0, -1.0)))
    mech = res.loops["H"].mechanics
    P0, P1 = mech.quasi_static_n[0]                       # span BOT-TOP rises, TOP-BOT falls
    # hand end tensions: a span's tension grows with height by w dz (Irvine, Cable Structures,
    # 1981, ch. 1): W = 2.0 * 9.80665 * 200 * sin(30 deg) = 1961.33 N over the rise, so each
    # end is the mean -+ W / 2 = 980.665 N
    W = 2.0 * 9.80665 * 200 * math.sin(t)
    assert W == pytest.approx(1961.33, abs=0.01)
    mu_theta = 0.2 * math.pi
    u_bot = math.log(max(P0 - W / 2, P1 - W / 2) / min(P0 - W / 2, P1 - W / 2)) / mu_theta
    u_top = math.log(max(P0 + W / 2, P1 + W / 2) / min(P0 + W / 2, P1 + W / 2)) / mu_theta
    u_mean = math.log(max(P0, P1) / min(P0, P1)) / mu_theta
    assert mech.utilisation[0, 0] == pytest.approx(u_bot, rel=1e-9)
    assert mech.utilisation[0, 1] == pytest.approx(u_top, rel=1e-9)
    assert u_bot > u_mean > u_top                           # the bottom sheave grips worst
    assert [f.code for f in res.findings if f.code == "span-weight"]


# --------------------------------------------------------------------------- tension sanity


def _shallow_tensioner(push_m: float) -> Drive:
    """Two SPA pulleys 1 m apart; a back-side tensioner of radius 30 mm pressing ``push_m``
    into the middle of the top span with 100 N."""
    belt = Belt(section="SPA", mass_per_length_kg_m=0.123, friction=0.25, effective_friction=0.5123)
    a = Pulley("A", (0.0, 0.0), 0.1, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1)
    b = Pulley("B", (1.0, 0.0), 0.1, Role.DRIVEN, power_w=1000.0)
    t = Pulley("T", (0.5, 0.1 + 0.03 - push_m), 0.03, Role.TENSIONER, force_n=100.0)
    return Drive({"A": a, "B": b, "T": t},
                 (Loop("V", ("A", "B", "T"), (1, 1, -1), (Side.INSIDE, Side.INSIDE, Side.BACK), (False,) * 3, belt),))


def test_a_tensioner_at_a_fraction_of_a_degree_of_wrap_is_warned_of():
    res = analyse(_shallow_tensioner(0.0009))
    lr = res.loops["V"]
    wrap = float(lr.geometry.wrap_rad[2])
    assert math.degrees(wrap) < 0.25
    (w,) = [f for f in res.findings if f.code == "tensioner-wrap"]
    assert w.severity.value == "warning" and w.refs == ("V", "T")
    # the tensioner's force balance along its bisector: F = 2 P sin(wrap / 2) (derived: the
    # two spans pull at wrap/2 either side of the bisector), so P = 100 / (2 sin(wrap / 2))
    P = 100.0 / (2 * math.sin(wrap / 2))
    assert P > 20e3
    assert lr.mechanics.install_tension_n == pytest.approx(P, rel=1e-9)
    (h,) = [f for f in res.findings if f.code == "tension-high"]
    # peak: tight side plus centrifugal plus bending Kb / d on the 200 mm pulleys (Kb of the 3V
    # section taken for SPA, 230 lbf*in = 25.987 N*m, Shigley 9th ed. Table 17-16, from memory)
    assert lr.mechanics.peak_tension_n > P
    assert h.data["fatigue_k_n"] == pytest.approx(728 * 4.4482216, rel=1e-9)
    assert not [f for f in analyse(_shallow_tensioner(0.06)).findings if f.code == "tensioner-wrap"]


def test_peak_tension_is_tight_side_plus_centrifugal_plus_bending():
    # a classical B belt (Kb = 576 lbf*in = 65.079 N*m, Shigley 9th ed. Table 17-16, from memory)
    belt = Belt(section="B", mass_per_length_kg_m=0.19, friction=0.25, effective_friction=0.5123,
                install_tension_n=500.0)
    a = Pulley("A", (0.0, 0.0), 0.08, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1)
    b = Pulley("B", (0.6, 0.0), 0.16, Role.DRIVEN, power_w=4000.0)
    d = Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))
    mech = analyse(d).loops["V"].mechanics
    T = mech.tension_n[0]                         # per span, P + m v^2, at the operating speed
    kb = 576 * 0.11298483
    hand = max(T) + kb / 0.16                     # the tight side meets the small pulley's bending
    assert mech.peak_tension_n == pytest.approx(hand, rel=1e-9)
    assert mech.peak_tension_pulley in ("A", "B")
