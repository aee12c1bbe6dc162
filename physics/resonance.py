"""Resonance of moving spans with the excitations of the drive over its speed range.

Excitations: each pulley's orders times its rotation frequency, and the belt-pass
frequency ``v / length``. A span's mode ``n`` is excited directly where an excitation
comes near ``f_n`` and parametrically (principal parametric resonance, the tension
fluctuating at twice the frequency) where it comes near ``2 f_n``. Each band of source
speeds where ``|excitation / f - 1| <= margin`` is one :class:`Band`; its crossing speed
(``excitation = f``) and its edges are refined by Brent's method on the continuous
model, since a grid of a few hundred speeds alone is too coarse.

Keeping 10 to 20 % between span frequencies and excitation orders is common practice
(from memory); the default margin is 10 %.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
from numpy.typing import NDArray

def brentq(*args, **kwargs):  # noqa: ANN002, ANN003, ANN201
    """scipy's Brent method, imported on first use (scipy.optimize costs 0.4 s to import)."""
    from scipy.optimize import brentq as _brentq

    return _brentq(*args, **kwargs)


__all__ = ["Band", "find_bands", "RESONANCE_MARGIN", "KINDS"]

#: Default half-width of a resonance band, as a fraction of the span frequency.
RESONANCE_MARGIN = 0.10
#: Direct resonance (excitation near f_n) and principal parametric (near 2 f_n).
KINDS = (("direct", 1.0), ("parametric", 2.0))

# evaluate(w) -> (frequencies (n_spans, modes), {excitation name: frequency}) at source speed w
Evaluate = Callable[[float], tuple[NDArray[np.float64], dict[str, float]]]


@dataclass(frozen=True, slots=True)
class Band:
    """One resonance band of one span mode with one excitation.

    Speeds are the source's (rad/s). ``crossing`` is where the excitation equals the
    span's frequency (times 2 for ``parametric``), or, where it only comes near, where it
    comes nearest. ``margin_left`` is the smallest ``|excitation / f - 1|`` in the band.
    """

    span: int
    mode: int
    kind: str
    excitation: str
    speed_lo: float
    speed_hi: float
    crossing: float
    frequency_hz: float
    margin_left: float


def _runs(mask: NDArray[np.bool_]) -> list[tuple[int, int]]:
    """Index ranges [a, b] of consecutive True values."""
    out = []
    k = 0
    n = mask.size
    while k < n:
        if mask[k]:
            j = k
            while j + 1 < n and mask[j + 1]:
                j += 1
            out.append((k, j))
            k = j + 1
        else:
            k += 1
    return out


def find_bands(speeds: NDArray[np.float64], freqs: NDArray[np.float64], excitations: dict[str, NDArray[np.float64]],
               evaluate: Evaluate | None = None, *, margin: float = RESONANCE_MARGIN) -> list[Band]:
    """Resonance bands over a speed sweep.

    Parameters
    ----------
    speeds : (K,)
        Source speeds, ascending, rad/s.
    freqs : (K, n_spans, modes)
        Span frequencies at each speed, Hz (0 where a span is slack).
    excitations
        Name to frequency ``(K,)`` in Hz.
    evaluate
        The continuous model at one source speed, for refinement; without it the grid
        values are used.
    margin
        Half-width of a band as a fraction of the span frequency.
    """
    K, n, modes = freqs.shape
    bands: list[Band] = []
    for name, exc in excitations.items():
        for kind, mult in KINDS:
            target = mult * freqs                                     # (K, n, modes)
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = exc[:, None, None] / target - 1.0
            inside = np.abs(ratio) <= margin
            for s in range(n):
                for j in range(modes):
                    col = ratio[:, s, j]
                    for a, b in _runs(inside[:, s, j] & np.isfinite(col)):
                        bands.append(_refine(speeds, col, a, b, s, j, kind, mult, name, evaluate, margin))
    return bands


def _refine(speeds: NDArray[np.float64], col: NDArray[np.float64], a: int, b: int, s: int, j: int, kind: str,
            mult: float, name: str, evaluate: Evaluate | None, margin: float) -> Band:
    def r(w: float) -> float:
        f, ex = evaluate(w)          # type: ignore[misc]
        t = mult * f[s, j]
        return ex[name] / t - 1.0 if t > 0 else np.inf

    K = speeds.size
    lo, hi = float(speeds[a]), float(speeds[b])
    # crossing: a sign change of the ratio inside the run (or next to it)
    crossing = None
    seg = range(max(a - 1, 0), min(b + 1, K - 1))
    for k in seg:
        if np.isfinite(col[k]) and np.isfinite(col[k + 1]) and col[k] * col[k + 1] <= 0:
            if col[k] == 0:
                crossing = float(speeds[k])
            elif evaluate is not None:
                crossing = float(brentq(r, speeds[k], speeds[k + 1], xtol=1e-12, rtol=1e-12))
            else:
                t = col[k] / (col[k] - col[k + 1])
                crossing = float(speeds[k] + t * (speeds[k + 1] - speeds[k]))
            break
    if crossing is None:
        k = a + int(np.argmin(np.abs(col[a:b + 1])))
        crossing = float(speeds[k])
    # edges: where |ratio| meets the margin between the grid points around the run
    if evaluate is not None:
        if a > 0 and np.isfinite(col[a - 1]):
            lo = _edge(lambda w: abs(r(w)) - margin, speeds[a - 1], speeds[a], lo)
        if b < K - 1 and np.isfinite(col[b + 1]):
            hi = _edge(lambda w: abs(r(w)) - margin, speeds[b], speeds[b + 1], hi)
    if evaluate is not None:
        f, _ = evaluate(crossing)
        freq = float(f[s, j])
        left = abs(r(crossing))
    else:
        k = int(np.argmin(np.abs(speeds - crossing)))
        freq = float("nan")
        left = float(abs(col[k]))
    if not np.isfinite(freq):
        freq = float("nan")
    return Band(s, j + 1, kind, name, lo, hi, crossing, freq, left)


def _edge(g: Callable[[float], float], x0: float, x1: float, fallback: float) -> float:
    try:
        g0, g1 = g(x0), g(x1)
        if np.isfinite(g0) and np.isfinite(g1) and g0 * g1 <= 0:
            return float(brentq(g, x0, x1, xtol=1e-12, rtol=1e-12))
    except ValueError:
        pass
    return float(fallback)
