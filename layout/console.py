"""The console summary: findings first, then a table per loop with units in the heads.

A writer of :class:`layout.pipeline.Report`, like the JSON, DXF and HTML writers.
"""

from __future__ import annotations

import math

import numpy as np

from physics.analysis import Results
from physics.findings import Finding, Severity

from .route import Model

__all__ = ["summary_text"]


def _num(v: float, fmt: str = ".1f") -> str:
    return format(float(v), fmt) if np.isfinite(v) else ""


def summary_text(model: Model, results: Results, findings: list[Finding]) -> str:
    """A short plain-text summary for the console: a table per loop, then the findings."""
    lines = []
    d = model.drawing
    lines.append(f"{d.path}: {len(model.loops)} loop(s), {len(model.drive.pulleys)} pulley(s), "
                 f"units {model.units}")
    moving = results.kinematics is not None and results.kinematics.source is not None
    for lp in model.loops:
        lr = results.loops[lp.id]
        g, mech = lr.geometry, lr.mechanics
        length = "n/a" if g is None else f"{g.length_m * 1e3:.1f} mm"
        head = f"  loop {lp.id}: pitch length {length}, {'routed from the spec' if lp.chain is None else 'drawn'}"
        if mech is not None:
            if moving:
                head += f", belt speed {mech.speed_m_s[0]:.2f} m/s"
            head += f", {mech.tensioning}"
            if mech.install_tension_n is not None and mech.min_install_tension_n is not None:
                head += f", set {mech.install_tension_n:.0f} N/strand (min {mech.min_install_tension_n:.0f} N)"
        lines.append(head)
        if g is None:
            continue
        lines.append(f"    {'pulley':<10} {'side':<7} {'dia mm':>8} {'wrap deg':>9} {'rpm':>9} "
                     f"{'torque Nm':>10} {'grip':>6} {'hub N':>8}")
        for i, pid in enumerate(lp.pulleys):
            p = model.drive.pulleys[pid]
            rpm = tq = grip = hub = ""
            if mech is not None and np.isfinite(mech.hub_n[0, i]).all():
                hub = f"{float(np.hypot(*mech.hub_n[0, i])):.0f}"
                if moving:
                    rpm = f"{mech.omega_rad_s[0, i] * 30 / math.pi:.1f}"
                    tq = f"{mech.torque_nm[0, i]:.2f}"
                    u = mech.utilisation[0, i]
                    grip = "-" if not np.isfinite(u) else f"{u:.2f}"
            lines.append(f"    {pid:<10} {lp.sides[i].value:<7} {2e3 * p.radius_m:>8.1f} "
                         f"{math.degrees(float(g.wrap_rad[i])):>9.2f} {rpm:>9} {tq:>10} {grip:>6} {hub:>8}")
        if mech is not None:
            lines.append(f"    {'span':<16} {'length mm':>10} {'P N':>9} {'T N':>9} {'pluck Hz':>9}")
            n = len(lp.pulleys)
            for k in range(n):
                sid = f"{lp.pulleys[k]}-{lp.pulleys[(k + 1) % n]}"
                lines.append(f"    {sid:<16} {g.span_length_m[k] * 1e3:>10.1f} {_num(mech.quasi_static_n[0, k]):>9} "
                             f"{_num(mech.tension_n[0, k]):>9} {_num(mech.static_frequency_hz[k]):>9}")
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
