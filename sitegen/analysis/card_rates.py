"""The card rates every deck is placed by last, and the arithmetic that places a deck by them.

Each group (an archetype, a small group of its own, or the other decks) is
described by its rate of playing each card and, among its decks playing a
card, the share at each copy level (1, 2, :data:`LEVELS` or more); a deck
goes to the group under whose rates the cards it plays, the copies it plays
them at and the cards it lacks are likeliest (a naive Bayes model). On
presence alone this is scikit-learn's BernoulliNB (tested); the rule of
:mod:`.membership` also draws each archetype's rates towards the archetypes'
pooled rates (:func:`pooled_strength`). A deck shorter
than the partition's usual deck is read as a partial list: a card it lacks
counts as missing in proportion to its length (:func:`length_shares`). The rule of
:mod:`.membership` fits the rates on the groups it settles; the build stores
them (:class:`sitegen.model.Placement`), and the classify page and command
and the season flows place decks by :func:`place`. Nothing here needs more
than numpy and scipy.sparse, so the building process may import it.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np
import scipy.sparse as sp

#: Card rates are smoothed by adding this many plays and this many misses (add-half).
RATE_SMOOTHING = 0.5
#: Most decks' weight an archetype's rate of a card is drawn towards the archetypes' pooled rate of it
#: with (:func:`pooled_strength`): a card they all play alike is read at the pooled rate.
POOL_MOST = 1e6
#: Copy levels the card rates read besides a card's presence: 1 copy, 2 copies, LEVELS or more.
LEVELS = 3
#: A group's mix of a card's copy levels is drawn towards the partition's own mix by this many decks.
LEVEL_SMOOTHING = 1.0
#: Log-share of a copy level no deck of the partition plays a card at: every row holds this same
#: value there, so such a level tells no group from another.
LEVEL_FLOOR = -30.0
#: A deck's length as a share of a full deck (the partition's median deck, in copies) is read in
#: steps of 1/LENGTH_STEPS, and never below LENGTH_FLOOR: a card a short deck lacks still says a little.
#: From LENGTH_FULL of a full deck on it is full: full decks differ by a few copies (decks of 40-50
#: cards, 0.9 of 45, is common practice, no source), and only a list shorter than that is partial.
LENGTH_STEPS = 20
LENGTH_FLOOR = 0.3
LENGTH_FULL = 0.9


@dataclass(frozen=True)
class CardRates:
    """The rule decks are placed by: row i of ``log_odds`` (cards) and ``constants[i]`` score a
    deck's card presence x as ``x @ log_odds[i] + constants[i]``, plus ``levels[i]`` at the copy
    level of each card it plays (:func:`scores`): its log-likelihood (plus log prior) under group i's
    card rates. The rows from ``archetypes`` on (small groups of their own,
    then all other decks, last) place a deck among the other decks. See :func:`fit_rates`."""

    log_odds: np.ndarray
    constants: np.ndarray
    #: Rows 0..archetypes-1 are archetypes'; the rest (small groups of their own, then all other
    #: decks) place a deck among the other decks. None: only the last row does.
    archetypes: int | None = None
    #: Log-share of each copy level among a group's decks playing each card (rows x LEVELS*cards,
    #: level l of card j in column (l-1)*cards + j), added for the level each played card is at;
    #: None: presence alone.
    levels: np.ndarray | None = None
    #: A full deck's length in copies (the partition's median deck), which shorter decks are read
    #: against (:func:`length_shares`); 0: every deck is read as full.
    full_size: float = 0.0

    @property
    def n_archetypes(self) -> int:
        return self.log_odds.shape[0] - 1 if self.archetypes is None else self.archetypes


def group_sums(matrix: sp.csr_matrix, labels: np.ndarray, k: int) -> np.ndarray:
    """Each group's rows added up (k x columns, dense); rows labelled -1 (or k and above) count nowhere."""
    keep = (labels >= 0) & (labels < k)
    onehot = sp.csr_matrix((np.ones(int(keep.sum())), (labels[keep], np.flatnonzero(keep))), shape=(k, matrix.shape[0]))
    return np.asarray((onehot @ matrix).todense())


def as_presence(matrix: sp.spmatrix) -> sp.csr_matrix:
    """1 wherever a row holds a card (copies, weights or repeated entries alike), as the card rates read."""
    out = sp.csr_matrix(matrix, copy=True)
    out.sum_duplicates()
    out.data = np.ones_like(out.data, dtype=np.float64)
    return out


