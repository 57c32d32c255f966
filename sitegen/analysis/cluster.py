"""k-means on unit vectors, k chosen by cosine silhouette, then a second look inside clusters.

Input rows are unit vectors (re-normalised SVD rows), so Euclidean k-means
here is k-means in cosine geometry: |x - c|^2 = |x|^2 - 2 x.c + |c|^2. For
speed on large partitions, k-means is fitted on a fixed-seed sample of at
most ``fit_sample`` rows and every row is then assigned to its nearest
centre; silhouette is scored on a fixed-seed sample of ``silhouette_sample``
rows. All randomness comes from one seed, so the same input gives the same
clustering.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from sklearn.cluster import KMeans


@dataclass(frozen=True)
class Clustering:
    """What :func:`choose_k` found.

    ``labels``: cluster of every row, 0..k-1 (numbered in k-means order, not
    by size); ``centres``: k x d k-means centres; ``curve``: (k, mean
    silhouette) for every k tried; ``k``: clusters in the end (after
    splits); ``k_silhouette``: the k silhouette (or the pin) chose before
    splits; ``reason``: how k came about, in plain words.
    """

    labels: np.ndarray
    centres: np.ndarray
    curve: tuple[tuple[int, float], ...]
    k: int
    k_silhouette: int
    reason: str
    splits: tuple[tuple[int, int, float], ...] = ()


def sample_rows(n: int, size: int, seed: int) -> np.ndarray:
    """A sorted fixed-seed sample of ``size`` of ``range(n)`` (all rows when n <= size)."""
    if n <= size:
        return np.arange(n)
    return np.sort(np.random.default_rng(seed).choice(n, size=size, replace=False))


class CosineSilhouette:
    """Mean silhouette of labelings of one fixed set of unit rows, cosine distance.

    The distance matrix (1 - x.y, clipped to [0, 2], zero diagonal, as
    scikit-learn's cosine distance) is computed once and reused for every
    labeling, which makes scoring a dozen values of k about as cheap as one.
    Rows must already have unit length.
    """

    def __init__(self, rows: np.ndarray) -> None:
        dist = rows @ rows.T
        np.subtract(1.0, dist, out=dist)
        np.clip(dist, 0.0, 2.0, out=dist)
        np.fill_diagonal(dist, 0.0)
        self._dist = dist

    def per_row(self, labels: np.ndarray) -> np.ndarray:
        """Silhouette of each row; 0 for rows alone in their cluster (as scikit-learn)."""
        labels = np.asarray(labels)
        keys, inverse = np.unique(labels, return_inverse=True)
        k = len(keys)
        n = len(labels)
        if not 2 <= k <= n - 1:
            raise ValueError(f"silhouette needs 2 to n-1 clusters, got {k} for {n} rows")
        onehot = np.zeros((n, k))
        onehot[np.arange(n), inverse] = 1.0
        sums = self._dist @ onehot
        sizes = onehot.sum(axis=0)
        own = sizes[inverse]
        a = sums[np.arange(n), inverse] / np.maximum(own - 1, 1)
        means = sums / sizes
        means[np.arange(n), inverse] = np.inf
        b = means.min(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            s = (b - a) / np.maximum(a, b)
        s[own == 1] = 0.0
        return np.nan_to_num(s)

    def score(self, labels: np.ndarray) -> float:
        """Mean silhouette over the rows."""
        return float(self.per_row(labels).mean())


def kmeans(rows: np.ndarray, k: int, seed: int, n_init: int) -> KMeans:
    """scikit-learn k-means (Lloyd, k-means++ starts), best of ``n_init`` starts by inertia."""
    return KMeans(n_clusters=k, n_init=n_init, random_state=seed, algorithm="lloyd").fit(rows)


def nearest(rows: np.ndarray, centres: np.ndarray) -> np.ndarray:
    """Index of the nearest centre (Euclidean) for every row, first on ties."""
    # |x - c|^2 = |x|^2 - 2 x.c + |c|^2; |x|^2 is the same for all centres.
    scores = rows @ centres.T * -2.0 + (centres * centres).sum(axis=1)
    return np.argmin(scores, axis=1)


def choose_k(
    rows: np.ndarray,
    *,
    k_min: int,
    k_max: int,
    seed: int,
    n_init: int = 4,
    silhouette_sample: int = 3000,
    fit_sample: int = 20000,
    pinned: int | None = None,
    split_silhouette: float = 0.3,
    min_piece: int = 1,
    accept: Callable[[list[np.ndarray]], bool] | None = None,
) -> Clustering:
    """Cluster unit rows; k by the silhouette peak (or pinned), then split clear sub-groups.

    For each k in [k_min, k_max] (k = 1 has no silhouette and is only used
    when pinned or when k_max is 1), k-means is fitted on the fit sample and
    the mean cosine silhouette of its labels is scored on the silhouette
    sample. The best k wins (ties: the smaller). Then each cluster gets a
    second look: if a 2- or 3-way k-means split of its members has mean
    silhouette (within the cluster) of at least ``split_silhouette`` and no
    piece smaller than ``min_piece`` rows of the full data, it is split,
    provided ``accept`` (given the row indices of the pieces) agrees. A pinned k is kept as given: no splits.
    """
    n = rows.shape[0]
    fit_idx = sample_rows(n, fit_sample, seed)
    fit_rows = rows[fit_idx]
    sil_pos = sample_rows(len(fit_idx), silhouette_sample, seed + 1)
    scorer = CosineSilhouette(fit_rows[sil_pos]) if len(sil_pos) >= 3 else None
    distinct = _distinct_rows(fit_rows)
    hi = min(k_max, distinct, len(sil_pos) - 1)
    curve: list[tuple[int, float]] = []
    fits: dict[int, KMeans] = {}
    for k in range(max(k_min, 2), hi + 1):
        km = kmeans(fit_rows, k, seed, n_init)
        labels = km.labels_[sil_pos]
        if scorer is None or len(np.unique(labels)) < 2:
            continue
        fits[k] = km
        curve.append((k, round(scorer.score(labels), 6)))

    if pinned is not None:
        k = max(1, min(pinned, distinct, n))
        km = fits.get(k) or kmeans(fit_rows, k, seed, n_init)
        note = "" if k == pinned else f" (only {k} distinct decks)"
        reason = f"k={pinned} was pinned in the settings{note}; no silhouette choice, no splits"
        centres = km.cluster_centers_
        return Clustering(nearest(rows, centres), centres, tuple(curve), k, k, reason)

    if not curve:
        centres = fit_rows.mean(axis=0, keepdims=True)
        reason = "too few distinct decks to compare values of k; all decks form one cluster"
        return Clustering(np.zeros(n, dtype=np.intp), centres, (), 1, 1, reason)

    best_k, best_s = max(curve, key=lambda ks: (ks[1], -ks[0]))
    reason = f"silhouette peaked at k={best_k} ({best_s:.2f}) over k={curve[0][0]}..{curve[-1][0]}"
    centres = fits[best_k].cluster_centers_
    fit_labels = fits[best_k].labels_
    scale = n / len(fit_idx)

    new_centres: list[np.ndarray] = []
    splits: list[tuple[int, int, float]] = []
    for c in range(best_k):
        members = np.flatnonzero(fit_labels == c)
        piece = _best_split(fit_rows[members], seed, n_init, silhouette_sample, min_piece / scale)
        if piece is not None and piece[1] >= split_silhouette and (
                accept is None or accept([fit_idx[members[piece[0].labels_ == j]] for j in range(piece[0].n_clusters)])):
            km, s = piece
            new_centres.extend(km.cluster_centers_)
            splits.append((c, km.n_clusters, round(s, 6)))
        else:
            new_centres.append(centres[c])
    if splits:
        centres = np.vstack(new_centres)
        parts = ", ".join(f"one cluster in {ways} (silhouette {s:.2f} inside it)" for _, ways, s in splits)
        reason += (f"; a second look inside each cluster split {parts}, "
                   f"giving k={len(centres)}")
    else:
        reason += "; a second look inside each cluster found no clear split"
    labels = nearest(rows, centres)
    return Clustering(labels, centres, tuple(curve), len(centres), best_k, reason, tuple(splits))


def _best_split(members: np.ndarray, seed: int, n_init: int, sample: int, min_piece: float):
    """The better of a 2- and 3-way k-means split of one cluster's rows, with its silhouette.

    None when the cluster is too small to split into pieces of ``min_piece``
    rows, or when no split keeps every piece at least that large.
    """
    m = len(members)
    if m < max(2 * min_piece, 10):
        return None
    pos = sample_rows(m, sample, seed + 2)
    scorer = CosineSilhouette(members[pos])
    best = None
    for ways in (2, 3):
        if m < ways * max(min_piece, 5) or _distinct_rows(members) < ways:
            continue
        km = kmeans(members, ways, seed, n_init)
        sizes = np.bincount(km.labels_, minlength=ways)
        if sizes.min() < min_piece or len(np.unique(km.labels_[pos])) < 2:
            continue
        s = scorer.score(km.labels_[pos])
        if best is None or s > best[1]:
            best = (km, s)
    return best


def _distinct_rows(rows: np.ndarray) -> int:
    """How many different rows there are (k-means cannot make more clusters than that)."""
    return len(np.unique(np.round(rows, 12), axis=0))
