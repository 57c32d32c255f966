"""Which decks belong to which archetype, and which to none: the rule every deck is held to.

Candidate groups come from :mod:`.cluster`; this module decides what is an
archetype and what is an other deck, in the TF-IDF space the exports measure
distances in (card presence weighted by rarity, each deck a unit row):

- **Centres** are the unit mean direction of a group's rows, blind to the
  staples (cards at least half the decks of every group play, when there are
  two groups or more): those columns are zero, so staples tell no archetype
  from another nor from a random deck, while a deck's own staples still count
  in its length. A deck is scored by its cosine similarity to each centre and
  goes to the most similar.
- **Random decks of the same leader** (:mod:`.random_decks`) are the yardstick: each is a real deck of
  the partition whose staples are kept and whose other cards are swapped for
  cards drawn at random from the partition's pool. A centre's *cut* is the
  similarity that random decks reach only 1 time in 50 over all k centres (1 in 50k at each centre,
  since a deck gets to try its nearest). A deck less similar to its nearest
  centre than that cut is an other deck while groups are settled: it looks
  like a random pile to every archetype.
- **A group is an archetype** when it still holds at least ``least`` decks
  above the cuts, and its typical member (the median) is, to the centre of the
  *other* members, at least as similar as the cut: while groups are settled a
  deck is scored against its own group without itself, so a small pile of
  one-offs cannot pass by leaning on its own weight. Failing groups give their
  decks to the next nearest archetype (or to the other decks by the same rule).
- **Two groups are two archetypes** only when each has a card of its own
  against the other (played by at least half of its decks and at most a fifth
  of the other's) and two such cards exclude each other across both groups
  (Yule's Q of playing one and the other at most -0.8, or at most -0.5 with a
  one-sided Fisher exact p below 1e-6). A close variant passes: it dropped some
  of its parent's cards for cards of its own. Two halves of one archetype cut
  along flex cards do not, for its decks play those cards independently; they
  are joined. Each group also gets a 2-way k-means cut tried on it, kept when
  the pieces pass the same test with the Fisher test required of the pair at
  Q -0.8 too (p below :data:`SPLIT_P`: the cut is drawn from the very decks it is
  judged on). Where copies are read, a (card, copy level)
  pair counts as a card of its own too, so a variant that keeps its parent's
  cards at other counts stays apart; the two that exclude each other must be
  different cards, for two counts of one card never meet in a deck
  (:class:`DeckCards`).

- **Every deck is placed last by card rates** (:mod:`.card_rates`): each
  archetype's rate of playing each card (drawn towards the archetypes' pooled
  rate of it, :func:`.card_rates.pooled_strength`), and the other decks' (with
  the random decks), smoothed, as a Bernoulli naive Bayes model; each deck goes to the
  group under whose rates the cards it plays and lacks are likeliest. Twice,
  each time refitted on the groups the last time left; a group left under
  ``least`` decks is given up. Last come soft rounds (:mod:`.rate_rounds`):
  rates refitted on each deck's chances of belonging to each group. Cosine similarity weighs a card by its rarity,
  so a short list whose one-off cards outweigh its few common core cards
  falls below the cut; card rates weigh each card by how much likelier it is
  in one group than in another, as the planted truth would. They also read
  copies: among a group's decks playing a card, the share at each copy level
  (1, 2, :data:`LEVELS` or more) scores the level a deck plays it at, so a
  close variant that plays its parent's cards at other counts is told apart,
  and so is an archetype's short list that still plays its core at full count.
- **Small groups of their own.** A dense group too small to be an archetype
  (from :data:`SMALL_SHARE` of ``min_share``) that the placement gave to an
  archetype, yet is distinct from the rest of it (the strict test above: a
  close variant of it), gets card rates of its own in one last round; the
  decks likeliest under them are other decks, not the archetype's. So is a
  variant no dense region showed: the decks of an archetype that play one card,
  when they and the rest pass the strict test with the pair's Fisher p under
  :data:`SPLIT_P` shared among every pair looked at (:func:`_own_cuts`). One that
  draws at least ``least`` decks that way is not too small: it is an
  archetype, and the round is placed again.

The card rates the final labels were placed by are stored with the results
(:class:`sitegen.model.Placement`, with the centres distances are measured
to), so a decklist from outside the data can be placed by exactly the build's
rule. The measurements behind these choices are in docs/method.md.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np
import scipy.sparse as sp

from .card_rates import CardRates, ReadDecks, group_sums
from .random_decks import RandomDecks
from .rate_rounds import RATE_ROUNDS, compact, place_round, soft_rounds

#: Share of random decks the cuts keep out, over all of a partition's centres.
NULL_QUANTILE = 0.98
#: A card of one's own: played by at least this share of the group...
OWN_IN = 0.5
#: ...and by at most this share of the group it is told apart from.
OWN_OUT = 0.2
#: Own cards of each side tried as a pair.
OWN_TRIED = 3
#: Two cards exclude each other when Yule's Q of playing them is at most this.
EXCLUSION = -0.8
#: Or at most this, when so few decks playing both would happen by chance less often than
#: EXCLUSION_P (Fisher's exact test, one-sided): odd cards a large group plays now and then
#: blur a clear exclusion, while chance picks the most opposed of many flex cards.
EXCLUSION_LOOSE = -0.5
EXCLUSION_P = 1e-6
#: A cut k-means proposes inside one group is drawn from the very decks it is then judged on, and a
#: group of a few dozen decks shows a Q of -0.8 between two of its flex cards by chance: such a cut
#: also needs the pair's Fisher test under this p-value (about 2% over the up to 18 pairs, cards and
#: copy levels, that one cut is judged on).
SPLIT_P = 1e-3
#: Staples: cards played by at least this share of the decks of every group.
STAPLE_SHARE = 0.5
#: Small groups of their own (too small to be archetypes unless they draw enough decks) are looked
#: for from this share of min_share (dense groups of at least that many of the decks looked at),
#: and from OWN_FLOOR decks.
SMALL_SHARE = 0.25
OWN_FLOOR = 5


@dataclass(frozen=True)
class Membership:
    """The rule as settled: ``labels`` (group 0..k-1 per deck, -1 for other
    decks), ``centres`` (k x cards, unit rows: each group's mean direction, for
    distances), ``rates`` (the :class:`CardRates` the labels were placed by),
    ``similarity`` (each deck's similarity to its own group's centre, or to
    the nearest for an other deck), and counts for the page: ``far`` other
    decks, ``dropped_small`` and ``dropped_loose`` groups given up, ``merged``
    pairs joined (also to keep at most analysis.k_max), ``split`` groups cut
    in two."""

    labels: np.ndarray
    centres: np.ndarray
    rates: CardRates
    similarity: np.ndarray
    far: int = 0
    dropped_small: int = 0
    dropped_loose: int = 0
    merged: int = 0
    split: int = 0
    #: Small groups of their own given up (their decks other decks), and how many decks they hold.
    own_groups: int = 0
    own_decks: int = 0
    #: Small groups of their own that drew at least ``least`` decks, and so are archetypes.
    promoted: int = 0


def unit_rows(matrix: np.ndarray) -> np.ndarray:
    """Dense rows scaled to unit length (zero rows stay zero)."""
    norms = np.linalg.norm(matrix, axis=1, keepdims=True)
    norms[norms == 0] = 1.0
    return matrix / norms


def centres_of(weights: sp.csr_matrix, labels: np.ndarray, k: int) -> np.ndarray:
    """The unit mean direction of each group's rows (k x cards); an empty group is a zero row."""
    return unit_rows(group_sums(weights, labels, k))


