"""How loads follow speed over the range, and ranges that reach standstill.

The drive: a motor pulley A (driver, 1450 rpm) and a fan pulley B of the same pitch radius
(0.1 m), so both turn at the source speed; the fan takes 3 kW at its nominal 1450 rpm.
Nominal: w = 1450 * pi / 30 = 151.8436 rad/s, torque Q0 = 3000 / 151.8436 = 19.7571 N*m.
"""

from __future__ import annotations

import math

import pytest

from layout.wording import word
from physics.analysis import STANDSTILL_FRACTION, Options, analyse
from physics.model import Belt, Drive, LoadLaw, Loop, Pulley, Role, Side

RPM = math.pi / 30.0
W_NOM = 1450 * RPM
Q0 = 3000.0 / W_NOM
BELT = Belt(section="SPA", mass_per_length_kg_m=0.074, friction=0.3, effective_friction=0.5123)


def _fan(law: LoadLaw | None = None, speed_range: tuple[float, float] | None = (100 * RPM, 1500 * RPM), *,
         source_role: Role = Role.DRIVER, speed_on_fan: bool = False) -> Drive:
    a = Pulley("A", (0.0, 0.0), 0.1, source_role, speed_rad_s=None if speed_on_fan else W_NOM, direction=1,
               speed_range_rad_s=None if speed_on_fan else speed_range)
    b = Pulley("B", (0.6, 0.0), 0.1, Role.DRIVEN, power_w=3000.0, load_law=law,
               speed_rad_s=W_NOM if speed_on_fan else None, direction=1 if speed_on_fan else None)
    return Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, BELT),))


@pytest.mark.parametrize("law,hand", [
    (None, 3000.0 / (100 * RPM)),                         # as given (power): 286.479 N*m, 14.5 x Q0
    (LoadLaw.CONSTANT_POWER, 3000.0 / (100 * RPM)),
    (LoadLaw.CONSTANT_TORQUE, Q0),                        # 19.7571 N*m at every speed
    (LoadLaw.QUADRATIC, Q0 * (100 / 1450) ** 2),          # affinity law: 19.7571 * 0.0047562 = 0.093968 N*m
])
def test_the_fan_at_100_rpm_takes_its_hand_torque_under_each_law(law, hand):
    mech = analyse(_fan(law)).loops["V"].mechanics
    # row 0 is the nominal speed, row 1 the range's low end (100 rpm, an end point of the grid)
    assert mech.source_speed_rad_s[1] == pytest.approx(100 * RPM, rel=1e-12)
    assert -mech.torque_nm[1, 1] == pytest.approx(hand, rel=1e-9)
    assert -mech.torque_nm[0, 1] == pytest.approx(Q0, rel=1e-9)          # every law agrees at nominal


def test_a_quadratic_fan_needs_no_more_tension_at_low_speed_than_at_nominal():
    # with constant power the low end needs 14.5 times the torque, so far more install tension
    power = analyse(_fan(LoadLaw.CONSTANT_POWER)).loops["V"].mechanics.min_install_tension_n
    fan = analyse(_fan(LoadLaw.QUADRATIC)).loops["V"].mechanics.min_install_tension_n
    nominal = analyse(_fan(LoadLaw.QUADRATIC, speed_range=None)).loops["V"].mechanics.min_install_tension_n
    assert power > 5 * fan
    # fixed centres: the centrifugal part m v^2 is largest at the top of the range (1500 rpm),
    # so the quadratic fan is sized there, a little above the nominal-speed sizing
    assert nominal <= fan <= nominal * 1.2


def test_the_grip_message_says_which_law_each_load_follows():
    belt = Belt(section="SPA", mass_per_length_kg_m=0.074, friction=0.3, effective_friction=0.5123,
                install_tension_n=60.0)
    d = _fan(LoadLaw.QUADRATIC)
    d = Drive(d.pulleys, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))
    (f,) = [word(f) for f in analyse(d).findings if f.code in ("slip", "grip-low")][:1]
    assert "B quadratic" in f.message


@pytest.mark.parametrize("points", [50, 200])
def test_ranges_to_standstill_are_sized_at_the_stated_lowest_speed(points):
    opts = Options(range_points=points)
    a = analyse(_fan(speed_range=(0.0, 1500 * RPM)), opts)
    b = analyse(_fan(speed_range=(0.0, 3000 * RPM)), opts)
    # independent value: the same drive with its range starting at the stated lowest speed,
    # 10 % of the nominal 1450 rpm = 145 rpm, where the constant-power torque is bounded
    floor = STANDSTILL_FRACTION * W_NOM
    c = analyse(_fan(speed_range=(floor, 1500 * RPM)), opts)
    ta, tb, tc = (r.loops["V"].mechanics.min_install_tension_n for r in (a, b, c))
    assert ta == pytest.approx(tc, rel=1e-9) and tb == pytest.approx(tc, rel=1e-9)
    for res in (a, b):
        (f,) = [f for f in res.findings if f.code == "standstill-load"]
        assert f.severity.value == "warning" and f.refs == ("B",)
        assert f.data["floor_rad_s"] == pytest.approx(floor, rel=1e-12)
        assert "145.0 rpm" in word(f).message
    assert not [f for f in c.findings if f.code == "standstill-load"]


def test_a_range_to_standstill_with_a_constant_torque_load_needs_no_floor():
    res = analyse(_fan(LoadLaw.CONSTANT_TORQUE, speed_range=(0.0, 1500 * RPM)))
    assert not [f for f in res.findings if f.code == "standstill-load"]
    assert -res.loops["V"].mechanics.torque_nm[1, 1] == pytest.approx(Q0, rel=1e-9)


def test_a_speed_on_the_loaded_driven_pulley_with_no_driver_is_one_error():
    res = analyse(_fan(source_role=Role.IDLER, speed_on_fan=True))
    (f,) = [f for f in res.findings if f.code == "driver-missing"]
    assert f.severity.value == "error" and f.refs == ("B", "V")


def test_a_nominal_speed_outside_its_own_range_is_a_warning():
    res = analyse(_fan(speed_range=(1500 * RPM, 3000 * RPM)))
    (f,) = [f for f in res.findings if f.code == "speed-outside-range"]
    assert f.severity.value == "warning"
    assert "1450.0 rpm" in word(f).message and "1500.0 to 3000.0 rpm" in word(f).message
    assert not [f for f in analyse(_fan()).findings if f.code == "speed-outside-range"]
