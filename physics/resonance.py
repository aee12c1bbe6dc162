"""Resonance of moving spans with the excitations of the drive over its speed range.

Excitations: each pulley's orders times its rotation frequency, and the belt-pass
frequency ``v / length``. A span's mode ``n`` is excited directly where an excitation
comes near ``f_n`` and parametrically (principal parametric resonance, the tension
fluctuating at twice the frequency) where it comes near ``2 f_n``. Each band of source
speeds where ``|excitation / (k f) - 1| <= margin`` (``k`` = 1 direct, 2 parametric) is
one :class:`Band`.

The grid only says where to look. On every interval of the sweep the three continuous
functions ``excitation - k f``, ``excitation - k f (1 - margin)`` and
``excitation - k f (1 + margin)`` are tested for a change of sign, and each change is
refined by Brent's method on the continuous model (``evaluate``), so a band narrower
than the grid spacing, lying wholly between two speeds of the sweep, is found with its
edges and its crossing. A band that only touches an end of the range, where the
excitation and the frequency never meet inside it, has no crossing: it reports its
closest approach (the speed and the relative gap there).

Excitation lines that are the same function of speed (two pulleys of one radius in one
loop, each with its first order) make one set of bands naming every one of them.

Keeping 10 to 20 % between span frequencies and excitation orders is common practice
(from memory); the default margin is 10 %.

References: Brent, *Algorithms for Minimization without Derivatives* (1973), ch. 4 (the
root finder scipy's ``brentq`` implements) and ch. 5 (the bounded minimiser).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from numpy.typing import NDArray


def brentq(*args, **kwargs):  # noqa: ANN002, ANN003, ANN201
    """scipy's Brent method, imported on first use (scipy.optimize costs 0.4 s to import)."""
    from scipy.optimize import brentq as _brentq

    return _brentq(*args, **kwargs)


def _minimize_bounded(fun: Callable[[float], float], lo: float, hi: float, xatol: float) -> tuple[float, float]:
    """Brent's bounded minimiser (scipy), imported on first use: ``(x, fun(x))``."""
    from scipy.optimize import minimize_scalar

    res = minimize_scalar(fun, bounds=(lo, hi), method="bounded", options={"xatol": xatol})
    return float(res.x), float(res.fun)


__all__ = ["Band", "find_bands", "RESONANCE_MARGIN", "KINDS", "EQUAL_EXCITATION_RTOL"]

#: Default half-width of a resonance band, as a fraction of the span frequency.
RESONANCE_MARGIN = 0.10
#: Direct resonance (excitation near f_n) and principal parametric (near 2 f_n).
KINDS = (("direct", 1.0), ("parametric", 2.0))
#: Two excitation lines whose frequencies agree to this fraction at every speed of the
#: sweep are one line (equal pulleys: the same speed, the same order).
EQUAL_EXCITATION_RTOL = 1e-9
#: Brent's method tolerances on a source speed: absolute (rad/s) and relative.
SPEED_XTOL_RAD_S = 1e-12
SPEED_RTOL = 1e-12
#: Closest approach: the bounded minimiser's tolerance as a fraction of the bracket.
NEAREST_XTOL_FRACTION = 1e-9

# evaluate(w) -> (frequencies (n_spans, modes), {excitation name: frequency}) at source speed w
Evaluate = Callable[[float], tuple[NDArray[np.float64], dict[str, float]]]


@dataclass(frozen=True, slots=True)
class Band:
    """One resonance band of one span mode with one excitation line.

    Speeds are the source's (rad/s); the band is ``[speed_lo, speed_hi]``, where
    ``|excitation / (k f) - 1| <= margin``. ``crossing`` is the speed where the
    excitation equals ``k f`` (``k`` = 2 for ``parametric``), or ``None`` where they do
    not meet inside the band (a band touching an end of the range). ``nearest`` is the
    crossing where there is one, else the speed of closest approach; ``frequency_hz``
    (the span mode's ``f``) and ``excitation_hz`` are taken there, and ``margin_left`` is
    the relative gap ``|excitation / (k f) - 1|`` there (0 at a crossing).
    ``excitations`` names every excitation line with these same bands, ``excitation``
    the first of them.
    """

    span: int
    mode: int
    kind: str
    excitation: str
    speed_lo: float
    speed_hi: float
    crossing: float | None
    frequency_hz: float
    margin_left: float
    nearest: float = float("nan")
    excitation_hz: float = float("nan")
    excitations: tuple[str, ...] = field(default=())

    @property
    def crosses(self) -> bool:
        """Whether the excitation meets the span's frequency inside the band."""
        return self.crossing is not None

    @property
    def gap(self) -> float:
        """The relative gap at :attr:`nearest` (0 at a crossing)."""
        return self.margin_left