def as_levels(counts: sp.spmatrix) -> sp.csr_matrix:
    """Each played card's copy level as a 1 in its column (decks x LEVELS*cards): level l (1 copy,
    2 copies, ... LEVELS or more) of card j in column (l-1)*cards + j."""
    counts = sp.csr_matrix(counts)
    if not counts.has_canonical_format:
        counts = counts.copy()
        counts.sum_duplicates()
    n, m = counts.shape
    played = counts.data != 0
    level = np.clip(np.rint(counts.data[played]).astype(np.int64), 1, LEVELS)
    indptr = counts.indptr
    if not played.all():  # explicit zeros are no play
        kept = np.bincount(np.repeat(np.arange(n), np.diff(indptr))[played], minlength=n)
        indptr = np.concatenate([[0], np.cumsum(kept)])
    out = sp.csr_matrix((np.ones(len(level)), (level - 1) * m + counts.indices[played], indptr), shape=(n, LEVELS * m))
    out.sort_indices()
    return out


def deck_sizes(counts: sp.spmatrix) -> np.ndarray:
    """Each deck's copies in all (its number of cards, where only presence is held)."""
    return np.asarray(sp.csr_matrix(counts).sum(axis=1), dtype=np.float64).ravel()


class ReadDecks:
    """Decks as the card rates read them, each reading made once and kept: the rounds of placing
    fit and score the same decks several times. ``copies``: each deck's copies of each card."""

    def __init__(self, copies: sp.spmatrix) -> None:
        self.copies = copies

    @classmethod
    def of(cls, copies: "sp.spmatrix | ReadDecks") -> "ReadDecks":
        return copies if isinstance(copies, ReadDecks) else cls(copies)

    @property
    def shape(self) -> tuple[int, int]:
        return self.copies.shape

    @cached_property
    def present(self) -> sp.csr_matrix:
        return as_presence(self.copies)

    @cached_property
    def levels(self) -> sp.csr_matrix:
        return as_levels(self.copies)

    @cached_property
    def sizes(self) -> np.ndarray:
        return deck_sizes(self.copies)


def length_shares(sizes: np.ndarray, full_size: float) -> np.ndarray:
    """Each deck's length as a share of a full deck of ``full_size`` copies: whole steps of
    1/:data:`LENGTH_STEPS` of it, rounded down, between :data:`LENGTH_FLOOR` and 1, and 1 from
    :data:`LENGTH_FULL` on (all 1 when ``full_size`` is 0). A partial list of share f plays each card
    a full deck of its group would with probability f times the group's rate: cards dropped from a
    list are dropped at random."""
    sizes = np.asarray(sizes, dtype=np.float64)
    if full_size <= 0:
        return np.ones(len(sizes))
    share = np.clip(np.floor(LENGTH_STEPS * sizes / full_size) / LENGTH_STEPS, LENGTH_FLOOR, 1.0)
    return np.where(share >= LENGTH_FULL, 1.0, share)


def scores(counts: "sp.spmatrix | ReadDecks", rates: CardRates, sizes: np.ndarray | None = None) -> np.ndarray:
    """Each deck's score under each row of ``rates`` (decks x rows): its log-likelihood plus log prior.
    ``sizes``: each deck's copies in all, where ``counts`` holds only some of its cards (default:
    the copies in ``counts``)."""
    decks = ReadDecks.of(counts)
    present = decks.present
    out = np.asarray(present @ rates.log_odds.T) + rates.constants
    if rates.full_size > 0 and present.shape[0]:
        share = length_shares(decks.sizes if sizes is None else sizes, rates.full_size)
        if (share < 1.0).any():
            # A card rate r read at share f: playing it scores log(f r), lacking it log(1 - f r). The
            # log f of each card played is the same in every row, so only the cards lacked gain.
            miss = -np.logaddexp(0.0, rates.log_odds)  # log(1 - r)
            rate = np.exp(rates.log_odds + miss)
            for f in np.unique(share[share < 1.0]):
                rows = np.flatnonzero(share == f)
                gain = np.log1p(-f * rate) - miss
                out[rows] += gain.sum(axis=1) - np.asarray(present[rows] @ gain.T)
    if rates.levels is not None:
        out += np.asarray(decks.levels @ rates.levels.T)
    return out


