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
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .model import SpanEnds, choice

__all__ = ["wave_speeds", "string_frequencies", "beam_frequencies", "span_frequencies",
           "pinned_beam_frequencies", "catenary_sag", "parabolic_sag", "GALERKIN_TERMS", "G0"]

#: Standard gravity, m/s^2 (CGPM 1901).
G0 = 9.80665
#: Basis functions of the Galerkin solution per span, beyond twice the modes wanted:
#: 2 * modes + 4 terms give the fifth mode to 5e-5 at v/c = 0.85 (checked against 40 terms).
GALERKIN_EXTRA = 4
GALERKIN_TERMS = 2 * 5 + GALERKIN_EXTRA


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


@lru_cache(maxsize=8)
def _basis(ends: SpanEnds, terms: int) -> tuple[NDArray[np.float64], ...]:
    """Dimensionless Galerkin matrices on [0, 1]: mass, gyroscopic, string and bending
    stiffness, each ``(terms, terms)``, with the mass already factored out (Cholesky),
    so the equation reads ``y'' + (2 v / L) G y' + (P K1 / (m L**2) + EI K2 / (m L**4)) y = 0``.

    Basis: ``x (1 - x) P_j(2x - 1)`` (pinned) or ``(x (1 - x))**2 P_j(2x - 1)`` (clamped),
    with Legendre polynomials ``P_j``.
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


def beam_frequencies(quasi_static_n: ArrayLike, mass_kg_m: float, length_m: ArrayLike,
                     bending_nm2: float, speed_m_s: ArrayLike, modes: int = 5, *,
                     ends: SpanEnds | str = SpanEnds.PINNED, terms: int | None = None) -> NDArray[np.float64]:
    """Natural frequencies of axially moving tensioned beams by Galerkin's method, Hz.

    Parameters broadcast together (e.g. ``(K, n)`` operating points by spans); the result
    has a trailing axis of ``modes``. With ``q = R^T y`` (``M = R R^T``) the equation
    ``y'' + g G y' + S**2 y = 0`` (``G`` skew, ``S**2`` symmetric positive) has the
    frequencies ``w`` of the Hermitian matrix ``[[0, S], [S, -i g G]]``; its positive
    eigenvalues are the natural frequencies. Zero where the span has buckled or gone slack
    (the stiffness matrix is not positive).

    At rest this reduces to the stationary tensioned beam (pinned ends:
    :func:`pinned_beam_frequencies`).
    """
    P = np.asarray(quasi_static_n, dtype=float)
    L = np.asarray(length_m, dtype=float)
    v = np.asarray(speed_m_s, dtype=float)
    P, L, v = np.broadcast_arrays(P, L, v)
    shape = P.shape
    terms = terms or 2 * max(modes, 5) + GALERKIN_EXTRA
    Pf, Lf, vf = P.reshape(-1), L.reshape(-1), v.reshape(-1)
    G, K1, K2, lam_star = _basis(choice(SpanEnds, ends, "ends"), terms)
    out = np.zeros((Pf.size, modes))
    if Pf.size == 0:
        return out.reshape(*shape, modes)
    # positive stiffness (not buckled, not slack beyond what bending carries)
    ok = np.isfinite(Pf) & np.isfinite(Lf) & (Pf > -bending_nm2 * lam_star / Lf**2 * (1 - 1e-9))
    if ok.any():
        P_ok, L_ok = Pf[ok], Lf[ok]
        S2 = (P_ok / (mass_kg_m * L_ok**2))[:, None, None] * K1 + \
            (bending_nm2 / (mass_kg_m * L_ok**4))[:, None, None] * K2
        # any F with F^T F = S2 linearises the problem; the Cholesky factor is the cheapest
        F = np.swapaxes(np.linalg.cholesky(S2), 1, 2)
        g = (2.0 * vf[ok] / L_ok)[:, None, None]
        H = np.zeros((F.shape[0], 2 * terms, 2 * terms), dtype=complex)
        H[:, :terms, terms:] = F
        H[:, terms:, :terms] = np.swapaxes(F, 1, 2)
        H[:, terms:, terms:] = -1j * g * G[None, :, :]
        w = np.linalg.eigvalsh(H)
        w = w[:, terms:]                          # the positive half, ascending
        out[ok] = w[:, :modes] / (2.0 * math.pi)
    return out.reshape(*shape, modes)


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
    """Sag measured along gravity, ``w L**2 / (8 P)``, at any incline (``L`` the chord)."""
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