def similarities(weights: sp.csr_matrix, centres: np.ndarray) -> np.ndarray:
    """Cosine similarity of every row to every centre (rows and centres have unit length)."""
    if centres.shape[0] == 0:
        return np.zeros((weights.shape[0], 0))
    return np.asarray(weights @ centres.T)


def rates(present: sp.csr_matrix, labels: np.ndarray, k: int) -> np.ndarray:
    """Share of each group's decks playing each card (k x cards)."""
    counts = group_sums(present, labels, k)
    keep = (labels >= 0) & (labels < k)
    sizes = np.bincount(labels[keep], minlength=k).astype(np.float64)
    return counts / np.maximum(sizes, 1.0)[:, None]


def distinct(present: sp.csr_matrix, a: np.ndarray, b: np.ndarray, rate_a: np.ndarray | None = None,
             rate_b: np.ndarray | None = None, *, strict: bool = False, by_card: sp.csc_matrix | None = None,
             cards: int | None = None, p_max: float | None = None) -> bool:
    """True when decks ``a`` and ``b`` are two archetypes, not one cut in two (see the module notes).

    Each side needs a card of its own: played by at least :data:`OWN_IN` of
    its decks and at most :data:`OWN_OUT` of the other's. That is all two
    dense regions found apart need to stay apart. A cut proposed by k-means
    inside one group (``strict``) must also show that the two cards exclude
    each other across both sides (Yule's Q of the 2x2 table of playing one
    and the other at most :data:`EXCLUSION`): a variant drops cards of its
    parent for cards of its own, while k-means readily cuts one archetype in
    two along flex cards that its decks play independently. ``cards``: the
    columns are (card, copy level) pairs of that many cards (:func:`as_levels`),
    and two levels of one card, which no deck plays at once, are never taken
    for a pair that excludes each other. ``p_max``: a pair at most
    :data:`EXCLUSION` must also show so few decks playing both that chance
    would give it less often than this (Fisher's exact test, one-sided), and
    a pair between -0.5 and -0.8 a p under it as well as under 1e-6.
    """
    if rate_a is None:
        rate_a = np.asarray(present[a].mean(axis=0)).ravel()
    if rate_b is None:
        rate_b = np.asarray(present[b].mean(axis=0)).ravel()
    own_a = np.flatnonzero((rate_a >= OWN_IN) & (rate_b <= OWN_OUT))
    own_b = np.flatnonzero((rate_b >= OWN_IN) & (rate_a <= OWN_OUT))
    if len(own_a) == 0 or len(own_b) == 0:
        return False
    if not strict:
        return True
    own_a = own_a[np.argsort(-(rate_a - rate_b)[own_a], kind="stable")][:OWN_TRIED]
    own_b = own_b[np.argsort(-(rate_b - rate_a)[own_b], kind="stable")][:OWN_TRIED]
    both = np.concatenate([a, b])
    if by_card is None:  # the same matrix by column: a few cards of many decks are read fast from it
        by_card = sp.csc_matrix(present[both])
        both = np.arange(len(both))
    x = by_card[:, own_a].toarray()[both] > 0
    y = by_card[:, own_b].toarray()[both] > 0
    together = x.T.astype(np.float64) @ y  # decks playing both
    nx = x.sum(axis=0)[:, None]
    ny = y.sum(axis=0)[None, :]
    only_x = nx - together
    only_y = ny - together
    neither = x.shape[0] - together - only_x - only_y
    q = yules_q(together, only_x, only_y, neither)
    if cards is not None:
        q = np.where((own_a % cards)[:, None] == (own_b % cards)[None, :], 0.0, q)
    if p_max is None and (q <= EXCLUSION).any():
        return True
    from scipy.stats import fisher_exact  # here: importing this module needs none of scipy.stats

    for i, j in zip(*np.nonzero(q <= EXCLUSION_LOOSE)):
        table = [[together[i, j], only_x[i, j]], [only_y[i, j], neither[i, j]]]
        p = fisher_exact(table, alternative="less").pvalue
        if p < min(EXCLUSION_P, p_max or 1.0) or (p_max is not None and q[i, j] <= EXCLUSION and p < p_max):
            return True
    return False


