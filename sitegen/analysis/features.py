"""Deck x card features: sparse counts, TF-IDF, truncated SVD.

Decks are rows in the order given (the caller sorts them by deck id), cards
are columns sorted by name, so the same input always gives the same matrix.
Nothing here builds a dense deck x card table: a partition can hold a
million decks, and a deck holds a few dozen of the thousands of cards.
"""
from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
import pyarrow as pa
import scipy.sparse as sp
from sklearn.decomposition import TruncatedSVD

from ..model import in_row_order


def build_matrix(cards_df: pd.DataFrame, deck_ids: Sequence[str]) -> tuple[sp.csr_matrix, tuple[str, ...]]:
    """Copies of each card in each deck, as CSR, and the card names (columns).

    ``cards_df`` has columns deck_id, card, quantity; rows of decks not in
    ``deck_ids`` are ignored and repeated (deck, card) rows add up. Row i is
    ``deck_ids[i]``; columns are the cards sorted by name.
    """
    # Codes first (a categorical's own, else factorised), then look up only the distinct values.
    deck_codes, deck_uniques = _codes(cards_df["deck_id"])
    if _same_values(deck_uniques, deck_ids):
        rows = deck_codes  # a partition's own categories: its decks, in order (see partitions.split)
    else:
        rows = pd.Index(list(deck_ids)).get_indexer(pd.Index(deck_uniques))[deck_codes]
    card_codes, card_uniques = _codes(cards_df["card"])
    keep = (rows >= 0) & (card_codes >= 0)  # a missing card name is no column
    whole = bool(keep.all())
    if not whole:
        rows, card_codes = rows[keep], card_codes[keep]
    used = np.flatnonzero(np.bincount(card_codes, minlength=len(card_uniques)))  # sorted, like np.unique
    names = [str(n) for n in np.asarray(card_uniques, dtype=object)[used].tolist()]
    order = sorted(range(len(names)), key=names.__getitem__)
    cards = tuple(names[i] for i in order)
    if used.size == len(card_uniques) and order == list(range(len(order))):
        columns = card_codes  # every category used, in name order: a code is its column
    else:
        column_of = np.full(len(card_uniques), -1, dtype=np.intp)
        column_of[used[order]] = np.arange(len(order))
        columns = column_of[card_codes]
    qty = np.asarray(cards_df["quantity"], dtype=np.float64)
    if not whole:
        qty = qty[keep]
    shape = (len(deck_ids), len(cards))
    if in_row_order(rows, columns) and (qty != 0).all():
        # Rows by deck and, within a deck, cards in column order, once each (the loader's order):
        # that is CSR already, without the sort a conversion from coordinates makes.
        indptr = np.concatenate([[0], np.cumsum(np.bincount(rows, minlength=shape[0]))])
        return sp.csr_matrix((qty, columns.astype(np.int32), indptr), shape=shape), cards
    counts = sp.csr_matrix((qty, (rows, columns)), shape=shape)
    counts.sum_duplicates()
    counts.eliminate_zeros()
    counts.sort_indices()
    return counts, cards


def _same_values(index: pd.Index, values: Sequence[str]) -> bool:
    """True when ``index`` holds exactly ``values``, in that order (compared, not hashed)."""
    if len(index) != len(values):
        return False
    try:  # Arrow compares a partition's ids several times faster than Python objects
        mine = pa.chunked_array(index.array.__arrow_array__()).combine_chunks()
        return mine.equals(pa.array(values, type=mine.type))
    except (AttributeError, TypeError, pa.ArrowException):
        return bool(np.array_equal(np.asarray(index, dtype=object), np.asarray(values, dtype=object)))


def _codes(column: pd.Series) -> tuple[np.ndarray, pd.Index]:
    if isinstance(column.dtype, pd.CategoricalDtype):
        return np.asarray(column.array.codes), column.cat.categories  # no copy: only read here
    codes, uniques = pd.factorize(column, sort=False)
    return codes, pd.Index(uniques)


def presence(counts: sp.csr_matrix) -> sp.csr_matrix:
    """1 where a deck plays a card (any number of copies), else 0."""
    out = counts.copy()
    out.data = np.ones_like(out.data)
    return out


