"""The console summary: findings first, then a table per loop with units in the heads.

A writer of :class:`layout.pipeline.Report`, like the JSON, DXF and HTML writers: it
reads the report's JSON dict, so the console shows exactly the numbers the JSON holds.
"""

from __future__ import annotations

import textwrap
from typing import Any

__all__ = ["summary_text", "SIGNS"]

#: How to read the signs and columns of the tables.
SIGNS = ("signs: rpm + counter-clockwise in the drawing; torque + where the pulley drives the belt, "
         "- where it takes power out; P is the quasi-static tension (T less its centrifugal part m v^2), "
         "T the belt's tension, both per strand; pluck is the span's frequency at rest, the field check "
         "of the install tension; 'set' is the install tension analysed, 'min' the lowest within the "
         "grip margin")
CAUTION = ("caution: estimates only; check them against the belt maker's data, guard nip points, lock out "
           "before tensioning, follow local codes and licensed practice.")


def _n(v: Any, fmt: str) -> str:
    return "" if v is None else format(v, fmt)


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def _head(rep: dict[str, Any]) -> list[str]:
    d = rep["drawing"]
    spec = rep.get("spec") or {}
    used = f"spec {spec['path']}" if spec.get("path") else "no spec file found"
    pulleys = {p["id"] for lp in rep["loops"] for p in lp["pulleys"]}
    return [f"{d['path']}: {_plural(len(rep['loops']), 'loop')}, {_plural(len(pulleys), 'pulley')}, "
            f"units {d['units']}, {used}"]


def _findings(rep: dict[str, Any]) -> list[str]:
    fs = rep["findings"]
    counts = {s: sum(1 for f in fs if f["severity"] == s) for s in ("error", "warning", "note")}
    lines = [f"findings: {_plural(counts['error'], 'error')}, {_plural(counts['warning'], 'warning')}, "
             f"{_plural(counts['note'], 'note')}"]
    for f in fs:
        where = "" if f.get("at") is None else f" at ({f['at'][0]:.6g}, {f['at'][1]:.6g})"
        lines.append(f"  {f['severity']:<7} {f['code']}{where}: {f['message']}")
    return lines


def _loop_head(lp: dict[str, Any]) -> str:
    length = "n/a" if lp.get("length_m") is None else f"{lp['length_m'] * 1e3:.1f} mm"
    head = f"loop {lp['id']}: {lp['path']}, pitch length {length}"
    if lp.get("speed_m_s") is not None:
        head += f", belt speed {lp['speed_m_s']:.2f} m/s"
    if lp.get("tensioning"):
        head += f", {lp['tensioning']}"
    if lp.get("install_tension_n") is not None and lp.get("min_install_tension_n") is not None:
        head += (f", install tension set {lp['install_tension_n']:.0f} N per strand "
                 f"(min {lp['min_install_tension_n']:.0f} N)")
    return head


def _pulley_rows(lp: dict[str, Any]) -> list[str]:
    rows = [f"    {'pulley':<10} {'role':<9} {'side':<7} {'dia mm':>8} {'wrap deg':>9} {'speed rpm':>10} "
            f"{'torque N*m':>11} {'grip':>9} {'hub N':>8} {'max hub N':>10}"]
    for p in lp["pulleys"]:
        grip = _n(p.get("grip_utilisation"), ".2f") or (p.get("grip") if p.get("grip") in ("slip", "slack") else "")
        rows.append(f"    {p['id']:<10} {p['role']:<9} {p['side']:<7} {p['pitch_diameter_m'] * 1e3:>8.1f} "
                    f"{_n(p.get('wrap_deg'), '.2f'):>9} {_n(p.get('speed_rpm'), '.1f'):>10} "
                    f"{_n(p.get('torque_nm'), '.2f'):>11} {grip:>9} {_n(p.get('hub_load_n'), '.0f'):>8} "
                    f"{_n(p.get('max_hub_load_n'), '.0f'):>10}")
    return rows


def _span_rows(lp: dict[str, Any]) -> list[str]:
    rows = [f"    {'span':<16} {'length mm':>10} {'P N':>9} {'T N':>9} {'f1 Hz':>8} {'pluck Hz':>9} "
            f"{'waves down/up m/s':>18}"]
    for s in lp["spans"]:
        f1 = (s.get("frequencies_hz") or [None])[0]
        waves = ""
        if s.get("downstream_wave_m_s") is not None:
            waves = f"{s['downstream_wave_m_s']:.1f} / {_n(s.get('upstream_wave_m_s'), '.1f')}"
        rows.append(f"    {s['id']:<16} {_n(s.get('length_m') and s['length_m'] * 1e3, '.1f'):>10} "
                    f"{_n(s.get('quasi_static_tension_n'), '.1f'):>9} {_n(s.get('tension_n'), '.1f'):>9} "
                    f"{_n(f1, '.1f'):>8} {_n(s.get('static_frequency_hz'), '.1f'):>9} {waves:>18}")
    return rows


def summary_text(report: Any) -> str:
    """The console summary of a :class:`layout.pipeline.Report`: what was read, the
    findings, then per loop its pulleys and spans, the signs explained, the caution."""
    rep = report.to_dict()
    lines = _head(rep) + _findings(rep)
    for lp in rep["loops"]:
        lines.append(_loop_head(lp))
        lines += _pulley_rows(lp)
        if any(s.get("quasi_static_tension_n") is not None for s in lp["spans"]):
            lines += _span_rows(lp)
    lines += _shaft_rows(rep)
    lines += textwrap.wrap(SIGNS, 100) + textwrap.wrap(CAUTION, 100)
    return "\n".join(lines) + "\n"


def _shaft_rows(rep: dict[str, Any]) -> list[str]:
    rows = []
    for s in rep.get("shafts", []):
        if s.get("hub_load_n") is None:
            continue
        rows.append(f"shaft {' + '.join(s['pulleys'])}: {_n(s.get('speed_rpm'), '.1f')} rpm, resultant hub "
                    f"load {s['hub_load_n']:.0f} N")
    return rows