def yules_q(both, only_x, only_y, neither):
    """Yule's Q of 2x2 tables (ad - bc) / (ad + bc); 0 where ad + bc is 0. -1: the two never meet."""
    ad = np.asarray(both, dtype=np.float64) * neither
    bc = np.asarray(only_x, dtype=np.float64) * only_y
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(ad + bc > 0, (ad - bc) / np.where(ad + bc > 0, ad + bc, 1.0), 0.0)


def cuts_for(null: sp.csr_matrix, centres: np.ndarray) -> np.ndarray:
    """Each centre's cut: the similarity random decks reach only 1 time in 50 over all k centres."""
    if centres.shape[0] == 0:
        return np.zeros(0)
    if null.shape[0] == 0:
        return np.zeros(centres.shape[0])
    # Each deck is held to its nearest of k centres, so it has k chances to pass: 1 in 50 over all of them.
    level = 1.0 - (1.0 - NULL_QUANTILE) / centres.shape[0]
    return np.quantile(similarities(null, centres), level, axis=0)


def loo_similarity(weights: sp.csr_matrix, members: np.ndarray) -> np.ndarray:
    """Each member's similarity to the mean direction of the *other* members (unit rows)."""
    if len(members) < 2:
        return np.zeros(len(members))
    sub = weights[members]
    total = np.asarray(sub.sum(axis=0)).ravel()
    dots = np.asarray(sub @ total).ravel()
    own = np.asarray(sub.multiply(sub).sum(axis=1)).ravel()
    rest = np.sqrt(np.maximum(total @ total - 2.0 * dots + own, 1e-12))
    return (dots - own) / rest


