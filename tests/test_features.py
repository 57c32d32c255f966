"""Deck x card features: the sparse matrix, TF-IDF against scikit-learn, SVD rows."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from sklearn.feature_extraction.text import TfidfTransformer

from sitegen.analysis import features


def _random_counts(seed: int, n: int = 60, m: int = 40) -> sp.csr_matrix:
    rng = np.random.default_rng(seed)
    dense = rng.integers(1, 4, size=(n, m)) * (rng.random((n, m)) < 0.25)
    dense[:, 0] = 2  # a card every deck plays (idf = 1)
    return sp.csr_matrix(dense.astype(float))


def test_build_matrix_orders_decks_as_given_and_cards_by_name():
    # Hand-made rows: repeated (deck, card) rows add up, decks outside the list are ignored.
    rows = pd.DataFrame({
        "deck_id": ["d2", "d1", "d1", "d9", "d2"],
        "card": ["Zephyr Ink", "Amber Moth", "Zephyr Ink", "Amber Moth", "Zephyr Ink"],
        "quantity": [1, 3, 2, 1, 2],
    })
    counts, cards = features.build_matrix(rows, ["d1", "d2", "d3"])
    assert cards == ("Amber Moth", "Zephyr Ink")
    assert counts.toarray().tolist() == [[3, 2], [0, 3], [0, 0]]
    assert sp.isspmatrix_csr(counts)


@pytest.mark.parametrize("as_partition", [True, False])
def test_build_matrix_equals_a_pandas_pivot(as_partition):
    # Reference: pandas pivot_table (sum of copies per deck and card, cards sorted by name). Rows as
    # partitions.split gives them (categoricals whose categories are the decks in order and every card
    # used, sorted) take the path without lookups; the same rows as plain text take the general one.
    rng = np.random.default_rng(5)
    decks = [f"deck-{i:03d}" for i in range(120)]
    names = sorted(f"Card {chr(65 + i // 26)}{chr(97 + i % 26)}" for i in range(60))
    picked = [(d, c) for d in decks for c in sorted(rng.choice(names, size=int(rng.integers(0, 12)), replace=False))]
    rows = pd.DataFrame(picked, columns=["deck_id", "card"])
    rows["quantity"] = rng.integers(1, 4, size=len(rows))
    if as_partition:
        used = sorted(set(rows["card"]))
        rows["deck_id"] = pd.Categorical(rows["deck_id"], categories=decks)
        rows["card"] = pd.Categorical(rows["card"], categories=used)
    expected = (pd.DataFrame(picked, columns=["deck_id", "card"]).assign(quantity=rows["quantity"])
                .pivot_table(index="deck_id", columns="card", values="quantity", aggfunc="sum", fill_value=0)
                .reindex(index=decks, fill_value=0))
    counts, cards = features.build_matrix(rows, decks)
    assert list(cards) == list(expected.columns)
    assert counts.has_sorted_indices and counts.toarray().tolist() == expected.to_numpy().tolist()


def test_tfidf_of_an_empty_row_equals_scikit_learn():
    # Reference: sklearn TfidfTransformer leaves an all-zero row zero; copies as tf, presence as tf.
    counts = sp.csr_matrix(np.array([[2.0, 0.0, 1.0], [0.0, 0.0, 0.0], [1.0, 3.0, 0.0]]))
    for use_presence in (True, False):
        term = (counts > 0).astype(float) if use_presence else counts
        expected = TfidfTransformer(norm="l2", smooth_idf=True).fit_transform(term).toarray()
        np.testing.assert_allclose(features.tfidf(counts, use_presence=use_presence).toarray(), expected, atol=1e-12)


@pytest.mark.parametrize("use_presence", [True, False])
def test_tfidf_equals_scikit_learn(use_presence):
    # Reference: sklearn TfidfTransformer(norm="l2", use_idf=True, smooth_idf=True, sublinear_tf=False),
    # whose idf is ln((1+n)/(1+df)) + 1, applied to the same term matrix (presence or copies).
    counts = _random_counts(1)
    term = (counts > 0).astype(float) if use_presence else counts
    expected = TfidfTransformer(norm="l2", use_idf=True, smooth_idf=True, sublinear_tf=False).fit_transform(term)
    got = features.tfidf(counts, use_presence=use_presence)
    assert sp.isspmatrix_csr(got)
    np.testing.assert_allclose(got.toarray(), expected.toarray(), rtol=0, atol=1e-12)


def test_idf_formula_by_hand():
    # 4 decks; card 0 in all of them, card 1 in one: idf = ln(5/5)+1 = 1 and ln(5/2)+1.
    term = sp.csr_matrix(np.array([[1, 1], [1, 0], [1, 0], [1, 0]], dtype=float))
    np.testing.assert_allclose(features.idf(term), [1.0, np.log(5 / 2) + 1.0])


def test_l2_rows_keeps_empty_rows_zero():
    # A deck with no card rows must not turn into NaN.
    m = sp.csr_matrix(np.array([[3.0, 4.0], [0.0, 0.0]]))
    assert features.l2_rows(m).toarray().tolist() == [[0.6, 0.8], [0.0, 0.0]]
    assert features.l2_rows(m.toarray()).tolist() == [[0.6, 0.8], [0.0, 0.0]]


def test_reduce_gives_unit_rows_and_same_bytes_twice():
    # Re-normalised SVD rows lie on the unit sphere; a fixed seed repeats exactly.
    weights = features.tfidf(_random_counts(2, n=200, m=80))
    a = features.reduce(weights, 16, seed=3)
    b = features.reduce(weights, 16, seed=3)
    assert a.shape == (200, 16)
    np.testing.assert_allclose(np.linalg.norm(a, axis=1), 1.0, atol=1e-12)
    assert a.tobytes() == b.tobytes()


def test_reduce_too_small_for_svd_falls_back_to_dense_rows():
    # Two cards leave no room for a 2-dimensional truncated SVD; the TF-IDF rows are used as they are.
    weights = features.tfidf(sp.csr_matrix(np.array([[1.0, 0.0], [0.0, 1.0], [1.0, 1.0]])))
    np.testing.assert_allclose(features.reduce(weights, 8, seed=0), weights.toarray())


def test_top_cards_breaks_ties_by_name():
    # Presence TF-IDF of one deck with three equally rare cards: alphabetical among equals.
    counts = sp.csr_matrix(np.array([[1.0, 1.0, 1.0, 1.0], [0.0, 0.0, 0.0, 1.0]]))
    weights = features.tfidf(counts)
    assert features.top_cards(weights, ["Ash", "Bell", "Cairn", "Dusk"], np.array([0]), 2) == ["Ash, Bell"]


def test_reduce_on_a_sample_projects_every_row():
    # Directions learnt from 150 of 300 rows; all 300 rows come back, on the unit sphere, repeatably.
    weights = features.tfidf(_random_counts(4, n=300, m=80))
    a = features.reduce(weights, 16, seed=1, fit_sample=150)
    assert a.shape == (300, 16)
    np.testing.assert_allclose(np.linalg.norm(a, axis=1), 1.0, atol=1e-12)
    assert a.tobytes() == features.reduce(weights, 16, seed=1, fit_sample=150).tobytes()