def idf(term: sp.csr_matrix) -> np.ndarray:
    """Smoothed inverse document frequency per card: ln((1 + n) / (1 + df)) + 1.

    ``n`` is the number of decks and ``df`` the number of decks playing the
    card; the same formula as scikit-learn's TfidfTransformer default
    (smooth_idf=True). The +1 inside keeps a card played by every deck at
    weight 1 rather than 0, so staples still count a little.
    """
    n = term.shape[0]
    df = np.bincount(term.indices, minlength=term.shape[1]).astype(np.float64)
    return np.log((1.0 + n) / (1.0 + df)) + 1.0


def l2_rows(matrix):
    """Rows scaled to unit Euclidean length (all-zero rows stay zero); sparse or dense."""
    if sp.issparse(matrix):
        m = sp.csr_matrix(matrix, dtype=np.float64, copy=True)
        norms = np.sqrt(np.asarray(m.multiply(m).sum(axis=1)).ravel())
        norms[norms == 0] = 1.0
        m.data /= np.repeat(norms, np.diff(m.indptr))
        return m
    m = np.asarray(matrix, dtype=np.float64)
    norms = np.linalg.norm(m, axis=1, keepdims=True)
    norms[norms == 0] = 1.0
    return m / norms


def tfidf(counts: sp.csr_matrix, *, use_presence: bool = True) -> sp.csr_matrix:
    """TF-IDF rows of unit length: w[d, c] = tf[d, c] * idf[c], then each row / its L2 norm.

    ``tf`` is 1/0 presence when ``use_presence`` (the default: see the
    method notes for the measurement), else the copy count. Equals
    scikit-learn's ``TfidfTransformer(norm="l2", use_idf=True,
    smooth_idf=True, sublinear_tf=False)`` applied to the same tf matrix.
    """
    counts = sp.csr_matrix(counts)
    weights = idf(counts)  # df counts stored entries: the same for presence and copies
    # One new data array, scaled in place: as presence() then l2_rows() would, without their copies.
    data = weights[counts.indices] if use_presence else counts.data.astype(np.float64) * weights[counts.indices]
    shape = counts.shape
    # Row sums of squares added up as scipy's .sum(axis=1) adds them (reduceat over non-empty rows):
    # the same bits as before, without building the squared matrix.
    norms = np.ones(shape[0])
    filled = np.flatnonzero(np.diff(counts.indptr))
    if filled.size:
        squares = np.sqrt(np.add.reduceat(data * data, counts.indptr[filled]))
        norms[filled] = np.where(squares == 0, 1.0, squares)
    data /= np.repeat(norms, np.diff(counts.indptr))
    return sp.csr_matrix((data, counts.indices.copy(), counts.indptr.copy()), shape=shape)


def reduce(weights: sp.csr_matrix, dims: int, seed: int, fit_sample: int | None = None) -> np.ndarray:
    """Truncated SVD of the TF-IDF rows to ``dims`` columns, rows re-normalised.

    The SVD keeps the directions that separate decks and drops the noise of
    one-off card choices; re-normalising puts the rows back on the unit
    sphere, where Euclidean k-means is cosine k-means. With ``fit_sample``,
    the directions are learnt from a fixed-seed sample of that many rows and
    every row is projected on them (a million decks cost little more than
    the sample). When the matrix is too small for an SVD of that size, the
    dense TF-IDF rows are returned.
    """
    n, m = weights.shape
    dims = min(dims, n - 1, m - 1)
    if dims < 2:
        return l2_rows(weights.toarray())
    svd = TruncatedSVD(n_components=dims, algorithm="randomized", n_iter=5, random_state=seed)
    if fit_sample is not None and n > fit_sample:
        picked = np.sort(np.random.default_rng(seed).choice(n, size=fit_sample, replace=False))
        svd.fit(weights[picked])
        return l2_rows(svd.transform(weights))
    return l2_rows(svd.fit_transform(weights))


def top_cards(weights: sp.csr_matrix, cards: Sequence[str], rows: np.ndarray, n: int = 3) -> list[str]:
    """For each of ``rows``, its ``n`` heaviest cards joined with ', ' (ties by card name)."""
    out: list[str] = []
    for r in rows:
        lo, hi = weights.indptr[r], weights.indptr[r + 1]
        idx = weights.indices[lo:hi]
        vals = weights.data[lo:hi]
        # Columns are sorted by name, so sorting by (-weight, column) breaks ties by name.
        order = np.lexsort((idx, -vals))[:n]
        out.append(", ".join(cards[i] for i in idx[order]))
    return out
