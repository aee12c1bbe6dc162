"""The resonance sweep between its grid speeds, at the ends of its range, and its findings.

Every drive here is two equal-radius pulleys, unloaded (the second an idler), so both
spans have length D (the centre distance) and carry the same tension. Under constant
tensioning with no torque every span carries P = T0 at every speed and T = P + m v^2
(the textbook model, physics.tension); the moving string's frequencies are
f_n = n P / (2 L sqrt(m T)) = n (c^2 - v^2) / (2 L c), c^2 = T / m (Archibald and Emslie,
J. Appl. Mech. 1958; Wickert and Mote, "Classical vibration analysis of axially moving
continua", J. Appl. Mech. 1990; both from memory). The independent values below are that
closed form, written here, and scipy's brentq on it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from layout.wording import word
from physics.analysis import RANGE_POINTS, Options, analyse
from physics.model import Belt, Drive, Loop, Pulley, Role, Side

RPM = math.pi / 30.0
M, T0, R = 0.1, 200.0, 0.05          # kg/m, N, m
C = math.sqrt(T0 / M)                # wave speed at rest, 44.721 m/s


def _drive(length_m: float, rpm_range: tuple[float, float], orders_a=(1.0,), orders_b=(), radius_b=R,
           tensioning="constant", t0=T0, rpm=None) -> Drive:
    lo, hi = rpm_range
    a = Pulley("A", (0.0, 0.0), R, Role.DRIVER, speed_rad_s=(rpm or (lo + hi) / 2) * RPM, direction=1,
               speed_range_rad_s=(lo * RPM, hi * RPM), orders=tuple(orders_a))
    b = Pulley("B", (length_m, 0.0), radius_b, Role.IDLER, orders=tuple(orders_b))
    belt = Belt(mass_per_length_kg_m=M, friction=0.3, tensioning=tensioning, install_tension_n=t0)
    return Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))


def _f_string(n_rpm: float, length_m: float, mode: int = 1) -> float:
    """f_n = n T0 / (2 L sqrt(m (T0 + m v^2))), v = r n pi / 30 (constant tension, no load)."""
    v = R * n_rpm * RPM
    return mode * T0 / (2 * length_m * math.sqrt(M * (T0 + M * v * v)))


def _resonances(res, span="A-B"):
    return [f for f in res.findings if f.code == "resonance" and f.refs[1] == span]


def test_a_band_narrower_than_the_grid_spacing_is_found_with_its_crossing():
    # span mode 1 at 45 Hz at rest: L = c / (2 * 45) = 44.721 / 90 = 0.49690 m; the order-36
    # excitation 36 n / 60 = 0.6 n Hz meets it near n = 45 / 0.6 = 75 rpm; the 10 % band is
    # about 45 * 0.9 / 0.6 = 67.5 to 45 * 1.1 / 0.6 = 82.5 rpm, narrower than the grid's
    # 6000 / 199 = 30.15 rpm (grid speeds 60.3 and 90.5 rpm on either side)
    L = C / 90.0
    res = analyse(_drive(L, (0.0, 6000.0), orders_a=(36.0,)))
    (f,) = [f for f in _resonances(res) if f.data["mode"] == 1 and f.data["kind"] == "direct"]
    assert f.data["excitation"] == "A x36" and f.data["crosses"] is True and f.data["gap"] == 0.0
    # independent root: brentq on the closed-form string frequency, 36 n / 60 = f_1(n)
    n_cross = brentq(lambda n: 36 * n / 60 - _f_string(n, L), 1.0, 200.0, xtol=1e-12)
    assert f.data["speed_rad_s"] / RPM == pytest.approx(n_cross, rel=1e-2)
    assert f.data["speed_rad_s"] / RPM == pytest.approx(n_cross, rel=1e-9)       # Brent on the same model
    lo, hi = (x / RPM for x in f.data["speed_range_rad_s"])
    n_lo = brentq(lambda n: 36 * n / 60 - 0.9 * _f_string(n, L), 1.0, 200.0, xtol=1e-12)
    n_hi = brentq(lambda n: 36 * n / 60 - 1.1 * _f_string(n, L), 1.0, 200.0, xtol=1e-12)
    assert (lo, hi) == (pytest.approx(n_lo, rel=1e-9), pytest.approx(n_hi, rel=1e-9))
    # no speed of the sweep lies inside the band: the grid alone would miss it
    grid = np.linspace(0.0, 6000.0, RANGE_POINTS)
    assert not ((grid >= lo) & (grid <= hi)).any()
    assert f.data["frequency_hz"] == pytest.approx(_f_string(n_cross, L), rel=1e-9)


def _range_end_length() -> float:
    # mode 1 at 21.6 Hz at rest: L = c / (2 * 21.6) = 44.721 / 43.2 = 1.03522 m
    return C / (2 * 21.6)


def test_a_band_touching_the_range_end_claims_no_crossing_and_reports_its_closest_approach():
    # range 600-1200 rpm: A x1 reaches 1200 / 60 = 20 Hz at the top, where
    # f_1 = 21.6 sqrt(200 / (200 + 0.1 * 6.2832^2)) = 21.39 Hz (v = 0.05 * 125.66 = 6.283 m/s):
    # 20 / 21.39 - 1 = -6.5 %, inside the 10 % margin, and the two never meet in the range
    L = _range_end_length()
    res = analyse(_drive(L, (600.0, 1200.0)))
    (f,) = _resonances(res)
    assert f.data["crosses"] is False
    assert f.data["speed_rad_s"] == pytest.approx(1200 * RPM, rel=1e-12)          # closest at the range end
    f1 = _f_string(1200.0, L)
    assert f.data["gap"] == pytest.approx(1 - 20.0 / f1, rel=1e-9)                # hand: 0.0650
    assert f.data["gap"] == pytest.approx(0.0650, abs=5e-4)
    assert f.data["frequency_hz"] == pytest.approx(f1, rel=1e-9)
    assert f.data["excitation_hz"] == pytest.approx(20.0, rel=1e-12)
    lo, hi = (x / RPM for x in f.data["speed_range_rad_s"])
    n_lo = brentq(lambda n: n / 60 - 0.9 * _f_string(n, L), 600.0, 1200.0, xtol=1e-12)
    assert lo == pytest.approx(n_lo, rel=1e-9) and hi == pytest.approx(1200.0, rel=1e-12)
    worded = word(f)
    assert "crossing" not in worded.message
    assert worded.data["speed_rpm"] == pytest.approx(1200.0, rel=1e-12)


def test_two_equal_pulleys_give_one_finding_naming_both():
    # A and B of one radius turn at one speed: A x1 and B x1 are one excitation line.
    # f_1 = 18 Hz at rest (L = 44.721 / 36 = 1.2423 m) is crossed near 18 * 60 = 1080 rpm
    L = C / 36.0
    res = analyse(_drive(L, (600.0, 1300.0), orders_a=(1.0,), orders_b=(1.0,)))
    for span in ("A-B", "B-A"):
        (f,) = _resonances(res, span)
        assert f.data["excitations"] == ["A x1", "B x1"] and f.data["pulleys"] == ["A", "B"]
        assert set(f.refs) == {"V", span, "A", "B"}
        n_cross = brentq(lambda n: n / 60 - _f_string(n, L), 600.0, 1300.0, xtol=1e-12)
        assert f.data["speed_rad_s"] / RPM == pytest.approx(n_cross, rel=1e-9)
    # a B of another radius is a line of its own: two findings per span
    other = analyse(_drive(L, (600.0, 1300.0), orders_a=(1.0,), orders_b=(1.0,), radius_b=0.049))
    assert len(_resonances(other)) == 2


def test_resonances_are_ranked_by_gap_then_mode():
    # L as at the range end (f_1 at 1200 rpm = 21.39 Hz). A x3.1 = 3.1 n / 60 Hz crosses
    # 2 f_1 (parametric, mode 1) and f_2 (direct, mode 2) at the same speed, near
    # 42.8 * 60 / 3.1 = 828 rpm; it comes within 1 - 62 / 64.17 = 3.4 % of f_3 at 1200 rpm
    # without crossing; A x1 comes within 6.5 % of f_1 there (see the range-end test)
    L = _range_end_length()
    res = analyse(_drive(L, (600.0, 1200.0), orders_a=(1.0, 3.1)))
    found = [(f.data["mode"], f.data["kind"], f.data["excitation"], f.data["crosses"]) for f in _resonances(res)]
    assert found == [(1, "parametric", "A x3.1", True), (2, "direct", "A x3.1", True),
                     (3, "direct", "A x3.1", False), (1, "direct", "A x1", False)]
    gaps = [f.data["gap"] for f in _resonances(res)]
    f3 = _f_string(1200.0, L, mode=3)
    assert gaps[2] == pytest.approx(1 - 3.1 * 20.0 / f3, rel=1e-9)                 # hand: 0.0338
    assert gaps[3] == pytest.approx(1 - 20.0 / _f_string(1200.0, L), rel=1e-9)     # hand: 0.0650
    # ranked within the loop's resonance findings, over both spans
    every = [f for f in res.findings if f.code == "resonance"]
    keys = [(f.data["gap"], f.data["mode"]) for f in every]
    assert keys == sorted(keys)


def _near_critical(tensioning: str, v_m_s: float, length_m: float = 0.6):
    a = Pulley("A", (0.0, 0.0), R, Role.DRIVER, speed_rad_s=v_m_s / R, direction=1)
    b = Pulley("B", (length_m, 0.0), R, Role.IDLER)
    belt = Belt(mass_per_length_kg_m=M, friction=0.3, install_tension_n=300.0, tensioning=tensioning)
    res = analyse(Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2,
                                                 belt),)), Options())
    f = next(f for f in res.findings if f.code == "near-critical")
    return res, f


def test_near_critical_fallen_to_under_fixed_centres():
    # fixed centres, no load: T = T0 = 300 N at every speed, c = sqrt(300 / 0.1) = 54.772 m/s;
    # v = 0.75 c = 41.079 m/s; f_1 = (c^2 - v^2) / (2 L c) falls to 1 - 0.75^2 = 0.4375
    v = 0.75 * math.sqrt(300.0 / M)
    res, f = _near_critical("fixed", v)
    assert f.data["v_over_c"] == pytest.approx(0.75, rel=1e-9)
    assert f.data["frequency_fraction"] == pytest.approx(0.4375, rel=1e-9)
    f_rest = math.sqrt(300.0 / M) / (2 * 0.6)
    assert res.loops["V"].mechanics.dynamics.frequencies_hz[0, 0, 0] / f_rest == pytest.approx(0.4375, rel=1e-9)
    assert f"{0.4375:.0%}" in word(f).message


def test_near_critical_fallen_to_under_constant_tension():
    # constant tension, no load: P = 300 N, T = P + m v^2; v/c = 0.75 where
    # v^2 = 0.5625 (P/m) / (1 - 0.5625) = 0.5625 * 3000 / 0.4375 = 3857.14, v = 62.106 m/s
    # (T = 300 + 385.71 = 685.71 N); f_1 = P / (2 L sqrt(m T)) against sqrt(P/m) / (2 L) at
    # rest: sqrt(P / T) = sqrt(300 / 685.71) = sqrt(0.4375) = 0.66144, not 1 - 0.75^2 = 0.4375
    v = math.sqrt(0.5625 * 300.0 / M / 0.4375)
    res, f = _near_critical("constant", v)
    assert f.data["v_over_c"] == pytest.approx(0.75, rel=1e-9)
    assert f.data["frequency_fraction"] == pytest.approx(0.66144, rel=1e-5)
    f_rest = math.sqrt(300.0 / M) / (2 * 0.6)
    assert res.loops["V"].mechanics.dynamics.frequencies_hz[0, 0, 0] / f_rest == pytest.approx(
        math.sqrt(0.4375), rel=1e-9)
    assert f"{math.sqrt(0.4375):.0%}" in word(f).message


def test_a_single_operating_speed_is_worded_as_one_speed():
    # range 1450 to 1450 rpm: L = C / (2 x 24.17 Hz) puts mode 1 at rest on the order-1
    # excitation 1450 / 60 = 24.17 Hz; running, v = 0.05 x 1450 x pi / 30 = 7.59 m/s and
    # f_1 = 24.17 x 200 / sqrt(200 (200 + 0.1 x 7.59^2)) = 24.17 x 200 / 202.86 = 23.83 Hz,
    # 1.4 % off: inside the 10 % band (hand arithmetic)
    L = C / (2 * 1450 / 60)
    res = analyse(_drive(L, (1450.0, 1450.0), orders_a=(1.0,)))
    msgs = [word(f).message for f in _resonances(res)]
    assert msgs and all("at 1450.0 rpm of the source" in m and " from " not in m for m in msgs), msgs
