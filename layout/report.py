"""The JSON report (``schema: "spanwise-report/1"``) and the console summary.

The report is built as a dict of plain values first, then serialised: full float
precision, no NaN or infinity (``None`` where a value does not exist).
"""

from __future__ import annotations

import json
import math
from enum import Enum
from typing import Any

import numpy as np

from physics.analysis import GripState, LoopMechanics, Results, ShaftLoad
from physics.catalogue import find_section
from physics.findings import Finding
from physics.geometry import LoopGeometry
from physics.model import Role

from .route import LoopRecord, Model

__all__ = ["SCHEMA", "CAUTION", "report_dict", "dumps", "finding_dict", "failed_report"]

SCHEMA = "spanwise-report/1"

#: Carried by every report: the numbers are estimates and belt drives hurt people.
CAUTION = ("Estimates from the drawing as drawn and from catalogue values (some recalled, not read "
           "from a standard): check them against the belt maker's data. Guard every nip point, lock "
           "out the drive before tensioning or inspecting it, and follow local codes and licensed "
           "engineering practice.")


def _clean(v: Any) -> Any:
    """Plain JSON values: floats finite or None, tuples as lists, numpy as Python, enums as their values."""
    if isinstance(v, Enum):
        return _clean(v.value)
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
    """One finding as plain values (its data as given: physics findings arrive worded, with
    their display keys, from :func:`layout.wording.word`)."""
    out: dict[str, Any] = {"severity": f.severity.value, "code": f.code, "message": f.message,
                           "at": None if f.at is None else [float(f.at[0]), float(f.at[1])],
                           "refs": list(f.refs)}
    if f.data:
        out["data"] = f.data
    return out


def _pt(model: Model, p_m: Any) -> list[float]:
    x, y = model.to_drawing(p_m)
    return [x, y]


def _deg(v: Any) -> float:
    return math.degrees(math.atan2(float(v[1]), float(v[0])))


def _rpm(w: float) -> float:
    return float(w) * 30.0 / math.pi


def _moved(results: Results, loop_id: str) -> bool:
    """Whether a speed reaches the loop (its speeds, torques and grip are reported)."""
    kin = results.kinematics
    return kin is not None and kin.source is not None and loop_id in kin.loops


def _pulley_row(model: Model, lp: LoopRecord, i: int, g: LoopGeometry | None, mech: LoopMechanics | None,
                moved: bool) -> dict[str, Any]:
    """One pulley of a loop: as drawn, and what the analysis gives at the operating speed."""
    pid = lp.pulleys[i]
    p = model.drive.pulleys[pid]
    row: dict[str, Any] = {
        "id": pid, "center": list(model.circle_center(lp.circles[i])),
        "pitch_diameter_m": 2.0 * p.radius_m,
        "role": mech.roles[i] if mech is not None and mech.roles else p.role.value,
        "side": lp.sides[i].value,
        "wrap_deg": None if g is None else math.degrees(float(g.wrap_rad[i])),
        "load_law": None if p.law is None or p.role is Role.DRIVER else p.law.value,
    }
    if mech is None:
        return row
    grip = mech.grip(0, i) if moved else GripState.NO_TORQUE
    hub = mech.hub_n[0, i]
    row.update({
        "speed_rpm": _rpm(mech.omega_rad_s[0, i]) if moved else None,
        "torque_nm": float(mech.torque_nm[0, i]) if moved else None,
        "power_w": float(mech.power_w[0, i]) if moved else None,
        "grip": grip.label,
        "grip_utilisation": float(mech.utilisation[0, i]) if grip.has_utilisation else None,
        "hub_load_n": float(np.hypot(*hub)), "hub_load_deg": _deg(hub),
        "max_hub_load_n": float(mech.max_hub_n[i]),
        "static_hub_load_n": float(np.hypot(*mech.static_hub_n[i])),
        "static_hub_load_deg": _deg(mech.static_hub_n[i]),
        "friction": float(mech.mu[i]),
    })
    if moved and mech.omega_rad_s.shape[0] > 1:
        w = mech.omega_rad_s[1:, i]
        row["speed_range_rpm"] = [_rpm(w.min()), _rpm(w.max())]
    return row


