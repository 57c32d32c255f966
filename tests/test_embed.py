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
