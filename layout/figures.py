"""Figures of the results, ready for the HTML report: computing stays in ``physics``,
this module only draws. matplotlib is imported lazily (about 0.4 s) and only here.

* :func:`campbell_figure`: span frequencies against the source speed, with every
  excitation line and the resonance bands shaded (overlapping bands merged), one figure per loop;
* :func:`tension_figure`: quasi-static tension of every span over the speed range;
* :func:`to_svg`: a figure as a standalone SVG document; :func:`to_inline_svg`: as an
  ``<svg>`` element for inlining in HTML, its ids prefixed so that several figures
  can share one page.

The SVG is reproducible: ids come from a fixed hash salt and the date is left out.
"""

from __future__ import annotations

import io
import math
import re
from typing import Any

import numpy as np

from physics.analysis import Results

__all__ = ["campbell_figure", "tension_figure", "to_svg", "to_inline_svg", "svg_fragment"]

#: Salt of matplotlib's hashed SVG ids (clip paths, markers): fixed, so output is reproducible.
SVG_HASHSALT = "spanwise"


def _plt() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _plain(text: str) -> str:
    """``text`` shown as written: a ``$`` in a drawing's name (bound xref layers such as
    ``BASE$0$BELT``) must not switch matplotlib into mathtext."""
    return text.replace("$", r"\$")


def _operating_line(ax: Any, mech: Any) -> None:
    """A dotted vertical line at the operating speed (row 0) when it lies in the range."""
    op = float(mech.source_speed_rad_s[0]) * 30.0 / math.pi
    lo, hi = sorted(float(x) * 30.0 / math.pi for x in (mech.source_speed_rad_s[1], mech.source_speed_rad_s[-1]))
    if math.isfinite(op) and lo <= op <= hi:
        ax.axvline(op, color="0.15", ls=":", lw=1.1, label="operating speed", gid="operating speed")


def _union(intervals: list[tuple[float, float]]) -> list[tuple[float, float]]:
    """Overlapping speed intervals merged, so overlapping resonance bands shade once.

    >>> _union([(3.0, 4.0), (1.0, 2.0), (1.5, 2.5)])
    [(1.0, 2.5), (3.0, 4.0)]
    """
    out: list[tuple[float, float]] = []
    for lo, hi in sorted((min(a, b), max(a, b)) for a, b in intervals):
        if out and lo <= out[-1][1]:
            out[-1] = (out[-1][0], max(out[-1][1], hi))
        else:
            out.append((lo, hi))
    return out


def _span_colour(k: int) -> str:
    """Span ``k``'s colour: the default cycle without its red, which marks resonance and slack."""
    return f"C{(0, 1, 2, 4, 5, 6, 7, 8, 9)[k % 9]}"


