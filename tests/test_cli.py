"""The check command end to end on the sample drawings, and the JSON report contract."""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import pytest

from test_findings import run_cli

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"


@pytest.mark.parametrize("name", ["fan_motor", "bottling_conveyor", "mixer_two_stage"])
def test_sample_drawings_check_clean(tmp, name):
    r = run_cli("check", SAMPLES / f"{name}.dxf", "--json", tmp / "r.json")
    assert r.returncode == 0, r.stdout + r.stderr
    rep = json.loads((tmp / "r.json").read_text())
    assert rep["schema"] == "spanwise-report/1"
    assert rep["tool"]["name"] == "spanwise"
    assert not [f for f in rep["findings"] if f["severity"] == "error"]


def test_report_fields_two_stage(tmp):
    r = run_cli("check", SAMPLES / "mixer_two_stage.dxf", "--json", tmp / "r.json")
    assert r.returncode == 0, r.stderr
    rep = json.loads((tmp / "r.json").read_text())
    assert rep["drawing"]["units"] == "mm" and len(rep["drawing"]["sha256"]) == 64
    assert [lp["id"] for lp in rep["loops"]] == ["STAGE1", "STAGE2"]
    assert [s["pulleys"] for s in rep["shafts"]] == [["J1", "J2"]]
    s1 = rep["loops"][0]
    assert [p["id"] for p in s1["pulleys"]] == ["M1", "J1"]      # from the driver, travel order
    p = s1["pulleys"][0]
    assert set(p) >= {"id", "center", "pitch_diameter_m", "role", "side", "wrap_deg"}
    assert p["pitch_diameter_m"] == pytest.approx(0.1)
    span = s1["spans"][0]
    assert span["id"] == "M1-J1" and span["from"] == "M1" and span["to"] == "J1"
    assert set(span) >= {"start", "end", "length_m"}
    # the pitch length equals the sum of spans and wraps (invariant)
    total = sum(s["length_m"] for s in s1["spans"]) + sum(
        p["pitch_diameter_m"] / 2 * math.radians(p["wrap_deg"]) for p in s1["pulleys"])
    assert s1["length_m"] == pytest.approx(total, rel=1e-12)
    # mechanics fields of the contract
    assert set(s1) >= {"speed_m_s", "tensioning", "belt", "min_install_tension_n"}
    assert set(p) >= {"speed_rpm", "torque_nm", "power_w", "grip", "grip_utilisation", "hub_load_n",
                      "hub_load_deg", "static_hub_load_n"}
    assert set(span) >= {"quasi_static_tension_n", "tension_n", "static_frequency_hz"}
    assert set(rep["shafts"][0]) >= {"speed_rpm", "hub_load_n"}


def test_json_never_overwrites_a_foreign_file(tmp):
    target = tmp / "notes.json"
    target.write_text('{"mine": true}')
    r = run_cli("check", SAMPLES / "fan_motor.dxf", "--json", target)
    assert r.returncode == 2 and "--force" in r.stderr
    assert target.read_text() == '{"mine": true}'
    r = run_cli("check", SAMPLES / "fan_motor.dxf", "--json", target, "--force")
    assert r.returncode == 0
    # its own report may be replaced without --force
    r = run_cli("check", SAMPLES / "fan_motor.dxf", "--json", target)
    assert r.returncode == 0


def test_bad_spec_lists_every_problem_and_writes_nothing(tmp):
    shutil.copy(SAMPLES / "fan_motor.dxf", tmp / "d.dxf")
    (tmp / "d.spanwise.toml").write_text('[belt]\ninstall_tension = "450"\n[pulley.MOTOR]\nspeed = "fast"\n'
                                         '[pulley.NOPE]\nrole = "idler"\n')
    r = run_cli("check", tmp / "d.dxf", "--json", tmp / "r.json")
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 2 and "install_tension" in lines[0] and "speed" in lines[1]
    assert not (tmp / "r.json").exists()
    (tmp / "d.spanwise.toml").write_text('[pulley.NOPE]\nrole = "idler"\n')
    r = run_cli("check", tmp / "d.dxf")
    assert r.returncode == 2 and "NOPE" in r.stderr


def test_fail_on_warning(tmp):
    shutil.copy(SAMPLES / "fan_motor.dxf", tmp / "d.dxf")
    # a spec naming an automatic id gives a warning
    (tmp / "d.spanwise.toml").write_text('units = "mm"\n')
    assert run_cli("check", tmp / "d.dxf", "--fail-on", "warning").returncode == 0


def test_catalog_lists_sections():
    r = run_cli("catalog", "--json")
    rows = json.loads(r.stdout)
    spa = next(x for x in rows if x["name"] == "SPA")
    assert spa["min_pitch_diameter_m"] == pytest.approx(0.09)
    assert "from memory" in spa["source"]