@dataclass(frozen=True)
class DeckCards:
    """A partition's decks as the "two archetypes" test reads them: card presence and, where
    copies are read, (card, copy level) columns, each also by column (a few columns of many decks
    are read fast from it)."""

    present: sp.csr_matrix
    by_card: sp.csc_matrix
    levels: sp.csr_matrix | None = None
    by_level: sp.csc_matrix | None = None

    @classmethod
    def of(cls, present: sp.csr_matrix, copies: "sp.csr_matrix | ReadDecks | None" = None) -> "DeckCards":
        """``copies``: each deck's copies of each card (None, or every copy 1: presence alone)."""
        levels = None if copies is None else ReadDecks.of(copies).levels
        if levels is not None and levels.nnz and levels.indices.max() < present.shape[1]:
            levels = None  # one copy of every card: the levels say what presence says
        return cls(present, sp.csc_matrix(present), levels, None if levels is None else sp.csc_matrix(levels))

    def apart(self, a: np.ndarray, b: np.ndarray, rates: tuple | None = None, p_max: float | None = None) -> bool:
        """:func:`distinct` (strict) on card presence, or else on (card, copy level) columns: a close
        variant that keeps its parent's cards may play them at other counts. ``rates``: the two
        sides' rates of presence and of levels, when at hand; ``p_max``: as :func:`distinct`'s."""
        ra, rb, la, lb = rates if rates is not None else (None, None, None, None)
        if distinct(self.present, a, b, ra, rb, strict=True, by_card=self.by_card, p_max=p_max):
            return True
        return self.levels is not None and distinct(self.levels, a, b, la, lb, strict=True, by_card=self.by_level,
                                                    cards=self.present.shape[1], p_max=p_max)


def merge_alike(decks: DeckCards, weights: sp.csr_matrix, labels: np.ndarray,
                known: dict | None = None) -> tuple[np.ndarray, int]:
    """Join groups that are not two archetypes (:meth:`DeckCards.apart`), most similar pair first.

    ``known`` remembers the verdict on each pair of member sets across calls (a pair left as it was
    is not judged again)."""
    labels = labels.copy()
    merged = 0
    known = {} if known is None else known
    while True:
        keys = [c for c in np.unique(labels) if c >= 0]
        if len(keys) < 2:
            return labels, merged
        k = int(max(keys)) + 1
        share = rates(decks.present, labels, k)
        level_share = rates(decks.levels, labels, k) if decks.levels is not None else share
        centres = centres_of(weights, labels, k)
        members = {c: np.flatnonzero(labels == c) for c in keys}
        best = None
        for i, a in enumerate(keys):
            for b in keys[i + 1:]:
                pair = (members[a].tobytes(), members[b].tobytes())
                if pair not in known:
                    known[pair] = decks.apart(members[a], members[b],
                                              (share[a], share[b], level_share[a], level_share[b]))
                if known[pair]:
                    continue
                sim = float(centres[a] @ centres[b])
                if best is None or sim > best[0]:
                    best = (sim, a, b)
        if best is None:
            return labels, merged
        labels[labels == best[2]] = best[1]
        merged += 1


