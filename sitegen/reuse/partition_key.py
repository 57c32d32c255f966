"""The key a partition's analysis is cached under (:func:`fingerprint`): its rows, card types, the
analysis settings and the tool version. Apart from :mod:`.keys`, whose other keys change more
often, so that only this code and the analysis code salt the cached analyses.
"""
from __future__ import annotations

import dataclasses
import hashlib
import json
from typing import Any

import numpy as np
import pandas as pd
import pyarrow.compute as pc

from .. import __version__
from ..model import CARD_ROW_COLUMNS, DECK_COLUMNS, PartitionInput, in_row_order
from .digest import column_bytes, column_order, feed_labelled, narrowest_bytes, row_digests, text_array

#: Bumped when the partition key's layout changes (it is also the cache entry format's).
FINGERPRINT_FORMAT = 1


def fingerprint(part: PartitionInput, params: Any, version: str = __version__) -> str:
    """A sha256 hex digest of a partition's rows, the analysis settings and the tool version.

    The same rows in any order give the same digest; changing any value of
    any deck or card row, any setting, a card's type or the version gives
    another one. Text counts by its value, whatever its dtype (object,
    string or category), and so do whole numbers.

    The rows are digested in a canonical form (decks by id; card rows by
    deck, then card, as numbers into the sorted distinct ids and names),
    which the partitions a build cuts already have, so their bytes are
    hashed as they lie: at a million decks, a tenth of the time of hashing
    each row on its own and sorting the hashes. Rows with no such form (a
    deck id twice, a missing id or name) are digested row by row instead.
    """
    h = hashlib.sha256()

    def feed(label: str, data: bytes | list) -> None:
        feed_labelled(h, label, data)

    feed("format", str(FINGERPRINT_FORMAT).encode("ascii"))
    feed("rows", b"canonical-1")  # how rows are digested (below)
    feed("version", version.encode("utf-8"))
    feed("season", str(part.season).encode("utf-8"))
    feed("leader", str(part.leader).encode("utf-8"))
    for label, frame, first, canonical in (("decks", part.decks, DECK_COLUMNS, _canonical_decks),
                                           ("cards", part.cards, CARD_ROW_COLUMNS, _canonical_cards)):
        pieces = canonical(frame)
        if pieces is None:
            columns, digests = row_digests(frame, first)
            pieces = [("rows-digested", [digests.astype("<u8", copy=False)])]
        else:
            columns = column_order(frame, first)
        feed(label + "-columns", json.dumps(columns).encode("utf-8"))
        for name, data in pieces:
            feed(f"{label}-{name}", data)
    feed("card-types", json.dumps(sorted((str(k), str(v)) for k, v in part.card_types.items())).encode("utf-8"))
    feed("settings", settings_text(params).encode("utf-8"))
    return h.hexdigest()


def settings_text(params: Any) -> str:
    """A canonical text of settings (any frozen dataclass, dict or None)."""
    if params is None:
        body: Any = None
    elif dataclasses.is_dataclass(params) and not isinstance(params, type):
        body = {"type": f"{type(params).__module__}.{type(params).__qualname__}", "fields": dataclasses.asdict(params)}
    elif isinstance(params, dict):
        body = params
    else:
        body = repr(params)
    return json.dumps(body, sort_keys=True, default=_json_fallback, ensure_ascii=True, separators=(",", ":"))


def _json_fallback(value: Any) -> Any:
    # Sets have no order; tuples and paths have an unambiguous text.
    if isinstance(value, (set, frozenset)):
        return sorted(map(repr, value))
    return repr(value)


def _canonical_decks(frame: pd.DataFrame) -> list[tuple[str, list]] | None:
    """A deck table's bytes, rows by deck id; None when an id is missing or repeated."""
    if "deck_id" not in frame.columns:
        return None
    ids = text_array(frame["deck_id"])
    if ids is None or ids.null_count:
        return None
    if len(ids) > 1 and not pc.all(pc.greater(ids[1:], ids[:-1])).as_py():
        order = pc.sort_indices(ids)
        in_order = ids.take(order)
        if pc.any(pc.equal(in_order[1:], in_order[:-1])).as_py():
            return None
        frame = frame.iloc[order.to_numpy()]
    return [(f"column-{c}", column_bytes(frame[c])) for c in column_order(frame, DECK_COLUMNS)]


def _canonical_cards(frame: pd.DataFrame) -> list[tuple[str, list]] | None:
    """Card rows' bytes: the sorted distinct deck ids and card names, then per row the two
    positions among them and the other columns, rows in that order; None when a deck id or
    card name is missing or a (deck, card) pair repeats."""
    if "deck_id" not in frame.columns or "card" not in frame.columns:
        return None
    decks, cards = _sorted_codes(frame["deck_id"]), _sorted_codes(frame["card"])
    if decks is None or cards is None:
        return None
    (deck_codes, deck_names), (card_codes, card_names) = decks, cards
    if in_row_order(deck_codes, card_codes):
        order = None
    else:
        order = np.lexsort((card_codes, deck_codes))
        deck_codes, card_codes = deck_codes[order], card_codes[order]
        if not in_row_order(deck_codes, card_codes):
            return None  # a (deck, card) pair twice
    pieces = [("deck-ids", column_bytes(pd.Series(deck_names, dtype="str"))),
              ("card-names", column_bytes(pd.Series(card_names, dtype="str"))),
              ("deck-at", narrowest_bytes(deck_codes)), ("card-at", narrowest_bytes(card_codes))]
    for c in column_order(frame, CARD_ROW_COLUMNS):
        if c not in ("deck_id", "card"):
            column = frame[c] if order is None else frame[c].iloc[order]
            pieces.append((f"column-{c}", column_bytes(column)))
    return pieces


def _sorted_codes(column: pd.Series) -> tuple[np.ndarray, pd.Index] | None:
    """Each value's position among the column's distinct values sorted (code point order);
    None when a value is missing. A categorical whose categories are exactly that (a
    partition cut by a build) needs no work."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = np.asarray(column.array.codes)
        if codes.size and codes.min() < 0:
            return None
        categories = column.cat.categories
        used = np.zeros(len(categories), dtype=bool)
        used[codes] = True
        if used.all() and categories.is_monotonic_increasing:
            return codes, categories
    if column.isna().any():
        return None
    codes, uniques = pd.factorize(column.astype("str"), sort=True)
    return codes, pd.Index(uniques, dtype="str")
