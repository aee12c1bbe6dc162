"""Quasi-static tension round a loop, grip at every loaded pulley, hub loads.

The quasi-static tension ``P`` (belt tension less its centrifugal part ``m v**2``) steps
at every pulley with torque and is constant along a free span. Span ``k`` leaves pulley
``k``; crossing pulley ``i`` in travel order ``P`` drops by ``Q_i / (strands r_i)``, so the
span arriving at the driver is the tight one. The level of ``P`` is set by the
tensioning:

* ``fixed`` centres: the length-weighted mean of ``T = P + m v**2`` over the loop equals
  the install tension ``T0`` (each wrap arc counted at the mean of its two spans);
* ``constant``: the same mean of ``P`` equals ``T0`` (the textbook model);
* a tensioner idler fixes ``P`` on its two spans from its force, slide or arm.

All functions are vectorised over ``K`` operating points (rows). Tensions are per strand;
torques, forces and hub loads are for the whole set of strands.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import IntEnum

import numpy as np
from numpy.typing import NDArray

from .geometry import LoopGeometry
from .model import Tensioning

__all__ = ["GripState", "Tensioner", "span_weights", "tension_steps", "quasi_static_tension", "grip",
           "required_level", "hub_loads", "tensioner_gain", "capstan_ratio", "wedge_friction"]


class GripState(IntEnum):
    """Grip at a pulley. Integer-valued so a ``(K, n)`` array of states stays numeric
    (``state >= GripState.SLIP`` is a grip failure); :attr:`label` is the report's word.
    """

    NO_TORQUE = 0
    OK = 1
    SLIP = 2
    SLACK = 3

    @property
    def label(self) -> str:
        """``no-torque``, ``ok``, ``slip`` or ``slack``."""
        return self.name.lower().replace("_", "-")

    @property
    def has_utilisation(self) -> bool:
        """Whether a grip utilisation exists (``ok`` or ``slip``)."""
        return self in (GripState.OK, GripState.SLIP)


@dataclass(frozen=True, slots=True)
class Tensioner:
    """A tensioner idler at loop position ``index``.

    Exactly one of: ``force_n`` along the bisector of its wrap (``direction`` None),
    ``force_n`` along a slide of unit ``direction``, or ``arm_torque_nm`` about ``pivot_m``.
    """

    index: int
    force_n: float | None = None
    direction: tuple[float, float] | None = None
    pivot_m: tuple[float, float] | None = None
    arm_torque_nm: float | None = None


def capstan_ratio(mu: float, wrap_rad: float) -> float:
    """Largest ``P_tight / P_slack`` without slip: ``exp(mu * theta)``.

    References
    ----------
    Euler (1762), Eytelwein (1808): the capstan (belt friction) equation; e.g. Hibbeler,
    *Engineering Mechanics: Statics*, ch. 8 (from memory).
    """
    return math.exp(mu * wrap_rad)


def wedge_friction(mu: float, groove_angle_rad: float) -> float:
    """Apparent friction of a belt wedged in a groove of included angle ``groove``:
    ``mu / sin(groove / 2)`` (Shigley, ch. 17, from memory)."""
    return mu / math.sin(groove_angle_rad / 2.0)


def span_weights(geom: LoopGeometry) -> NDArray[np.float64]:
    """Length each span stands for in the loop's mean: its own length plus half of each
    wrap arc at its ends. Sums to the pitch length."""
    arc = geom.arc_length_m
    return geom.span_length_m + 0.5 * (arc + np.roll(arc, -1))


def tension_steps(Q: NDArray[np.float64], radii_m: NDArray[np.float64], strands: int) -> NDArray[np.float64]:
    """``delta`` with ``P_k = X + delta_k``: span 0 (leaving pulley 0) as reference.

    ``delta_k = -sum_{j=1..k} Q_j / (strands r_j)``; shape ``(K, n)``.
    """
    step = -np.asarray(Q, dtype=float) / (strands * np.asarray(radii_m)[None, :])
    step[:, 0] = 0.0
    return np.cumsum(step, axis=1)


def tensioner_gain(geom: LoopGeometry, centers_m: NDArray[np.float64], t: Tensioner) -> float:
    """``G`` with span tension ``P = setting / (strands * G)`` at the tensioner.

    Bisector: ``|e_a + e_b|``; slide along ``d``: ``|(e_a + e_b) . d|``; arm:
    ``|(c - p) x (e_a + e_b)|`` (setting = arm torque). ``e_a``, ``e_b``: unit vectors along
    the two spans, pointing away from the idler.
    """
    i = t.index
    e = -geom.span_dir[i - 1] + geom.span_dir[i]
    if t.arm_torque_nm is not None and t.pivot_m is not None:
        c = np.asarray(centers_m[i]) - np.asarray(t.pivot_m)
        return abs(float(c[0] * e[1] - c[1] * e[0]))
    if t.direction is not None:
        return abs(float(np.dot(e, t.direction)))
    return float(np.hypot(e[0], e[1]))


def quasi_static_tension(delta: NDArray[np.float64], weights: NDArray[np.float64], *, tensioning: Tensioning,
                         install_tension_n: float | None, mass_kg_m: float, speed_m_s: NDArray[np.float64],
                         tensioner: Tensioner | None = None, tensioner_p_n: float | None = None
                         ) -> NDArray[np.float64]:
    """Span tensions ``P`` (K, n) from the steps ``delta`` and the tensioning model."""
    v = np.asarray(speed_m_s, dtype=float).reshape(-1)
    if tensioner is not None:
        i = tensioner.index
        level = tensioner_p_n - 0.5 * (delta[:, i - 1] + delta[:, i])
    else:
        mean = delta @ weights / weights.sum()
        target = install_tension_n - (mass_kg_m * v * v if tensioning is Tensioning.FIXED else 0.0)
        level = target - mean
    return level[:, None] + delta


def required_level(delta: NDArray[np.float64], Q: NDArray[np.float64], radii_m: NDArray[np.float64],
                   mu: NDArray[np.float64], wrap_rad: NDArray[np.float64], strands: int,
                   margin: float) -> NDArray[np.float64]:
    """Lowest ``X`` (``P_k = X + delta_k``) keeping every loaded pulley's grip utilisation
    at most ``margin``, per operating point, shape ``(K,)``.

    At pulley ``i`` the slack side must carry ``|dP| / (exp(margin mu theta) - 1)``, with
    ``dP = Q_i / (strands r_i)`` (capstan limit with a margin on ``mu theta``).
    """
    n = delta.shape[1]
    d_arr = np.roll(delta, 1, axis=1)          # span arriving at pulley i is span i-1
    slack_delta = np.minimum(d_arr, delta)
    dP = np.abs(Q) / (strands * radii_m[None, :])
    with np.errstate(divide="ignore", over="ignore"):
        need = dP / np.expm1(margin * mu * wrap_rad)[None, :] - slack_delta
    loaded = np.abs(Q) > 0
    need = np.where(loaded, need, -np.inf)
    # with no load anywhere, any positive level will do
    out = need.max(axis=1) if n else np.zeros(delta.shape[0])
    return np.where(np.isfinite(out), out, -slack_delta.min(axis=1))


def grip(P: NDArray[np.float64], Q: NDArray[np.float64], mu: NDArray[np.float64],
         wrap_rad: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.int8]]:
    """Grip utilisation ``ln(P_t / P_s) / (mu theta)`` and a state per pulley, shape ``(K, n)``.

    State (:class:`GripState` values): ``NO_TORQUE``, ``OK`` (utilisation <= 1), ``SLIP``,
    ``SLACK`` (slack side at or below zero: no ratio exists; utilisation NaN).
    """
    return grip_at_ends(np.roll(P, 1, axis=1), P, Q, mu, wrap_rad)


def grip_at_ends(P_arrive: NDArray[np.float64], P_leave: NDArray[np.float64], Q: NDArray[np.float64],
                 mu: NDArray[np.float64], wrap_rad: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.int8]]:
    """:func:`grip` from the tensions where the belt arrives at and leaves each pulley ``(K, n)``
    (they differ from the spans' mean tensions where a span's weight changes its tension)."""
    P_arr, P = P_arrive, P_leave
    tight = np.maximum(P_arr, P)
    slack = np.minimum(P_arr, P)
    loaded = np.abs(Q) > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.log(tight / slack) / (mu * wrap_rad)[None, :]
    state = np.where(~loaded, GripState.NO_TORQUE,
                     np.where(slack <= 0, GripState.SLACK,
                              np.where(u > 1.0, GripState.SLIP, GripState.OK))).astype(np.int8)
    u = np.where((state == GripState.OK) | (state == GripState.SLIP), u, np.nan)
    return u, state


def hub_loads(P: NDArray[np.float64], geom: LoopGeometry, strands: int) -> NDArray[np.float64]:
    """Force of the belt on each pulley (whole set), shape ``(K, n, 2)``, newtons.

    The vector sum of the two spans' ``P``, each along its span pointing away from the
    pulley (the centrifugal part of ``T`` loads the belt, not the pulley).
    """
    e_in = -np.roll(geom.span_dir, 1, axis=0)       # arriving span, pointing back along it
    e_out = geom.span_dir
    P_arr = np.roll(P, 1, axis=1)
    return strands * (P_arr[:, :, None] * e_in[None, :, :] + P[:, :, None] * e_out[None, :, :])
