"""Splitting the decks into partitions: one per season and leader.

Each partition is analysed on its own (so the work spreads over cores or a
cluster, and a changed season re-analyses only its own partitions). With
``analysis.by_leader = false`` a season is one partition across all leaders,
whose leader is :data:`sitegen.model.ALL_LEADERS`.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .config import Config
from .model import ALL_LEADERS, DeckData, PartitionInput


def card_types(data: DeckData) -> dict[str, str]:
    """Card name -> card type, from the card table (empty without one)."""
    if data.card_info is None:
        return {}
    info = data.card_info
    return dict(zip(info["card"].astype(str), info["type"].fillna("").astype(str)))


def split(data: DeckData, cfg: Config) -> list[PartitionInput]:
    """The partitions of ``data`` in publication order (season, then leader name).

    Decks in ``data.excluded`` (rule breakers, when the config leaves them
    out) are not in any partition. Rows are taken with one stable sort, so
    the cost is linear in the number of card rows.
    """
    decks = data.decks
    n = len(decks)
    if cfg["analysis.by_leader"]:
        leader_codes, leaders = pd.factorize(decks["leader"], sort=True)
    else:
        leader_codes, leaders = np.zeros(n, dtype=np.int64), pd.Index([ALL_LEADERS])
    season_rank = {s: i for i, s in enumerate(data.seasons)}
    season_codes, seasons = pd.factorize(decks["season"])
    ranks = np.array([season_rank[s] for s in seasons], dtype=np.int64)
    # One number per (season, leader) that sorts in publication order.
    pair = ranks[season_codes] * len(leaders) + leader_codes
    if data.excluded:
        pair = np.where(decks["deck_id"].isin(data.excluded).to_numpy(), -1, pair)
    used = np.unique(pair[pair >= 0])
    order = [(data.seasons[p // len(leaders)], str(leaders[p % len(leaders)])) for p in used.tolist()]
    # Partition numbers in the narrowest type: a stable sort of 16-bit integers is a radix sort in numpy.
    narrow = np.int16 if len(order) < 2 ** 15 else np.int32
    deck_part = np.where(pair >= 0, np.searchsorted(used, pair), -1).astype(narrow)

    card_part, deck_row = _card_rows_of(data, deck_part)
    if (card_part >= 0).all():
        by_part = np.argsort(card_part, kind="stable")
    else:
        card_rows = np.flatnonzero(card_part >= 0)
        by_part = card_rows[np.argsort(card_part[card_rows], kind="stable")]
    bounds = np.searchsorted(card_part[by_part], np.arange(len(order) + 1))
    del card_part

    deck_order = np.argsort(deck_part, kind="stable")
    deck_bounds = np.searchsorted(deck_part[deck_order], np.arange(len(order) + 1))
    types = card_types(data)
    local = np.full(n, -1, dtype=np.int64)
    parts: list[PartitionInput] = []
    for i, (season, leader) in enumerate(order):
        rows = deck_order[deck_bounds[i]:deck_bounds[i + 1]]
        part_decks = decks.iloc[rows].reset_index(drop=True)
        if not cfg["analysis.by_leader"]:
            part_decks["leader"] = ALL_LEADERS
        picked = by_part[bounds[i]:bounds[i + 1]]
        if deck_row is None:
            part_cards = data.cards.iloc[picked].reset_index(drop=True)
        else:
            local[rows] = np.arange(len(rows))
            part_cards = _local_cards(data.cards, picked, local[deck_row[picked]], part_decks["deck_id"])
            local[rows] = -1
        present = set(part_cards["card"].unique()) if types else set()
        parts.append(PartitionInput(
            season=season, leader=leader, decks=part_decks, cards=part_cards,
            card_types={c: types[c] for c in present if c in types},
        ))
    return parts


def _card_rows_of(data: DeckData, deck_part: np.ndarray) -> tuple[np.ndarray, np.ndarray | None]:
    """The partition of each card row (-1: none), and each row's deck as a row of ``data.decks``.

    The loader's categorical deck ids make this one lookup; other tables
    (built by hand) are joined on the ids, and give no deck rows.
    """
    ids = data.cards["deck_id"]
    if isinstance(ids.dtype, pd.CategoricalDtype) and len(ids.cat.categories) == len(data.decks) \
            and ids.cat.categories.equals(pd.Index(data.decks["deck_id"])):
        deck_row = ids.cat.codes.to_numpy()
        return deck_part[deck_row], deck_row
    part_of_deck = pd.Series(deck_part, index=pd.Index(data.decks["deck_id"]))
    found = part_of_deck.reindex(ids.astype(str) if isinstance(ids.dtype, pd.CategoricalDtype) else ids).to_numpy()
    return np.where(np.isnan(found), -1, found).astype(np.int64) if found.dtype.kind == "f" else found, None


def _local_cards(cards: pd.DataFrame, picked: np.ndarray, deck_codes: np.ndarray, deck_ids: pd.Series) -> pd.DataFrame:
    """One partition's card rows, its categoricals holding only its own decks and cards."""
    card = cards["card"]
    if isinstance(card.dtype, pd.CategoricalDtype):
        codes = card.cat.codes.to_numpy()[picked]
        used = np.bincount(codes, minlength=len(card.cat.categories)) > 0
        card = pd.Categorical.from_codes((np.cumsum(used) - 1)[codes], categories=card.cat.categories[used])
    else:
        card = card.to_numpy()[picked]
    return pd.DataFrame({
        "deck_id": pd.Categorical.from_codes(deck_codes, categories=pd.Index(deck_ids.to_numpy(dtype=object), dtype="str")),
        "card": card,
        "quantity": cards["quantity"].to_numpy()[picked],
    })
