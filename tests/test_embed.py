"""The partition map: stratified sampling and a deterministic t-SNE."""
from __future__ import annotations

import numpy as np
import pytest
from sklearn.manifold import trustworthiness

from sitegen.analysis import embed, features


@pytest.fixture(autouse=True)
def _one_thread():
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1):
        yield


def test_stratified_sample_is_proportional_keeps_small_groups_and_repeats():
    groups = ["a1"] * 900 + ["a2"] * 97 + ["other"] * 3
    picked = embed.stratified_sample(groups, 100, seed=4)
    again = embed.stratified_sample(groups, 100, seed=4)
    assert picked.tobytes() == again.tobytes()
    assert len(picked) == 100 and np.all(np.diff(picked) > 0)
    drawn = np.asarray(groups, dtype=object)[picked]
    counts = {g: int((drawn == g).sum()) for g in ("a1", "a2", "other")}
    # 3 "other" decks are fewer than the minimum of 5, so all are drawn; the rest share by size.
    assert counts["other"] == 3
    assert counts["a2"] in (9, 10) and counts["a1"] == 100 - 3 - counts["a2"]


def test_stratified_sample_takes_everything_when_small():
    assert embed.stratified_sample(["a1", "a2", "a1"], 10, seed=0).tolist() == [0, 1, 2]


def test_stratified_sample_minimums_never_exceed_the_cap():
    groups = [f"g{i}" for i in range(30) for _ in range(10)]  # 30 groups of 10, cap 50
    picked = embed.stratified_sample(groups, 50, seed=1)
    assert len(picked) == 50


def test_tsne_keeps_neighbours_and_repeats_bytes():
    # Reference: sklearn.manifold.trustworthiness (Venna & Kaski's measure) of the 2-D map of planted blobs.
    rng = np.random.default_rng(0)
    centres = rng.normal(size=(4, 12)) * 3
    x = features.l2_rows(centres[rng.integers(0, 4, 300)] + rng.normal(size=(300, 12)) * 0.3)
    a = embed.tsne(x, seed=2, iterations=150)
    b = embed.tsne(x, seed=2, iterations=150)
    assert a.shape == (300, 2) and a.dtype == np.float64
    assert a.tobytes() == b.tobytes()
    assert trustworthiness(x, a, n_neighbors=10) > 0.9


def test_tsne_tiny_inputs():
    assert embed.tsne(np.eye(3), seed=0).tolist() == [[0.0, 0.0], [1.0, 0.0], [2.0, 0.0]]
    assert embed.tsne(features.l2_rows(np.random.default_rng(1).random((8, 4))), seed=0).shape == (8, 2)


def _season_of_groups(rng, n, cores, n_cards=60):
    """Decks of planted groups: each plays its group's core cards and four random others (0/1 presence)."""
    import scipy.sparse as sp

    labels = rng.integers(0, len(cores), n)
    rows = []
    for g in labels:
        rows.append(sorted(set(cores[g]) | set(rng.choice(n_cards, 4, replace=False).tolist())))
    indptr = np.cumsum([0] + [len(r) for r in rows])
    presence = sp.csr_matrix((np.ones(indptr[-1]), np.concatenate(rows), indptr), shape=(n, n_cards))
    return presence, labels


def test_a_warm_started_map_keeps_groups_in_place_and_keeps_neighbours():
    # Two seasons of the same 4 planted groups (new decks each season). Started from the first season's
    # map, the second puts every group's centre where the first had it: Procrustes disparity
    # (scipy.spatial.procrustes) of the group centres near 0; and it keeps neighbours
    # (sklearn.manifold.trustworthiness, as for a fresh map).
    from scipy.spatial import procrustes

    rng = np.random.default_rng(5)
    cards = [f"card {i:02d}" for i in range(60)]
    cores = [list(range(g * 10, g * 10 + 8)) for g in range(4)]
    first, first_labels = _season_of_groups(rng, 300, cores)
    second, second_labels = _season_of_groups(rng, 260, cores)
    rows_a, rows_b = features.tfidf(first).toarray(), features.tfidf(second).toarray()
    map_a = embed.tsne(rows_a, seed=2, iterations=150)
    start = embed.warm_start(second, cards, first, cards, map_a)
    assert start.shape == (260, 2) and abs(start[:, 0].std() - embed.START_SPREAD) < 1e-9
    map_b = embed.tsne(rows_b, seed=2, iterations=150, init=start)
    assert map_b.tobytes() == embed.tsne(rows_b, seed=2, iterations=150, init=start).tobytes()
    centres = [np.array([m[lab == g].mean(axis=0) for g in range(4)]) for m, lab in ((map_a, first_labels), (map_b, second_labels))]
    assert procrustes(*centres)[2] < 0.05
    assert trustworthiness(rows_b, map_b, n_neighbors=10) > 0.9


def test_warm_start_needs_a_previous_map_to_stand_on():
    rng = np.random.default_rng(1)
    cards = [f"card {i:02d}" for i in range(60)]
    now, _ = _season_of_groups(rng, 50, [list(range(8))])
    before, _ = _season_of_groups(rng, 3, [list(range(8))])
    assert embed.warm_start(now, cards, before, cards, np.zeros((3, 2))) is None  # too small to stand on
    other_cards = [f"other {i:02d}" for i in range(60)]
    before, _ = _season_of_groups(rng, 50, [list(range(8))])
    start = embed.warm_start(now, cards, before, other_cards, rng.normal(size=(50, 2)))
    assert start is None  # no card in common: nothing to place the decks by