def settle(present: sp.csr_matrix, weights: sp.csr_matrix, idf: np.ndarray, labels: np.ndarray, *,
           least: int, seed: int, merge: bool = True, rows: np.ndarray | None = None,
           most: int | None = None, nulls: "RandomDecks | None" = None,
           smalls: Sequence[np.ndarray] = (), copies: sp.csr_matrix | None = None) -> Membership:
    """From candidate labels (0..k-1, -1 for none) to the rule every deck is held to.

    Until nothing changes: every deck goes to its nearest live centre and is
    an other deck below that centre's cut; groups with fewer than
    ``least`` decks inside their cut, or whose typical member is no closer to
    the rest than a random deck, are given up; then groups without a card of
    their own against another are merged (unless ``merge`` is off, for a
    pinned k), judged on the decks inside their cuts only. The centres
    returned are the ones the final labels were assigned by. ``nulls``: the
    partition's :class:`RandomDecks`, when this runs on part of it. ``smalls``:
    small dense groups (member sets), each kept as a group of its own whose
    decks are other decks when it is distinct from the archetype that took it. ``copies``: each
    deck's copies of each card, read by the card rates (None: presence alone).
    """
    n = present.shape[0]
    copies = ReadDecks(present if copies is None else copies)  # read once for the tests and every round
    decks = DeckCards.of(present, None if copies.copies is present else copies)
    labels = compact(labels)
    merged = dropped_small = dropped_loose = 0
    split = promoted = 0
    tried: set[bytes] = set()
    nulls = RandomDecks(copies.copies, idf, seed) if nulls is None else nulls
    known: dict = {}
    for _ in range(64):
        labels, small, loose = _prune(present, weights, nulls, labels, least)
        dropped_small += small
        dropped_loose += loose
        if not merge:
            break
        joined, count = (merge_alike(decks, weights, labels, known) if labels.max(initial=-1) >= 1
                         else (labels, 0))
        if count:
            merged += count
            labels = compact(joined)
            continue
        if most is not None and labels.max(initial=-1) + 1 > most:
            labels = compact(_join_closest(weights, labels))
            merged += 1
            continue
        if rows is None or (most is not None and labels.max(initial=-1) + 1 >= most):
            break
        cut = _split_one(decks, rows, labels, least, seed, tried)
        if cut is None:
            break
        labels = cut
        split += 1
    k = int(labels.max(initial=-1)) + 1
    m = weights.shape[1]
    if k == 0:
        return Membership(np.full(n, -1), np.zeros((0, m)), CardRates(np.zeros((0, m)), np.zeros(0)), np.zeros(n),
                          int(n), dropped_small, dropped_loose, merged, split)
    # The groups' decks inside their cuts, by their centres as they now stand; then every deck placed
    # by card rates (RATE_ROUNDS rounds), the other decks' rates taken with random decks of the
    # partition's. A group left with fewer than ``least`` decks is given up and the round placed again.
    staples = _staples(present, labels, k)
    blind = _blind(weights, staples)
    centres = centres_of(blind, labels, k)
    sims = similarities(weights, centres)
    near = np.argmax(sims, axis=1)
    null = nulls(staples)
    labels = np.where(sims[np.arange(n), near] >= cuts_for(null, centres)[near], near, -1)
    null_copies = ReadDecks(nulls.copies(staples))
    full_size = float(np.median(copies.sizes))  # a full deck: partial lists are read against it
    for _ in range(RATE_ROUNDS):
        labels, rates, given_up, row = place_round(copies, labels, null_copies, least, full_size)
        dropped_small += given_up
    k = rates.n_archetypes
    own = _own_groups(decks, labels, k, smalls) if k else []
    own += _own_cuts(decks, labels, k, least, seed, own)
    if own:
        labels, rates, given_up, row = place_round(copies, labels, null_copies, least, full_size, own)
        dropped_small += given_up
        k = rates.n_archetypes
        for _ in range(RATE_ROUNDS):  # each small group refitted on the decks its rates drew, as archetypes are
            drawn = [np.flatnonzero(row == k + j) for j in range(len(own))]
            drawn = [now if len(now) >= OWN_FLOOR else was for now, was in zip(drawn, own)]
            if all(np.array_equal(now, was) for now, was in zip(drawn, own)):
                break
            own = drawn
            labels, rates, given_up, row = place_round(copies, labels, null_copies, least, full_size, own)
            dropped_small += given_up
            k = rates.n_archetypes
        grown = [j for j in range(len(own)) if int((row == k + j).sum()) >= least]
        if grown:  # a group of its own that draws at least ``least`` decks is an archetype, not other decks
            for step, j in enumerate(grown):
                labels[row == k + j] = k + step
            own = [members for j, members in enumerate(own) if j not in grown]
            labels, rates, given_up, row = place_round(copies, labels, null_copies, least, full_size, own)
            dropped_small += given_up
            promoted += len(grown)
            k = rates.n_archetypes
    if k:
        labels, rates, row = soft_rounds(copies, labels, rates, row, null_copies, least, full_size)
    if k == 0:
        return Membership(labels, np.zeros((0, m)), rates, np.zeros(n), int(n), dropped_small, dropped_loose,
                          merged, split, promoted=promoted)
    centres = centres_of(blind, labels, k)
    sims = similarities(weights, centres)
    sim = np.where(labels >= 0, sims[np.arange(n), np.maximum(labels, 0)], sims.max(axis=1))
    own_groups = rates.log_odds.shape[0] - 1 - k
    # Other decks likeliest in a small group of their own, for the page (``row``: under these rates).
    own_decks = int(((row >= k) & (row < rates.log_odds.shape[0] - 1)).sum()) if own_groups else 0
    return Membership(labels, centres, rates, sim, int((labels < 0).sum()), dropped_small, dropped_loose,
                      merged, split, own_groups, own_decks, promoted)


