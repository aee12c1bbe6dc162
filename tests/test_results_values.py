"""Numbers the writers read from physics.analysis, each against a hand value.

Every check names its source beside it. The drives are built by hand with physics.model,
with geometry simple enough for the span directions to be written down: equal pulleys
give spans parallel to the line of centres; an open drive with radii R > r at centre
distance C has its spans inclined by beta = asin((R - r) / C) to that line, converging
towards the small pulley (tangent geometry, hand derivation).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from layout.report import _shaft_row
from layout.wording import word
from physics.analysis import GripState, Options, Results, analyse
from physics.findings import Finding, Severity
from physics.model import Belt, Drive, Loop, Pulley, Role, Side, SpanEnds, Tensioning

RPM = math.pi / 30.0


def _loop(lid: str, a: str, b: str, belt: Belt) -> Loop:
    return Loop(lid, (a, b), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt)


# --------------------------------------------------------------------------- shaft resultant


def _jackshaft() -> Results:
    """Motor M drives J1 (equal 50 mm radii, 0.5 m apart along x); J2 (R = 0.1 m) on J1's
    shaft drives the output O (r = 0.05 m) 0.4 m above it, which takes 10 N*m."""
    pulleys = {
        "M": Pulley("M", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1),
        "J1": Pulley("J1", (0.5, 0.0), 0.05, Role.DRIVEN),
        "J2": Pulley("J2", (0.5, 0.0), 0.10, Role.DRIVER),
        "O": Pulley("O", (0.5, 0.4), 0.05, Role.DRIVEN, torque_nm=10.0),
    }
    belt1 = Belt(mass_per_length_kg_m=0.1, friction=0.8, tensioning="constant", install_tension_n=300.0)
    belt2 = Belt(mass_per_length_kg_m=0.1, friction=0.8, tensioning="constant", install_tension_n=250.0)
    loops = (_loop("L1", "M", "J1", belt1), _loop("L2", "J2", "O", belt2))
    return analyse(Drive(pulleys, loops, (("J1", "J2"),)))


def test_jackshaft_resultant_is_the_vector_sum_of_its_two_hub_loads():
    res = _jackshaft()
    # hand value, loop L1: equal pulleys, so both spans run along x; constant tensioning with
    # two equal span weights keeps P_tight + P_slack = 2 T0 = 600 N, pulling J1 towards M: (-600, 0)
    assert res.loops["L1"].mechanics.hub_n[0, 1] == pytest.approx([-600.0, 0.0], abs=1e-9)
    # hand value, loop L2: sin(beta) = (0.10 - 0.05) / 0.4 = 0.125, cos(beta) = sqrt(0.984375);
    # the step at O is dP = 10 N*m / 0.05 m = 200 N, so P_tight = 350 N (the left span, arriving
    # at the driver J2 of a counter-clockwise loop), P_slack = 150 N (the right span). Unit
    # vectors from J2: right span (-sin b, cos b), left span (+sin b, cos b), so the hub load
    # on J2 is (dP sin b, 2 T0 cos b) = (25, 500 * 0.9921567) = (25, 496.0784) N
    cosb = math.sqrt(0.984375)
    assert res.loops["L2"].mechanics.hub_n[0, 0] == pytest.approx([25.0, 500.0 * cosb], rel=1e-12)
    # hand value, the shaft: (-600 + 25, 496.0784) = (-575, 496.0784) N,
    # |F| = sqrt(575^2 + 250000 * 0.984375) = sqrt(576718.75) = 759.4200 N
    (shaft,) = res.shafts
    assert shaft.pulleys == ("J1", "J2")
    assert shaft.hub_n[0] == pytest.approx([-575.0, 496.07837], rel=1e-7)
    assert float(np.hypot(*shaft.hub_n[0])) == pytest.approx(759.4200, rel=1e-6)
    # hand value, at rest: no torque, P = T0 on every span: (-600, 500 cos b),
    # |F| = sqrt(360000 + 246093.75) = 778.5203 N
    assert float(np.hypot(*shaft.static_hub_n)) == pytest.approx(778.5203, rel=1e-6)
    # the shaft turns with J1: 1450 rpm * (0.05 / 0.05), counter-clockwise
    assert shaft.speed_rad_s == pytest.approx(1450 * RPM, rel=1e-12)
    # constant torque and constant tensioning: the same at every speed, so the largest is it too
    assert shaft.max_hub_n == pytest.approx(759.4200, rel=1e-6)


def test_report_shaft_row_reads_the_shaft_record():
    (shaft,) = _jackshaft().shafts
    row = _shaft_row(shaft)
    # hand values as above; the angle atan2(496.078, -575) = 139.21 deg
    assert row["hub_load_n"] == pytest.approx(759.4200, rel=1e-6)
    assert row["hub_load_deg"] == pytest.approx(math.degrees(math.atan2(496.07837, -575.0)), rel=1e-6)
    assert row["static_hub_load_n"] == pytest.approx(778.5203, rel=1e-6)
    assert row["max_hub_load_n"] == pytest.approx(759.4200, rel=1e-6)
    assert row["speed_rpm"] == pytest.approx(1450.0, rel=1e-12)


# --------------------------------------------------------------------------- largest hub load over the range


def test_fixed_centres_hub_load_is_largest_at_the_lowest_speed():
    # hand value: unloaded, fixed centres, so P = T0 - m v^2 on both spans (the mean belt
    # tension T = P + m v^2 stays at T0: the fixed-centre model of physics.tension); equal pulleys, so the hub
    # load is 2 P along the line of centres. T0 = 300 N, m = 0.5 kg/m, r = 0.05 m.
    # operating 1450 rpm: v = 151.844 * 0.05 = 7.5922 m/s, m v^2 = 28.8209 N, hub 542.358 N;
    # range 500 to 3000 rpm: largest at 500 rpm, v = 2.61799 m/s, m v^2 = 3.42694 N,
    # hub 2 * (300 - 3.42694) = 593.146 N; at rest 600 N
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1,
               speed_range_rad_s=(500 * RPM, 3000 * RPM))
    b = Pulley("B", (0.5, 0.0), 0.05, Role.IDLER)
    belt = Belt(mass_per_length_kg_m=0.5, friction=0.3, tensioning="fixed", install_tension_n=300.0)
    mech = analyse(Drive({"A": a, "B": b}, (_loop("V", "A", "B", belt),))).loops["V"].mechanics
    assert float(np.hypot(*mech.hub_n[0, 0])) == pytest.approx(542.358, rel=1e-5)
    assert mech.max_hub_n == pytest.approx([593.146, 593.146], rel=1e-5)
    assert mech.max_hub_speed_rad_s == pytest.approx([500 * RPM] * 2, rel=1e-12)
    assert float(np.hypot(*mech.static_hub_n[0])) == pytest.approx(600.0, rel=1e-12)


def test_constant_power_hub_load_is_largest_at_the_lowest_speed():
    # hand value: a constant-power load P_w = 300 W needs the step dP = P_w / v at belt speed v
    # (torque P_w / omega at either pulley over its radius); constant tensioning keeps
    # P_tight + P_slack = 2 T0. With r = 0.05 m driving R = 0.10 m at C = 0.4 m, sin b = 0.125,
    # and each hub load is |(dP sin b, 2 T0 cos b)| = sqrt((dP / 8)^2 + 4 T0^2 * 0.984375).
    # T0 = 300 N. Lowest speed 500 rpm: v = 2.61799 m/s, dP = 114.592 N,
    # hub sqrt(14.3239^2 + 354375) = sqrt(205.175 + 354375) = 595.4664 N.
    # Operating 1450 rpm: v = 7.59218 m/s, dP = 39.5143 N, hub sqrt(4.9393^2 + 354375) = sqrt(354399.40)
    # = 595.3145 N; at rest sqrt(354375) = 595.2940 N
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1,
               speed_range_rad_s=(500 * RPM, 3000 * RPM))
    b = Pulley("B", (0.4, 0.0), 0.10, Role.DRIVEN, power_w=300.0)
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.8, tensioning="constant", install_tension_n=300.0)
    mech = analyse(Drive({"A": a, "B": b}, (_loop("V", "A", "B", belt),))).loops["V"].mechanics
    assert float(np.hypot(*mech.hub_n[0, 1])) == pytest.approx(595.3145, rel=1e-6)
    assert mech.max_hub_n == pytest.approx([595.4664, 595.4664], rel=1e-6)
    assert float(np.hypot(*mech.static_hub_n[1])) == pytest.approx(595.2940, rel=1e-6)
    assert mech.max_hub_speed_rad_s[1] == pytest.approx(500 * RPM, rel=1e-12)


# --------------------------------------------------------------------------- pluck frequency and sag


def test_static_pluck_frequency_of_a_taut_string():
    # published: Mersenne's law for a taut string, f1 = sqrt(T / m) / (2 L).
    # T0 = 300 N, m = 0.12 kg/m, equal pulleys 0.5 m apart so L = 0.5 m:
    # sqrt(2500) / 1.0 = 50.0 Hz (fixed centres: at rest every span carries T0)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1)
    b = Pulley("B", (0.5, 0.0), 0.05, Role.IDLER)
    belt = Belt(mass_per_length_kg_m=0.12, friction=0.3, install_tension_n=300.0)
    mech = analyse(Drive({"A": a, "B": b}, (_loop("V", "A", "B", belt),))).loops["V"].mechanics
    assert mech.static_frequency_hz == pytest.approx([50.0, 50.0], rel=1e-12)


def test_sag_ratio_of_a_level_span():
    # published: the parabolic sag of a level cable, s = w L^2 / (8 H), within (w L / 2H)^2 / 12
    # of the catenary's (Irvine, Cable Structures, ch. 1); the sag ratio is s / L = w L / (8 H).
    # m = 0.1 kg/m, w = 0.980665 N/m, equal pulleys 0.8 m apart (L = 0.8 m), T0 = 50 N, fixed centres.
    # at rest H = 50 N: 0.980665 * 0.8 / 400 = 0.001961330
    # running at 300 rpm, v = 31.4159 * 0.05 = 1.570796 m/s, H = P = 50 - 0.1 * 2.467401 = 49.753260 N:
    # 0.784532 / 398.02608 = 0.0019710551
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=300 * RPM, direction=1)
    b = Pulley("B", (0.8, 0.0), 0.05, Role.IDLER)
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, install_tension_n=50.0)
    res = analyse(Drive({"A": a, "B": b}, (_loop("V", "A", "B", belt),)), Options(gravity=(0.0, -1.0)))
    dyn = res.loops["V"].mechanics.dynamics
    assert dyn.static_sag_ratio == pytest.approx([0.001961330] * 2, rel=1e-4)
    assert dyn.sag_ratio == pytest.approx([0.0019710551] * 2, rel=1e-4)
    assert dyn.sag_ratio == pytest.approx(dyn.sag_m / 0.8, rel=1e-12)       # the ratio is of the span's length


# --------------------------------------------------------------------------- enums and SI findings


def test_options_are_enums_and_bad_strings_are_refused_once():
    assert Belt(tensioning="constant").tensioning is Tensioning.CONSTANT
    assert Options(span_ends="clamped").span_ends is SpanEnds.CLAMPED
    with pytest.raises(ValueError, match=r"'fixd'.*'fixed', 'constant'"):
        Belt(tensioning="fixd")
    with pytest.raises(ValueError, match=r"'fixed'.*'pinned', 'clamped'"):
        Options(span_ends="fixed")
    with pytest.raises(ValueError, match="tensioner"):
        Belt(tensioning="tensioner")                 # a tensioner pulley sets that, not the belt
    assert [s.label for s in GripState] == ["no-torque", "ok", "slip", "slack"]


def test_physics_findings_carry_si_and_wording_adds_display_units():
    # hand value: 1450 rpm = 1450 * pi / 30 = 151.8436 rad/s; a 150 N constant-tension belt
    # cannot carry 3 kW at 1450 rpm on a 50 mm driver (dP = 3000 / 7.592 = 395 N > 2 * 150 N)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=1450 * RPM, direction=1)
    b = Pulley("B", (0.5, 0.0), 0.125, Role.DRIVEN, power_w=3000.0)
    belt = Belt(mass_per_length_kg_m=0.1, friction=0.3, tensioning="constant", install_tension_n=150.0)
    res = analyse(Drive({"A": a, "B": b}, (_loop("V", "A", "B", belt),)))
    slip = next(f for f in res.findings if f.code == "slip")
    assert slip.data["speed_rad_s"] == pytest.approx(151.8436, rel=1e-6) and "speed_rpm" not in slip.data
    assert "rpm" not in slip.message
    worded = word(slip)
    assert worded.data["speed_rpm"] == pytest.approx(1450.0, rel=1e-12)
    assert worded.data["speed_rad_s"] == slip.data["speed_rad_s"]
    assert "1450.0 rpm" in worded.message and worded.code == slip.code and worded.refs == slip.refs


def test_wording_puts_lengths_in_mm_and_powers_in_kw():
    # hand values: 0.0123 m = 12.3 mm; 3000 W = 3 kW, 2500 W = 2.5 kW
    sag = Finding(Severity.WARNING, "sag", "", refs=("L", "A-B"),
                  data={"sag_m": 0.0123, "sag_ratio": 0.025, "state": "running", "sag_limit": 0.02})
    assert "12.3 mm running, 2.5% of its length (limit 2.0%)" in word(sag).message
    power = Finding(Severity.WARNING, "power-mismatch", "", refs=("L", "A"),
                    data={"given_w": 3000.0, "loads_w": 2500.0})
    assert word(power).message == "loop L: driver A is given 3 kW but its loads take 2.5 kW"
