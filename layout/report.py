"""The JSON report (``schema: "spanwise-report/1"``) and the console summary.

The report is built as a dict of plain values first, then serialised: full float
precision, no NaN or infinity (``None`` where a value does not exist).
"""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

from physics.analysis import Results
from physics.findings import Finding, Severity

from .route import Model

__all__ = ["SCHEMA", "CAUTION", "report_dict", "dumps", "finding_dict", "failed_report"]

SCHEMA = "spanwise-report/1"

#: Carried by every report: the numbers are estimates and belt drives hurt people.
CAUTION = ("Estimates from the drawing as drawn and from catalogue values (some recalled, not read "
           "from a standard): check them against the belt maker's data. Guard every nip point, lock "
           "out the drive before tensioning or inspecting it, and follow local codes and licensed "
           "engineering practice.")


def _clean(v: Any) -> Any:
    """Plain JSON values: floats finite or None, tuples as lists, numpy as Python."""
    if isinstance(v, dict):
        return {str(k): _clean(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_clean(x) for x in v]
    if isinstance(v, np.ndarray):
        return _clean(v.tolist())
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (int, np.integer)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return f if math.isfinite(f) else None
    return v


def finding_dict(f: Finding) -> dict[str, Any]:
    out: dict[str, Any] = {"severity": f.severity.value, "code": f.code, "message": f.message,
                           "at": None if f.at is None else [float(f.at[0]), float(f.at[1])],
                           "refs": list(f.refs)}
    if f.data:
        out["data"] = f.data
    return out


def _pt(model: Model, p_m: Any) -> list[float]:
    x, y = model.to_drawing(p_m)
    return [x, y]


def _grip_name(state: int) -> str:
    from physics.analysis import GRIP_STATES
    return GRIP_STATES[int(state)]


def _deg(v: Any) -> float:
    return math.degrees(math.atan2(float(v[1]), float(v[0])))


def report_dict(model: Model, results: Results, findings: list[Finding], *, version: str) -> dict[str, Any]:
    """The report of one drawing as plain values."""
    d = model.drawing
    drive = model.drive
    moving = results.kinematics is not None and results.kinematics.source is not None
    loops = []
    shaft_force: dict[str, Any] = {}
    shaft_speed: dict[str, float] = {}
    for lp in model.loops:
        lr = results.loops.get(lp.id)
        g = lr.geometry if lr else None
        mech = lr.mechanics if lr else None
        moved = moving and mech is not None and lp.id in results.kinematics.loops  # type: ignore[union-attr]
        n = len(lp.pulleys)
        pulleys = []
        for i, pid in enumerate(lp.pulleys):
            p = drive.pulleys[pid]
            row: dict[str, Any] = {
                "id": pid, "center": list(model.circle_center(lp.circles[i])),
                "pitch_diameter_m": 2.0 * p.radius_m,
                "role": mech.roles[i] if mech is not None and mech.roles else p.role.value,
                "side": lp.sides[i].value,
                "wrap_deg": None if g is None else math.degrees(float(g.wrap_rad[i])),
            }
            if mech is not None:
                st = int(mech.grip_state[0, i])
                hub = mech.hub_n[:, i, :]
                mags = np.hypot(hub[:, 0], hub[:, 1])
                row.update({
                    "speed_rpm": float(mech.omega_rad_s[0, i]) * 30.0 / math.pi if moved else None,
                    "torque_nm": float(mech.torque_nm[0, i]) if moved else None,
                    "power_w": float(mech.power_w[0, i]) if moved else None,
                    "grip": _grip_name(st) if moved else "no-torque",
                    "grip_utilisation": float(mech.utilisation[0, i]) if moved and st in (1, 2) else None,
                    "hub_load_n": float(mags[0]), "hub_load_deg": _deg(hub[0]),
                    "max_hub_load_n": float(mags.max()),
                    "static_hub_load_n": float(np.hypot(*mech.static_hub_n[i])),
                    "static_hub_load_deg": _deg(mech.static_hub_n[i]),
                    "friction": float(mech.mu[i]),
                })
                if moved and mech.omega_rad_s.shape[0] > 1:
                    w = mech.omega_rad_s[1:, i] * 30.0 / math.pi
                    row["speed_range_rpm"] = [float(w.min()), float(w.max())]
                shaft_force.setdefault(pid, hub[0])
                if moved:
                    shaft_speed[pid] = float(mech.omega_rad_s[0, i]) * 30.0 / math.pi
            pulleys.append(row)
        spans = []
        for k in range(n):
            a, b = lp.pulleys[k], lp.pulleys[(k + 1) % n]
            row = {
                "id": f"{a}-{b}", "from": a, "to": b,
                "start": None if g is None else _pt(model, g.span_start_m[k]),
                "end": None if g is None else _pt(model, g.span_end_m[k]),
                "length_m": None if g is None else float(g.span_length_m[k]),
                "crossed": bool(lp.crossed[k]),
            }
            if mech is not None:
                row.update({
                    "quasi_static_tension_n": float(mech.quasi_static_n[0, k]),
                    "tension_n": float(mech.tension_n[0, k]),
                    "static_tension_n": float(mech.static_quasi_static_n[k]),
                    "static_frequency_hz": float(mech.static_frequency_hz[k]),
                })
                dyn = mech.dynamics
                if dyn is not None:
                    row.update({
                        "wave_speed_m_s": float(dyn.wave_speed_m_s[0, k]),
                        "downstream_wave_m_s": float(dyn.downstream_m_s[0, k]),
                        "upstream_wave_m_s": float(dyn.upstream_m_s[0, k]),
                        "v_over_c": float(dyn.v_over_c[0, k]),
                        "frequencies_hz": [float(f) for f in dyn.frequencies_hz[0, k]],
                    })
                    if dyn.sag_m is not None:
                        row["sag_m"] = float(dyn.sag_m[k])
                        row["static_sag_m"] = float(dyn.static_sag_m[k])
                        row["sag_ratio"] = float(dyn.sag_m[k]) / float(g.span_length_m[k])
                        row["parabolic_sag_m"] = float(dyn.parabolic_sag_m[k])
                        row["static_parabolic_sag_m"] = float(dyn.static_parabolic_sag_m[k])
            spans.append(row)
        loop_belt = next(x for x in drive.loops if x.id == lp.id).belt
        row = {"id": lp.id, "length_m": None if g is None else g.length_m,
               "path": "routed" if lp.chain is None else "drawn"}
        if mech is not None:
            row.update({
                "speed_m_s": float(mech.speed_m_s[0]) if moved else None,
                "tensioning": mech.tensioning,
                "belt": _belt_dict(loop_belt, mech),
                "install_tension_n": mech.install_tension_n,
                "min_install_tension_n": mech.min_install_tension_n,
            })
            if mech.tensioner_setting is not None:
                row["tensioner_setting"] = mech.tensioner_setting
                row["min_tensioner_setting"] = mech.min_tensioner_setting
            stock = _stock_dict(model, lp, loop_belt, mech)
            if stock:
                row["stock"] = stock
            if mech.dynamics is not None and moved and mech.source_speed_rad_s.size > 1:
                row["sweep"] = _sweep_dict(lp, mech)
        else:
            row["belt"] = _belt_dict(loop_belt, None)
        row["pulleys"] = pulleys
        row["spans"] = spans
        loops.append(row)
    shafts = []
    for s in drive.shafts:
        item: dict[str, Any] = {"pulleys": list(s)}
        if any(p in shaft_force for p in s):
            f = sum(np.asarray(shaft_force[p]) for p in s if p in shaft_force)
            item["hub_load_n"] = float(np.hypot(*f))
            item["hub_load_deg"] = _deg(f)
        speeds = [shaft_speed[p] for p in s if p in shaft_speed]
        if speeds:
            item["speed_rpm"] = speeds[0]
        shafts.append(item)
    out = {
        "schema": SCHEMA,
        "tool": {"name": "spanwise", "version": version},
        "drawing": {"path": d.path, "sha256": d.sha256, "units": model.units, "recovered": d.recovered,
                    "version": d.version},
        "options": {"service_factor": results.options.service_factor,
                    "grip_margin": results.options.grip_margin},
        "loops": loops,
        "shafts": shafts,
        "findings": [finding_dict(f) for f in findings],
        "caution": CAUTION,
    }
    return _clean(out)


def _belt_dict(b: Any, mech: Any) -> dict[str, Any]:
    out: dict[str, Any] = {"strands": b.strands}
    if b.section:
        out["section"] = b.section
    if mech is not None:
        out.update({
            "mass_per_length_kg_m": b.mass_per_length_kg_m,
            "friction": b.friction if b.friction is not None else float(min(mech.mu)),
            "effective_friction": float(max(mech.mu)),
            "groove_angle_deg": None if b.groove_angle_rad is None else math.degrees(b.groove_angle_rad),
            "axial_stiffness_n": b.axial_stiffness_n,
        })
    return out


def _sweep_dict(lp: Any, mech: Any) -> dict[str, Any]:
    """The speed sweep: source speeds, every span's frequencies and every excitation."""
    dyn = mech.dynamics
    n = len(lp.pulleys)
    rows = slice(1, None)
    return {
        "speed_rpm": (mech.source_speed_rad_s[rows] * 30.0 / math.pi).tolist(),
        "frequencies_hz": {f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % n]}": dyn.frequencies_hz[rows, k, :].tolist()
                           for k in range(n)},
        "excitations_hz": {name: x[rows].tolist() for name, x in dyn.excitations_hz.items()},
    }


