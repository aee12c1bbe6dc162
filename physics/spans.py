"""Free spans as axially moving strings and beams: wave speeds, natural frequencies, sag.

A span of length ``L`` carrying quasi-static tension ``P`` (belt tension ``T = P + m v**2``)
and moving at belt speed ``v`` obeys ``m (w_tt + 2 v w_xt) - P w_xx + EI w_xxxx = 0``.
Without bending stiffness its transverse waves run at ``v + c`` downstream and ``c - v``
upstream (``c = sqrt(T/m)``) and its natural frequencies are

    f_n = n (c**2 - v**2) / (2 L c) = n P / (2 L sqrt(m T)),

which fall with speed and vanish when ``P`` reaches zero. With ``EI`` the frequencies
come from a Galerkin solution (pinned or clamped ends) of the gyroscopic eigenproblem,
written in Hermitian form so that one batched ``eigvalsh`` gives real frequencies for any
number of spans and speeds at once.

References: Archibald and Emslie, "The vibration of a string having a uniform motion
along its length", J. Appl. Mech. 25 (1958) 347-348; Wickert and Mote, "Classical
vibration analysis of axially moving continua", J. Appl. Mech. 57 (1990) 738-744
(both from memory); Blevins, *Formulas for Natural Frequency and Mode Shape* (1979),
tensioned beam with pinned ends (from memory).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .model import SpanEnds, choice

__all__ = ["wave_speeds", "string_frequencies", "beam_frequencies", "span_frequencies",
           "pinned_beam_frequencies", "catenary_sag", "parabolic_sag", "G0",
           "BEAM_RTOL", "GALERKIN_MAX_TERMS", "BeamConvergence", "GalerkinCapWarning"]

#: Standard gravity, m/s^2 (CGPM 1901).
G0 = 9.80665
#: Accuracy the Galerkin moving beam is solved to by default: every reported mode within
#: this fraction of its converged value.
BEAM_RTOL = 1e-3
#: A term count is accepted when the reported modes change by less than this share of the
#: target from it to the next count of the ladder. Its error is at most ``change / (1 - rho)``
#: (``rho`` the ratio of successive errors, spectral convergence), so a share of 0.1 holds the
#: target while ``rho <= 0.9`` (measured: at most 0.88 on the ladder where errors exceed 1e-6).
CONVERGENCE_SHARE = 0.1
#: The most Galerkin terms per point (a ``(2 n, 2 n)`` complex Hermitian matrix each): bounds
#: the work and the memory of the moving beam.
GALERKIN_MAX_TERMS = 64


def wave_speeds(tension_n: ArrayLike, mass_kg_m: float, speed_m_s: ArrayLike
                ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """``c = sqrt(T/m)`` and the ground-frame wave speeds ``v + c`` (downstream) and
    ``c - v`` (upstream). NaN where ``T <= 0`` (no waves)."""
    T = np.asarray(tension_n, dtype=float)
    v = np.asarray(speed_m_s, dtype=float)
    with np.errstate(invalid="ignore"):
        c = np.where(T > 0, np.sqrt(np.maximum(T, 0.0) / mass_kg_m), np.nan)
    return c, v + c, c - v


def string_frequencies(quasi_static_n: ArrayLike, tension_n: ArrayLike, mass_kg_m: float,
                       length_m: ArrayLike, modes: int = 5) -> NDArray[np.float64]:
    """Natural frequencies ``f_n = n P / (2 L sqrt(m T))`` of moving strings, Hz.

    Broadcasts ``P``, ``T`` and ``L``; a trailing axis of ``modes`` is added. Zero where
    ``P <= 0`` (the span has lost its stiffness).

    Examples
    --------
    >>> f = string_frequencies(400.0, 400.0, 0.12, 0.4, modes=2)   # at rest
    >>> [round(float(x), 4) for x in f]
    [72.1688, 144.3376]
    """
    P = np.asarray(quasi_static_n, dtype=float)
    T = np.asarray(tension_n, dtype=float)
    L = np.asarray(length_m, dtype=float)
    n = np.arange(1, modes + 1, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        f1 = np.where(P > 0, P / (2.0 * L * np.sqrt(mass_kg_m * np.maximum(T, 1e-300))), 0.0)
    return f1[..., None] * n


def pinned_beam_frequencies(tension_n: ArrayLike, mass_kg_m: float, length_m: ArrayLike,
                            bending_nm2: float, modes: int = 5) -> NDArray[np.float64]:
    """Stationary tensioned beam, pinned ends (exact):
    ``f_n = (n / 2L) sqrt(T/m) sqrt(1 + n**2 pi**2 EI / (T L**2))`` (Blevins 1979, from memory)."""
    T = np.asarray(tension_n, dtype=float)[..., None]
    L = np.asarray(length_m, dtype=float)[..., None]
    n = np.arange(1, modes + 1, dtype=float)
    return n / (2 * L) * np.sqrt(T / mass_kg_m) * np.sqrt(1 + n**2 * math.pi**2 * bending_nm2 / (T * L * L))


#: Points whose dimensionless parameters fall in one cell of this grid share a term count,
#: chosen at the cell's hardest corners: steps in ``log(1 + u)`` and in ``log10(beta)``, with
#: ``u = |v| sqrt(m / Pe)``, ``beta = EI / (Pe L**2)``, ``Pe = P + lam EI / L**2``.
_CELL_LOG_U = 0.25
_CELL_LOG10_BETA = 0.5
#: Points stiffer than none but below this ``log10(beta)`` share the cells at it (to the
#: string limit ``EI = 0``).
_MIN_LOG10_BETA = -12.0
#: Euler buckling load of the stationary span, ``lam`` in units of ``EI / L**2`` (exact).
_BUCKLING = {SpanEnds.PINNED: math.pi**2, SpanEnds.CLAMPED: 4 * math.pi**2}
#: A span this close to the buckling load of the Galerkin basis is left unsolved (zero).
_BUCKLING_MARGIN = 1e-9
#: Complex entries of the batched eigenproblem held at once (64 MiB).
_BATCH_ENTRIES = 1 << 22


class GalerkinCapWarning(RuntimeWarning):
    """The moving beam did not reach the requested accuracy within the cap on terms."""


@dataclass(frozen=True, slots=True)
class BeamConvergence:
    """How :func:`beam_frequencies` solved each point (arrays of the broadcast shape).

    ``terms``: the Galerkin terms used (0 where the span is slack or buckled); ``change``:
    the largest relative change of the reported modes from ``terms`` to the next count of
    the ladder, at the hardest corner of the point's cell (the error estimate; NaN when the
    terms were given); ``capped``: the cap was reached before that change fell below
    ``CONVERGENCE_SHARE * rtol``.
    """

    terms: NDArray[np.int64]
    change: NDArray[np.float64]
    capped: NDArray[np.bool_]


@lru_cache(maxsize=32)
def _basis(ends: SpanEnds, terms: int) -> tuple[NDArray[np.float64], ...]:
    """Dimensionless Galerkin matrices on [0, 1]: mass, gyroscopic, string and bending
    stiffness, each ``(terms, terms)``, with the mass already factored out (Cholesky),
    so the equation reads ``y'' + (2 v / L) G y' + (P K1 / (m L**2) + EI K2 / (m L**4)) y = 0``.

    Basis: ``x (1 - x) P_j(2x - 1)`` (pinned) or ``(x (1 - x))**2 P_j(2x - 1)`` (clamped),
    with Legendre polynomials ``P_j``. The integrands are polynomials of degree at most
    ``2 terms + 6``: Gauss-Legendre with ``4 terms + 16`` points integrates them exactly.
    """
    x, w = np.polynomial.legendre.leggauss(4 * terms + 16)
    # In t = 2x - 1 on the Gauss points: x (1 - x) = (1 - t**2) / 4 and d/dx = 2 d/dt. The
    # basis is a "bubble" vanishing at the ends times Legendre polynomials: exponential
    # convergence, well conditioned. Pinned ends: bubble x (1 - x) (w = 0; w'' = 0 is the
    # natural condition of the variational form). Clamped ends: (x (1 - x))**2 (w = w' = 0).
    leg = np.polynomial.legendre
    if ends is SpanEnds.PINNED:
        bubble = leg.poly2leg([1.0, 0.0, -1.0]) / 4.0
    else:
        bubble = leg.poly2leg([1.0, 0.0, -2.0, 0.0, 1.0]) / 16.0
    rows = [leg.legmul(bubble, np.eye(terms)[k]) for k in range(terms)]
    phi = np.array([leg.legval(x, c) for c in rows])
    d1 = np.array([2.0 * leg.legval(x, leg.legder(c)) for c in rows])
    d2 = np.array([4.0 * leg.legval(x, leg.legder(c, 2)) for c in rows])
    w = 0.5 * w
    M = (phi * w) @ phi.T
    G = (phi * w) @ d1.T
    K1 = (d1 * w) @ d1.T
    K2 = (d2 * w) @ d2.T
    R = np.linalg.cholesky(M)
    Ri = np.linalg.inv(R)
    G = Ri @ G @ Ri.T
    K1 = 0.5 * (Ri @ K1 @ Ri.T + (Ri @ K1 @ Ri.T).T)
    K2 = 0.5 * (Ri @ K2 @ Ri.T + (Ri @ K2 @ Ri.T).T)
    # buckling: P K1 + EI K2 stays positive while P > -EI * lam_star / L**2
    lam_star = float(np.min(np.real(np.linalg.eigvals(np.linalg.solve(K1, K2)))))
    return G, K1, K2, lam_star


def _ladder(modes: int, cap: int) -> tuple[int, ...]:
    """Term counts tried in turn: from ``2 max(modes, 5) + 4`` (the fixed count of earlier
    versions: no point is solved less accurately than it was), about 20 % more each step,
    ending at ``cap`` (a last step shorter than the others would make a weak check)."""
    out = [2 * max(modes, 5) + 4]
    while out[-1] + max(2, out[-1] // 5) < cap:
        out.append(out[-1] + max(2, out[-1] // 5))
    out[-1] = cap
    return tuple(out)


def _galerkin(ends: SpanEnds, terms: int, P: NDArray[np.float64], L: NDArray[np.float64],
              v: NDArray[np.float64], bending_nm2: float, mass_kg_m: float, modes: int
              ) -> tuple[NDArray[np.float64], NDArray[np.bool_]]:
    """The lowest ``modes`` frequencies (Hz) of points ``P, L, v`` (flat) with ``terms`` terms,
    in batches that bound the memory, and which points were solved (not buckled)."""
    G, K1, K2, lam_star = _basis(ends, terms)
    out = np.zeros((P.size, modes))
    ok = P > -bending_nm2 * lam_star / L**2 * (1 - _BUCKLING_MARGIN)
    idx = np.flatnonzero(ok)
    step = max(1, _BATCH_ENTRIES // (2 * terms) ** 2)
    for start in range(0, idx.size, step):
        j = idx[start:start + step]
        S2 = (P[j] / (mass_kg_m * L[j] ** 2))[:, None, None] * K1 + \
            (bending_nm2 / (mass_kg_m * L[j] ** 4))[:, None, None] * K2
        # any F with F^T F = S2 linearises the problem; the Cholesky factor is the cheapest
        F = np.swapaxes(np.linalg.cholesky(S2), 1, 2)
        g = (2.0 * v[j] / L[j])[:, None, None]
        H = np.zeros((j.size, 2 * terms, 2 * terms), dtype=complex)
        H[:, :terms, terms:] = F
        H[:, terms:, :terms] = np.swapaxes(F, 1, 2)
        H[:, terms:, terms:] = -1j * g * G[None, :, :]
        w = np.linalg.eigvalsh(H)[:, terms:terms + modes]      # the positive half, ascending
        out[j] = w / (2.0 * math.pi)
    return out, ok


@lru_cache(maxsize=4096)
def _corner_terms(ends: SpanEnds, modes: int, rtol: float, cap: int, ku: int, kb: int) -> tuple[int, float, bool]:
    """Terms for the cell corner ``u = expm1(ku du)``, ``beta = 10**(kb db)`` (``Pe = L = m = 1``):
    the first count of the ladder whose modes change by less than ``CONVERGENCE_SHARE * rtol``
    to the next count; the change; whether the cap was reached instead."""
    u = math.expm1(ku * _CELL_LOG_U)
    beta = 10.0 ** (kb * _CELL_LOG10_BETA)
    P, one, v = np.array([1.0 - beta * _BUCKLING[ends]]), np.ones(1), np.array([u])
    levels = _ladder(modes, cap)
    prev, change = None, math.inf
    for k, n in enumerate(levels):
        f, solved = _galerkin(ends, n, P, one, v, beta, 1.0, modes)
        if prev is not None:
            with np.errstate(divide="ignore", invalid="ignore"):
                rel = np.abs(f[0] - prev) / f[0]
            change = float(np.max(rel)) if solved[0] and np.all(f[0] > 0) else math.inf
            if change < CONVERGENCE_SHARE * rtol:
                return levels[k - 1], change, False
        prev = f[0]
    return levels[-1], change, True


def beam_frequencies(quasi_static_n: ArrayLike, mass_kg_m: float, length_m: ArrayLike,
                     bending_nm2: float, speed_m_s: ArrayLike, modes: int = 5, *,
                     ends: SpanEnds | str = SpanEnds.PINNED, terms: int | None = None,
                     rtol: float = BEAM_RTOL, max_terms: int = GALERKIN_MAX_TERMS,
                     full_output: bool = False
                     ) -> NDArray[np.float64] | tuple[NDArray[np.float64], BeamConvergence]:
    """Natural frequencies of axially moving tensioned beams by Galerkin's method, Hz.

    Parameters
    ----------
    quasi_static_n, length_m, speed_m_s
        ``P`` (N), ``L`` (m), ``v`` (m/s); broadcast together (e.g. ``(K, n)`` operating
        points by spans). The belt tension is ``T = P + m v**2``.
    mass_kg_m, bending_nm2
        ``m`` (kg/m) and ``EI`` (N m^2).
    modes
        Frequencies per point: the result has a trailing axis of ``modes``.
    ends
        :class:`~physics.model.SpanEnds` or its string, checked.
    terms
        A fixed number of Galerkin terms for every point (no convergence check).
    rtol
        Relative accuracy sought for every reported mode (default ``BEAM_RTOL``, 1e-3).
    max_terms
        The cap on terms (default ``GALERKIN_MAX_TERMS``, 64; at least ``2 max(modes, 5) + 10``).
    full_output
        Also return a :class:`BeamConvergence` (terms, error estimate, capped) per point;
        then no :class:`GalerkinCapWarning` is issued.

    Returns
    -------
    Frequencies, shape ``broadcast + (modes,)``; zero where the span has buckled or gone
    slack (the stiffness matrix is not positive). With ``full_output``, also the
    :class:`BeamConvergence`.

    Warns
    -----
    GalerkinCapWarning
        Where the cap was reached before the reported modes converged to ``rtol`` (the
        frequencies are then those of ``max_terms`` terms, of the accuracy the warning
        states); ``full_output`` says which points.

    Notes
    -----
    With ``q = R^T y`` (``M = R R^T``) the equation ``y'' + g G y' + S**2 y = 0`` (``G``
    skew, ``S**2`` symmetric positive) has the frequencies ``w`` of the Hermitian matrix
    ``[[0, S], [S, -i g G]]``; its positive eigenvalues are the natural frequencies.

    Terms. The problem depends on two numbers, ``u = |v| sqrt(m / Pe)`` and
    ``beta = EI / (Pe L**2)``, ``Pe = P + lam EI / L**2`` the margin to Euler buckling
    (``lam`` = pi**2 pinned, 4 pi**2 clamped). Near the critical speed the upstream waves
    shorten (wavenumber ``w / (c - v)``) and, with little ``EI``, boundary layers of width
    ``sqrt(EI / P)`` form at the ends (at rest too, for clamped ends): no fixed count of
    terms resolves every case. So the points are sorted into cells of a grid in
    ``(log(1 + u), log10(beta))`` (steps 0.25 and 0.5); at the two corners of the cell with
    the largest ``u`` the terms climb a ladder (``2 max(modes, 5) + 4``, then about 20 %
    more each step, up to the cap) until the reported modes change by less than
    ``CONVERGENCE_SHARE * rtol`` (1e-4) from one count to the next, and that count is
    used. The cell takes the larger count of its corners (cached: a sweep pays for it once
    per cell); every point is then solved once, one batched ``eigvalsh`` per count.

    Accuracy: every reported mode within ``rtol`` (1e-3) of the converged Galerkin solution
    wherever the cap is not reached; measured within 1e-4 (seeded samples of ``v/c`` up
    to 0.9999 and ``EI / (T L**2)`` 1e-7 to 1, both ends, against 110 terms; at most 22
    terms pinned) and against
    Richardson-extrapolated finite differences for ``v/c`` up to 0.99 and
    ``EI / (T L**2)`` 1e-4 and 1e-2 (``tests/test_beam_accuracy.py``). The cap,
    ``GALERKIN_MAX_TERMS`` = 64 terms (a 128 x 128 complex matrix per point, the work of
    about 100 points at the old 14 terms), is reached by clamped ends with
    ``EI / (Pe L**2)`` below about 3e-7, where a :class:`GalerkinCapWarning` is issued.

    At rest this reduces to the stationary tensioned beam (pinned ends:
    :func:`pinned_beam_frequencies`, exact).

    References
    ----------
    Wickert and Mote, "Classical vibration analysis of axially moving continua", J. Appl.
    Mech. 57 (1990) 738-744 (from memory); Blevins, *Formulas for Natural Frequency and
    Mode Shape* (1979), tensioned beam with pinned ends (from memory).

    Examples
    --------
    >>> f = beam_frequencies(400.0, 0.12, 0.4, 0.5, 0.0, 3)     # at rest, pinned
    >>> [round(float(x), 4) for x in f]
    [74.8995, 165.1026, 281.7875]
    """
    ends = choice(SpanEnds, ends, "ends")
    P = np.asarray(quasi_static_n, dtype=float)
    L = np.asarray(length_m, dtype=float)
    v = np.asarray(speed_m_s, dtype=float)
    P, L, v = np.broadcast_arrays(P, L, v)
    shape = P.shape
    if terms is not None and terms < modes:
        raise ValueError(f"beam_frequencies: terms {terms} < modes {modes}; expected at least as many terms as modes")
    cap = max(int(max_terms), 2 * max(modes, 5) + 10)
    Pf, Lf, vf = P.reshape(-1), L.reshape(-1), v.reshape(-1)
    out = np.zeros((Pf.size, modes))
    used = np.zeros(Pf.size, dtype=np.int64)
    change = np.full(Pf.size, np.nan)
    capped = np.zeros(Pf.size, dtype=bool)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        Pe = Pf + bending_nm2 * _BUCKLING[ends] / Lf**2
        ok = np.isfinite(Pf) & np.isfinite(Lf) & np.isfinite(vf) & (Lf > 0) & (Pe > 0)
        if terms is not None:
            used[ok] = terms
        elif ok.any():
            # the cell of each point, and its term count from the cell's corners of largest u
            Pk, Lk = Pe[ok], Lf[ok]
            ku = np.ceil(np.log1p(np.abs(vf[ok]) * np.sqrt(mass_kg_m / Pk)) / _CELL_LOG_U)
            kb = np.floor(np.maximum(np.log10(bending_nm2 / (Pk * Lk * Lk)), _MIN_LOG10_BETA) / _CELL_LOG10_BETA)
            cells, where = np.unique(np.stack([ku, kb], axis=1).astype(np.int64), axis=0, return_inverse=True)
            res = np.array([[_corner_terms(ends, modes, rtol, cap, int(a), int(b) + db) for db in (0, 1)]
                            for a, b in cells])                         # (cells, 2 corners, 3)
            where = where.reshape(-1)
            used[ok] = res[:, :, 0].max(axis=1).astype(np.int64)[where]
            change[ok] = res[:, :, 1].max(axis=1)[where]
            capped[ok] = res[:, :, 2].any(axis=1)[where]
    for n in np.unique(used[ok]):
        j = np.flatnonzero(ok & (used == n))
        out[j], solved = _galerkin(ends, int(n), Pf[j], Lf[j], vf[j], bending_nm2, mass_kg_m, modes)
        used[j[~solved]] = 0
    if not full_output and capped.any():
        warnings.warn(GalerkinCapWarning(
            f"moving beam ({ends.value} ends): {int(capped.sum())} of {Pf.size} points did not converge to "
            f"rtol {rtol:g} within {cap} Galerkin terms (estimated relative error up to "
            f"{float(np.nanmax(change[capped])):.1e}); pass full_output=True to see which"), stacklevel=2)
    out = out.reshape(*shape, modes)
    if full_output:
        return out, BeamConvergence(used.reshape(shape), change.reshape(shape), capped.reshape(shape))
    return out


def span_frequencies(quasi_static_n: ArrayLike, tension_n: ArrayLike, mass_kg_m: float, length_m: ArrayLike,
                     speed_m_s: ArrayLike, modes: int = 5, *, bending_nm2: float | None = None,
                     ends: SpanEnds | str = SpanEnds.PINNED) -> NDArray[np.float64]:
    """Frequencies of moving spans: the exact string formula without ``EI``, the Galerkin
    beam with it (``ends``: :class:`~physics.model.SpanEnds` or its string, checked)."""
    ends = choice(SpanEnds, ends, "ends")
    if bending_nm2:
        return beam_frequencies(quasi_static_n, mass_kg_m, length_m, bending_nm2, speed_m_s, modes, ends=ends)
    P, T, L = np.broadcast_arrays(np.asarray(quasi_static_n, float), np.asarray(tension_n, float),
                                  np.asarray(length_m, float))
    return string_frequencies(P, T, mass_kg_m, L, modes)


def parabolic_sag(weight_n_m: ArrayLike, length_m: ArrayLike, tension_n: ArrayLike) -> NDArray[np.float64]:
    """Mid-span deflection ``w L**2 / (8 P)`` of a string of length ``L`` (the chord) under a load
    ``w`` per length square to it (pass ``w cos(beta)`` for the gravity component across an
    inclined span; also the sag along gravity under the whole ``w``)."""
    w = np.asarray(weight_n_m, dtype=float)
    L = np.asarray(length_m, dtype=float)
    P = np.asarray(tension_n, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(P > 0, w * L * L / (8.0 * P), np.nan)


def catenary_sag(chord: ArrayLike, gravity: ArrayLike, weight_n_m: float, horizontal_n: ArrayLike
                 ) -> NDArray[np.float64]:
    """Largest distance from the chord to an exact catenary, measured along gravity.

    Parameters
    ----------
    chord : (..., 2)
        Vector from one end of the span to the other, metres.
    gravity : (2,)
        Unit vector of gravity in the drawing plane.
    weight_n_m
        Weight per unit length of cable.
    horizontal_n
        Tension component square to gravity (the catenary's constant ``H``). For a moving
        span under quasi-static tension ``P`` with chord inclination ``beta``,
        ``H = P cos(beta)`` reproduces the parabola ``w L**2 / (8 P)`` for small sag.

    Notes
    -----
    With ``a`` the horizontal run, ``h`` the rise and ``k = H / w``:
    ``y = k cosh((x - x0)/k)``, ``x0 = a/2 - k asinh(h / (2 k sinh(a / 2k)))``; the sag is
    largest where the slope equals the chord's, ``x* = x0 + k asinh(h / a)`` (Irvine,
    *Cable Structures*, 1981, ch. 1, from memory).
    """
    ch = np.asarray(chord, dtype=float)
    g = np.asarray(gravity, dtype=float)
    g = g / np.hypot(g[0], g[1])
    up = -g
    side = np.array([-up[1], up[0]])                  # "horizontal": square to gravity
    a = np.abs(ch @ side)
    h = ch @ up * np.sign(np.where(ch @ side == 0, 1.0, ch @ side))
    H = np.asarray(horizontal_n, dtype=float)
    a, h, H = np.broadcast_arrays(a, h, H)
    out = np.zeros(a.shape)
    ok = (a > 1e-12 * np.hypot(a, h)) & (H > 0)
    k = H[ok] / weight_n_m
    aa, hh = a[ok], h[ok]
    with np.errstate(over="ignore", invalid="ignore"):
        x0 = aa / 2 - k * np.arcsinh(hh / (2 * k * np.sinh(aa / (2 * k))))
        xs = x0 + k * np.arcsinh(hh / aa)
        y = k * (np.cosh((xs - x0) / k) - np.cosh(-x0 / k))
        out[ok] = hh / aa * xs - y
    out[~ok & (H <= 0)] = np.nan
    return out
