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
    if data.excluded:
        decks = decks[~decks["deck_id"].isin(data.excluded)]
    if not cfg["analysis.by_leader"]:
        decks = decks.assign(leader=ALL_LEADERS)
    season_rank = {s: i for i, s in enumerate(data.seasons)}
    keys = decks[["season", "leader"]].drop_duplicates()
    keys = keys.assign(_rank=keys["season"].map(season_rank)).sort_values(["_rank", "leader"], kind="stable")
    order = list(zip(keys["season"], keys["leader"]))
    part_no = {key: i for i, key in enumerate(order)}

    deck_part = np.fromiter((part_no[k] for k in zip(decks["season"], decks["leader"])), dtype=np.int64, count=len(decks))
    part_of_deck = pd.Series(deck_part, index=pd.Index(decks["deck_id"]))
    card_part = part_of_deck.reindex(data.cards["deck_id"]).to_numpy()
    keep = ~np.isnan(card_part) if card_part.dtype.kind == "f" else np.ones(len(card_part), bool)
    card_rows = np.flatnonzero(keep)
    card_part = card_part[keep].astype(np.int64)
    by_part = card_rows[np.argsort(card_part, kind="stable")]
    bounds = np.searchsorted(np.sort(card_part, kind="stable"), np.arange(len(order) + 1))

    deck_order = np.argsort(deck_part, kind="stable")
    deck_bounds = np.searchsorted(deck_part[deck_order], np.arange(len(order) + 1))
    types = card_types(data)
    parts: list[PartitionInput] = []
    for i, (season, leader) in enumerate(order):
        part_decks = decks.iloc[deck_order[deck_bounds[i]:deck_bounds[i + 1]]].reset_index(drop=True)
        part_cards = data.cards.iloc[by_part[bounds[i]:bounds[i + 1]]].reset_index(drop=True)
        present = set(part_cards["card"].unique()) if types else set()
        parts.append(PartitionInput(
            season=season, leader=leader, decks=part_decks, cards=part_cards,
            card_types={c: types[c] for c in present if c in types},
        ))
    return parts
