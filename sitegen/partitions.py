"""Splitting the decks into partitions: one per season and leader.

Each partition is analysed on its own (so the work spreads over cores or a
cluster, and a changed season re-analyses only its own partitions). With
``analysis.by_leader = false`` a season is one partition across all leaders,
whose leader is :data:`sitegen.model.ALL_LEADERS`.
"""
from __future__ import annotations

import hashlib
import json
from collections.abc import Collection
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pandas as pd

from .reuse.digest import column_bytes, feed_labelled
from .model import ALL_LEADERS, DeckData, PartitionInput, coded
from .resources import usable_cores

#: Bumped when what :func:`season_keys` digests changes.
SEASON_KEY_FORMAT = 1


def card_types(data: DeckData) -> dict[str, str]:
    """Card name -> card type, from the card table (empty without one)."""
    if data.card_info is None:
        return {}
    info = data.card_info
    return dict(zip(info["card"].astype(str), info["type"].fillna("").astype(str)))


def split(data: DeckData, by_leader: bool, skip: Collection[str] = ()) -> list[PartitionInput]:
    """The partitions of ``data`` in publication order (season, then leader name; one per season
    without ``by_leader``, the setting ``analysis.by_leader``), leaving out those of the seasons
    in ``skip`` (known unchanged, see :func:`season_keys`).

    Decks in ``data.excluded`` (rule breakers, when the config leaves them
    out) are not in any partition. Rows are taken by their decks' runs of
    rows (the loader's order) or else with one stable sort, so the cost is
    linear in the number of card rows (``tests/test_load_large.py`` checks the
    runs against pandas on 150 000 planted rows). Partitions are cut
    side by side, one thread per core: gathering rows releases the GIL.
    """
    decks = data.decks
    n = len(decks)
    if by_leader:
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

    deck_row = _deck_rows(data)
    if deck_row is not None and _ascending(deck_row):
        # The loader's order: rows grouped by deck, decks in table order. A partition's rows are
        # then its decks' runs of rows, taken without sorting tens of millions of rows.
        # Needles of the haystack's own type: searchsorted would otherwise copy all rows to int64.
        run_start = np.searchsorted(deck_row, np.arange(n + 1, dtype=deck_row.dtype))
        by_part = bounds = None
    else:
        card_part = _card_parts(data, deck_part, deck_row)
        if (card_part >= 0).all():
            by_part = np.argsort(card_part, kind="stable")
        else:
            card_rows = np.flatnonzero(card_part >= 0)
            by_part = card_rows[np.argsort(card_part[card_rows], kind="stable")]
        bounds = np.concatenate(([0], np.cumsum(np.bincount(card_part[card_part >= 0], minlength=len(order)))))
        del card_part

    deck_order = np.argsort(deck_part, kind="stable")
    deck_bounds = np.searchsorted(deck_part[deck_order], np.arange(len(order) + 1))
    types = card_types(data)
    local = np.full(n, -1, dtype=np.int32)
    columns = _card_columns(data.cards)

    def cut(i: int) -> PartitionInput:
        season, leader = order[i]
        rows = deck_order[deck_bounds[i]:deck_bounds[i + 1]]
        part_decks = decks.iloc[rows].reset_index(drop=True)
        if not by_leader:
            part_decks["leader"] = ALL_LEADERS
        if by_part is None:
            lengths = run_start[rows + 1] - run_start[rows]
            picked = _runs(run_start[rows], lengths)
            part_cards = _local_cards(columns, picked, np.repeat(np.arange(len(rows), dtype=np.int32), lengths),
                                      part_decks["deck_id"])
        elif deck_row is None:
            part_cards = data.cards.iloc[by_part[bounds[i]:bounds[i + 1]]].reset_index(drop=True)
        else:
            picked = by_part[bounds[i]:bounds[i + 1]]
            local[rows] = np.arange(len(rows))
            part_cards = _local_cards(columns, picked, local[deck_row[picked]], part_decks["deck_id"])
            local[rows] = -1
        card = part_cards["card"]
        present = (set(card.cat.categories) if isinstance(card.dtype, pd.CategoricalDtype) else set(card.unique())) \
            if types else set()
        return PartitionInput(season=season, leader=leader, decks=part_decks, cards=part_cards,
                              card_types={c: types[c] for c in present if c in types})

    wanted = [i for i, (season, _) in enumerate(order) if season not in skip]
    threads = min(usable_cores(), len(wanted))
    if threads < 2 or (by_part is not None and deck_row is not None):  # that way shares ``local``: one at a time
        return [cut(i) for i in wanted]
    # Gathering rows releases the GIL, so partitions are cut side by side, one thread per core.
    with ThreadPoolExecutor(max_workers=threads) as pool:
        return list(pool.map(cut, wanted))


