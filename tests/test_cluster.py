"""Candidate groups: HDBSCAN and k-means against scikit-learn, Iris, determinism."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.spatial.distance import cdist
from sklearn.cluster import HDBSCAN, KMeans
from sklearn.metrics import adjusted_rand_score

from sitegen.analysis import cluster, features


@pytest.fixture(autouse=True)
def _one_thread():
    # As inside analyse_partition: one BLAS/OpenMP thread (fast on a busy machine, same result everywhere).
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1):
        yield


def _blobs(seed: int, n: int = 300, d: int = 8, k: int = 4, spread: float = 0.35) -> tuple[np.ndarray, np.ndarray]:
    """Planted groups on the unit sphere: k random directions plus noise."""
    rng = np.random.default_rng(seed)
    centres = rng.normal(size=(k, d))
    truth = rng.integers(0, k, size=n)
    x = centres[truth] + spread * rng.normal(size=(n, d))
    return features.l2_rows(x), truth


def _iris() -> tuple[np.ndarray, np.ndarray]:
    from vega_datasets import data  # ships its Iris table locally, no download

    iris = data.iris()
    raw = iris[["sepalLength", "sepalWidth", "petalLength", "petalWidth"]].to_numpy(dtype=float)
    return features.l2_rows(raw), iris["species"].to_numpy()


def test_dense_groups_keep_scikit_learns_hdbscan_labels():
    # Reference: sklearn.cluster.HDBSCAN with the same parameters; its non-noise rows keep their label,
    # and noise rows go to the nearest group's centre (scipy's cdist as the reference distance).
    x, _ = _blobs(1, n=400)
    ours = cluster.dense_groups(x, min_share=0.02, seed=0)
    ref = HDBSCAN(min_cluster_size=8, min_samples=cluster.DENSITY_NEIGHBOURS, cluster_selection_method="leaf",
                  copy=True).fit(x).labels_
    assert ref.max() >= 1  # the planted blobs are found as several groups
    kept = ref >= 0
    np.testing.assert_array_equal(ours[kept], ref[kept])
    centres = np.vstack([x[ref == c].mean(axis=0) for c in range(ref.max() + 1)])
    centres = features.l2_rows(centres)
    np.testing.assert_array_equal(ours[~kept], cdist(x[~kept], centres).argmin(axis=1))


def test_dense_groups_find_iris_species():
    # Iris (vega-datasets' copy of the public dataset): setosa stands apart; the groups agree with species.
    x, species = _iris()
    labels = cluster.dense_groups(x, min_share=0.1, seed=0)
    assert len(np.unique(labels)) >= 2
    assert adjusted_rand_score(species, labels) > 0.5


def test_dense_groups_on_too_few_rows_or_noise_only_is_one_group():
    x, _ = _blobs(2, n=6)
    assert (cluster.dense_groups(x, min_share=0.02, seed=0) == 0).all()


def test_pinned_groups_equal_scikit_learn_kmeans():
    # Reference: sklearn.cluster.KMeans (Lloyd, same seed and starts) on the same rows; every row to its nearest centre.
    x, _ = _blobs(3)
    ours = cluster.pinned_groups(x, 4, seed=5, n_init=3, fit_sample=10_000)
    km = KMeans(n_clusters=4, n_init=3, random_state=5, algorithm="lloyd").fit(x)
    np.testing.assert_array_equal(ours, km.labels_)


def test_pinned_groups_fit_on_a_sample_and_assign_everyone():
    x, _ = _blobs(4, n=600)
    labels = cluster.pinned_groups(x, 3, seed=0, n_init=2, fit_sample=200)
    assert labels.shape == (600,) and set(np.unique(labels)) == {0, 1, 2}


def test_pinned_k_above_the_distinct_rows_is_capped():
    x = features.l2_rows(np.array([[1.0, 0.0]] * 10 + [[0.0, 1.0]] * 10))
    assert set(cluster.pinned_groups(x, 6, seed=0, n_init=2, fit_sample=100)) == {0, 1}


def test_nearest_equals_scipy_cdist_argmin():
    # Reference: scipy.spatial.distance.cdist (Euclidean), first index on ties as numpy's argmin.
    x, _ = _blobs(5)
    centres = x[[0, 10, 20]]
    np.testing.assert_array_equal(cluster.nearest(x, centres), cdist(x, centres).argmin(axis=1))


def test_same_input_same_groups():
    x, _ = _blobs(6, n=500)
    np.testing.assert_array_equal(cluster.dense_groups(x, min_share=0.02, seed=3),
                                  cluster.dense_groups(x, min_share=0.02, seed=3))


def test_sample_rows_is_sorted_and_fixed():
    a = cluster.sample_rows(1000, 50, 7)
    assert (np.diff(a) > 0).all() and len(a) == 50
    np.testing.assert_array_equal(a, cluster.sample_rows(1000, 50, 7))
    np.testing.assert_array_equal(cluster.sample_rows(10, 50, 7), np.arange(10))


def test_small_groups_read_from_one_fit_equal_scikit_learns_own_fit():
    # Reference: sklearn.cluster.HDBSCAN fitted afresh at the smaller size on the same sample; the
    # shared fit reads that size from its single-linkage tree instead, and must give the same leaves.
    from sklearn.cluster import HDBSCAN

    rng = np.random.default_rng(11)
    x = np.vstack([rng.normal(c, 0.3, (n, 4)) for c, n in ((0, 300), (3, 200), (6, 40), (9, 25))])
    density = cluster.Density(x, seed=0)
    big = cluster.dense_groups(x, min_share=0.2, seed=0, density=density)
    small = cluster.small_groups(x, share=0.04, seed=0, density=density)
    ref = HDBSCAN(min_cluster_size=density.size(0.04), min_samples=cluster.DENSITY_NEIGHBOURS,
                  cluster_selection_method="leaf", copy=True).fit(x[density.picked]).labels_
    assert len(small) == ref.max() + 1 >= 4 > big.max() + 1
    for c, members in enumerate(small):
        np.testing.assert_array_equal(members, np.sort(density.picked[ref == c]))
    assert density._fit is not None and len(density._labels) == 2
