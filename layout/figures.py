"""Figures of the results, ready for the HTML report: computing stays in ``physics``,
this module only draws. matplotlib is imported lazily (about 0.4 s) and only here.

* :func:`campbell_figure`: span frequencies against the source speed, with every
  excitation line and the resonance bands shaded, one figure per loop;
* :func:`tension_figure`: quasi-static tension of every span over the speed range.
"""

from __future__ import annotations

import io
import math
from typing import Any

import numpy as np

from physics.analysis import Results

__all__ = ["campbell_figure", "tension_figure", "to_svg"]


def _plt() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def campbell_figure(results: Results, loop_id: str, *, modes: int | None = None) -> Any:
    """Span frequencies (solid) and excitations (dashed) against the source speed (rpm).

    Returns a matplotlib Figure, or ``None`` when the loop has no speed sweep.
    """
    lr = results.loops[loop_id]
    mech = lr.mechanics
    if mech is None or mech.dynamics is None or mech.source_speed_rad_s.size < 2:
        return None
    plt = _plt()
    dyn = mech.dynamics
    rpm = mech.source_speed_rad_s[1:] * 30.0 / math.pi
    loop = lr.loop
    n = len(loop.pulleys)
    nm = dyn.frequencies_hz.shape[2] if modes is None else min(modes, dyn.frequencies_hz.shape[2])
    fig, ax = plt.subplots(figsize=(7.5, 4.8), dpi=100)
    for k in range(n):
        sid = f"{loop.pulleys[k]}-{loop.pulleys[(k + 1) % n]}"
        for j in range(nm):
            ax.plot(rpm, dyn.frequencies_hz[1:, k, j], color=f"C{k % 10}", lw=1.4,
                    label=sid if j == 0 else None, gid=f"span {sid} mode {j + 1}")
    for name, x in dyn.excitations_hz.items():
        ax.plot(rpm, x[1:], color="0.35", ls="--", lw=0.9, gid=f"excitation {name}")
        ax.annotate(name, (rpm[-1], x[-1]), fontsize=7, color="0.35", ha="right", va="bottom")
    for band in dyn.bands:
        ax.axvspan(band.speed_lo * 30 / math.pi, band.speed_hi * 30 / math.pi, color="C3", alpha=0.12,
                   gid=f"band {band.span} {band.mode} {band.kind} {band.excitation}")
    ax.set_xlabel("source speed (rpm)")
    ax.set_ylabel("frequency (Hz)")
    ax.set_title(f"loop {loop_id}: span frequencies and excitations")
    top = np.nanmax(dyn.frequencies_hz[1:, :, :nm]) if np.isfinite(dyn.frequencies_hz[1:, :, :nm]).any() else 1.0
    ax.set_ylim(0, 1.15 * top)
    ax.set_xlim(rpm[0], rpm[-1])
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="upper left")
    fig.tight_layout()
    return fig


def tension_figure(results: Results, loop_id: str) -> Any:
    """Quasi-static tension of every span against the source speed; ``None`` without a sweep."""
    lr = results.loops[loop_id]
    mech = lr.mechanics
    if mech is None or mech.source_speed_rad_s.size < 2 or not np.isfinite(mech.quasi_static_n).any():
        return None
    plt = _plt()
    rpm = mech.source_speed_rad_s[1:] * 30.0 / math.pi
    loop = lr.loop
    n = len(loop.pulleys)
    fig, ax = plt.subplots(figsize=(7.5, 4.0), dpi=100)
    for k in range(n):
        sid = f"{loop.pulleys[k]}-{loop.pulleys[(k + 1) % n]}"
        ax.plot(rpm, mech.quasi_static_n[1:, k], color=f"C{k % 10}", label=sid, gid=f"span {sid}")
    ax.axhline(0.0, color="C3", lw=0.8)
    ax.set_xlabel("source speed (rpm)")
    ax.set_ylabel("quasi-static tension per strand (N)")
    ax.set_title(f"loop {loop_id}: span tensions over the speed range")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    return fig


def to_svg(fig: Any) -> str:
    """The figure as SVG text (for embedding in HTML), and the figure closed."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg")
    _plt().close(fig)
    return buf.getvalue()