def season_keys(data: DeckData, salt: str) -> dict[str, str]:
    """A digest of everything each season's partitions are cut from: its decks' rows (every
    column), their card rows, which of them are left out, and the card names and types.

    The same key means :func:`split` cuts the season into the same partitions, when ``salt``
    covers the rest (:func:`sitegen.reuse.keys.split_salt`). Made only
    where the loader's order holds (each season's decks one run of rows, card rows grouped by
    deck in deck order, cards as a categorical): then a season's rows are slices, hashed as
    they lie. Otherwise, or with one season, no keys: every season is cut."""
    decks, cards = data.decks, data.cards
    deck_row = _deck_rows(data)
    if deck_row is None or not isinstance(cards["card"].dtype, pd.CategoricalDtype) or not _ascending(deck_row):
        return {}
    season_codes, seasons = pd.factorize(decks["season"])
    if len(seasons) < 2 or int(np.count_nonzero(np.diff(season_codes))) != len(seasons) - 1:
        return {}
    starts = np.flatnonzero(np.diff(season_codes, prepend=-1)).tolist() + [len(decks)]
    run_start = np.searchsorted(deck_row, np.arange(len(decks) + 1, dtype=deck_row.dtype))
    card_codes, quantity = cards["card"].array.codes, cards["quantity"].to_numpy()
    left_out = decks["deck_id"].isin(data.excluded).to_numpy() if data.excluded else None

    shared = hashlib.sha256(f"season-rows\0{SEASON_KEY_FORMAT}\0{salt}\0".encode())
    feed_labelled(shared, "card-names", column_bytes(pd.Series(cards["card"].cat.categories)))
    feed_labelled(shared, "deck-columns", [json.dumps([str(c) for c in decks.columns]).encode("utf-8")])
    if data.card_info is not None:
        for column in data.card_info.columns:
            feed_labelled(shared, f"card-table-{column}", column_bytes(data.card_info[column]))
    feed_labelled(shared, "card-codes", [str(card_codes.dtype).encode("ascii")])
    feed_labelled(shared, "quantity", [str(quantity.dtype).encode("ascii")])

    def key(i: int) -> tuple[str, str]:
        a, b = starts[i], starts[i + 1]
        h = shared.copy()
        feed_labelled(h, "season", [str(seasons[i]).encode("utf-8")])
        for column in decks.columns:
            feed_labelled(h, f"column-{column}", column_bytes(decks[column].iloc[a:b]))
        rows = slice(int(run_start[a]), int(run_start[b]))
        feed_labelled(h, "rows-per-deck", [np.diff(run_start[a:b + 1]).astype("<i8")])
        feed_labelled(h, "card-codes", [np.ascontiguousarray(card_codes[rows])])
        feed_labelled(h, "quantity", [np.ascontiguousarray(quantity[rows])])
        if left_out is not None and left_out[a:b].any():
            feed_labelled(h, "left-out", [np.packbits(left_out[a:b])])
        return str(seasons[i]), h.hexdigest()

    threads = min(usable_cores(), len(seasons))
    if threads < 2:
        return dict(key(i) for i in range(len(seasons)))
    # Hashing releases the GIL: seasons are digested side by side, one thread per core.
    with ThreadPoolExecutor(max_workers=threads) as pool:
        return dict(pool.map(key, range(len(seasons))))


def _deck_rows(data: DeckData) -> np.ndarray | None:
    """Each card row's deck as a row of ``data.decks``, when the deck ids are the loader's
    categoricals (other tables, built by hand, are joined on the ids and give None)."""
    ids = data.cards["deck_id"]
    if isinstance(ids.dtype, pd.CategoricalDtype) and len(ids.cat.categories) == len(data.decks) \
            and ids.cat.categories.equals(pd.Index(data.decks["deck_id"])):
        return ids.array.codes
    return None


def _ascending(values: np.ndarray) -> bool:
    return values.size < 2 or bool((values[1:] >= values[:-1]).all())


def _runs(starts: np.ndarray, lengths: np.ndarray) -> np.ndarray:
    """The positions start, start+1, ... of each run, one run after another (int32 when the
    positions fit: half the memory of int64 for a partition's millions of rows)."""
    ends = np.cumsum(lengths)
    total = int(ends[-1]) if ends.size else 0
    kind = np.int32 if int(starts.max(initial=0)) + total < 2**31 else np.int64
    return np.arange(total, dtype=kind) + np.repeat((starts - (ends - lengths)).astype(kind), lengths)


def _card_parts(data: DeckData, deck_part: np.ndarray, deck_row: np.ndarray | None) -> np.ndarray:
    """The partition of each card row (-1: none)."""
    if deck_row is not None:
        return deck_part[deck_row]
    ids = data.cards["deck_id"]
    part_of_deck = pd.Series(deck_part, index=pd.Index(data.decks["deck_id"]))
    found = part_of_deck.reindex(ids.astype(str) if isinstance(ids.dtype, pd.CategoricalDtype) else ids).to_numpy()
    return np.where(np.isnan(found), -1, found).astype(np.int64) if found.dtype.kind == "f" else found


def _card_columns(cards: pd.DataFrame) -> tuple[np.ndarray, pd.Index | None, np.ndarray]:
    """The card column's codes and categories (None: not a categorical, values instead) and the
    quantities, taken out once: ``.cat.codes`` copies the whole column each time it is asked."""
    card = cards["card"]
    if isinstance(card.dtype, pd.CategoricalDtype):
        return card.cat.codes.to_numpy(), card.cat.categories, cards["quantity"].to_numpy()
    return card.to_numpy(), None, cards["quantity"].to_numpy()


def _local_cards(columns: tuple[np.ndarray, pd.Index | None, np.ndarray], picked: np.ndarray,
                 deck_codes: np.ndarray, deck_ids: pd.Series) -> pd.DataFrame:
    """One partition's card rows, its categoricals holding only its own decks and cards."""
    card_values, categories, quantity = columns
    if categories is not None:
        codes = card_values[picked]
        used = np.zeros(len(categories), dtype=bool)
        used[codes] = True
        card = coded((np.cumsum(used, dtype=np.int32) - 1)[codes], categories[used])
    else:
        card = card_values[picked]
    return pd.DataFrame({
        "deck_id": coded(deck_codes, pd.Index(deck_ids.to_numpy(), dtype="str")),  # ids are unique: a deck is a row
        "card": card,
        "quantity": quantity[picked],
    })