def _own_groups(decks: DeckCards, labels, k, smalls) -> list[np.ndarray]:
    """The small groups (``smalls``: member sets of at least :data:`OWN_FLOOR` decks) that are groups
    of their own: apart (:meth:`DeckCards.apart`) from the rest of the archetype most of their decks
    joined, which holds at least as many decks."""
    out: list[np.ndarray] = []
    for members in smalls:
        if len(members) < OWN_FLOOR:
            continue
        went = labels[members]
        went = went[went >= 0]
        if len(went) == 0:
            continue
        rest = np.setdiff1d(np.flatnonzero(labels == np.bincount(went).argmax()), members)
        if len(rest) >= len(members) and decks.apart(members, rest):
            out.append(members)
    return out


def _own_cuts(decks: DeckCards, labels, k, least, seed, found: Sequence[np.ndarray]) -> list[np.ndarray]:
    """Small variants inside archetypes that no dense region showed: in each archetype, the decks
    playing one card, from the small groups' size (:data:`SMALL_SHARE` of ``least``, at least
    :data:`OWN_FLOOR`) to under ``least`` decks, that are apart from the rest of it
    (:func:`_card_cut` with ``small``); none that is mostly a group already ``found``."""
    small = max(OWN_FLOOR, int(np.ceil(SMALL_SHARE * least - 1e-9)))
    out: list[np.ndarray] = []
    for c in range(k):
        members = np.flatnonzero(labels == c)
        if len(members) < least + small:
            continue
        piece = _card_cut(decks, members, least, seed, small=small)
        if piece is not None and not any(2 * len(np.intersect1d(piece, m)) > len(piece) for m in found):
            out.append(piece)
    return out