def pooled_strength(counts: np.ndarray, reach: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each card's pooled rate over the groups (``counts``: groups x cards, decks playing it; ``reach``:
    each group's decks) and the weight, in decks, with which each group's own rate of it is drawn
    towards that: the strength a + b of a beta prior Beta(a, b) fitted to the groups' rates by the
    method of moments (empirical Bayes for binomial counts). The spread of the groups' rates beyond
    what sampling alone gives is the prior's variance p(1-p)/(a+b+1). A card every group plays at the
    same rate but for sampling (a deck's fill) gets :data:`POOL_MOST`; a card some groups play and
    others lack (a core card) gets about 0, its own rate in each. Groups of under one deck count for
    nothing; with fewer than two groups, or a card no group plays (or every deck does), it is 0."""
    m = counts.shape[1]
    keep = reach >= 1.0
    if keep.sum() < 2:
        return np.zeros(m), np.zeros(m)
    counts, reach = counts[keep], reach[keep]
    pooled = counts.sum(axis=0) / reach.sum()
    share = reach / reach.sum()
    spread = (share[:, None] * (counts / reach[:, None] - pooled) ** 2).sum(axis=0)
    both = pooled * (1.0 - pooled)
    between = spread - both * (share / reach).sum()
    with np.errstate(divide="ignore", invalid="ignore"):
        strength = np.where(between > 0, both / np.where(between > 0, between, 1.0) - 1.0, POOL_MOST)
    return np.where(both > 0, np.clip(strength, 0.0, POOL_MOST), 0.0), pooled


def fit_rates(copies: "sp.csr_matrix | ReadDecks", labels: np.ndarray | None, k: int,
              null_copies: "sp.csr_matrix | ReadDecks",
              null_weight: float, full_size: float = 0.0, weights: np.ndarray | None = None,
              pooled: int = 0) -> CardRates:
    """Card rates of groups 0..k-1 and of the other decks (-1), as a naive Bayes model.

    Group i's rate of a card is (decks playing it + a) / (decks + 2a), a =
    :data:`RATE_SMOOTHING`; its prior is its share of the decks. The other decks
    are joined by the random decks ``null_copies``, weighing ``null_weight``
    decks in all, so that a deck like none of the archetypes has somewhere to
    go even when the data holds few other decks; and their rate of a card is at
    most the random decks' own (smoothed alike), so that the decks of an
    archetype that fell to the other decks cannot teach the other decks to
    look like it and draw more of its decks. On presence alone this is
    scikit-learn's BernoulliNB fitted with those sample weights, the other
    decks' rates then capped (tested).

    Copies: among a group's decks playing a card, the share at each copy level
    (1, 2, :data:`LEVELS` or more), drawn towards the partition's own mix of
    that card's levels by :data:`LEVEL_SMOOTHING` decks, scores the level a
    deck plays it at. Where every deck plays every card at one copy this adds
    nothing (each share is 1).

    Lengths: against a full deck of ``full_size`` copies, a deck of length
    share f (:func:`length_shares`) counts as f of a deck in the number of
    decks a rate is taken over, so partial lists do not pull a group's rates
    down (at most the rate of a card every deck plays). ``full_size`` 0: every
    deck is full, as above.

    ``weights``: each deck's chance of belonging to each group (decks x
    k + 1, the other decks last; rows summing to 1), in place of ``labels``:
    every sum above is then taken with each deck counted in every group by
    its chance (the M step of expectation-maximisation); one-hot rows give
    what ``labels`` give.

    ``pooled``: groups 0..pooled-1 (the archetypes; not small groups of
    their own after them, nor the other decks) each draw their rate of a
    card towards those groups' pooled rate of it by :func:`pooled_strength`
    decks, as the posterior mean under that beta prior (plus the add-half):
    decks play most cards of a partition (fill) alike whatever their group,
    and a group's own rate of such a card says only how few decks it holds.
    Without it, a small group's rate of a card none of its decks plays is
    higher than a large group's (0.5 over its few decks), and a deck with
    several such cards is drawn to the small group; the deck's own cards
    also count more in a small group's rates, so it stays there. 0 (the
    default): the naive Bayes model above.
    """
    decks, nulls = ReadDecks.of(copies), ReadDecks.of(null_copies)
    present, null_present = decks.present, nulls.present
    lengths = length_shares(decks.sizes, full_size)
    if weights is None:
        group = np.where(labels >= 0, labels, k)
        counts = group_sums(present, group, k + 1)
        levels = group_sums(decks.levels, group, k + 1)
        sizes = np.bincount(group, minlength=k + 1).astype(np.float64)
        reach = np.bincount(group, weights=lengths, minlength=k + 1)
    else:
        counts = np.asarray(present.T @ weights).T.copy()
        levels = np.asarray(decks.levels.T @ weights).T.copy()
        sizes = weights.sum(axis=0).astype(np.float64)
        reach = weights.T @ lengths
    # The partition's own mix of each card's levels: its decks at each level over its decks playing it.
    mix = levels.sum(axis=0) / np.maximum(np.tile(counts.sum(axis=0), LEVELS), 1.0)
    n_null = null_present.shape[0]
    null_reach = float(length_shares(nulls.sizes, full_size).sum())
    if n_null and null_weight > 0:
        counts[k] += null_weight / n_null * np.asarray(null_present.sum(axis=0)).ravel()
        levels[k] += null_weight / n_null * np.asarray(nulls.levels.sum(axis=0)).ravel()
        sizes[k] += null_weight
        reach[k] += null_weight / n_null * null_reach
    pseudo = plays = 0.0  # each group's pseudo-decks towards the pooled rate, and their plays
    if pooled:
        strength, rate_pooled = pooled_strength(counts[:pooled], reach[:pooled])
        pseudo = np.zeros_like(counts)
        pseudo[:pooled] = strength
        plays = pseudo * rate_pooled
    rate = np.minimum((counts + plays + RATE_SMOOTHING) / (reach[:, None] + pseudo + 2.0 * RATE_SMOOTHING),
                      ((sizes + RATE_SMOOTHING) / (sizes + 2.0 * RATE_SMOOTHING))[:, None])
    if n_null:  # the other decks play no card more often than random decks do
        random_rate = np.minimum((np.asarray(null_present.sum(axis=0)).ravel() + RATE_SMOOTHING)
                                 / (null_reach + 2.0 * RATE_SMOOTHING),
                                 (n_null + RATE_SMOOTHING) / (n_null + 2.0 * RATE_SMOOTHING))
        rate[k] = np.minimum(rate[k], random_rate)
    with np.errstate(divide="ignore"):
        prior = np.log(sizes / sizes.sum())
    log_odds = np.log(rate) - np.log1p(-rate)
    share = (levels + LEVEL_SMOOTHING * mix) / (np.tile(counts, LEVELS) + LEVEL_SMOOTHING)
    with np.errstate(divide="ignore"):
        level_log = np.where(share > 0, np.log(np.where(share > 0, share, 1.0)), LEVEL_FLOOR)
    return CardRates(log_odds, np.log1p(-rate).sum(axis=1) + prior, None, level_log, float(full_size))


def kept_rates(rates: CardRates, keep: np.ndarray) -> CardRates:
    """The rows of the archetypes kept, then every other-deck row, in order."""
    rows = np.concatenate([np.flatnonzero(keep), np.arange(len(keep), rates.log_odds.shape[0])])
    return replace(rates, log_odds=rates.log_odds[rows], constants=rates.constants[rows], archetypes=int(keep.sum()),
                   levels=None if rates.levels is None else rates.levels[rows])


def likeliest(copies: "sp.spmatrix | ReadDecks", rates: CardRates, sizes: np.ndarray | None = None) -> np.ndarray:
    """Each deck's likeliest row of ``rates``, the other decks' rows included (ties: the first)."""
    return np.argmax(scores(copies, rates, sizes), axis=1)


def place(copies: "sp.csr_matrix | ReadDecks", rates: CardRates, sizes: np.ndarray | None = None,
          row: np.ndarray | None = None) -> np.ndarray:
    """The build's rule for any decks (copies of each of the rule's cards; 1s where copies are not
    read): the group under whose card rates the deck is likeliest, -1 for the other decks' (ties: the
    first). A deck with none of the rule's cards is an other deck: nothing in it speaks for an archetype.
    ``sizes``: each deck's copies in all, cards the rule does not know included (as :func:`scores`);
    ``row``: the decks' :func:`likeliest` rows, when already at hand."""
    n = copies.shape[0]
    k = rates.n_archetypes
    if k <= 0:
        return np.full(n, -1)
    best = likeliest(copies, rates, sizes) if row is None else row
    return np.where((best >= k) | (np.diff(ReadDecks.of(copies).present.indptr) == 0), -1, best)