def _stock_dict(model: Model, lp: Any, belt: Any, mech: Any) -> dict[str, Any]:
    if not mech.stock_nearest_m and belt.length_m is None:
        return {}
    out: dict[str, Any] = {"length_m": belt.length_m, "unstretched_path_m": mech.unstretched_length_m,
                           "nearest_m": list(mech.stock_nearest_m)}
    if mech.adjust is not None:
        pid, res = mech.adjust
        p = model.drive.pulleys[pid]
        dvec = np.asarray(p.adjust)
        c = np.asarray(p.center_m)
        out["adjust"] = {
            "pulley": pid,
            "position": _pt(model, c + res.offset_m * dvec),
            "travel_m": res.offset_m,
            "install_position": None if res.install_offset_m is None else _pt(model, c + res.install_offset_m * dvec),
            "install_travel_m": res.install_offset_m,
            "take_up_position": None if res.take_up_offset_m is None else _pt(model, c + res.take_up_offset_m * dvec),
            "take_up_travel_m": res.take_up_offset_m,
            "path_length_m": res.target_length_m,
        }
    return out


def failed_report(path: str, problems: list[str], *, version: str) -> dict[str, Any]:
    """The report of a drawing that could not be analysed (kept short)."""
    return {"schema": SCHEMA, "tool": {"name": "spanwise", "version": version},
            "drawing": {"path": path}, "loops": [], "shafts": [],
            "findings": [{"severity": "error", "code": "fatal", "message": p, "at": None, "refs": []}
                         for p in problems]}


def dumps(report: dict[str, Any]) -> str:
    """Serialise with full precision; refuses NaN and infinity."""
    return json.dumps(report, indent=2, allow_nan=False, ensure_ascii=False) + "\n"