def _join_closest(weights: sp.csr_matrix, labels: np.ndarray) -> np.ndarray:
    """Labels with the two groups whose centres are most alike joined (to keep at most analysis.k_max)."""
    k = int(labels.max(initial=-1)) + 1
    centres = centres_of(weights, labels, k)
    sims = centres @ centres.T
    np.fill_diagonal(sims, -np.inf)
    a, b = np.unravel_index(np.argmax(sims), sims.shape)
    out = labels.copy()
    out[out == max(a, b)] = min(a, b)
    return out


def _split_one(decks: DeckCards, rows, labels, least, seed, tried) -> np.ndarray | None:
    """Labels with one group cut in two, or None: the first group (largest first) with a cut into two
    pieces of at least ``least`` decks that are two archetypes (:meth:`DeckCards.apart`, with the
    pair's Fisher test under :data:`SPLIT_P`): its 2-way k-means cut (on the reduced ``rows``), or
    else the cut between the decks playing one card and the rest (:func:`_card_cut`). ``tried``
    remembers groups already looked at, so none is tried twice."""
    from .cluster import distinct_rows, kmeans, nearest, sample_rows

    k = int(labels.max(initial=-1)) + 1
    sizes = np.bincount(labels[labels >= 0], minlength=k)
    for c in np.argsort(-sizes, kind="stable"):
        members = np.flatnonzero(labels == c)
        key = members.tobytes()
        if len(members) < 2 * least or key in tried:
            continue
        tried.add(key)
        fit = members[sample_rows(len(members), 5000, seed)]
        cut = labels.copy()
        if distinct_rows(rows[fit]) >= 2:
            piece = nearest(rows[members], kmeans(rows[fit], 2, seed, n_init=4).cluster_centers_)
            if (min(np.bincount(piece, minlength=2)) >= least
                    and decks.apart(members[piece == 0], members[piece == 1], p_max=SPLIT_P)):
                cut[members[piece == 1]] = k
                return cut
        own = _card_cut(decks, members, least, seed)
        if own is not None:
            cut[own] = k
            return cut
    return None


def _card_cut(decks: DeckCards, members: np.ndarray, least: int, seed: int, small: int | None = None
              ) -> np.ndarray | None:
    """The decks of ``members`` that play one card, when they and the rest are two archetypes; else
    None. A variant of a few percent inside a large group is a cut k-means passes by (its best 2-way
    cut halves the group); its own card finds it. Tried: the :data:`OWN_TRIED` cards played by at
    least ``least`` decks and at most half the group whose players most lack a card the rest mostly
    plays (a card of the rest's own), ranked on up to 5 000 of the group's decks; each cut is held to
    :meth:`DeckCards.apart` with the pair's Fisher test under :data:`SPLIT_P` / :data:`OWN_TRIED`
    (Bonferroni over the cards tried). ``small``: look instead for a piece of from ``small`` to under
    ``least`` decks (a variant too small to be an archetype), its Fisher test then under
    :data:`SPLIT_P` divided by every pair of cards the ranking looked at (Bonferroni over them: a
    few decks lack a card together by chance more often than many do)."""
    from .cluster import sample_rows

    n = len(members)
    group = decks.present[members]
    played = np.asarray(group.sum(axis=0)).ravel()
    low, high = (least, n / 2) if small is None else (small, min(least - 1, n / 2))
    tried = np.flatnonzero((played >= low) & (played <= high) & (n - played >= least))
    if len(tried) == 0:
        return None
    look = group if n <= 5000 else group[sample_rows(n, 5000, seed)]
    seen = played if n <= 5000 else np.asarray(look.sum(axis=0)).ravel()
    both = np.asarray((look[:, tried].T @ look).todense())  # tried x cards: decks playing the two
    with_it = both / np.maximum(seen[tried], 1.0)[:, None]
    without = (seen[None, :] - both) / np.maximum(look.shape[0] - seen[tried], 1.0)[:, None]
    # Only a card whose players lack a card of the rest's own (OWN_IN of the rest, OWN_OUT of them at
    # most) can pass the test: the others are not tried.
    gap = np.where((without >= OWN_IN) & (with_it <= OWN_OUT), without - with_it, -1.0).max(axis=1)
    # Each pair is tested on presence and again on copy levels where copies are read: two tests a pair.
    pairs = max(1, int((without >= OWN_IN).sum())) * (1 if decks.levels is None else 2)
    p_max = SPLIT_P / (OWN_TRIED if small is None else pairs)
    for j in np.argsort(-gap, kind="stable")[:OWN_TRIED]:
        if gap[j] < 0:
            break
        plays = decks.by_card[:, tried[j]].toarray().ravel()[members] > 0
        if decks.apart(members[plays], members[~plays], p_max=p_max):
            return members[plays]
    return None