def _groups(excitations: dict[str, NDArray[np.float64]], *, rtol: float) -> list[tuple[str, ...]]:
    """Names of the excitation lines, those that are one line grouped, in first-seen order."""
    groups: list[list[str]] = []
    for name, exc in excitations.items():
        x = np.asarray(exc, dtype=float)
        for g in groups:
            y = np.asarray(excitations[g[0]], dtype=float)
            if x.shape == y.shape and np.array_equal(np.isfinite(x), np.isfinite(y)) and np.allclose(
                    x, y, rtol=rtol, atol=0.0, equal_nan=True):
                g.append(name)
                break
        else:
            groups.append([name])
    return [tuple(g) for g in groups]


def find_bands(speeds: NDArray[np.float64], freqs: NDArray[np.float64], excitations: dict[str, NDArray[np.float64]],
               evaluate: Evaluate | None = None, *, margin: float = RESONANCE_MARGIN) -> list[Band]:
    """Resonance bands over a speed sweep, none missed between its speeds.

    Parameters
    ----------
    speeds : (K,)
        Source speeds, ascending, rad/s.
    freqs : (K, n_spans, modes)
        Span frequencies at each speed, Hz (0 where a span is slack).
    excitations
        Name to frequency ``(K,)`` in Hz.
    evaluate
        The continuous model at one source speed, for refinement; without it the
        frequencies and excitations are taken as linear between the grid's speeds.
    margin
        Half-width of a band as a fraction of the span frequency.

    Returns
    -------
    list of Band
        By excitation line, kind, span, mode and speed.

    Notes
    -----
    With ``t = k f`` (``k`` = 1 direct, 2 parametric) and ``e`` the excitation, a speed is
    in a band where ``t > 0``, ``e - (1 - margin) t >= 0`` and ``e - (1 + margin) t <= 0``.
    Each of these and ``e - t`` is continuous in speed; every change of its sign on a grid
    interval is a root, found by Brent's method on ``evaluate`` (``scipy.optimize.brentq``).
    A sign change is what the test sees: a band entered and left again between two grid
    speeds without ``e`` reaching ``t`` (two roots of one edge function, none of ``e - t``)
    is not found.
    """
    speeds = np.asarray(speeds, dtype=float)
    K, n, modes = freqs.shape
    cache: dict[float, tuple[NDArray[np.float64], dict[str, float]]] = {}

    def model(w: float) -> tuple[NDArray[np.float64], dict[str, float]]:
        key = float(w)
        if key not in cache:
            cache[key] = evaluate(key)          # type: ignore[misc]
        return cache[key]

    bands: list[Band] = []
    for names in _groups(excitations, rtol=EQUAL_EXCITATION_RTOL):
        exc = np.asarray(excitations[names[0]], dtype=float)[:, None, None]
        for kind, mult in KINDS:
            t = mult * freqs                                              # (K, n, modes)
            finite = np.isfinite(t) & np.isfinite(exc)
            h0, h_lo, h_hi = exc - t, exc - (1.0 - margin) * t, exc - (1.0 + margin) * t
            s0, s_lo, s_hi = h0 >= 0, h_lo >= 0, h_hi > 0
            inside = finite & (t > 0) & s_lo & ~s_hi
            both = finite[:-1] & finite[1:]
            ev0 = both & (s0[:-1] != s0[1:])
            ev_lo = both & (s_lo[:-1] != s_lo[1:])
            ev_hi = both & (s_hi[:-1] != s_hi[1:])
            todo = inside.any(axis=0) | ev_lo.any(axis=0) | ev_hi.any(axis=0)
            for s, j in zip(*np.nonzero(todo)):
                col = _Column(speeds, t[:, s, j], exc[:, 0, 0], int(s), int(j), mult, names[0],
                              model if evaluate is not None else None, margin)
                for lo, hi in col.segments(inside[:, s, j], ev_lo[:, s, j], ev_hi[:, s, j], s_lo[:, s, j],
                                           s_hi[:, s, j], t[:, s, j] > 0):
                    bands.append(col.band(lo, hi, np.nonzero(ev0[:, s, j])[0], kind, names))
    return bands


