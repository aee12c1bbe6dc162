"""Ends that meet: the clusters of :func:`layout.recognize.end_clusters` against a brute-force
reading of the rule (every pair of ends of different pieces within the larger of their two
tolerances meets; clusters are the connected components), computed independently with
scipy's distance matrix and graph components."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial.distance import cdist

from layout.recognize import CrowdedEnds, end_clusters


def _brute(P: np.ndarray, etol: np.ndarray) -> np.ndarray:
    d = cdist(P, P)
    i, j = np.nonzero(d <= np.maximum(etol[:, None], etol[None, :]))
    keep = (i < j) & (i // 2 != j // 2)
    g = coo_matrix((np.ones(keep.sum()), (i[keep], j[keep])), shape=(len(P), len(P)))
    return connected_components(g, directed=False)[1]


def _same_partition(a: np.ndarray, b: np.ndarray) -> bool:
    """Two labellings that group the ends alike (labels may differ)."""
    pairs = set(zip(a.tolist(), b.tolist()))
    return len(pairs) == len(set(a.tolist())) == len(set(b.tolist()))


def _cloud(rng: np.random.Generator, pieces: int) -> tuple[np.ndarray, np.ndarray]:
    """Ends on a coarse grid (many drawn at one point), some nudged within or past the
    tolerance, some pieces of no length, a few ends with a wide tolerance."""
    P = rng.integers(0, 6, size=(2 * pieces, 2)).astype(float)
    nudge = rng.random(2 * pieces) < 0.3
    P[nudge] += rng.uniform(-0.08, 0.08, size=(int(nudge.sum()), 2))
    zero = rng.random(pieces) < 0.15
    P[2 * np.flatnonzero(zero) + 1] = P[2 * np.flatnonzero(zero)]
    etol = np.full(2 * pieces, 0.05)
    wide = rng.random(2 * pieces) < 0.05
    etol[wide] = rng.uniform(0.1, 1.5, size=int(wide.sum()))
    return P, etol


@pytest.mark.parametrize("seed", range(300))
def test_clusters_match_the_pairwise_rule(seed):
    rng = np.random.default_rng(seed)
    P, etol = _cloud(rng, int(rng.integers(1, 120)))
    assert _same_partition(end_clusters(P, etol), _brute(P, etol))


def test_a_lone_piece_of_no_length_keeps_its_two_ends_apart():
    # both ends of one piece never meet each other (the rule's i // 2 != j // 2)
    P = np.array([[1.0, 1.0], [1.0, 1.0], [5.0, 5.0], [5.0, 5.01]])
    labels = end_clusters(P, np.full(4, 0.05))
    assert len(set(labels.tolist())) == 4


def test_ends_within_a_hair_by_the_thousand_are_counted_not_listed():
    # 3000 distinct ends within 1e-6 of one point: 3000 * 2999 / 2 = 4 498 500 pairs, over the
    # floor of 2 000 000 (and over 8 per end)
    rng = np.random.default_rng(1)
    P = 10.0 + rng.uniform(-1e-6, 1e-6, size=(3000, 2))
    with pytest.raises(CrowdedEnds) as err:
        end_clusters(P, np.full(3000, 1e-3))
    assert err.value.pairs == 4_498_500
