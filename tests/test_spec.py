"""Quantities with units, the spec file and label words: values and clear errors."""

from __future__ import annotations

import math

import pytest

from layout.errors import SpecError
from layout.quantity import QuantityError, parse_quantity
from layout.spec import parse_spec

# Reference table: text, kind, SI value. Conversion factors: NIST SP 811 (2008), Appendix B
# (inch 0.0254 m exact, lbf 4.4482216152605 N, hp 745.69987 W) — from memory.
QUANTITIES = [
    ("1450 rpm", "rotational_speed", 1450 * 2 * math.pi / 60),
    ("1450rpm", "rotational_speed", 1450 * 2 * math.pi / 60),
    ("1450 RPM", "rotational_speed", 1450 * 2 * math.pi / 60),      # trade spelling
    ("24 rev/s", "rotational_speed", 24 * 2 * math.pi),
    ("150 rad/s", "rotational_speed", 150.0),
    ("3 kW", "power", 3000.0),
    ("3 KW", "power", 3000.0),                                       # trade spelling
    ("5 hp", "power", 5 * 745.69987158227022),
    ("0.12 kg/m", "mass_per_length", 0.12),
    ("40 kN", "force", 40000.0),
    ("100 lbf", "force", 444.82216152605),
    ("0.02 N*m^2", "bending_stiffness", 0.02),
    ("0.02 N·m²", "bending_stiffness", 0.02),
    ("12 N*m", "torque", 12.0),
    ("12 Nm", "torque", 12.0),
    ("12 N.m", "torque", 12.0),
    ("38 deg", "angle", math.radians(38)),
    ("38°", "angle", math.radians(38)),
    ("10 mm", "length", 0.01),
    ("2 in", "length", 0.0508),
    ("1.5e3 mm", "length", 1.5),
    ("25 m/s", "speed", 25.0),
]


@pytest.mark.parametrize("text,kind,value", QUANTITIES)
def test_quantities_convert_to_si(text, kind, value):
    assert parse_quantity(text, kind) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("text,kind,needle", [
    ("1450", "rotational_speed", "no unit"),
    ("1450 1/min", "rotational_speed", "rpm"),          # loses 2*pi: refused with a hint
    ("25 Hz", "rotational_speed", "frequency"),
    ("5,5 kW", "power", "comma"),                       # decimal comma: ambiguous
    ("3 kW", "force", "not a force"),
    ("fast", "rotational_speed", "number"),
    ("3 furlongs", "length", "unknown unit"),
])
def test_bad_quantities_say_what_was_expected(text, kind, needle):
    with pytest.raises(QuantityError) as err:
        parse_quantity(text, kind)
    assert needle in str(err.value)
    assert "e.g." in str(err.value) or "write" in str(err.value)


def test_bare_number_only_for_dimensionless_keys():
    spec = parse_spec({"service_factor": 1.2, "belt": {"friction": 0.3, "strands": 2}}, "s.toml")
    assert spec.belt.friction == 0.3 and spec.belt.strands == 2
    with pytest.raises(SpecError) as err:
        parse_spec({"belt": {"mass_per_length": 0.12}}, "s.toml")
    (line,) = err.value.problems
    assert "s.toml" in line and "mass_per_length" in line and "kg/m" in line


def test_every_bad_value_is_listed_once():
    data = {"belt": {"install_tension": "400", "section": "ZZ9"},
            "pulley": {"P1": {"speed": "1450", "role": "motor"}}, "colour": "red"}
    with pytest.raises(SpecError) as err:
        parse_spec(data, "drive.spanwise.toml")
    probs = err.value.problems
    assert len(probs) == 5
    assert all(p.startswith("drive.spanwise.toml") for p in probs)
    joined = "\n".join(probs)
    for key in ("install_tension", "section", "speed", "role", "colour"):
        assert key in joined


def test_ids_differing_only_in_case_are_an_error():
    with pytest.raises(SpecError, match="differ only in case"):
        parse_spec({"pulley": {"P1": {"role": "driver"}, "p1": {"role": "idler"}}}, "s.toml")


def test_loop_id_equal_to_a_belt_key_is_an_error():
    with pytest.raises(SpecError, match="belt key"):
        parse_spec({"belt": {"section": "SPA", "length": {"strands": 2}}}, "s.toml")


def test_route_and_overrides_parse():
    spec = parse_spec({"units": "in", "belt_layers": ["BELT*"],
                       "belt": {"section": "spa", "L2": {"strands": 3}},
                       "route": {"L2": {"pulleys": ["A", "B", "C"], "back": ["C"], "crossed": ["a-b", "B-C"]}},
                       "pulley": {"A": {"role": "driver", "speed": "1450 rpm", "direction": "CW",
                                        "speed_range": ["700 rpm", "1800 rpm"], "orders": [1, 2]}}},
                      "s.toml")
    assert spec.units == "in"
    assert spec.belt_for("l2").strands == 3 and spec.belt_for("L2").section == "spa"
    assert spec.routes["l2"].crossed == (("A", "B"), ("B", "C"))
    a = spec.pulleys["a"]
    assert a.direction == "cw" and a.orders == (1.0, 2.0)
    assert a.speed_range == pytest.approx((700 * math.pi / 30, 1800 * math.pi / 30))
