"""Physics findings worded for people, in the trade's display units.

``physics`` raises its findings with their numbers in SI in ``data`` (source speeds in
rad/s as ``speed_rad_s``, lengths in m, powers in W) and a plain SI message, so it stays
usable on its own. :func:`word` is the one place those findings meet rpm, mm and kW: it
rewrites the message from the finding's refs and data, and adds the report's display keys
to ``data`` beside the SI ones (every ``*_rad_s`` also as ``*_rpm``, every ``*_rad`` also
as ``*_deg``), so a resonance's data holds ``speed_rpm``, ``speed_range_rpm``, ``mode``,
``kind``, ``excitation`` and ``frequency_hz`` as the JSON contract asks.

A code without a wording here, or a finding without the numbers its wording needs (the
error form of ``tensioner-lever``), keeps its physics message: that message has no
display unit in it.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any, Callable

from physics.findings import Finding

__all__ = ["word", "display_data", "rpm", "WORDED_CODES"]

RPM_PER_RAD_S = 30.0 / math.pi


def rpm(speed_rad_s: float) -> float:
    """An angular speed in rev/min.

    >>> round(rpm(math.pi), 9)
    30.0
    """
    return speed_rad_s * RPM_PER_RAD_S


def _speed(w: float) -> str:
    return f"{rpm(w):.1f} rpm"


def _mm(length_m: float, digits: int = 1) -> str:
    return f"{length_m * 1e3:.{digits}f} mm"


def _kw(power_w: float) -> str:
    return f"{power_w / 1e3:.3g} kW"


def _convert(v: Any, factor: float) -> Any:
    if isinstance(v, (list, tuple)):
        return [_convert(x, factor) for x in v]
    return None if v is None else float(v) * factor


#: SI key suffix -> display suffix and factor.
_DISPLAY = (("_rad_s", "_rpm", RPM_PER_RAD_S), ("_rad", "_deg", 180.0 / math.pi))


def display_data(data: dict[str, Any]) -> dict[str, Any]:
    """``data`` with the display keys added beside the SI ones.

    >>> display_data({"speed_rad_s": math.pi, "speed_range_rad_s": [0.0, math.pi], "mode": 1})
    {'speed_rad_s': 3.141592653589793, 'speed_range_rad_s': [0.0, 3.141592653589793], 'mode': 1, \
'speed_rpm': 30.0, 'speed_range_rpm': [0.0, 30.0]}
    """
    out = dict(data)
    for key, value in data.items():
        for si, shown, factor in _DISPLAY:
            if key.endswith(si):
                out.setdefault(key[: -len(si)] + shown, _convert(value, factor))
                break
    return out


# --------------------------------------------------------------------------- one wording per code
# Each takes (loop id, other id or "", data) and returns the message.

def _slip(lp: str, pid: str, d: dict[str, Any]) -> str:
    what = ("its slack side goes slack" if d["grip"] == "slack" or d.get("grip_utilisation") is None
            else f"grip utilisation {d['grip_utilisation']:.2f} > 1")
    return f"loop {lp}: pulley {pid} slips: {what} at {_speed(d['speed_rad_s'])} of the source{_laws(d)}"


def _laws(d: dict[str, Any]) -> str:
    """Which law each load follows, for a grip message: " (loads: FAN quadratic)"."""
    laws = d.get("load_laws") or {}
    return f" (loads: {', '.join(f'{p} {law}' for p, law in laws.items())})" if laws else ""


def _grip_low(lp: str, pid: str, d: dict[str, Any]) -> str:
    return (f"loop {lp}: pulley {pid} uses {d['grip_utilisation']:.2f} of its grip at {_speed(d['speed_rad_s'])} "
            f"of the source (margin {d['grip_margin']:g}){_laws(d)}")


def _standstill_load(pulleys: str, _: str, d: dict[str, Any]) -> str:
    return (f"the speed range reaches standstill, where {', '.join(d['pulleys'])} held at constant power would "
            f"need an unbounded torque; below {_speed(d['floor_rad_s'])} ({d['fraction']:.0%} of the nominal "
            f"speed) their torque is taken at that speed: give the load law (constant-torque, quadratic) or a "
            f"range from the lowest speed the drive runs at")


def _speed_outside_range(pid: str, _: str, d: dict[str, Any]) -> str:
    lo, hi = d["range_rad_s"]
    return (f"pulley {pid}: its nominal speed {_speed(d['speed_rad_s'])} lies outside its own speed range "
            f"{rpm(lo):.1f} to {_speed(hi)}")


def _belt_speed(lp: str, _: str, d: dict[str, Any]) -> str:
    return (f"loop {lp}: belt speed {d['speed_m_s']:.1f} m/s at {_speed(d['speed_rad_s'])} of the source, above "
            f"the {d['max_speed_m_s']:g} m/s usual for {d.get('section') or 'this belt'}")


def _slack_span(lp: str, sid: str, d: dict[str, Any]) -> str:
    return (f"loop {lp}: span {sid} goes slack (quasi-static tension {d['quasi_static_tension_n']:.1f} N) "
            f"at {_speed(d['speed_rad_s'])} of the source")


def _near_critical(lp: str, sid: str, d: dict[str, Any]) -> str:
    # the fraction is the physics' own, from the loop's tensioning model: 1 - (v/c)^2 under
    # fixed centres, sqrt(1 - (v/c)^2) under constant tension or a tensioner
    return (f"loop {lp}: span {sid} runs at {d['v_over_c']:.2f} of its wave speed at {_speed(d['speed_rad_s'])} "
            f"of the source (above {d['near_critical']:g}); its frequencies have fallen to "
            f"{d['frequency_fraction']:.0%} of their value at rest ({d['tensioning']} tensioning)")


def _resonance(lp: str, sid: str, d: dict[str, Any]) -> str:
    lo, hi = d["speed_range_rad_s"]
    where = f"at {_speed(hi)}" if f"{rpm(lo):.1f}" == f"{rpm(hi):.1f}" else f"from {rpm(lo):.1f} to {_speed(hi)}"
    head = f"loop {lp}: span {sid} mode {d['mode']} meets {d['excitation']} ({d['kind']}) {where} of the source, "
    if d["crosses"]:
        return head + f"crossing at {_speed(d['speed_rad_s'])} ({d['frequency_hz']:.2f} Hz)"
    span = f"{d['frequency_hz']:.2f} Hz" if d["kind"] == "direct" else f"2 x {d['frequency_hz']:.2f} Hz"
    return head + (f"closest at {_speed(d['speed_rad_s'])}, {d['gap']:.1%} apart (span {span}, excitation "
                   f"{d['excitation_hz']:.2f} Hz); they do not cross in the speed range")


def _sag(lp: str, sid: str, d: dict[str, Any]) -> str:
    return (f"loop {lp}: span {sid} sags {_mm(d['sag_m'])} {d['state']}, {d['sag_ratio']:.1%} of its length "
            f"(limit {d['sag_limit']:.1%})")


def _tensioner_lever(lp: str, pid: str, d: dict[str, Any]) -> str:
    return (f"loop {lp}: tensioner {pid}'s arm acts through a lever of {_mm(d['lever_m'], 2)}, under a tenth "
            f"of the idler's radius ({_mm(d['radius_m'])}); its force on the belt is ill-defined")


def _friction_derived(lp: str, pid: str, d: dict[str, Any]) -> str:
    half = math.degrees(d["groove_angle_rad"]) / 2
    return (f"loop {lp}, pulley {pid}: groove friction {d['effective_friction']:.3f} derived as "
            f"{d['friction']:g} / sin({half:.1f} deg), above the usual design value; give effective_friction "
            f"to set it")


def _length_unreachable(lp: str, pid: str, d: dict[str, Any]) -> str:
    return (f"loop {lp}: no position of {pid} along its slide gives the {_mm(d['belt_length_m'])} belt a path "
            f"of {_mm(d['path_length_m'])}")


def _power_mismatch(lp: str, pid: str, d: dict[str, Any]) -> str:
    if "rating_w" in d:
        return (f"loop {lp}: driver {pid} must deliver {_kw(d['loads_w'])}, above its rating of "
                f"{_kw(d['rating_w'])}")
    return f"loop {lp}: driver {pid} is given {_kw(d['given_w'])} but its loads take {_kw(d['loads_w'])}"


_Wording = Callable[[str, str, dict[str, Any]], str]

#: code -> (the data keys its wording needs, the wording).
_WORDINGS: dict[str, tuple[tuple[str, ...], _Wording]] = {
    "slip": (("speed_rad_s", "grip"), _slip),
    "grip-low": (("speed_rad_s", "grip_utilisation", "grip_margin"), _grip_low),
    "belt-speed": (("speed_rad_s", "speed_m_s", "max_speed_m_s"), _belt_speed),
    "slack-span": (("speed_rad_s", "quasi_static_tension_n"), _slack_span),
    "near-critical": (("speed_rad_s", "v_over_c", "near_critical", "frequency_fraction", "tensioning"),
                      _near_critical),
    "resonance": (("speed_rad_s", "speed_range_rad_s", "mode", "kind", "excitation", "frequency_hz", "crosses",
                   "gap", "excitation_hz"), _resonance),
    "sag": (("sag_m", "sag_ratio", "state", "sag_limit"), _sag),
    "tensioner-lever": (("lever_m", "radius_m"), _tensioner_lever),
    "friction-derived": (("effective_friction", "friction", "groove_angle_rad"), _friction_derived),
    "length-unreachable": (("belt_length_m", "path_length_m"), _length_unreachable),
    "power-mismatch": (("loads_w",), _power_mismatch),
    "standstill-load": (("floor_rad_s", "fraction", "pulleys"), _standstill_load),
    "speed-outside-range": (("speed_rad_s", "range_rad_s"), _speed_outside_range),
}

#: The codes whose physics message carries SI numbers and is reworded here.
WORDED_CODES = frozenset(_WORDINGS)


def word(f: Finding) -> Finding:
    """``f`` worded for people: its message in rpm, mm and kW, its data with display keys.

    Parameters
    ----------
    f
        A finding as :func:`physics.analysis.analyse` raises it: refs ``(loop, pulley or
        span)``, numbers in SI in ``data``.

    Returns
    -------
    Finding
        The same finding (code, severity, refs, place) with the worded message and its
        data holding both the SI keys and the display keys (``speed_rpm``, ...).

    Examples
    --------
    >>> from physics.findings import Severity
    >>> f = Finding(Severity.ERROR, "slack-span", "loop L: span A-B goes slack ... at 157.1 rad/s",
    ...             refs=("L", "A-B"), data={"speed_rad_s": 50 * math.pi, "quasi_static_tension_n": -3.0})
    >>> w = word(f)
    >>> w.message
    'loop L: span A-B goes slack (quasi-static tension -3.0 N) at 1500.0 rpm of the source'
    >>> round(w.data["speed_rpm"], 9), w.data["quasi_static_tension_n"]
    (1500.0, -3.0)
    """
    data = display_data(f.data)
    entry = _WORDINGS.get(f.code)
    if entry is None or not f.refs or any(k not in f.data for k in entry[0]):
        return replace(f, data=data)
    loop_id, other = f.refs[0], (f.refs[1] if len(f.refs) > 1 else "")
    return replace(f, message=entry[1](loop_id, other, f.data), data=data)
