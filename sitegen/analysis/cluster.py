"""Candidate groups of decks: dense regions of the reduced rows, or k-means at a pinned k.

Input rows are unit vectors (re-normalised SVD rows), so Euclidean distance
here ranks like cosine distance. Candidates are only a start: which of them
are archetypes, and which decks belong to none, is decided by the rule of
:mod:`.membership`. All randomness comes from one seed, so the same input
gives the same groups.
"""
from __future__ import annotations

import numpy as np
from sklearn.cluster import KMeans


def sample_rows(n: int, size: int, seed: int) -> np.ndarray:
    """A sorted fixed-seed sample of ``size`` of ``range(n)`` (all rows when n <= size)."""
    if n <= size:
        return np.arange(n)
    return np.sort(np.random.default_rng(seed).choice(n, size=size, replace=False))


def kmeans(rows: np.ndarray, k: int, seed: int, n_init: int) -> KMeans:
    """scikit-learn k-means (Lloyd, k-means++ starts), best of ``n_init`` starts by inertia."""
    return KMeans(n_clusters=k, n_init=n_init, random_state=seed, algorithm="lloyd").fit(rows)


def nearest(rows: np.ndarray, centres: np.ndarray) -> np.ndarray:
    """Index of the nearest centre (Euclidean) for every row, first on ties."""
    # |x - c|^2 = |x|^2 - 2 x.c + |c|^2; |x|^2 is the same for all centres.
    scores = rows @ centres.T * -2.0 + (centres * centres).sum(axis=1)
    return np.argmin(scores, axis=1)


def distinct_rows(rows: np.ndarray) -> int:
    """How many different rows there are (k-means cannot make more clusters than that)."""
    return len(np.unique(np.round(rows, 12), axis=0))


def pinned_groups(rows: np.ndarray, k: int, *, seed: int, n_init: int, fit_sample: int) -> np.ndarray:
    """Candidate groups at a pinned k: k-means fitted on a fixed-seed sample of at most
    ``fit_sample`` rows (k capped at the distinct rows there), every row to its nearest centre."""
    fit = rows[sample_rows(rows.shape[0], fit_sample, seed)]
    k = max(1, min(k, distinct_rows(fit), rows.shape[0]))
    return nearest(rows, kmeans(fit, k, seed, n_init).cluster_centers_)


#: Decks HDBSCAN looks at per partition (a fixed-seed sample above that).
DENSITY_SAMPLE = 5000
#: HDBSCAN's min_samples: how many neighbours make a deck part of a dense region.
DENSITY_NEIGHBOURS = 5


def dense_groups(rows: np.ndarray, *, min_share: float, seed: int, sample: int = DENSITY_SAMPLE) -> np.ndarray:
    """Candidate groups of unit rows by density: labels 0..k-1 for every row (none left out).

    scikit-learn's HDBSCAN (leaf clusters, ``min_cluster_size`` = ``min_share``
    of the rows looked at, at least 5) runs on a fixed-seed sample; each
    group's centre is the unit mean of its sampled rows. Sampled rows keep
    HDBSCAN's label; the rest, and the rows it calls noise, go to the nearest
    centre: who is an other deck is decided afterwards, per deck
    (:mod:`.membership`).
    When HDBSCAN finds no group, every row is in group 0.
    """
    from sklearn.cluster import HDBSCAN

    n = rows.shape[0]
    picked = sample_rows(n, sample, seed)
    if len(picked) < 2 * DENSITY_NEIGHBOURS:
        return np.zeros(n, dtype=np.intp)
    size = max(DENSITY_NEIGHBOURS, int(np.ceil(min_share * len(picked) - 1e-9)))
    found = HDBSCAN(min_cluster_size=size, min_samples=DENSITY_NEIGHBOURS, cluster_selection_method="leaf",
                    copy=True).fit(rows[picked]).labels_
    k = int(found.max()) + 1
    if k <= 0:
        return np.zeros(n, dtype=np.intp)
    centres = np.vstack([rows[picked[found == c]].mean(axis=0) for c in range(k)])
    norms = np.linalg.norm(centres, axis=1, keepdims=True)
    centres = centres / np.where(norms == 0, 1.0, norms)
    labels = nearest(rows, centres)
    labels[picked[found >= 0]] = found[found >= 0]  # HDBSCAN's own label where it gave one
    return labels


def small_groups(rows: np.ndarray, *, share: float, seed: int, sample: int = DENSITY_SAMPLE) -> list[np.ndarray]:
    """Small dense groups: scikit-learn's HDBSCAN as in :func:`dense_groups`, its leaves of at least
    ``share`` of the rows looked at, each as the sampled rows it holds (where to look for groups of
    their own too small to be archetypes)."""
    from sklearn.cluster import HDBSCAN

    n = rows.shape[0]
    picked = sample_rows(n, sample, seed)
    if len(picked) < 2 * DENSITY_NEIGHBOURS:
        return []
    size = max(DENSITY_NEIGHBOURS, int(np.ceil(share * len(picked) - 1e-9)))
    found = HDBSCAN(min_cluster_size=size, min_samples=DENSITY_NEIGHBOURS, cluster_selection_method="leaf",
                    copy=True).fit(rows[picked]).labels_
    return [np.sort(picked[found == c]) for c in range(int(found.max()) + 1)]
