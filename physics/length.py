"""Belt length against stock: nearest stock lengths, where the adjustable pulley must sit
for a chosen belt, and the installation and take-up travel a fitter needs.

Positions come from root finding (scipy's Brent method) on the exact path length of
:func:`physics.geometry.loop_geometry`, so they hold for any loop, not only two pulleys.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from .geometry import GeometryError, loop_geometry, open_belt

def brentq(*args, **kwargs):  # noqa: ANN002, ANN003, ANN201
    """scipy's Brent method, imported on first use (scipy.optimize costs 0.4 s to import)."""
    from scipy.optimize import brentq as _brentq

    return _brentq(*args, **kwargs)


__all__ = ["nearest_stock", "AdjustResult", "solve_adjust", "center_distance_exact",
           "center_distance_approx", "INSTALL_ALLOWANCE", "TAKE_UP_ALLOWANCE"]

#: Shortening of the path needed to slip a belt on without prying it over a flange, as a
#: fraction of the pitch length (common practice for V-belts, from memory: about 1.5 %).
INSTALL_ALLOWANCE = 0.015
#: Lengthening the path must allow for stretch and wear over the belt's life, as a fraction
#: of the pitch length (common practice for V-belts, from memory: about 2.5 %).
TAKE_UP_ALLOWANCE = 0.025


def nearest_stock(length_m: float, series: ArrayLike) -> list[float]:
    """The stock lengths just below and just above ``length_m`` (one if it lies outside)."""
    s = sorted(float(x) for x in np.asarray(series, dtype=float).reshape(-1))
    if not s:
        return []
    k = bisect.bisect_left(s, length_m)
    out = []
    if k > 0:
        out.append(s[k - 1])
    if k < len(s):
        out.append(s[k])
    return out


@dataclass(frozen=True, slots=True)
class AdjustResult:
    """Where the adjustable pulley sits for a chosen belt (metres along ``direction``).

    ``offset_m``: from its drawn position to the running position; ``install_offset_m``:
    to the position that lets the belt go on; ``take_up_offset_m``: to the position at the
    end of the belt's stretch allowance. Offsets are signed along ``direction``.
    """

    offset_m: float
    install_offset_m: float | None
    take_up_offset_m: float | None
    target_length_m: float


def _length_at(centers: np.ndarray, radii: np.ndarray, turns: np.ndarray, index: int,
               direction: np.ndarray, s: float) -> float:
    c = centers.copy()
    c[index] = c[index] + s * direction
    return loop_geometry(c, radii, turns).length_m


def _root(f, scale: float) -> float | None:  # noqa: ANN001
    """A root of ``f`` near 0: step outwards (doubling) in each direction until the sign
    changes, then Brent's method on that bracket."""
    f0 = f(0.0)
    if f0 == 0.0:
        return 0.0
    for sign in (1.0, -1.0):
        a, fa, s = 0.0, f0, scale
        for _ in range(60):
            b = sign * s
            try:
                fb = f(b)
            except GeometryError:
                break
            if np.sign(fb) != np.sign(fa):
                root = _root_between(f, a, fa, b)
                if root is not None:
                    return root
            a, fa, s = b, fb, 2.0 * s
    return None


def _root_between(f, a: float, fa: float, b: float, samples: int = 64) -> float | None:  # noqa: ANN001
    """Brent's method between ``a`` and ``b`` where ``f`` changes sign; if the slide passes
    through positions where no belt path exists, bracket the first sign change reached from
    ``a`` without crossing them."""
    lo, hi = min(a, b), max(a, b)
    try:
        return float(brentq(f, lo, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200))
    except GeometryError:
        pass
    prev, fprev = a, fa
    for x in np.linspace(a, b, samples + 1)[1:]:
        try:
            fx = f(float(x))
        except GeometryError:
            return None
        if np.sign(fx) != np.sign(fprev):
            try:
                return float(brentq(f, min(prev, x), max(prev, x), xtol=1e-15, rtol=4 * np.finfo(float).eps,
                                    maxiter=200))
            except GeometryError:
                return None
        prev, fprev = float(x), fx
    return None


def solve_adjust(centers_m: ArrayLike, radii_m: ArrayLike, turns: ArrayLike, index: int,
                 direction: ArrayLike, target_length_m: float, *, unstretched_m: float | None = None,
                 install: float = INSTALL_ALLOWANCE, take_up: float = TAKE_UP_ALLOWANCE) -> AdjustResult | None:
    """Move pulley ``index`` along ``direction`` until the exact path length is the target.

    ``target_length_m`` is the running path (the belt stretched by its install tension);
    ``unstretched_m`` the belt's own length (default: the target). The belt goes on a path
    shorter than its unstretched length by ``install`` (it is slack then, so it does not
    stretch), and the take-up reaches a running path ``take_up`` longer than the target.
    Returns ``None`` when no position along the slide gives the running length.

    Examples
    --------
    >>> r = solve_adjust([[0, 0], [0.4, 0]], [0.1, 0.05], [1, 1], 1, [1, 0], 1.3)
    >>> round(0.4 + r.offset_m, 6)
    0.411338
    """
    c = np.asarray(centers_m, dtype=float).reshape(-1, 2)
    r = np.asarray(radii_m, dtype=float)
    t = np.asarray(turns, dtype=float)
    d = np.asarray(direction, dtype=float)
    d = d / math.hypot(d[0], d[1])
    scale = 0.01 * max(float(np.ptp(c, axis=0).max()), float(r.max()))

    def offset(target: float) -> float | None:
        return _root(lambda s: _length_at(c, r, t, index, d, s) - target, scale)

    s = offset(target_length_m)
    if s is None:
        return None
    s_in = offset((target_length_m if unstretched_m is None else unstretched_m) * (1.0 - install))
    s_up = offset(target_length_m * (1.0 + take_up))
    return AdjustResult(s, s_in, s_up, target_length_m)


def center_distance_exact(d_large_m: float, d_small_m: float, length_m: float) -> float:
    """Centre distance of an open two-pulley belt of pitch length ``length_m``, by root
    finding on the exact length formula (Shigley Eq. 17-1, from memory)."""
    lo = (d_large_m - d_small_m) / 2.0 * (1.0 + 1e-12) + 1e-15
    hi = length_m

    def f(c: float) -> float:
        return open_belt(d_large_m, d_small_m, c)[2] - length_m

    return float(brentq(f, lo, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200))


def center_distance_approx(d_large_m: float, d_small_m: float, length_m: float) -> float:
    """The textbook inverse of the approximate length formula:
    ``C = (A + sqrt(A**2 - 2 (D - d)**2)) / 4``, ``A = L - pi (D + d) / 2``
    (Shigley, ch. 17, V-belt centre distance, from memory). Its error grows like
    ``(D - d)**4 / C**3``."""
    a = length_m - math.pi * (d_large_m + d_small_m) / 2.0
    return (a + math.sqrt(a * a - 2.0 * (d_large_m - d_small_m) ** 2)) / 4.0