def _excitation_labels(ax: Any, ends: dict[str, float], corner: tuple[float, float], *, gap: float = 0.035) -> None:
    """Name every excitation line at its right end; lines ending within ``gap`` of the
    axis height of each other share one label, so the names do not print over each other."""
    x_end, top = corner
    groups: list[list[tuple[str, float]]] = []
    for name, y in sorted(((n, y) for n, y in ends.items() if math.isfinite(y) and 0.0 <= y <= top),
                          key=lambda ny: ny[1]):
        if groups and y - groups[-1][-1][1] < gap * top:
            groups[-1].append((name, y))
        else:
            groups.append([(name, y)])
    for g in groups:
        names = [n for n, _ in g]
        text = ", ".join(names[:3]) + (f" +{len(names) - 3}" if len(names) > 3 else "")
        ax.annotate(_plain(text), (x_end, g[0][1]), fontsize=7, color="0.3", ha="right", va="bottom",
                    bbox={"boxstyle": "square,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.75})


def campbell_figure(results: Results, loop_id: str, *, modes: int | None = None) -> Any:
    """Span frequencies (solid) and excitations (dashed) against the source speed (rpm).

    Resonance bands are shaded; the operating speed is a dotted line.

    Parameters
    ----------
    results
        The analysis results.
    loop_id
        The loop to draw.
    modes
        How many modes per span to draw (default: all computed).

    Returns
    -------
    matplotlib.figure.Figure or None
        ``None`` when the loop has no speed sweep.
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
            ax.plot(rpm, dyn.frequencies_hz[1:, k, j], color=_span_colour(k), lw=1.4,
                    label=_plain(sid) if j == 0 else None, gid=f"span {sid} mode {j + 1}")
    for name, x in dyn.excitations_hz.items():
        ax.plot(rpm, x[1:], color="0.35", ls="--", lw=0.9, gid=f"excitation {name}")
    for lo, hi in _union([(b.speed_lo * 30 / math.pi, b.speed_hi * 30 / math.pi) for b in dyn.bands]):
        ax.axvspan(lo, hi, color="C3", alpha=0.13, lw=0, gid=f"resonance band {lo:.6g} to {hi:.6g} rpm")
    _operating_line(ax, mech)
    ax.set_xlabel("source speed (rpm)")
    ax.set_ylabel("frequency (Hz)")
    ax.set_title(_plain(f"loop {loop_id}: span frequencies and excitations"))
    finite = np.isfinite(dyn.frequencies_hz[1:, :, :nm])
    top = float(np.nanmax(dyn.frequencies_hz[1:, :, :nm])) if finite.any() else 1.0
    ax.set_ylim(0, 1.15 * top)
    ax.set_xlim(rpm[0], rpm[-1])
    _excitation_labels(ax, {name: float(x[-1]) for name, x in dyn.excitations_hz.items()}, (rpm[-1], 1.15 * top))
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="upper left", ncol=max(1, min(4, (n + 5) // 6)), framealpha=0.9)
    fig.tight_layout()
    return fig


def tension_figure(results: Results, loop_id: str) -> Any:
    """Quasi-static tension of every span against the source speed (rpm).

    Returns a matplotlib Figure, or ``None`` when the loop has no speed sweep.
    """
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
        ax.plot(rpm, mech.quasi_static_n[1:, k], color=_span_colour(k), label=_plain(sid), gid=f"span {sid}")
    ax.axhline(0.0, color="C3", lw=0.8)
    _operating_line(ax, mech)
    ax.set_xlabel("source speed (rpm)")
    ax.set_ylabel("quasi-static tension per strand (N)")
    ax.set_title(_plain(f"loop {loop_id}: span tensions over the speed range"))
    ax.set_xlim(rpm[0], rpm[-1])
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, ncol=max(1, min(4, (n + 5) // 6)), framealpha=0.9)
    fig.tight_layout()
    return fig


def to_svg(fig: Any) -> str:
    """The figure as a standalone SVG document (with its XML prolog), and the figure closed.

    Reproducible: hashed ids use :data:`SVG_HASHSALT` and no date is written.
    """
    import matplotlib

    buf = io.StringIO()
    try:
        with matplotlib.rc_context({"svg.hashsalt": SVG_HASHSALT, "svg.fonttype": "path"}):
            fig.savefig(buf, format="svg", metadata={"Date": None})
    finally:
        _plt().close(fig)
    return buf.getvalue()


_ID = re.compile(r'\bid="([^"]*)"')
_REF = re.compile(r'(href="#|url\(#)([^")]*)')
_SAFE = re.compile(r"[^A-Za-z0-9_.-]")


def svg_fragment(svg: str, prefix: str) -> str:
    """A standalone SVG document as one ``<svg>`` element to inline in HTML.

    The XML prolog, doctype and metadata go; every id becomes ``PREFIX-ID`` (characters
    other than letters, digits, ``_ . -`` replaced by ``_``) with every reference
    (``href="#…"``, ``url(#…)``) rewritten to match; the root gets ``id="PREFIX"`` and
    the document-wide ``<style>`` rules are scoped to it; width and height go, so the
    figure scales with the page (its ``viewBox`` keeps the aspect).

    >>> svg_fragment('<?xml version="1.0"?><svg width="1pt" viewBox="0 0 1 1"><g id="a b"/></svg>', "f1")
    '<svg id="f1" viewBox="0 0 1 1"><g id="f1-a_b"/></svg>'
    """
    start = svg.find("<svg")
    body = svg[start:] if start >= 0 else svg
    body = re.sub(r"\s*<metadata>.*?</metadata>", "", body, flags=re.S)
    mapping: dict[str, str] = {}
    used: set[str] = set()

    def new_id(m: re.Match[str]) -> str:
        old = m.group(1)
        base = f"{prefix}-{_SAFE.sub('_', old)}"
        new, k = base, 1
        while new in used:
            k += 1
            new = f"{base}_{k}"
        used.add(new)
        mapping.setdefault(old, new)
        return f'id="{new}"'

    body = _ID.sub(new_id, body)
    body = _REF.sub(lambda m: m.group(1) + mapping.get(m.group(2), m.group(2)), body)
    body = re.sub(r"(<style[^>]*>)\s*\*\s*\{", rf"\1#{prefix} *{{", body)
    head_end = body.find(">")
    head = re.sub(r'\s(?:width|height)="[^"]*"', "", body[:head_end])
    return head.replace("<svg", f'<svg id="{prefix}"', 1) + body[head_end:]


def to_inline_svg(fig: Any, prefix: str) -> str:
    """The figure as an ``<svg>`` element for HTML (see :func:`svg_fragment`), figure closed."""
    return svg_fragment(to_svg(fig), prefix)
