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


class Density:
    """scikit-learn's HDBSCAN on a fixed-seed sample of at most ``sample`` rows (``picked``), read at
    several smallest-group sizes. ``min_samples`` = :data:`DENSITY_NEIGHBOURS`, leaf clusters. The
    first size asked is fitted; another is read from the same fit's single-linkage tree (which the
    smallest group size does not change) with scikit-learn's own tree_to_labels, so both sizes cost
    one fit; where that internal is not as expected, the sample is fitted again (same labels)."""

    def __init__(self, rows: np.ndarray, seed: int, sample: int = DENSITY_SAMPLE) -> None:
        self.rows = rows
        self.picked = sample_rows(rows.shape[0], sample, seed)
        self._fit = None
        self._labels: dict[int, np.ndarray] = {}

    @property
    def too_few(self) -> bool:
        return len(self.picked) < 2 * DENSITY_NEIGHBOURS

    def size(self, share: float) -> int:
        """The smallest group, for ``share`` of the rows looked at (at least DENSITY_NEIGHBOURS)."""
        return max(DENSITY_NEIGHBOURS, int(np.ceil(share * len(self.picked) - 1e-9)))

    def leaves(self, share: float) -> np.ndarray:
        """HDBSCAN's labels of the sampled rows (-1: noise) with the smallest group at ``share``."""
        size = self.size(share)
        if size not in self._labels:
            self._labels[size] = self._read(size) if self._fit is not None else self._fit_at(size)
        return self._labels[size]

    def _fit_at(self, size: int) -> np.ndarray:
        from sklearn.cluster import HDBSCAN

        fit = HDBSCAN(min_cluster_size=size, min_samples=DENSITY_NEIGHBOURS, cluster_selection_method="leaf",
                      copy=True).fit(self.rows[self.picked])
        if self._fit is None:
            self._fit = fit
        return fit.labels_

    def _read(self, size: int) -> np.ndarray:
        try:
            from sklearn.cluster._hdbscan._tree import tree_to_labels

            fit = self._fit
            labels, _ = tree_to_labels(fit._single_linkage_tree_, size, fit.cluster_selection_method,
                                       fit.allow_single_cluster, fit.cluster_selection_epsilon,
                                       fit.max_cluster_size)
            return np.asarray(labels)
        except (ImportError, AttributeError, TypeError, ValueError):
            return self._fit_at(size)


def dense_groups(rows: np.ndarray, *, min_share: float, seed: int, sample: int = DENSITY_SAMPLE,
                 density: Density | None = None) -> np.ndarray:
    """Candidate groups of unit rows by density: labels 0..k-1 for every row (none left out).

    scikit-learn's HDBSCAN (leaf clusters, ``min_cluster_size`` = ``min_share``
    of the rows looked at, at least 5) runs on a fixed-seed sample
    (:class:`Density`, shared with :func:`small_groups` when given); each
    group's centre is the unit mean of its sampled rows. Sampled rows keep
    HDBSCAN's label; the rest, and the rows it calls noise, go to the nearest
    centre: who is an other deck is decided afterwards, per deck
    (:mod:`.membership`).
    When HDBSCAN finds no group, every row is in group 0.
    """
    n = rows.shape[0]
    density = Density(rows, seed, sample) if density is None else density
    if density.too_few:
        return np.zeros(n, dtype=np.intp)
    picked = density.picked
    found = density.leaves(min_share)
    k = int(found.max()) + 1
    if k <= 0:
        return np.zeros(n, dtype=np.intp)
    centres = np.vstack([rows[picked[found == c]].mean(axis=0) for c in range(k)])
    norms = np.linalg.norm(centres, axis=1, keepdims=True)
    centres = centres / np.where(norms == 0, 1.0, norms)
    labels = nearest(rows, centres)
    labels[picked[found >= 0]] = found[found >= 0]  # HDBSCAN's own label where it gave one
    return labels


def small_groups(rows: np.ndarray, *, share: float, seed: int, sample: int = DENSITY_SAMPLE,
                 density: Density | None = None) -> list[np.ndarray]:
    """Small dense groups: the HDBSCAN leaves of :func:`dense_groups`'s sample with the smallest group
    at ``share`` of the rows looked at, each as the sampled rows it holds (where to look for groups
    of their own too small to be archetypes)."""
    density = Density(rows, seed, sample) if density is None else density
    if density.too_few:
        return []
    found = density.leaves(share)
    return [np.sort(density.picked[found == c]) for c in range(int(found.max()) + 1)]
