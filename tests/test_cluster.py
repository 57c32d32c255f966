"""Clustering: silhouette and k-means against scikit-learn, Iris, planted variants, determinism."""
from __future__ import annotations

import numpy as np
import pytest
from sklearn.cluster import KMeans
from sklearn.metrics import adjusted_rand_score, silhouette_score

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


def _iris() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    from vega_datasets import data  # ships its Iris table locally, no download

    iris = data.iris()
    raw = iris[["sepalLength", "sepalWidth", "petalLength", "petalWidth"]].to_numpy(dtype=float)
    return raw, features.l2_rows(raw), iris["species"].to_numpy()


def test_silhouette_equals_scikit_learn_including_singletons():
    # Reference: sklearn.metrics.silhouette_score(metric="cosine"); a cluster of one scores 0 there too.
    x, truth = _blobs(0)
    truth = truth.copy()
    truth[7] = 9  # a singleton cluster
    scorer = cluster.CosineSilhouette(x)
    assert scorer.score(truth) == pytest.approx(silhouette_score(x, truth, metric="cosine"), abs=1e-12)


def test_silhouette_rejects_one_cluster():
    x, _ = _blobs(1, n=20)
    with pytest.raises(ValueError, match="silhouette needs 2 to n-1 clusters"):
        cluster.CosineSilhouette(x).score(np.zeros(20, dtype=int))


def test_curve_equals_scikit_learn_on_the_silhouette_sample():
    # Each curve point: sklearn KMeans (same seed and starts) scored by sklearn's silhouette_score
    # on the same fixed-seed sample of rows.
    x, _ = _blobs(2, n=400)
    found = cluster.choose_k(x, k_min=2, k_max=6, seed=5, n_init=3, silhouette_sample=150)
    pos = cluster.sample_rows(len(x), 150, 5 + 1)
    assert len(pos) == 150
    for k, s in found.curve:
        labels = KMeans(n_clusters=k, n_init=3, random_state=5, algorithm="lloyd").fit(x).labels_
        assert s == pytest.approx(silhouette_score(x[pos], labels[pos], metric="cosine"), abs=1e-6)


def test_kmeans_inertia_no_worse_than_scikit_learn():
    # Same seeds and starts: our pinned-k clustering must fit at least as tightly as sklearn KMeans.
    x, _ = _blobs(3, n=500, k=5, spread=0.6)
    for k in (3, 5, 7):
        found = cluster.choose_k(x, k_min=2, k_max=8, seed=11, n_init=4, pinned=k)
        ours = float(((x - found.centres[found.labels]) ** 2).sum())
        reference = KMeans(n_clusters=k, n_init=4, random_state=11).fit(x).inertia_
        assert ours <= reference * (1 + 1e-9)


def test_iris_curve_equals_scikit_learn():
    # Iris (vega_datasets) on unit rows: silhouette curve for k = 2..6 equals sklearn's KMeans + silhouette_score.
    _, x, _ = _iris()
    found = cluster.choose_k(x, k_min=2, k_max=6, seed=0, n_init=4)
    assert [k for k, _ in found.curve] == [2, 3, 4, 5, 6]
    for k, s in found.curve:
        labels = KMeans(n_clusters=k, n_init=4, random_state=0, algorithm="lloyd").fit(x).labels_
        assert s == pytest.approx(silhouette_score(x, labels, metric="cosine"), abs=1e-6)


def test_iris_three_clusters_match_species_as_well_as_scikit_learn():
    # ARI against the species: our k=3 on cosine geometry vs sklearn KMeans(3) on the raw measurements.
    raw, x, species = _iris()
    ours = cluster.choose_k(x, k_min=2, k_max=6, seed=0, n_init=4, pinned=3)
    reference = KMeans(n_clusters=3, n_init=4, random_state=0).fit(raw).labels_
    assert adjusted_rand_score(species, ours.labels) >= adjusted_rand_score(species, reference)


def test_second_look_splits_a_planted_variant():
    # Planted: group 0 has a close variant (group 3 = group 0 shifted a little). Silhouette merges them,
    # the second look splits them when the caller accepts the pieces.
    rng = np.random.default_rng(4)
    centres = rng.normal(size=(3, 10)) * 3
    centres = np.vstack([centres, centres[0] + rng.normal(size=10) * 0.9])
    truth = rng.integers(0, 4, size=800)
    x = features.l2_rows(centres[truth] + 0.25 * rng.normal(size=(800, 10)))
    plain = cluster.choose_k(x, k_min=2, k_max=8, seed=0, split_silhouette=2.0)
    split = cluster.choose_k(x, k_min=2, k_max=8, seed=0, split_silhouette=0.3, min_piece=20)
    refused = cluster.choose_k(x, k_min=2, k_max=8, seed=0, split_silhouette=0.3, min_piece=20, accept=lambda pieces: False)
    assert plain.k == 3 and refused.k == 3
    assert split.k == 4 and split.k_silhouette == 3 and "split one cluster in 2" in split.reason
    assert adjusted_rand_score(truth, split.labels) > 0.95 > adjusted_rand_score(truth, plain.labels)


def test_pinned_k_is_kept_and_said():
    x, _ = _blobs(5)
    found = cluster.choose_k(x, k_min=2, k_max=8, seed=0, pinned=6)
    assert found.k == 6 and len(np.unique(found.labels)) == 6
    assert "k=6 was pinned" in found.reason


def test_large_input_is_fitted_on_a_sample_and_all_rows_assigned():
    # Fit on 500 of 3000 rows; every row still gets the nearest of the fitted centres.
    x, truth = _blobs(6, n=3000, k=4, spread=0.2)
    found = cluster.choose_k(x, k_min=2, k_max=6, seed=0, fit_sample=500, silhouette_sample=300)
    assert found.k == 4
    np.testing.assert_array_equal(found.labels, cluster.nearest(x, found.centres))
    assert adjusted_rand_score(truth, found.labels) > 0.99


def test_same_input_same_result():
    x, _ = _blobs(7, n=600)
    a = cluster.choose_k(x, k_min=2, k_max=8, seed=3)
    b = cluster.choose_k(x, k_min=2, k_max=8, seed=3)
    assert a.labels.tobytes() == b.labels.tobytes() and a.curve == b.curve and a.reason == b.reason


def test_identical_rows_make_one_cluster():
    # Fewer distinct decks than k_min leaves nothing to compare; say so rather than fail.
    x = features.l2_rows(np.ones((40, 3)))
    found = cluster.choose_k(x, k_min=2, k_max=5, seed=0)
    assert found.k == 1 and set(found.labels) == {0} and "one cluster" in found.reason
