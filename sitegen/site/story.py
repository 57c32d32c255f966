"""An archetype's story from one season to the next: card changes, how sure its link is, and
where a season's decks would go under the next season's archetypes.

Card changes are read from the two seasons' card-inclusion tables (the same tables the card
CSV downloads hold): a card in the later table only came in, in the earlier only went out, in
both moved by the difference of its share and of its mean copies.

Flows place the decks of one season by the next season's rule (its :class:`Placement`: cards
and their copies scored by that season's archetypes' and other decks' card rates), so each archetype of the
earlier season is split over the later season's archetypes and the other decks. Decks are not
the same decks from one season to the next; a flow says where decks built like these would be
placed, not what players did.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.sparse as sp

from ..model import OTHER_KEY, Archetype, PartitionResult

#: Most cards listed as moved.
MOVED_SHOWN = 8

#: Similarity words for a season link (distinctive-profile similarity, sitegen.analysis.seasons):
#: (least similarity, word), first that holds. On the development stress sets a planted archetype
#: and itself a season later had a median of 0.46 and 19 in 20 at 0.27 or more; two planted
#: archetypes of different lineages were under 0.12 in 19 of 20 and at most 0.30.
MATCH_WORDS: tuple[tuple[float, str], ...] = ((0.45, "close"), (0.25, "fair"), (0.0, "loose"))


def match_words(similarity: float) -> str:
    """``close`` (0.45 and up), ``fair`` (0.25 and up) or ``loose``."""
    for least, word in MATCH_WORDS:
        if similarity >= least:
            return word
    return MATCH_WORDS[-1][1]


@dataclass(frozen=True)
class Change:
    """One card's share and mean copies in two seasons (0 where the table does not list it)."""

    card: str
    share_before: float
    share_after: float
    copies_before: float
    copies_after: float

    @property
    def share_delta(self) -> float:
        return self.share_after - self.share_before

    @property
    def copies_delta(self) -> float:
        return self.copies_after - self.copies_before


def card_changes(before: Archetype, after: Archetype, top: int = MOVED_SHOWN
                 ) -> tuple[tuple[Change, ...], tuple[Change, ...], tuple[Change, ...]]:
    """(came in, went out, moved most) between two seasons' card tables of one archetype.

    Came in and went out are sorted by the share they have where listed, then card name; moved
    are cards in both tables, by the larger of the share moved and a tenth of the mean copies
    moved (so one copy counts as ten points of share), then card name; at most ``top`` moved.
    """
    b = {c.card: c for c in before.inclusion}
    a = {c.card: c for c in after.inclusion}

    def change(card: str) -> Change:
        x, y = b.get(card), a.get(card)
        return Change(card, x.share if x else 0.0, y.share if y else 0.0,
                      x.mean_copies if x else 0.0, y.mean_copies if y else 0.0)

    came = sorted((change(c) for c in a if c not in b), key=lambda ch: (-ch.share_after, ch.card))
    went = sorted((change(c) for c in b if c not in a), key=lambda ch: (-ch.share_before, ch.card))
    both = [change(c) for c in a if c in b]
    size = [max(abs(ch.share_delta), abs(ch.copies_delta) / 10.0) for ch in both]
    moved = [ch for s, ch in sorted(zip(size, both), key=lambda t: (-t[0], t[1].card)) if s > 1e-9][:top]
    return tuple(came), tuple(went), tuple(moved)


def place_decks(cards: pd.DataFrame, deck_ids: list[str], rule) -> np.ndarray:
    """Index into ``rule.keys`` of the archetype each deck would join under ``rule`` (a
    :class:`~sitegen.model.Placement`), or -1 for an other deck. ``cards``: long-form deck_id,
    card and (when there) quantity rows."""
    if rule is None or len(rule.keys) == 0 or not deck_ids:
        return np.full(len(deck_ids), -1)
    row_of = {d: i for i, d in enumerate(deck_ids)}
    col_of = {c: j for j, c in enumerate(rule.cards)}
    ids = cards["deck_id"].astype(str)
    mine = ids.isin(row_of).to_numpy()
    keep = mine & cards["card"].astype(str).isin(col_of).to_numpy()
    qty_all = (cards["quantity"].to_numpy(dtype=np.float64) if "quantity" in cards.columns
               else np.ones(len(cards)))
    # Each deck's copies in all, cards the rule does not know included: a short list reads as partial.
    sizes = np.bincount(ids[mine].map(row_of).to_numpy(dtype=np.int64), weights=qty_all[mine],
                        minlength=len(deck_ids))
    rows = ids[keep].map(row_of).to_numpy(dtype=np.int64)
    cols = cards["card"].astype(str)[keep].map(col_of).to_numpy(dtype=np.int64)
    copies = sp.csr_matrix((qty_all[keep], (rows, cols)), shape=(len(deck_ids), len(rule.cards)))
    return place_rows(copies, tuple(rule.cards), rule, sizes)


def place_rows(copies: sp.csr_matrix, cards: tuple[str, ...], rule, sizes: np.ndarray | None = None) -> np.ndarray:
    """As :func:`place_decks`, for decks given as copies of each card over ``cards`` (repeated
    entries add up), placed by the rule's own arithmetic (:func:`sitegen.analysis.card_rates.place`).
    ``sizes``: each deck's copies in all (default: its copies over ``cards``)."""
    from ..analysis.card_rates import deck_sizes, place

    n = copies.shape[0]
    if rule is None or len(rule.keys) == 0 or n == 0:
        return np.full(n, -1)
    col_of = {c: j for j, c in enumerate(rule.cards)}
    to = np.array([col_of.get(c, -1) for c in cards], dtype=np.int64)
    coo = sp.coo_matrix(copies)
    keep = (to[coo.col] >= 0) & (coo.data != 0)
    cols = to[coo.col[keep]]
    m = sp.csr_matrix((coo.data[keep].astype(np.float64), (coo.row[keep], cols)), shape=(n, len(rule.cards)))
    m.sum_duplicates()
    return place(m, rule.rates(), deck_sizes(copies) if sizes is None else sizes)


def flows(before: PartitionResult, after: PartitionResult, cards: pd.DataFrame) -> dict[str, dict[str, float]]:
    """Earlier archetype key -> {later archetype key or :data:`OTHER_KEY`: share of its decks placed there}."""
    if after.placement is None or not before.archetypes:
        return {}
    asg = before.assignments
    sample = before.map_sample
    if sample is not None and len(sample.drawn):
        # The decks drawn for the earlier map (a fixed sample of every group, with their cards at hand)
        # stand for their groups: reading a season's card rows again would cost more than all else here.
        placed = place_rows(sample.copies, sample.cards, after.placement)
        labels = asg["archetype"].astype(str).to_numpy()[sample.drawn]
    else:
        ids = asg["deck_id"].astype(str).tolist()
        placed = place_decks(cards, ids, after.placement)
        labels = asg["archetype"].astype(str).to_numpy()
    keys = list(after.placement.keys)
    to = np.array([keys[i] if i >= 0 else OTHER_KEY for i in placed], dtype=object)
    out: dict[str, dict[str, float]] = {}
    for a in before.archetypes:
        mine = to[labels == a.key]
        if len(mine) == 0:
            continue
        values, counts = np.unique(mine.astype(str), return_counts=True)
        out[a.key] = {str(v): float(c) / len(mine) for v, c in zip(values, counts)}
    return out
