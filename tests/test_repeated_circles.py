"""Repeated circles: :func:`layout.recognize._dedup_circles` against the rule read naively
(each circle in drawing order, not itself a copy, takes every later circle, not yet a copy,
whose centre and radius are within the join tolerance of its own), over every pair."""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest

from layout.read import Circles
from layout.recognize import Tolerances, _dedup_circles


def _naive(x: np.ndarray, y: np.ndarray, r: np.ndarray, tol: Tolerances) -> np.ndarray:
    n = len(x)
    alias = np.arange(n)
    for i in range(n):
        if alias[i] != i:
            continue
        for j in range(i + 1, n):
            lim = tol.join_abs(min(r[i], r[j]), max(abs(x[i]), abs(y[i])))
            if alias[j] == j and math.hypot(x[i] - x[j], y[i] - y[j]) <= lim and abs(r[i] - r[j]) <= lim:
                alias[j] = i
    return alias


def _drawing(x, y, r) -> SimpleNamespace:
    n = len(x)
    return SimpleNamespace(circles=Circles(x, y, r, ["0"] * n, [f"{k:X}" for k in range(n)], [""] * n))


@pytest.mark.parametrize("seed", range(60))
def test_aliases_match_the_naive_rule(seed):
    # circles on a coarse grid of centres and radii (many exact copies), some moved within or
    # past the tolerance (1e-3 of the radius: 0.01 at r = 10)
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 150))
    x = rng.integers(0, 4, n) * 1.0
    y = rng.integers(0, 3, n) * 1.0
    r = 10.0 + rng.integers(0, 3, n)
    moved = rng.random(n) < 0.4
    for a in (x, y, r):
        a[moved] += rng.uniform(-0.02, 0.02, int(moved.sum()))
    tol = Tolerances()
    alias, repeats = _dedup_circles(_drawing(x, y, r), tol)
    assert alias.tolist() == _naive(x, y, r, tol).tolist()
    assert repeats == sorted(((j, int(alias[j])) for j in range(n) if alias[j] != j), key=lambda p: (p[1], p[0]))
