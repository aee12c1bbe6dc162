"""Exact belt-path geometry: tangent spans, wrap angles and pitch length.

A loop is a closed sequence of pulleys in travel order. At each pulley the path turns
round the centre either counter-clockwise (``turn = +1``) or clockwise (``turn = -1``).
With the signed radius ``rho = turn * r`` the span leaving pulley ``i`` for pulley ``j``
has direction ``d`` with ``sin(alpha) = (rho_i - rho_j) / D`` measured from the
centre line, starts at ``c_i - rho_i * perp(d)`` and ends at ``c_j - rho_j * perp(d)``
(``perp`` turns a vector by +90 degrees). Open, crossed and back-side spans are all
this one formula; which one a span is follows from the two turns.

Everything here is SI (metres, radians) and free of any file or drawing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "GeometryError",
    "LoopGeometry",
    "loop_geometry",
    "perp",
    "wrap_angles",
    "open_belt",
    "crossed_belt",
    "open_belt_approx_length",
    "crossing_pairs",
    "signed_turning",
    "turns_from_faces",
    "faces_from_turns",
    "TURNING_TOL_RAD",
    "path_area",
]

#: Allowed difference between the total turning of a simple loop and 2*pi.
TURNING_TOL_RAD = 1e-6


class GeometryError(ValueError):
    """No belt path exists for the given pulleys (e.g. overlapping circles)."""

    def __init__(self, message: str, span_index: int | None = None):
        super().__init__(message)
        self.span_index = span_index


def perp(v: NDArray[np.float64]) -> NDArray[np.float64]:
    """Vectors ``v`` (shape ``(..., 2)``) turned by +90 degrees."""
    out = np.empty_like(v)
    out[..., 0] = -v[..., 1]
    out[..., 1] = v[..., 0]
    return out


@dataclass(frozen=True, slots=True)
class LoopGeometry:
    """Tangent geometry of one loop, span ``k`` running from pulley ``k`` to ``k + 1``.

    Attributes
    ----------
    span_start_m, span_end_m
        Tangent points, shape ``(n, 2)``, metres.
    span_dir
        Unit travel direction of each span, shape ``(n, 2)``.
    span_length_m
        Free span lengths, shape ``(n,)``.
    wrap_rad
        Wrap angle on each pulley, shape ``(n,)``, in ``[0, 2*pi)``.
    arc_length_m
        Belt length in contact with each pulley, ``r * wrap``.
    length_m
        Pitch length of the whole loop.
    """

    span_start_m: NDArray[np.float64]
    span_end_m: NDArray[np.float64]
    span_dir: NDArray[np.float64]
    span_length_m: NDArray[np.float64]
    wrap_rad: NDArray[np.float64]
    arc_length_m: NDArray[np.float64]
    length_m: float


def wrap_angles(d_in: NDArray[np.float64], d_out: NDArray[np.float64],
                turns: NDArray[np.float64]) -> NDArray[np.float64]:
    """Angle the travel direction turns from ``d_in`` to ``d_out`` in the sense ``turns``.

    Returns values in ``[0, 2*pi)``; a turn within 1e-12 rad of zero in the wrong sense
    (a pulley the belt only grazes) counts as zero.
    """
    cross = d_in[..., 0] * d_out[..., 1] - d_in[..., 1] * d_out[..., 0]
    dot = np.einsum("...i,...i->...", d_in, d_out)
    ang = turns * np.arctan2(cross, dot)
    ang = np.where((ang < 0.0) & (ang > -1e-12), 0.0, ang)
    return np.mod(ang, 2.0 * math.pi)


def loop_geometry(centers_m: ArrayLike, radii_m: ArrayLike, turns: ArrayLike) -> LoopGeometry:
    """Exact tangent path of a closed loop of pulleys.

    Parameters
    ----------
    centers_m : array, shape (n, 2)
        Pulley centres in travel order, metres (n >= 2).
    radii_m : array, shape (n,)
        Pitch radii, metres, > 0.
    turns : array, shape (n,)
        +1 where the path turns counter-clockwise round the centre, -1 clockwise.

    Returns
    -------
    LoopGeometry

    Raises
    ------
    GeometryError
        When two consecutive pulleys admit no such tangent (one circle inside the
        other's reach: ``|rho_i - rho_j| >= D``).

    Notes
    -----
    With ``rho = turn * r``, ``D = |c_j - c_i|``: span length ``sqrt(D**2 - (rho_i -
    rho_j)**2)``; open spans have equal turns, crossed or back-side spans opposite ones.
    For two pulleys this reproduces the textbook closed forms (:func:`open_belt`,
    :func:`crossed_belt`).

    Examples
    --------
    >>> g = loop_geometry([[0, 0], [0.5, 0]], [0.2, 0.05], [1, 1])
    >>> round(float(g.wrap_rad[1]), 5)   # small pulley, (D - d)/(2C) = 0.3
    2.53221
    """
    c = np.asarray(centers_m, dtype=float).reshape(-1, 2)
    r = np.asarray(radii_m, dtype=float).reshape(-1)
    t = np.asarray(turns, dtype=float).reshape(-1)
    n = c.shape[0]
    if n < 2 or r.shape[0] != n or t.shape[0] != n:
        raise GeometryError(f"a loop needs at least 2 pulleys with one radius and turn each, got {n}")
    rho = t * r
    c_next = np.roll(c, -1, axis=0)
    rho_next = np.roll(rho, -1)
    delta = c_next - c
    dist = np.hypot(delta[:, 0], delta[:, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (rho - rho_next) / dist
    bad = ~np.isfinite(s) | (np.abs(s) >= 1.0)
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        raise GeometryError(
            f"no tangent span from pulley {k} to pulley {(k + 1) % n}: centre distance "
            f"{dist[k]:.6g} m is not more than |{rho[k]:.6g} - {rho_next[k]:.6g}| m",
            span_index=k)
    cos_a = np.sqrt(1.0 - s * s)
    u = delta / dist[:, None]
    d = cos_a[:, None] * u + s[:, None] * perp(u)
    pd = perp(d)
    start = c - rho[:, None] * pd
    end = c_next - rho_next[:, None] * pd
    span_len = dist * cos_a
    d_in = np.roll(d, 1, axis=0)            # span arriving at pulley i is span i-1
    wrap = wrap_angles(d_in, d, t)
    arc = r * wrap
    return LoopGeometry(start, end, d, span_len, wrap, arc, float(span_len.sum() + arc.sum()))


def signed_turning(geom: LoopGeometry, turns: ArrayLike) -> float:
    """Total turning of the travel direction round the loop, ``sum(turn * wrap)``.

    ``2*pi`` for a simple counter-clockwise loop, ``-2*pi`` clockwise.
    """
    return float(np.sum(np.asarray(turns, dtype=float) * geom.wrap_rad))


def open_belt(d_large_m: float, d_small_m: float, center_distance_m: float) -> tuple[float, float, float]:
    """Wrap angles and pitch length of an open two-pulley belt.

    Returns ``(theta_small, theta_large, length)`` in radians and metres.

    Notes
    -----
    ``theta_small = pi - 2 asin((D - d) / 2C)``, ``theta_large = pi + 2 asin((D - d) / 2C)``,
    ``L = sqrt(4 C**2 - (D - d)**2) + (D theta_large + d theta_small) / 2``.

    References
    ----------
    Budynas and Nisbett, *Shigley's Mechanical Engineering Design*, 9th ed., ch. 17,
    Eq. 17-1 (from memory; values confirmed against the published flat-belt solution).
    """
    s = (d_large_m - d_small_m) / (2.0 * center_distance_m)
    th_s = math.pi - 2.0 * math.asin(s)
    th_l = math.pi + 2.0 * math.asin(s)
    length = math.sqrt(4.0 * center_distance_m**2 - (d_large_m - d_small_m) ** 2) + (
        d_large_m * th_l + d_small_m * th_s) / 2.0
    return th_s, th_l, length


def crossed_belt(d_large_m: float, d_small_m: float, center_distance_m: float) -> tuple[float, float]:
    """Wrap angle (both pulleys) and pitch length of a crossed two-pulley belt.

    Notes
    -----
    ``theta = pi + 2 asin((D + d) / 2C)``, ``L = sqrt(4 C**2 - (D + d)**2) + (D + d) theta / 2``.

    References
    ----------
    Budynas and Nisbett, *Shigley's Mechanical Engineering Design*, 9th ed., ch. 17,
    Eq. 17-2 (from memory).
    """
    th = math.pi + 2.0 * math.asin((d_large_m + d_small_m) / (2.0 * center_distance_m))
    length = math.sqrt(4.0 * center_distance_m**2 - (d_large_m + d_small_m) ** 2) + (
        d_large_m + d_small_m) * th / 2.0
    return th, length


def open_belt_approx_length(d_large_m: float, d_small_m: float, center_distance_m: float) -> float:
    """Textbook approximation ``L ~ 2C + pi (D + d)/2 + (D - d)**2 / (4C)`` (short by
    about ``(D - d)**4 / (192 C**3)``)."""
    return (2.0 * center_distance_m + math.pi * (d_large_m + d_small_m) / 2.0
            + (d_large_m - d_small_m) ** 2 / (4.0 * center_distance_m))


def crossing_pairs(starts: ArrayLike, ends: ArrayLike, *, tol: float = 0.0) -> list[tuple[int, int]]:
    """Pairs ``(i, j)``, ``i < j``, of segments that properly cross each other.

    Segments sharing an end point (consecutive spans) do not count; ``tol`` is the
    length below which a crossing at an end point is ignored.
    """
    a = np.asarray(starts, dtype=float).reshape(-1, 2)
    b = np.asarray(ends, dtype=float).reshape(-1, 2)
    n = a.shape[0]
    if n < 2:
        return []
    d = b - a
    i, j = np.triu_indices(n, 1)
    denom = d[i, 0] * d[j, 1] - d[i, 1] * d[j, 0]
    w = a[j] - a[i]
    with np.errstate(divide="ignore", invalid="ignore"):
        ti = (w[:, 0] * d[j, 1] - w[:, 1] * d[j, 0]) / denom
        tj = (w[:, 0] * d[i, 1] - w[:, 1] * d[i, 0]) / denom
    len_i = np.hypot(d[i, 0], d[i, 1])
    len_j = np.hypot(d[j, 0], d[j, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        ei = np.where(len_i > 0, tol / len_i, 1.0)
        ej = np.where(len_j > 0, tol / len_j, 1.0)
    hit = (np.abs(denom) > 0) & (ti > ei) & (ti < 1 - ei) & (tj > ej) & (tj < 1 - ej)
    return [(int(p), int(q)) for p, q in zip(i[hit], j[hit])]


def turns_from_faces(faces: ArrayLike, crossed: ArrayLike, loop_sense: int) -> NDArray[np.float64]:
    """Turning senses of a routed loop from the belt faces and the crossed spans.

    Parameters
    ----------
    faces : array of +1 (inside contact) / -1 (back contact), shape (n,)
    crossed : bool array, shape (n,); ``crossed[k]`` is span k (pulley k to k + 1)
    loop_sense : +1 or -1, the sense in which inside pulleys turn before any twist

    Notes
    -----
    ``turn_i = loop_sense * face_i * (-1)**(number of crossed spans before i)``: each
    half twist swaps which face of the belt meets the pulleys.
    """
    f = np.asarray(faces, dtype=float)
    x = np.asarray(crossed, dtype=bool)
    twists_before = np.concatenate([[0], np.cumsum(x)[:-1]])
    return loop_sense * f * np.where(twists_before % 2 == 0, 1.0, -1.0)


def faces_from_turns(turns: ArrayLike, crossed: ArrayLike, reference_sense: int) -> NDArray[np.float64]:
    """Belt faces (+1 inside, -1 back) from turning senses and crossed spans.

    Inverse of :func:`turns_from_faces` for a given ``reference_sense``.
    """
    t = np.asarray(turns, dtype=float)
    x = np.asarray(crossed, dtype=bool)
    twists_before = np.concatenate([[0], np.cumsum(x)[:-1]])
    return reference_sense * t * np.where(twists_before % 2 == 0, 1.0, -1.0)


def path_area(geom: LoopGeometry, radii_m: ArrayLike, turns: ArrayLike) -> float:
    """Signed area enclosed by the exact belt path (positive counter-clockwise).

    The polygon through the tangent points plus, for every wrap, the circular segment
    between its chord and its arc (signed by the turn).
    """
    r = np.asarray(radii_m, dtype=float)
    t = np.asarray(turns, dtype=float)
    n = r.shape[0]
    pts = np.empty((2 * n, 2))
    pts[0::2] = geom.span_start_m
    pts[1::2] = geom.span_end_m
    x, y = pts[:, 0], pts[:, 1]
    poly = 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))
    theta = t * geom.wrap_rad
    segs = 0.5 * r * r * (theta - np.sin(theta))
    return poly + float(segs.sum())
