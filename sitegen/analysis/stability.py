"""How firmly each archetype holds: cluster-wise stability under resampling.

The whole archetype-finding rule is run again on random halves of the
partition's decks (subsets drawn without replacement); each archetype is
matched, within the half, to the group of the rerun that shares the most
decks with it, by the Jaccard index of the two sets of decks (0 when the
archetype vanished). Its stability is the mean of those indices over the
reruns (Hennig 2007, cluster-wise assessment of cluster stability). Quoted
from memory: a mean Jaccard of about 0.75 and above marks a stable cluster,
0.5 and below one that dissolves.

Large partitions are first sampled to a fixed-seed subset, so the cost does
not grow with the partition's size.
"""
from __future__ import annotations

from collections.abc import Callable

import numpy as np

#: Reruns on random halves.
RUNS = 6
#: Most decks of a partition the reruns draw their halves from.
SAMPLE = 2400
#: Stability from which an archetype is a clear group, and under which it is a weak one.
CLEAR = 0.75
WEAK = 0.5


def jaccard_best(members: np.ndarray, labels: np.ndarray) -> float:
    """Largest Jaccard index between the boolean set ``members`` and any group (>= 0) of ``labels``."""
    size = int(members.sum())
    if size == 0:
        return 0.0
    groups = labels[members]
    groups = groups[groups >= 0]
    if len(groups) == 0:
        return 0.0
    shared = np.bincount(groups)
    totals = np.bincount(labels[labels >= 0], minlength=len(shared))[: len(shared)]
    union = size + totals - shared
    return float(np.max(np.where(union > 0, shared / np.maximum(union, 1), 0.0)))


def stability(labels: np.ndarray, rerun: Callable[[np.ndarray], np.ndarray], *, seed: int,
              runs: int = RUNS, sample: int = SAMPLE) -> np.ndarray:
    """Mean best Jaccard index of each group 0..k-1 of ``labels`` over ``runs`` reruns on random halves.

    ``rerun(rows)`` runs the archetype-finding rule on the decks at the given
    row positions and returns their labels (-1 for other decks).
    """
    from .cluster import sample_rows  # scikit-learn stays out of the building process, which reads words()

    n = len(labels)
    k = int(labels.max(initial=-1)) + 1
    if k == 0:
        return np.zeros(0)
    pool = sample_rows(n, sample, seed + 7)
    rng = np.random.default_rng(seed + 11)
    scores = np.zeros((runs, k))
    for r in range(runs):
        half = np.sort(rng.choice(pool, size=max(2, len(pool) // 2), replace=False))
        found = np.asarray(rerun(half))
        mine = labels[half]
        for c in range(k):
            scores[r, c] = jaccard_best(mine == c, found)
    return scores.mean(axis=0)


def words(score: float | None) -> str:
    """A reader's words for a stability score."""
    if score is None:
        return ""
    if score >= CLEAR:
        return "clear group"
    if score > WEAK:
        return "loose group"
    return "weak group"