def _blind(weights: sp.csr_matrix, staples: np.ndarray) -> sp.csr_matrix:
    """The rows with the staples' columns set to zero (each row keeps its length: a deck's staples
    still count in its norm, so a deck made mostly of staples is like no centre)."""
    if not staples.any():
        return weights
    return sp.csr_matrix(weights @ sp.diags((~staples).astype(np.float64)))


def _staples(present: sp.csr_matrix, labels: np.ndarray, k: int) -> np.ndarray:
    """Cards played by at least :data:`STAPLE_SHARE` of the decks of every group."""
    keep = (labels >= 0) & (labels < k)
    held = np.bincount(labels[keep], minlength=k) > 0
    return np.all(rates(present, labels, k)[held] >= STAPLE_SHARE, axis=0) & (held.sum() >= 2)


def _prune(present, weights, nulls, labels, least) -> tuple[np.ndarray, int, int]:
    """Give up small and loose groups until none is left; return the labels inside the cuts.

    A deck is scored against its own group's centre *without itself* (as a
    deck from outside the data would be), so a small pile of one-offs cannot
    pass by leaning on its own weight in its centre.
    """
    k = int(labels.max(initial=-1)) + 1
    alive = np.bincount(labels[labels >= 0], minlength=k) > 0
    small = loose = 0
    for _ in range(4 * k + 8):
        live = np.flatnonzero(alive)
        if len(live) == 0:
            break
        staples = _staples(present, np.where((labels >= 0) & alive[np.maximum(labels, 0)], labels, -1), k)
        blind = _blind(weights, staples)
        sims = _own_out_similarities(blind, labels, k)[:, live]
        near = live[np.argmax(sims, axis=1)]
        sim = sims.max(axis=1)
        cuts = np.zeros(k)
        centres = centres_of(blind, labels, k)
        cuts[live] = cuts_for(nulls(staples), centres[live])
        placed = np.where(sim >= cuts[near], near, -1)
        failed = False
        for c in live:
            members = np.flatnonzero(placed == c)
            if len(members) < least:
                alive[c], small, failed = False, small + 1, True
            elif np.median(loo_similarity(blind, members)) < cuts[c]:
                alive[c], loose, failed = False, loose + 1, True
        settled = np.array_equal(placed, labels)
        labels = np.where((placed >= 0) & alive[np.maximum(placed, 0)], placed, -1)
        if not failed and settled:
            return compact(labels), small, loose
    return compact(labels), small, loose


def _own_out_similarities(weights: sp.csr_matrix, labels: np.ndarray, k: int) -> np.ndarray:
    """Similarity of every deck to every group's centre, its own group's centre taken without it."""
    keep = labels >= 0
    sums = group_sums(weights, labels, k)
    norms = np.linalg.norm(sums, axis=1)
    dots = np.asarray(weights @ sums.T)
    sims = dots / np.where(norms == 0, 1.0, norms)
    rows = np.flatnonzero(keep)
    own = labels[rows]
    self_sq = np.asarray(weights[rows].multiply(weights[rows]).sum(axis=1)).ravel()
    rest = np.sqrt(np.maximum(norms[own] ** 2 - 2.0 * dots[rows, own] + self_sq, 0.0))
    sims[rows, own] = np.where(rest > 1e-12, (dots[rows, own] - self_sq) / np.where(rest > 1e-12, rest, 1.0), 0.0)
    return sims