def _span_row(model: Model, lp: LoopRecord, k: int, g: LoopGeometry | None, mech: LoopMechanics | None
              ) -> dict[str, Any]:
    """One free span: its drawn ends, tensions, waves, frequencies and sag."""
    n = len(lp.pulleys)
    a, b = lp.pulleys[k], lp.pulleys[(k + 1) % n]
    row: dict[str, Any] = {
        "id": f"{a}-{b}", "from": a, "to": b,
        "start": None if g is None else _pt(model, g.span_start_m[k]),
        "end": None if g is None else _pt(model, g.span_end_m[k]),
        "length_m": None if g is None else float(g.span_length_m[k]),
        "crossed": bool(lp.crossed[k]),
    }
    if mech is None:
        return row
    row.update({
        "quasi_static_tension_n": float(mech.quasi_static_n[0, k]),
        "tension_n": float(mech.tension_n[0, k]),
        "static_tension_n": float(mech.static_quasi_static_n[k]),
        "static_frequency_hz": float(mech.static_frequency_hz[k]),
    })
    dyn = mech.dynamics
    if dyn is None:
        return row
    row.update({
        "wave_speed_m_s": float(dyn.wave_speed_m_s[0, k]),
        "downstream_wave_m_s": float(dyn.downstream_m_s[0, k]),
        "upstream_wave_m_s": float(dyn.upstream_m_s[0, k]),
        "v_over_c": float(dyn.v_over_c[0, k]),
        "frequencies_hz": [float(f) for f in dyn.frequencies_hz[0, k]],
    })
    if dyn.sag_m is not None:
        row.update({
            "sag_m": float(dyn.sag_m[k]), "static_sag_m": float(dyn.static_sag_m[k]),
            "sag_ratio": float(dyn.sag_ratio[k]), "static_sag_ratio": float(dyn.static_sag_ratio[k]),
            "parabolic_sag_m": float(dyn.parabolic_sag_m[k]),
            "static_parabolic_sag_m": float(dyn.static_parabolic_sag_m[k]),
        })
    return row


def _loop_row(model: Model, results: Results, lp: LoopRecord) -> dict[str, Any]:
    """One loop: its length, tensioning, belt, settings, stock, sweep, pulleys and spans."""
    lr = results.loops.get(lp.id)
    g = lr.geometry if lr else None
    mech = lr.mechanics if lr else None
    moved = mech is not None and _moved(results, lp.id)
    belt = next(x for x in model.drive.loops if x.id == lp.id).belt
    row: dict[str, Any] = {"id": lp.id, "length_m": None if g is None else g.length_m,
                           "path": "routed" if lp.chain is None else "drawn"}
    if mech is None:
        row["belt"] = _belt_dict(belt, None)
    else:
        row.update({
            "speed_m_s": float(mech.speed_m_s[0]) if moved else None,
            "tensioning": mech.tensioning.value,
            "belt": _belt_dict(belt, mech),
            "install_tension_n": mech.install_tension_n,
            "min_install_tension_n": mech.min_install_tension_n,
        })
        if mech.peak_tension_n is not None:
            row["peak_tension"] = _peak_dict(belt, mech)
        if mech.tensioner_setting is not None:
            row["tensioner_setting"] = mech.tensioner_setting
            row["min_tensioner_setting"] = mech.min_tensioner_setting
        stock = _stock_dict(model, lp, belt, mech)
        if stock:
            row["stock"] = stock
        if mech.dynamics is not None and moved and mech.source_speed_rad_s.size > 1:
            row["sweep"] = _sweep_dict(lp, mech)
    row["pulleys"] = [_pulley_row(model, lp, i, g, mech, moved) for i in range(len(lp.pulleys))]
    row["spans"] = [_span_row(model, lp, k, g, mech) for k in range(len(lp.pulleys))]
    return row


def _peak_dict(belt: Any, mech: LoopMechanics) -> dict[str, Any]:
    """The belt's peak tension over the range, where, and what it is made of and from."""
    sec = find_section(belt.section) if belt.section else None
    bending = sec is not None and sec.bending_kb_nm is not None
    return {"tension_n": mech.peak_tension_n, "pulley": mech.peak_tension_pulley,
            "parts": "tight side, centrifugal and bending" if bending else "tight side and centrifugal",
            "source": sec.tension_source if bending else "no bending data for this belt"}


def _shaft_row(shaft: ShaftLoad) -> dict[str, Any]:
    """One shaft of two or more pulleys: its speed and the resultant of its hub loads."""
    item: dict[str, Any] = {"pulleys": list(shaft.pulleys)}
    if shaft.hub_n is not None and shaft.static_hub_n is not None:
        item.update({
            "hub_load_n": float(np.hypot(*shaft.hub_n[0])), "hub_load_deg": _deg(shaft.hub_n[0]),
            "max_hub_load_n": shaft.max_hub_n,
            "static_hub_load_n": float(np.hypot(*shaft.static_hub_n)),
            "static_hub_load_deg": _deg(shaft.static_hub_n),
        })
    if shaft.speed_rad_s is not None:
        item["speed_rpm"] = _rpm(shaft.speed_rad_s)
    return item


def report_dict(model: Model, results: Results, findings: list[Finding], *, version: str) -> dict[str, Any]:
    """The report of one drawing as plain values (``schema: "spanwise-report/1"``).

    Parameters
    ----------
    model
        The drawing read as a drive.
    results
        Its physics results: every number here is read from them, none computed.
    findings
        Every finding, located and worded.
    version
        The tool's version.

    Returns
    -------
    dict
        JSON-ready values: finite floats or ``None``, lists, strings.
    """
    d = model.drawing
    out = {
        "schema": SCHEMA,
        "tool": {"name": "spanwise", "version": version},
        "drawing": {"path": d.path, "sha256": d.sha256, "units": model.units, "recovered": d.recovered,
                    "version": d.version},
        "options": {"service_factor": results.options.service_factor,
                    "grip_margin": results.options.grip_margin},
        "loops": [_loop_row(model, results, lp) for lp in model.loops],
        "shafts": [_shaft_row(s) for s in results.shafts],
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
