"""The long-form table's rows checked against the deck table: names, ids, copies, repeats, known cards."""
from __future__ import annotations

import difflib
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import visible
from ..model import Finding, in_row_order
from .codes import (CODE, code_counts, empty_code, first_positions, is_arange, name_rank, named_codes,
                    sort_order, text_codes)
from .names import Spellings, clean_text, look_alike_findings, name_variants, told_apart, variant_key
from .numbers import QUANTITY_MAX, parse_counts
from .problems import ERRORS_PER_PROBLEM, Problems, as_written
from .card_table import card_info
from .deck_table import DeckChecks
from .settings import LoadSettings
from .tables import Table


@dataclass
class CardRows:
    """The long-form table's rows as checked by :func:`check_card_rows`, as integer codes."""

    #: Each row's deck id, a code of ``deck_names``.
    deck_codes: np.ndarray
    deck_names: list[str]
    #: True when ``deck_codes`` and ``deck_names`` are the deck table's own.
    same_decks: bool
    #: Each of ``deck_names``' place among the deck table's ids (-1: not there).
    where_in_decks: np.ndarray
    #: Each row's card, a code of ``card_names`` (names cleaned; look-alike spellings are one name).
    card_codes: np.ndarray
    card_names: list[str]
    #: The names look-alike spellings became (see :func:`~.codes.text_codes`).
    merged_cards: list
    #: Copies, as read (0 where a value was bad).
    quantity: np.ndarray
    #: The order that sorts the rows by deck id then card; None when they are sorted already.
    order: np.ndarray | None
    #: Each row's deck as the rank of its id among the deck ids (in file order).
    row_deck: np.ndarray

    def take_sorted(self, deck_rank: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Copies, deck rows (ranks of the deck table's ids, given as ``deck_rank``) and card
        codes of the rows sorted by deck id then card. The record lets go of its arrays as it
        hands them over, so the rows in file order do not outlive the sort (a long table is
        tens of millions of rows); it is spent afterwards."""
        qty, deck_row, card_code = self.quantity, self.deck_codes, self.card_codes
        in_order, row_deck = self.order is None, self.row_deck
        self.quantity = self.deck_codes = self.card_codes = self.row_deck = None
        if not in_order:
            qty, deck_row, card_code = qty[self.order], deck_row[self.order], card_code[self.order]
        deck_row = row_deck if self.same_decks and in_order else deck_rank[self.where_in_decks][deck_row]
        return qty, deck_row, card_code


def check_card_rows(cards: Table, decks: Table, checked: DeckChecks, problems: Problems) -> CardRows:
    """The long-form table's rows checked against the deck table (``checked``): an empty card
    name or deck id, copies that are not a whole number from 1 to :data:`~.numbers.QUANTITY_MAX`,
    a deck id the deck table lacks (and a deck with no card rows), and one deck and card on two
    rows are problems, in that order."""
    frame = cards.frame
    deck_codes, deck_names, same_decks = _row_deck_codes(frame["deck_id"], checked.frame["deck_id"],
                                                         checked.deck_codes, checked.deck_names)
    merged_cards: list = []
    card_codes, card_names = text_codes(frame["card"], names=True, merged=merged_cards)
    empty_card = [i for i, name in enumerate(card_names) if not name]
    if empty_card:
        problems.flag(cards, np.flatnonzero(np.isin(card_codes, empty_card)), "card name is empty", column="card",
                      fix="fill in the card's name, or delete the row")
    empty_deck = empty_code(deck_names)
    if empty_deck is not None:
        problems.flag(cards, np.flatnonzero(deck_codes == empty_deck), "deck id is empty", column="deck_id",
                      fix="give every row the id of its deck")
    quantity = _quantities(cards, problems)
    where_in_decks = _decks_in_both(cards, decks, checked, deck_codes, deck_names, same_decks, problems)
    order, row_deck = _sort_order(cards, checked.deck_rank if same_decks else name_rank(deck_names),
                                  deck_codes, deck_names, card_codes, card_names, problems)
    return CardRows(deck_codes, deck_names, same_decks, where_in_decks, card_codes, card_names, merged_cards,
                    quantity, order, row_deck)


def _quantities(cards: Table, problems: Problems) -> np.ndarray:
    """The copies column as whole numbers (0 where bad); a value that is not a whole number
    from 1 to :data:`~.numbers.QUANTITY_MAX` is a problem."""
    raw = cards.frame["quantity"]
    if isinstance(raw.dtype, np.dtype) and raw.dtype.kind in "iu":
        # Whole numbers already (Parquet, or a CSV column of plain whole numbers), as narrow as read: no parsing, no copy.
        quantity = raw.to_numpy()
        bad = np.flatnonzero(quantity < 1)
        over = np.flatnonzero(quantity > QUANTITY_MAX)  # compared in the column's type (uint64 too)
    else:
        parsed, bad, over = parse_counts(raw, positive=True, most=QUANTITY_MAX)
        bad = np.setdiff1d(np.union1d(bad, np.flatnonzero(parsed.isna().to_numpy())), over)
        quantity = parsed.to_numpy(dtype=np.int64, na_value=0)
    problems.flag(cards, bad, "quantity is not a whole number of 1 or more", column="quantity",
                  values=as_written(cards, raw.iloc[bad[:ERRORS_PER_PROBLEM]].to_numpy()),
                  fix="write the number of copies, like 2 (delete rows of cards the deck does not play)")
    problems.flag(cards, over, f"quantity is more than {QUANTITY_MAX:,} copies, the most sitegen reads for one card in one deck",
                  column="quantity", values=as_written(cards, raw.iloc[over[:ERRORS_PER_PROBLEM]].to_numpy()),
                  fix=f"write the copies of the card in this deck (at most {QUANTITY_MAX:,}); a larger number is a typo or a misplaced column")
    return quantity


def _decks_in_both(cards: Table, decks: Table, checked: DeckChecks, codes: np.ndarray, names: list[str],
                   same_decks: bool, problems: Problems) -> np.ndarray:
    """Where each of the card rows' deck ids (``names``) is among the deck table's (-1: not
    there); decks known to one table and not the other, both directions, are problems."""
    deck_codes, deck_names = checked.deck_codes, checked.deck_names
    if same_decks:
        where_in_decks = np.arange(len(deck_names), dtype=np.intp)
    else:
        where_in_decks = pd.Index(deck_names).get_indexer(names)
    orphan_codes = np.flatnonzero((where_in_decks < 0) & named_codes(names, empty_code(names)))
    if orphan_codes.size:
        first = first_positions(codes, orphan_codes)
        pos = np.array(sorted(first.values()), dtype=np.int64)
        problems.flag(cards, pos, f"deck id is not in the deck table {decks.file}", column="deck_id",
                      values=[names[codes[p]] for p in pos[:ERRORS_PER_PROBLEM]],
                      fix="add the deck to the deck table, or correct the id")
    used = np.zeros(len(deck_names), dtype=bool)
    if same_decks:
        used[codes] = True  # the codes may not use every name
    else:
        used[where_in_decks[where_in_decks >= 0]] = True
    if not used.all():
        lonely = [i for i in np.flatnonzero(~used) if deck_names[i]]
        first = first_positions(deck_codes, np.array(lonely, dtype=np.int64))
        pos = np.array(sorted(first.values()), dtype=np.int64)
        problems.flag(decks, pos, f"deck has no cards in {cards.file}", column="deck_id",
                      values=[deck_names[deck_codes[p]] for p in pos[:ERRORS_PER_PROBLEM]],
                      fix="add its cards to the long-form table, or delete the deck's row")
    return where_in_decks


def _sort_order(cards: Table, row_rank: np.ndarray, deck_codes: np.ndarray, deck_names: list[str],
                card_codes: np.ndarray, card_names: list[str],
                problems: Problems) -> tuple[np.ndarray | None, np.ndarray]:
    """The order that sorts the rows by deck id then card (codes ranked by the names' sort order;
    None when they are sorted already) and each row's deck as its id's rank (``row_rank``);
    one deck and card on two rows is a problem."""
    card_rank = name_rank(card_names)
    row_deck = deck_codes if is_arange(row_rank) else row_rank[deck_codes]  # ids in sorted order already
    if in_row_order(row_deck, card_codes, None if is_arange(card_rank) else card_rank):
        # The usual case: grouped by deck and sorted by card already, so no row repeats another.
        return None, row_deck
    key = row_deck.astype(np.int64)  # in place from here: one 8-byte array, not three
    key *= max(len(card_names), 1)
    key += card_rank[card_codes]
    order = sort_order(key)
    sorted_key = key if order is None else key[order]
    same = np.flatnonzero(sorted_key[1:] == sorted_key[:-1]) + 1
    del sorted_key
    if same.size:
        order = _name_repeats(cards, key, deck_codes, deck_names, card_codes, card_names, problems)
    return order, row_deck


def _name_repeats(cards: Table, key: np.ndarray, deck_codes: np.ndarray, deck_names: list[str],
                  card_codes: np.ndarray, card_names: list[str], problems: Problems) -> np.ndarray | None:
    """Each row whose deck and card (``key``) an earlier row has too, a problem naming that row;
    the stable order of ``key`` (within equal keys, file order), None when sorted already."""
    order = sort_order(key, stable=True)
    in_order = order is None
    order = np.arange(key.size) if in_order else order
    sorted_key = key[order]
    same = np.flatnonzero(sorted_key[1:] == sorted_key[:-1]) + 1
    earlier = dict(zip(order[same].tolist(), order[same - 1].tolist()))
    later = np.sort(order[same])
    shown = later[:ERRORS_PER_PROBLEM]
    earlier_rows = [r for _, r in cards.where(np.array([earlier[int(p)] for p in shown]), "card")]
    written = cards.frame["card"]
    problems.flag(cards, later, "the same deck and card on two rows", column="card",
                  values=[card_names[card_codes[p]] for p in shown],
                  notes=[f" (deck {deck_names[deck_codes[p]]!r}, also row {r}{_spelt(written, p, earlier[int(p)])})"
                         for p, r in zip(shown, earlier_rows)],
                  fix="keep one row per deck and card, with the total quantity")
    return None if in_order else order


def check_card_names(rows: CardRows, cards: Table, card_table: Table | None, settings: LoadSettings,
                     spellings: Spellings | None, problems: Problems) -> tuple[list[str], list[Finding], pd.DataFrame | None]:
    """The spelling each distinct card name is read as, the findings of names written several
    ways (none when ``spellings`` decided them over the whole data), and the card table's
    rows (:func:`~.card_table.card_info`; None without one). A card the card table lacks is a problem."""
    findings: list[Finding] = []
    info = known = None
    if card_table is not None:
        info, known = card_info(card_table, settings, problems)
    card_codes, card_names = rows.card_codes, rows.card_names
    counts = code_counts(card_codes, len(card_names))
    canonical, name_findings, unknown = name_variants(card_names, counts, known, "card name")
    if spellings is None:
        findings.extend(look_alike_findings(rows.merged_cards, "card name"))
        findings.extend(name_findings)
    else:
        canonical = [spellings.cards.get(variant_key(n), c) for n, c in zip(card_names, canonical)]
    unknown = [i for i in unknown if card_names[i]]
    if unknown:
        first = first_positions(card_codes, np.array(unknown, dtype=np.int64))
        pos = np.array(sorted(first.values()), dtype=np.int64)
        choices = list(known.values()) if known else []
        values = [card_names[card_codes[p]] for p in pos[:ERRORS_PER_PROBLEM]]
        hints = [difflib.get_close_matches(v, choices, n=1) for v in values]
        problems.flag(cards, pos, f"card is not in the card table {card_table.file}", column="card",
                      values=values, notes=[f" (did you mean {visible(h[0])}?{told_apart(v, h[0])})" if h else ""
                                            for v, h in zip(values, hints)],
                      fix="add the card to the card table, or correct its spelling")
    return canonical, findings, info


def _row_deck_codes(ids: pd.Series, deck_ids: pd.Series, deck_codes: np.ndarray,
                    deck_names: list[str]) -> tuple[np.ndarray, list[str], bool]:
    """Codes of the card rows' deck ids and their names, and whether those are the deck
    table's own (``deck_codes`` and ``deck_names``).

    They are when the categories are the deck table's ids, in its order (the
    reader's usual result): the million ids are then not listed, cleaned and
    looked up a second time.
    """
    if isinstance(ids.dtype, pd.CategoricalDtype):
        categories, codes = ids.cat.categories, ids.array.codes
        if len(categories) == len(deck_ids) and categories.equals(pd.Index(deck_ids)) and not (codes < 0).any():
            if is_arange(deck_codes):  # the deck table's ids were distinct: a category is its code
                return codes.astype(CODE, copy=False), deck_names, True
            return np.asarray(deck_codes, dtype=CODE)[codes], deck_names, True
    codes, names = text_codes(ids)
    return codes, names, names == deck_names


def _spelt(column: pd.Series, row: int, other: int) -> str:
    """Words showing how two rows spell one name, when they spell it differently (look-alikes)."""
    a, b = clean_text(str(column.iloc[row])), clean_text(str(column.iloc[other]))
    return f"; written {visible(a)} here, {visible(b)} there" if a != b else ""
