"""Random decks of a partition: the yardstick the archetype rule (:mod:`.membership`) holds groups
and decks to. Each is a real deck of the partition, drawn at random, that keeps its staples (at its
copies) and has every other card swapped for a card drawn at random from the partition's other
cards, at a copy level drawn from that card's own mix. Made once per partition and set of staples
(:class:`RandomDecks`), and shared by the reruns on halves of the partition.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .card_rates import LEVELS, as_levels

#: Random decks drawn per partition for the cut (a cut is about their 10th most similar at k = 8),
#: made NULL_BATCH at a time.
NULL_DECKS = 4000
NULL_BATCH = 1000


def level_mix(present: sp.csr_matrix) -> np.ndarray:
    """Each card's copy levels as cumulative shares of the decks playing it (cards x LEVELS)."""
    mix = np.asarray(as_levels(present).sum(axis=0)).ravel().reshape(LEVELS, present.shape[1]).T
    return np.cumsum(mix, axis=1) / np.maximum(mix.sum(axis=1, keepdims=True), 1.0)


def null_rows(present: sp.csr_matrix, idf: np.ndarray, staples: np.ndarray, n_null: int, seed: int,
              mix: np.ndarray | None = None) -> tuple[sp.csr_matrix, sp.csr_matrix]:
    """TF-IDF rows (unit length) of random decks of this partition, and their copies (see the module notes).

    Each random deck starts from a real deck drawn at random: its staples are
    kept (at its copies), and each of its other cards is replaced by a card
    drawn without replacement from the partition's other cards, uniformly (the
    cards with the smallest of one random key each), at a copy level drawn
    from that card's own mix of levels in the partition. All decks are drawn
    at once. ``present``: the partition's copies of each card (or 1s); ``mix``: its
    :func:`level_mix`, when already at hand.
    """
    n, m = present.shape
    rng = np.random.default_rng(seed)
    played = np.bincount(present.indices, minlength=m) > 0
    pool = np.flatnonzero(played & ~staples)
    if n == 0 or len(pool) == 0:
        return sp.csr_matrix((0, m)), sp.csr_matrix((0, m))
    picked = present[rng.integers(0, n, size=n_null)]
    is_staple = staples[picked.indices]
    kept_rows = np.repeat(np.arange(n_null), np.diff(picked.indptr))[is_staple]
    kept_cols = picked.indices[is_staple]
    kept_copies = np.asarray(picked.data[is_staple], dtype=np.float64)
    swap = np.minimum(np.diff(picked.indptr) - np.bincount(kept_rows, minlength=n_null), len(pool))
    most = int(swap.max(initial=0))
    if most:
        keys = rng.random((n_null, len(pool)))
        first = np.argpartition(keys, most - 1, axis=1)[:, :most] if most < len(pool) else np.tile(np.arange(len(pool)), (n_null, 1))
        order = np.argsort(np.take_along_axis(keys, first, axis=1), axis=1)
        first = np.take_along_axis(first, order, axis=1)
        take = np.arange(most)[None, :] < swap[:, None]
        fresh_rows = np.repeat(np.arange(n_null), swap)
        fresh_cols = pool[first[take]]
    else:
        fresh_rows = fresh_cols = np.zeros(0, dtype=np.intp)
    # Each fresh card's copy level from its own mix in the partition (a generator of its own, so the
    # cards drawn are the same whether copies are read or not).
    cum = level_mix(present) if mix is None else mix
    u = np.random.default_rng([seed, 1]).random(len(fresh_cols))
    fresh_copies = 1.0 + (u[:, None] >= cum[fresh_cols, :-1]).sum(axis=1)
    rows = np.concatenate([kept_rows, fresh_rows])
    cols = np.concatenate([kept_cols, fresh_cols])
    null = sp.csr_matrix((idf[cols], (rows, cols)), shape=(n_null, m))
    norms = np.sqrt(np.asarray(null.multiply(null).sum(axis=1)).ravel())
    norms[norms == 0] = 1.0
    copies = sp.csr_matrix((np.concatenate([kept_copies, fresh_copies]), (rows, cols)), shape=(n_null, m))
    return sp.csr_matrix(sp.diags(1.0 / norms) @ null), copies


class RandomDecks:
    """Random decks of one partition, made once for each set of staples asked for (and shared by the
    reruns on halves of the partition, which draw their random decks from the whole of it).
    ``present``: the partition's copies of each card (or 1s, where copies are not read)."""

    def __init__(self, present: sp.csr_matrix, idf: np.ndarray, seed: int) -> None:
        self._present, self._idf, self._seed = present, idf, seed
        self._mix = level_mix(present)
        self._made: dict[bytes, tuple[sp.csr_matrix, sp.csr_matrix]] = {}

    def _both(self, staples: np.ndarray) -> tuple[sp.csr_matrix, sp.csr_matrix]:
        key = np.packbits(staples).tobytes()
        if key not in self._made:
            # In batches of NULL_BATCH, each from its own seed, so memory stays small at any pool size.
            made = [null_rows(self._present, self._idf, staples, NULL_BATCH, self._seed + i, self._mix)
                    for i in range(NULL_DECKS // NULL_BATCH)]
            self._made[key] = (sp.vstack([a for a, _ in made], format="csr"),
                               sp.vstack([b for _, b in made], format="csr"))
        return self._made[key]

    def __call__(self, staples: np.ndarray) -> sp.csr_matrix:
        """The random decks' TF-IDF rows (unit length)."""
        return self._both(staples)[0]

    def copies(self, staples: np.ndarray) -> sp.csr_matrix:
        """The same random decks' copies of each card."""
        return self._both(staples)[1]
