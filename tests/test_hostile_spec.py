"""Hostile spec files: every bad value is one short line naming the key, exit 2, no traceback.

Each attack is checked through ``layout.spec.load_spec`` (real files in ``tmp_path``) and
through the command line, with a timeout as the hang guard.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from layout import spec as S
from layout.errors import SpecError
from layout.spec import load_spec

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_drawings" / "fan_motor.dxf"
CLI_TIMEOUT_S = 60
# a line may name the file and the key and list the allowed keys, but never echo a long value
MAX_LINE = 400


def _write(tmp_path: Path, text: str, name: str = "hostile.spanwise.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _problems(path: Path) -> list[str]:
    with pytest.raises(SpecError) as err:
        load_spec(path)
    return err.value.problems


def _cli(tmp_path: Path, spec: Path) -> subprocess.CompletedProcess[str]:
    drawing = tmp_path / "fan_motor.dxf"
    if not drawing.exists():
        shutil.copy(SAMPLE, drawing)
    return subprocess.run([sys.executable, "-m", "layout.cli", "check", str(drawing), "--spec",
                           str(spec), "--read-only"], capture_output=True, text=True,
                          timeout=CLI_TIMEOUT_S, cwd=ROOT)


def _assert_cli(tmp_path: Path, spec: Path, keys: list[str]) -> list[str]:
    """Exit 2, one line per key in order, each naming it, no traceback, nothing long."""
    run = _cli(tmp_path, spec)
    assert run.returncode == 2, run.stderr[:2000]
    assert "Traceback" not in run.stderr
    assert "Warning" not in run.stderr
    lines = run.stderr.splitlines()
    assert len(lines) == len(keys), lines
    for line, key in zip(lines, keys):
        assert key in line and str(spec) in line
        assert len(line) < MAX_LINE
    return lines


# --------------------------------------------------------------------------- 1. absurd values

GOOD_HEAD = 'units = "mm"\n'
# (TOML, the key named, a bit of the allowed range in the message)
ABSURD = [
    ("gravity = [inf, 0]\n", "gravity", "1e+12"),
    ("gravity = [1e308, 1e308]\n", "gravity", "1e+12"),
    ("gravity = [nan, 0]\n", "gravity", "1e+12"),
    ("modes = 51\n", "modes", "1 to 50"),
    ("modes = " + "9" * 400 + "\n", "modes", "1 to 50"),       # an int too large for a float
    ("service_factor = 1e308\n", "service_factor", "(0, 100]"),
    ("[tolerances]\njoin = 1e300\n", "tolerances.join", "(0, 100]"),
    ("[belt]\nstrands = 1e308\n", "belt.strands", "1 to 1000"),
    ("[belt]\nstrands = 1001\n", "belt.strands", "1 to 1000"),
    ("[belt]\nfriction = 1e308\n", "belt.friction", "(0, 10]"),
    ('[belt]\nlength = "1e300 mm"\n', "belt.length", "1e+09 m"),
    ('[belt]\nlength = "1e-300 mm"\n', "belt.length", "1e-09"),
    ('[belt]\ninstall_tension = "1e300 N"\n', "belt.install_tension", "1e+09 N"),
    ('[belt]\nmax_speed = "-3 m/s"\n', "belt.max_speed", "greater than 0"),
    ('[belt]\nstock_lengths = ["1600 mm", "1e200 m"]\n', "belt.stock_lengths", "1e+09 m"),
    ('[belt]\nlength = "1 km^999"\n', "belt.length", "out of range"),
    ("[pulley.MOTOR]\nat = [inf, 0]\n", "pulley.MOTOR.at", "1e+12"),
    ("[pulley.MOTOR]\npivot = [0, 1e13]\n", "pulley.MOTOR.pivot", "1e+12"),
    ("[pulley.MOTOR]\norders = [inf]\n", "pulley.MOTOR.orders", "(0, 1000]"),
    ("[pulley.MOTOR]\norders = [1001]\n", "pulley.MOTOR.orders", "(0, 1000]"),
    ('[pulley.MOTOR]\nspeed = "-1450 rpm"\n', "pulley.MOTOR.speed", "greater than 0"),
    ('[pulley.MOTOR]\nspeed = "0 rpm"\n', "pulley.MOTOR.speed", "greater than 0"),
    ('[pulley.MOTOR]\nspeed = "1e300 rpm"\n', "pulley.MOTOR.speed", "1e+09 rad/s"),
    ('[pulley.MOTOR]\nspeed_range = ["0 rpm", "1e300 rpm"]\n', "pulley.MOTOR.speed_range", "1e+09"),
    ('[pulley.FAN]\npower = "1e300 W"\n', "pulley.FAN.power", "1e+09 W"),
    ('[pulley.FAN]\ntorque = "-1e300 N*m"\n', "pulley.FAN.torque", "1e+09 N*m"),
    ('[pulley.MOTOR]\nadjust = "1e300 deg"\n', "pulley.MOTOR.adjust", "1e+09 rad"),
]


@pytest.mark.parametrize("toml, key, allowed", ABSURD, ids=[a[1] + str(i) for i, a in enumerate(ABSURD)])
def test_absurd_value_refused_with_its_range(tmp_path, toml, key, allowed):
    _assert_one_line(tmp_path, toml, key, allowed)


def _assert_one_line(tmp_path, toml: str, key: str, says: str) -> None:
    """The spec head plus ``toml`` gives one short problem line naming ``key`` and saying ``says``."""
    lines = _problems(_write(tmp_path, GOOD_HEAD + toml))
    assert len(lines) == 1, lines
    assert key in lines[0] and says in lines[0]
    assert len(lines[0]) < MAX_LINE


def test_values_at_the_limits_are_accepted(tmp_path):
    spec = load_spec(_write(tmp_path, GOOD_HEAD + (
        f"modes = {S.MAX_MODES}\ngravity = [{S.MAX_POINT:g}, 0]\n"
        f'[belt]\nstrands = {S.MAX_STRANDS}\nlength = "{S.MAX_SI:g} m"\n'
        f'[pulley.MOTOR]\nspeed = "{S.MAX_SI:g} rad/s"\norders = [{S.MAX_ORDER:g}]\n'
        f"at = [{-S.MAX_POINT:g}, 0]\n")))
    assert spec.modes == S.MAX_MODES and spec.belt.strands == S.MAX_STRANDS
    assert spec.pulleys["motor"].orders == (S.MAX_ORDER,)


def test_absurd_values_through_the_cli(tmp_path):
    spec = _write(tmp_path, GOOD_HEAD + 'gravity = [inf, 0]\n[belt]\nstrands = 1e308\n'
                  '[pulley.MOTOR]\nspeed = "-1450 rpm"\nat = [inf, 0]\norders = [inf]\n')
    _assert_cli(tmp_path, spec, ["gravity", "belt.strands", "pulley.MOTOR.speed",
                                 "pulley.MOTOR.at", "pulley.MOTOR.orders"])


# --------------------------------------------------------------------------- 2. long lists

def _quoted(items: list[str]) -> str:
    return "[" + ", ".join(f'"{v}"' for v in items) + "]"


LONG_LISTS = [
    (f"modes = {S.MAX_MODES + 1}\n", "modes", str(S.MAX_MODES)),
    ("[pulley.MOTOR]\norders = [" + ", ".join(["1"] * (S.MAX_ORDERS + 1)) + "]\n",
     "pulley.MOTOR.orders", f"at most {S.MAX_ORDERS}"),
    ("[belt]\nstock_lengths = " + _quoted(["1600 mm"] * (S.MAX_STOCK_LENGTHS + 1)) + "\n",
     "belt.stock_lengths", f"at most {S.MAX_STOCK_LENGTHS}"),
    ("belt_layers = " + _quoted(["BELT"] * (S.MAX_LAYERS + 1)) + "\n",
     "belt_layers", f"at most {S.MAX_LAYERS}"),
    ("keep_out_layers = " + _quoted(["K"] * (S.MAX_LAYERS + 1)) + "\n",
     "keep_out_layers", f"at most {S.MAX_LAYERS}"),
    ("[route.L1]\npulleys = " + _quoted([f"P{i}" for i in range(S.MAX_ROUTE_PULLEYS + 1)]) + "\n",
     "route.L1.pulleys", f"at most {S.MAX_ROUTE_PULLEYS}"),
]


@pytest.mark.parametrize("toml, key, limit", LONG_LISTS, ids=[a[1] for a in LONG_LISTS])
def test_list_over_its_limit_is_one_line(tmp_path, toml, key, limit):
    _assert_one_line(tmp_path, toml, key, limit)


def test_lists_at_their_limits_are_accepted(tmp_path):
    spec = load_spec(_write(tmp_path, GOOD_HEAD + (
        "belt_layers = " + _quoted(["BELT"] * S.MAX_LAYERS) + "\n"
        "[belt]\nstock_lengths = " + _quoted(["1600 mm"] * S.MAX_STOCK_LENGTHS) + "\n"
        "[pulley.MOTOR]\norders = [" + ", ".join(["1"] * S.MAX_ORDERS) + "]\n")))
    assert len(spec.belt.stock_lengths) == S.MAX_STOCK_LENGTHS
    assert len(spec.pulleys["motor"].orders) == S.MAX_ORDERS


def test_long_lists_through_the_cli(tmp_path):
    spec = _write(tmp_path, GOOD_HEAD + LONG_LISTS[3][0] + LONG_LISTS[2][0] + LONG_LISTS[1][0])
    _assert_cli(tmp_path, spec, ["belt_layers", "belt.stock_lengths", "pulley.MOTOR.orders"])


def test_many_problems_are_capped(tmp_path):
    p = _write(tmp_path, "".join(f"k{i} = 1\n" for i in range(S.MAX_PROBLEMS * 20)))
    lines = _problems(p)
    assert len(lines) == S.MAX_PROBLEMS + 1
    assert str(S.MAX_PROBLEMS * 19) in lines[-1]


# --------------------------------------------------------------------------- 3. huge values

HUGE = "x" * 1_000_000


@pytest.mark.parametrize("toml, key", [
    (f'[belt]\nlength = "1 {HUGE}"\n', "belt.length"),
    (f'[belt]\nlength = "1 a{" " * 1_000_000}b"\n', "belt.length"),      # was quadratic
    (f'units = "{HUGE}"\n', "units"),
    (f'[belt]\nsection = "{HUGE}"\n', "belt.section"),
    (f'[pulley.MOTOR]\nrole = "{HUGE}"\n', "pulley.MOTOR.role"),
    (f'[pulley.MOTOR]\nspeed_range = ["{HUGE}", "1 rpm"]\n', "pulley.MOTOR.speed_range"),
    (f'[belt]\nstock_lengths = ["{HUGE}"]\n', "belt.stock_lengths"),
    (f'"{HUGE}" = 1\n', "unknown key"),
    (f'[pulley.{HUGE}]\nrole = "driver"\n', "pulley.xxx"),
    (f'[route.L1]\npulleys = ["A", "B"]\nback = ["{HUGE}"]\n', "route.L1.back"),
], ids=lambda v: v[:30].replace("\n", " ") if isinstance(v, str) else None)
def test_huge_value_is_shown_once_and_short(tmp_path, toml, key):
    lines = _problems(_write(tmp_path, toml))
    assert len(lines) == 1, [line[:200] for line in lines]
    assert key in lines[0]
    assert len(lines[0]) < MAX_LINE
    assert len(re.findall("x{5,}", lines[0])) <= 1             # shown once


def test_huge_value_through_the_cli(tmp_path):
    spec = _write(tmp_path, f'[belt]\nlength = "1 {HUGE}"\n[pulley.MOTOR]\nspeed = "{HUGE}"\n')
    lines = _assert_cli(tmp_path, spec, ["belt.length", "pulley.MOTOR.speed"])
    assert all("…" in line for line in lines)


# --------------------------------------------------------------------------- 4. deep nesting

DEEP = 10_000


@pytest.mark.parametrize("toml, key", [
    ("modes = " + "[" * DEEP + "]" * DEEP + "\n", "modes"),
    ("gravity = " + "{a = " * DEEP + "1" + "}" * DEEP + "\n", "gravity"),
    ("[" + ".".join(["pulley"] + ["a"] * DEEP) + "]\n", "pulley.a"),     # dotted: nested tables
    ("modes = " + "[" * 200 + "]" * 200 + "\n", "modes"),                # within tomllib's depth
    ("[belt]\nlength = " + "[" * 200 + "]" * 200 + "\n", "belt.length"),
], ids=lambda v: v[:30].replace("\n", " ") if isinstance(v, str) else None)
def test_deep_nesting_is_one_line(tmp_path, toml, key):
    lines = _problems(_write(tmp_path, toml))
    assert len(lines) == 1, lines
    assert key in lines[0]
    assert len(lines[0]) < MAX_LINE


def test_deep_nesting_through_the_cli(tmp_path):
    spec = _write(tmp_path, "gravity = " + "[" * DEEP + "]" * DEEP + "\n")
    _assert_cli(tmp_path, spec, ["gravity"])


def test_huge_integer_is_one_line(tmp_path):
    lines = _problems(_write(tmp_path, "modes = " + "9" * 5000 + "\n"))
    assert len(lines) == 1 and "not valid TOML" in lines[0] and len(lines[0]) < MAX_LINE


# --------------------------------------------------------------------------- 5. big files

def test_spec_over_the_size_limit(tmp_path):
    p = tmp_path / "big.spanwise.toml"
    with p.open("w", encoding="utf-8") as f:
        f.write('units = "mm"\n# ')
        f.write("x" * S.MAX_SPEC_BYTES)
        f.write("\n")
    lines = _problems(p)
    assert len(lines) == 1 and f"{S.MAX_SPEC_BYTES:,}" in lines[0] and str(p) in lines[0]
    _assert_cli(tmp_path, p, [f"{S.MAX_SPEC_BYTES:,} bytes"])


def test_spec_just_under_the_size_limit_is_read(tmp_path):
    p = tmp_path / "near.spanwise.toml"
    head = 'units = "mm"\n# '
    with p.open("w", encoding="utf-8") as f:
        f.write(head + "x" * (S.MAX_SPEC_BYTES - len(head) - 1) + "\n")
    assert p.stat().st_size == S.MAX_SPEC_BYTES
    assert load_spec(p).units == "mm"