class _Column:
    """One excitation line against one span mode (times ``mult``): the continuous
    functions of speed and their roots."""

    def __init__(self, speeds: NDArray[np.float64], t: NDArray[np.float64], e: NDArray[np.float64], s: int, j: int,
                 mult: float, name: str, model: Evaluate | None, margin: float) -> None:
        self.speeds, self.t, self.e = speeds, t, e
        self.s, self.j, self.mult, self.name, self.model, self.margin = s, j, mult, name, model, margin

    def at(self, w: float) -> tuple[float, float]:
        """``(k f, excitation)`` at source speed ``w``: the model's, else linear on the grid."""
        if self.model is None:
            return float(np.interp(w, self.speeds, self.t)), float(np.interp(w, self.speeds, self.e))
        f, ex = self.model(w)
        return self.mult * float(f[self.s, self.j]), float(ex[self.name])

    def gap(self, w: float) -> float:
        """``|excitation / (k f) - 1|`` at ``w``; infinite where the span has no frequency."""
        t, e = self.at(w)
        return abs(e / t - 1.0) if t > 0 and np.isfinite(t) and np.isfinite(e) else float("inf")

    def root(self, k: int, scale: float) -> float:
        """The speed in grid interval ``k`` where ``excitation - scale * k f`` changes sign."""
        x0, x1 = float(self.speeds[k]), float(self.speeds[k + 1])
        g0 = self.e[k] - scale * self.t[k]
        g1 = self.e[k + 1] - scale * self.t[k + 1]
        linear = x0 if g0 == 0 else x0 + g0 / (g0 - g1) * (x1 - x0)
        if self.model is None:
            return float(linear)

        def g(w: float) -> float:
            t, e = self.at(w)
            return e - scale * t

        try:
            a, b = g(x0), g(x1)
            if np.isfinite(a) and np.isfinite(b) and a * b <= 0:
                return float(brentq(g, x0, x1, xtol=SPEED_XTOL_RAD_S, rtol=SPEED_RTOL))
        except ValueError:
            pass
        return float(linear)

    def segments(self, inside: NDArray[np.bool_], ev_lo: NDArray[np.bool_], ev_hi: NDArray[np.bool_],
                 s_lo: NDArray[np.bool_], s_hi: NDArray[np.bool_], positive: NDArray[np.bool_]
                 ) -> list[tuple[float, float]]:
        """Band intervals ``[lo, hi]``: runs of grid speeds inside, each end moved to the
        root of its edge function, and bands wholly between two grid speeds."""
        speeds = self.speeds
        out: list[tuple[float, float]] = []
        start: float | None = float(speeds[0]) if inside[0] else None
        events = ev_lo | ev_hi
        steps = np.nonzero(events | (inside[:-1] != inside[1:]))[0]
        for k in steps:
            if events[k] and positive[k] and positive[k + 1]:
                roots = ([(self.root(k, 1.0 - self.margin), 0)] if ev_lo[k] else []) + \
                        ([(self.root(k, 1.0 + self.margin), 1)] if ev_hi[k] else [])
                state = [bool(s_lo[k]), bool(s_hi[k])]
                for x, which in sorted(roots):
                    state[which] = not state[which]
                    now = state[0] and not state[1]
                    if now and start is None:
                        start = x
                    elif not now and start is not None:
                        out.append((start, x))
                        start = None
            # the grid speed after the interval settles it (a span going slack or a NaN)
            if inside[k + 1] and start is None:
                start = float(speeds[k + 1])
            elif not inside[k + 1] and start is not None:
                out.append((start, float(speeds[k] if inside[k] else speeds[k + 1])))
                start = None
        if start is not None:
            out.append((start, float(speeds[-1])))
        return out

    def band(self, lo: float, hi: float, ev0: NDArray[np.intp], kind: str, names: tuple[str, ...]) -> Band:
        """The band on ``[lo, hi]``: its crossing, else its closest approach."""
        speeds = self.speeds
        tol = SPEED_RTOL * max(abs(lo), abs(hi), 1.0) + SPEED_XTOL_RAD_S
        crossing = None
        for k in ev0:
            if speeds[k + 1] < lo - tol or speeds[k] > hi + tol:
                continue
            x = self.root(int(k), 1.0)
            if lo - tol <= x <= hi + tol:
                crossing = min(max(x, lo), hi)
                break
        if crossing is not None:
            nearest, left = crossing, 0.0
        else:
            nearest, left = self._nearest(lo, hi)
        t, e = self.at(nearest)
        freq = t / self.mult if np.isfinite(t) else float("nan")
        return Band(self.s, self.j + 1, kind, names[0], lo, hi, crossing, freq, left, nearest, e, names)

    def _nearest(self, lo: float, hi: float) -> tuple[float, float]:
        """Speed of the smallest ``|excitation / (k f) - 1|`` on ``[lo, hi]`` and that gap:
        the band's ends and the grid speeds inside it, the best refined by Brent's bounded
        minimiser on the model between its neighbours."""
        speeds = self.speeds
        ks = np.nonzero((speeds > lo) & (speeds < hi))[0]
        cands = [(self.gap(lo), lo), (self.gap(hi), hi)]
        with np.errstate(divide="ignore", invalid="ignore"):
            grid = np.where(self.t[ks] > 0, np.abs(self.e[ks] / self.t[ks] - 1.0), np.inf)
        if ks.size:
            i = int(np.argmin(grid))
            cands.append((float(grid[i]), float(speeds[ks[i]])))
        best_gap, best = min(cands)
        if self.model is not None and hi > lo:
            if ks.size == 0:
                a, b = lo, hi
            elif lo < best < hi:
                k = int(np.searchsorted(speeds, best))
                a, b = max(lo, float(speeds[max(k - 1, 0)])), min(hi, float(speeds[min(k + 1, speeds.size - 1)]))
            else:
                a = b = best
            if b > a:
                x, g = _minimize_bounded(self.gap, a, b, NEAREST_XTOL_FRACTION * (b - a))
                if g < best_gap:
                    best_gap, best = g, x
        return best, best_gap
