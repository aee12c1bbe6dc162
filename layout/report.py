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

__all__ = ["SCHEMA", "CAUTION", "report_dict", "dumps", "summary_text", "finding_dict"]

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


def report_dict(model: Model, results: Results, findings: list[Finding], *, version: str) -> dict[str, Any]:
    """The report of one drawing as plain values."""
    d = model.drawing
    drive = model.drive
    loops = []
    for lp in model.loops:
        lr = results.loops.get(lp.id)
        g = lr.geometry if lr else None
        loop = drive_loop = next(x for x in drive.loops if x.id == lp.id)
        n = len(lp.pulleys)
        pulleys = []
        for i, pid in enumerate(lp.pulleys):
            p = drive.pulleys[pid]
            pulleys.append({
                "id": pid, "center": list(model.circle_center(lp.circles[i])),
                "pitch_diameter_m": 2.0 * p.radius_m, "role": p.role.value, "side": lp.sides[i].value,
                "wrap_deg": None if g is None else math.degrees(float(g.wrap_rad[i])),
            })
        spans = []
        for k in range(n):
            a, b = lp.pulleys[k], lp.pulleys[(k + 1) % n]
            spans.append({
                "id": f"{a}-{b}", "from": a, "to": b,
                "start": None if g is None else _pt(model, g.span_start_m[k]),
                "end": None if g is None else _pt(model, g.span_end_m[k]),
                "length_m": None if g is None else float(g.span_length_m[k]),
                "crossed": bool(lp.crossed[k]),
            })
        loops.append({
            "id": lp.id, "length_m": None if g is None else g.length_m,
            "path": "routed" if lp.chain is None else "drawn",
            "belt": _belt_dict(drive_loop.belt),
            "pulleys": pulleys, "spans": spans,
        })
        _ = loop
    shafts = [{"pulleys": list(s)} for s in drive.shafts]
    out = {
        "schema": SCHEMA,
        "tool": {"name": "spanwise", "version": version},
        "drawing": {"path": d.path, "sha256": d.sha256, "units": model.units, "recovered": d.recovered,
                    "version": d.version},
        "loops": loops,
        "shafts": shafts,
        "findings": [finding_dict(f) for f in findings],
        "caution": CAUTION,
    }
    return _clean(out)


def _belt_dict(b: Any) -> dict[str, Any]:
    out: dict[str, Any] = {"strands": b.strands}
    if b.section:
        out["section"] = b.section
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


def summary_text(model: Model, results: Results, findings: list[Finding]) -> str:
    """A short plain-text summary for the console."""
    lines = []
    d = model.drawing
    lines.append(f"{d.path}: {len(model.loops)} loop(s), {len(model.drive.pulleys)} pulley(s), "
                 f"units {model.units}")
    for lp in model.loops:
        g = results.loops[lp.id].geometry
        length = "n/a" if g is None else f"{g.length_m * 1e3:.1f} mm"
        lines.append(f"  loop {lp.id}: pitch length {length}, "
                     f"{'routed from the spec' if lp.chain is None else 'drawn'}")
        if g is None:
            continue
        lines.append(f"    {'pulley':<10} {'side':<7} {'pitch dia mm':>12} {'wrap deg':>9}")
        for i, pid in enumerate(lp.pulleys):
            p = model.drive.pulleys[pid]
            lines.append(f"    {pid:<10} {lp.sides[i].value:<7} {2e3 * p.radius_m:>12.2f} "
                         f"{math.degrees(float(g.wrap_rad[i])):>9.2f}")
    counts = {s: sum(1 for f in findings if f.severity is s) for s in Severity}
    lines.append(f"  findings: {counts[Severity.ERROR]} error(s), {counts[Severity.WARNING]} warning(s), "
                 f"{counts[Severity.NOTE]} note(s)")
    order = {Severity.ERROR: 0, Severity.WARNING: 1, Severity.NOTE: 2}
    for f in sorted(findings, key=lambda f: order[f.severity]):
        where = "" if f.at is None else f" at ({f.at[0]:.6g}, {f.at[1]:.6g})"
        lines.append(f"  {f.severity.value:<7} {f.code}{where}: {f.message}")
    lines.append("  caution: estimates only; check against the belt maker's data, guard nip points, "
                 "lock out before tensioning.")
    return "\n".join(lines) + "\n"
