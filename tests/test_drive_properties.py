"""Multi-pulley drives end to end: invariants of the mechanics, and property tests over
random valid layouts (no external reference needed: the invariants are the check)."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import add_drive, new_doc, save
from layout.pipeline import check_drawing
from layout.report import report_dict
from physics import geometry as geo
from test_findings import run_cli

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"


def _report(path: Path) -> dict:
    checked = check_drawing(path)
    return report_dict(checked.model, checked.results, checked.findings, version="test")


def test_serpentine_with_backside_idler_and_tensioner(tmp):
    r = run_cli("check", SAMPLES / "bottling_conveyor.dxf", "--json", tmp / "r.json")
    assert r.returncode == 0, r.stdout + r.stderr
    rep = json.loads((tmp / "r.json").read_text())
    (lp,) = rep["loops"]
    assert lp["tensioning"] == "tensioner"
    pulleys = {p["id"]: p for p in lp["pulleys"]}
    assert pulleys["TEN"]["side"] == "back" and pulleys["GUIDE"]["side"] == "back"
    # the torque steps round the loop sum to zero: sum(Q_i / r_i) = 0 (derived: the power balance sum Q_i w_i = 0 with w_i = v / r_i for a common belt speed v)
    steps = sum(p["torque_nm"] / (p["pitch_diameter_m"] / 2) for p in lp["pulleys"])
    assert steps == pytest.approx(0.0, abs=1e-9)
    # power balances
    assert sum(p["power_w"] for p in lp["pulleys"]) == pytest.approx(0.0, abs=1e-9)
    # hub loads are the vector sums of the two spans' P along the drawn tangent directions
    spans = lp["spans"]
    n = len(spans)
    strands = lp["belt"]["strands"]
    for i, p in enumerate(lp["pulleys"]):
        arr, lea = spans[i - 1], spans[i]
        e_a = np.subtract(arr["start"], arr["end"])
        e_b = np.subtract(lea["end"], lea["start"])
        f = strands * (arr["quasi_static_tension_n"] * e_a / np.hypot(*e_a)
                       + lea["quasi_static_tension_n"] * e_b / np.hypot(*e_b))
        assert p["hub_load_n"] == pytest.approx(float(np.hypot(*f)), rel=1e-9)
        assert math.radians(p["hub_load_deg"]) == pytest.approx(math.atan2(f[1], f[0]), abs=1e-9)
    # the tensioner holds 420 N along its bisector: 420 / |e_a + e_b| on its spans
    assert pulleys["TEN"]["hub_load_n"] == pytest.approx(420.0, rel=1e-9)
    assert n == 5


# --------------------------------------------------------------------------- properties

def _random_drive(seed: int):
    """Three inside pulleys counter-clockwise and a back-side tensioner pushing into the
    slack span (the one leaving the driver); mm."""
    rng = np.random.default_rng(seed)
    while True:
        ang = np.sort(rng.uniform(0, 2 * np.pi, 3))
        rad = rng.uniform(300, 700, 3)
        c = np.column_stack([rad * np.cos(ang), rad * np.sin(ang)])
        r = rng.uniform(40, 150, 3)
        dd = np.hypot(*(c[:, None, :] - c[None, :, :]).transpose(2, 0, 1))
        np.fill_diagonal(dd, np.inf)
        if (dd < 1.5 * (r[:, None] + r[None, :])).any():
            continue
        g = geo.loop_geometry(c, r, [1, 1, 1])
        if abs(geo.signed_turning(g, [1, 1, 1]) - 2 * math.pi) > 1e-9:
            continue
        s0, e0, d0 = g.span_start_m[0], g.span_end_m[0], g.span_dir[0]
        ri = rng.uniform(25, 45)
        depth = rng.uniform(8, 25)
        mid = s0 + rng.uniform(0.35, 0.65) * (e0 - s0)
        outward = -np.array([-d0[1], d0[0]])
        ci = mid + (ri - depth) * outward
        centers = np.vstack([c[0], ci, c[1], c[2]])
        radii = np.array([r[0], ri, r[1], r[2]])
        turns = [1, -1, 1, 1]
        try:
            g2 = geo.loop_geometry(centers, radii, turns)
        except geo.GeometryError:
            continue
        if abs(geo.signed_turning(g2, turns) - 2 * math.pi) > 1e-9 or g2.wrap_rad.min() < 0.05:
            continue
        lines = shapely.linestrings(np.stack([g2.span_start_m, g2.span_end_m], axis=1))
        if all(shapely.distance(lines[k], shapely.points(centers[j])) > radii[j]
               for k in range(4) for j in range(4) if j not in (k, (k + 1) % 4)):
            return centers, radii, turns, float(rng.uniform(150, 500)), float(rng.uniform(500, 3000))


IDS = ("DRV", "TEN", "OUT", "AUX")


def _write(tmp: Path, name: str, centers, radii, turns, units: str, force: float, power: float,
           direction: str, slide_deg: float | None) -> Path:
    doc = new_doc(units)
    msp = doc.modelspace()
    add_drive(msp, centers, radii, turns, "spans")
    for pid, c in zip(IDS, centers):
        msp.add_text(pid, dxfattribs={"insert": tuple(c)})
    path = save(doc, tmp, f"{name}.dxf")
    slide = "" if slide_deg is None else f'force_direction = "{slide_deg!r} deg"\n'
    (tmp / f"{name}.spanwise.toml").write_text(f'''
[belt]
section = "SPA"
[pulley.DRV]
role = "driver"
speed = "1450 rpm"
direction = "{direction}"
speed_range = ["900 rpm", "1600 rpm"]
[pulley.TEN]
role = "tensioner"
force = "{force!r} N"
{slide}[pulley.OUT]
role = "driven"
power = "{power!r} W"
[pulley.AUX]
role = "driven"
torque = "2.5 N*m"
''')
    return path


def _same(b, a, **tol) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return b == pytest.approx(a, **tol)


def _by_id(rep: dict) -> dict:
    (lp,) = rep["loops"]
    out = {p["id"]: p for p in lp["pulleys"]}
    out["spans"] = {s["id"]: s for s in lp["spans"]}
    out["loop"] = lp
    return out


SETTINGS = settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])


@SETTINGS
@given(seed=st.integers(0, 5000), angle=st.floats(0, 360), dx=st.floats(-5e4, 5e4), dy=st.floats(-5e4, 5e4),
       inch=st.booleans(), slide=st.one_of(st.none(), st.floats(0, 180)))
def test_results_unchanged_under_rigid_motion_and_units(tmp, seed, angle, dx, dy, inch, slide):
    centers, radii, turns, force, power = _random_drive(seed)
    base = _by_id(_report(_write(tmp, "base", centers, radii, turns, "mm", force, power, "ccw", slide)))
    t = math.radians(angle)
    rot = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
    moved = centers @ rot.T + (dx, dy)
    scale = 1 / 25.4 if inch else 1.0
    slide2 = None if slide is None else slide + angle
    other = _by_id(_report(_write(tmp, "moved", moved * scale, radii * scale, turns, "in" if inch else "mm",
                                  force, power, "ccw", slide2)))
    for pid in IDS:
        a, b = base[pid], other[pid]
        for key in ("speed_rpm", "torque_nm", "power_w", "grip_utilisation", "hub_load_n", "static_hub_load_n",
                    "wrap_deg"):
            assert _same(b[key], a[key], rel=1e-7, abs=1e-9), (pid, key)
        dh = (b["hub_load_deg"] - a["hub_load_deg"] - angle) % 360
        assert min(dh, 360 - dh) == pytest.approx(0.0, abs=1e-6)
    for sid, s in base["spans"].items():
        for key in ("quasi_static_tension_n", "tension_n", "static_frequency_hz", "length_m"):
            assert other["spans"][sid][key] == pytest.approx(s[key], rel=1e-7)
    assert other["loop"]["min_install_tension_n"] == pytest.approx(base["loop"]["min_install_tension_n"], rel=1e-7)


@SETTINGS
@given(seed=st.integers(0, 5000), slide=st.one_of(st.none(), st.floats(0, 180)))
def test_mirroring_with_mirrored_senses_flips_signed_outputs(tmp, seed, slide):
    centers, radii, turns, force, power = _random_drive(seed)
    base = _by_id(_report(_write(tmp, "base", centers, radii, turns, "mm", force, power, "ccw", slide)))
    mirrored = centers * (-1.0, 1.0)
    slide2 = None if slide is None else 180.0 - slide
    other = _by_id(_report(_write(tmp, "mirror", mirrored, radii, [-t for t in turns], "mm", force, power,
                                  "cw", slide2)))
    for pid in IDS:
        a, b = base[pid], other[pid]
        assert b["speed_rpm"] == pytest.approx(-a["speed_rpm"], rel=1e-9)     # sense flips
        for key in ("torque_nm", "power_w", "grip_utilisation", "hub_load_n", "wrap_deg"):
            assert _same(b[key], a[key], rel=1e-7, abs=1e-9), (pid, key)
        dh = (b["hub_load_deg"] - (180.0 - a["hub_load_deg"])) % 360
        assert min(dh, 360 - dh) == pytest.approx(0.0, abs=1e-6)
    for sid, s in base["spans"].items():
        assert other["spans"][sid]["quasi_static_tension_n"] == pytest.approx(s["quasi_static_tension_n"], rel=1e-7)
