"""Deck-building rules: warnings about decks that break them, never errors.

A deck may hold at most ``rules.max_copies`` copies of one card, at least
``rules.min_cards`` cards and, when ``rules.max_cards`` is above 0, at most
that many. Decks that break a rule are reported as :class:`Finding` s and,
with ``rules.exclude_breakers``, left out of the analysis (listed in
``DeckData.excluded``). The work is vectorised over the long-form table, so
tens of millions of card rows take seconds.
"""
from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from .config import Config
from .load.settings import LoadSettings
from .model import DeckData, Finding

__all__ = ["RULE_KINDS", "check_rules", "deck_totals"]

#: The findings of the rule checks, in the order they are listed for one deck.
RULE_KINDS = ("copies-over-limit", "deck-too-small", "deck-too-large")


def _runs(deck_ids: pd.Series) -> np.ndarray | None:
    """Start position of each run of equal deck ids, or None when they are not grouped."""
    n = len(deck_ids)
    if n == 0:
        return np.array([], dtype=np.int64)
    if isinstance(deck_ids.dtype, pd.CategoricalDtype):
        codes = deck_ids.array.codes  # no copy
        starts = np.flatnonzero(np.concatenate([[True], codes[1:] != codes[:-1]]))
        heads = codes[starts]
        return starts if heads.size < 2 or np.all(heads[1:] > heads[:-1]) or np.unique(heads).size == heads.size else None
    try:
        arrow = pa.chunked_array(deck_ids.array.__arrow_array__())
        differs = pc.not_equal(arrow[1:], arrow[:-1]).to_numpy(zero_copy_only=False)
    except (AttributeError, TypeError, pa.ArrowException):
        values = deck_ids.to_numpy(dtype=object)
        differs = values[1:] != values[:-1]
    starts = np.flatnonzero(np.concatenate([[True], np.asarray(differs, dtype=bool)]))
    heads = deck_ids.iloc[starts]
    return starts if heads.is_unique else None


def deck_totals(cards: pd.DataFrame) -> pd.Series:
    """Cards per deck (sum of quantities), indexed by deck_id in the order of ``cards``."""
    starts = _runs(cards["deck_id"])
    if starts is None:
        return cards.groupby("deck_id", sort=False)["quantity"].sum()
    if starts.size == 0:
        return pd.Series([], dtype=np.int64, index=pd.Index([], dtype="str", name="deck_id"))
    totals = _run_sums(cards["quantity"].to_numpy(), starts)
    ids = cards["deck_id"]
    if isinstance(ids.dtype, pd.CategoricalDtype):
        index = ids.cat.categories.take(ids.array.codes[starts])
    else:
        index = ids.iloc[starts].to_numpy()
    return pd.Series(totals, index=pd.Index(index, dtype="str", name="deck_id"))


def _run_sums(values: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Sum of each run of ``values`` (runs begin at ``starts``) in int64, a million rows at a time:
    copies are stored narrow (int8), and widening them all at once costs more than the sums."""
    out = np.empty(starts.size, dtype=np.int64)
    ends = np.append(starts[1:], values.size)
    step, i = 1 << 20, 0
    while i < starts.size:
        j = max(int(np.searchsorted(starts, starts[i] + step)), i + 1)
        low, high = starts[i], ends[j - 1]
        out[i:j] = np.add.reduceat(values[low:high].astype(np.int64), starts[i:j] - low)
        i = j
    return out


def check_rules(data: DeckData, cfg: Config | LoadSettings) -> DeckData:
    """A copy of ``data`` with rule findings added and, if asked, breakers excluded.

    Findings come per deck in deck_id order: ``copies-over-limit`` (one
    per deck, naming each card over the limit), ``deck-too-small``,
    ``deck-too-large``. ``cfg``: the config, or the load stage's settings
    read from it (:class:`~sitegen.load.settings.LoadSettings`).
    """
    rules = LoadSettings.of(cfg).rules
    max_copies, min_cards, max_cards = rules.max_copies, rules.min_cards, rules.max_cards
    cards = data.cards
    decks = data.decks.set_index("deck_id")[["season", "leader"]]

    over = cards[cards["quantity"].to_numpy() > max_copies]
    over_by_deck: dict[str, list[str]] = {}
    for deck_id, card, qty in zip(over["deck_id"].tolist(), over["card"].tolist(), over["quantity"].tolist()):
        over_by_deck.setdefault(deck_id, []).append(f"{qty} copies of {card!r}")

    totals = deck_totals(cards)
    small = totals[totals < min_cards] if min_cards > 0 else totals.iloc[:0]
    large = totals[totals > max_cards] if max_cards > 0 else totals.iloc[:0]

    found: list[tuple[str, int, Finding]] = []

    def add(deck_id: str, rank: int, kind: str, message: str) -> None:
        season, leader = (decks.at[deck_id, "season"], decks.at[deck_id, "leader"]) if deck_id in decks.index else (None, None)
        found.append((deck_id, rank, Finding(kind, message, deck_id=deck_id,
                                             season=None if pd.isna(season) else str(season),
                                             leader=None if pd.isna(leader) else str(leader))))

    for deck_id, items in over_by_deck.items():
        add(deck_id, 0, "copies-over-limit",
            f"deck {deck_id} plays {', '.join(items)}; the limit is {max_copies} copies of a card")
    for deck_id, total in small.items():
        add(str(deck_id), 1, "deck-too-small", f"deck {deck_id} holds {int(total)} cards; the least is {min_cards}")
    for deck_id, total in large.items():
        add(str(deck_id), 2, "deck-too-large", f"deck {deck_id} holds {int(total)} cards; the most is {max_cards}")
    # Decks with no card rows hold 0 cards.
    if min_cards > 0 and len(totals) < len(decks):
        for deck_id in decks.index.difference(totals.index):
            add(str(deck_id), 1, "deck-too-small", f"deck {deck_id} holds 0 cards; the least is {min_cards}")
    found.sort(key=lambda item: (item[0], item[1]))
    breakers = frozenset(deck_id for deck_id, _, _ in found)
    excluded = breakers if rules.exclude_breakers else frozenset()
    return dataclasses.replace(data, findings=data.findings + tuple(f for _, _, f in found), excluded=excluded)
