"""The partition map: a 2-D t-SNE of a stratified sample of decks.

Decks are sampled per archetype (proportional, with a few from even the
smallest group, so every archetype shows up), then embedded from their SVD
rows. One seed, one thread and PCA initialisation make the map the same
bytes on every run.
"""
from __future__ import annotations

from collections.abc import Sequence

import numpy as np

#: Least decks drawn from each group (or all of it when smaller).
MIN_PER_GROUP = 5


def stratified_sample(groups: Sequence[str], n_points: int, seed: int, min_per: int = MIN_PER_GROUP) -> np.ndarray:
    """Sorted row indices: at most ``n_points`` rows, shared among groups by size.

    Each group gets floor(n_points * size / n) rows, at least
    min(size, ``min_per``); seats left over go to the largest remainders
    (ties by group name), and if the minimums overshoot, the largest groups
    give rows back. Within a group rows are drawn without replacement from
    one fixed-seed generator, groups in name order.
    """
    groups = np.asarray(groups, dtype=object)
    n = len(groups)
    if n <= n_points:
        return np.arange(n)
    names = sorted(set(groups.tolist()))
    members = {g: np.flatnonzero(groups == g) for g in names}
    sizes = np.array([len(members[g]) for g in names])
    exact = n_points * sizes / n
    quota = np.maximum(np.floor(exact).astype(int), np.minimum(sizes, min_per))
    while quota.sum() > n_points:
        quota[np.argmax(quota)] -= 1
    spare = n_points - quota.sum()
    if spare > 0:
        remainder = exact - np.floor(exact)
        for i in np.lexsort((np.arange(len(names)), -remainder))[:spare]:
            if quota[i] < sizes[i]:
                quota[i] += 1
    rng = np.random.default_rng(seed)
    picked = [rng.choice(members[g], size=int(q), replace=False) for g, q in zip(names, quota)]
    return np.sort(np.concatenate(picked))


#: Early-exaggeration steps before the ``iterations`` of a map.
EXAGGERATION_STEPS = 125
#: Barnes-Hut accuracy: 0.8 is about twice as fast as 0.5 with maps as well separated (method notes).
THETA = 0.8


def tsne(rows: np.ndarray, seed: int, iterations: int = 250) -> np.ndarray:
    """2-D t-SNE coordinates of ``rows`` (openTSNE, Barnes-Hut, PCA start, one thread), float64.

    ``iterations`` counts the steps after the :data:`EXAGGERATION_STEPS` of
    early exaggeration. Perplexity is 30, or less for tiny samples (it must
    stay below a third of the rows). Fewer than 4 rows are laid on a line.
    """
    from openTSNE import TSNE

    n = rows.shape[0]
    if n < 4:
        return np.column_stack([np.arange(n, dtype=float), np.zeros(n)])
    perplexity = float(min(30.0, (n - 1) / 3.0))
    model = TSNE(n_components=2, perplexity=perplexity, n_iter=iterations, early_exaggeration_iter=EXAGGERATION_STEPS,
                 initialization="pca", negative_gradient_method="bh", theta=THETA, n_jobs=1,
                 random_state=seed, verbose=False)
    return np.asarray(model.fit(np.ascontiguousarray(rows, dtype=np.float64)), dtype=np.float64)
