"""Validating and normalising read tables into one :class:`DeckData`.

Input tables are already read (see :mod:`.tables`, :mod:`.decklists`): text,
and number columns as numbers where the file gave plain whole numbers. :func:`build` checks the deck table (:mod:`.deck_table`), the
long-form table's rows against it (:mod:`.card_rows`) and the card table
(:mod:`.card_table`), collecting every problem as a DataError naming file,
row, column, value and fix, so a user fixes them all in one go; then it
assembles the DeckData.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..model import DECK_COLUMNS, DeckData, coded
from .card_rows import CardRows, check_card_names, check_card_rows
from .codes import CODE, is_arange, text_codes
from .deck_table import DeckChecks, check_decks
from .names import Spellings, added_up_finding
from .numbers import narrow_counts
from .problems import Problems
from .seasons import season_order
from .settings import LoadSettings
from .tables import Table


def build(decks: Table, cards: Table, card_table: Table | None, settings: LoadSettings,
          spellings: Spellings | None = None, checked: DeckChecks | None = None) -> DeckData:
    """Check every row of the read tables and assemble the DeckData.

    Names that differ only by case or spacing are read as one (the card
    table's spelling, else the most used one) with a ``name-variants``
    finding; a deck that lists both spellings gets their copies added up.
    Raises DataErrors with every problem found (file and row order), or a
    ConfigError when the settings do not fit the data. ``checked``: the deck
    table's :func:`~.deck_table.check_decks`, when the caller ran it already.
    ``spellings``: the spellings decided over the whole data, for a build
    of one season of a folder (its name findings are then made once, over
    the whole data, not here).
    """
    d = checked if checked is not None else check_decks(decks, settings, spellings)
    problems = Problems()
    problems.errors.extend(d.problems.errors)  # the deck table's first, as when checked in one go
    rows = check_card_rows(cards, decks, d, problems)
    canonical, findings, card_info = check_card_names(rows, cards, card_table, settings, spellings, problems)
    if spellings is None:
        findings.extend(d.leader_findings)
    problems.raise_if_any()
    decks_out, seasons = _deck_rows(d, settings)
    cards_out, added_up = _card_rows(rows, d.deck_rank, canonical, decks_out["deck_id"])
    if added_up:
        findings.append(added_up_finding(added_up))
    return DeckData(decks=decks_out, cards=cards_out, card_info=card_info, seasons=seasons,
                    findings=tuple(findings))


def _deck_rows(d: DeckChecks, settings: LoadSettings) -> tuple[pd.DataFrame, tuple[str, ...]]:
    """The deck table (columns :data:`~sitegen.model.DECK_COLUMNS`, sorted by deck id) and the
    seasons in publication order (:func:`~.seasons.season_order`)."""
    season, dates = d.season, d.dates
    leader = pd.Series(np.asarray(d.leader_canon, dtype=object)[d.leader_codes], dtype="str")
    present = set(season.unique().tolist())
    first_date: dict[str, pd.Timestamp] = {}
    if dates is not None and dates.notna().any():
        season_codes, season_names = text_codes(season)  # grouping by a few codes, not a million texts
        first_date = {season_names[k]: v for k, v in pd.Series(dates.to_numpy()).groupby(season_codes).min().dropna().items()}
    seasons = season_order(present, settings, d.calendar, first_date)
    decks_out = pd.DataFrame({
        "deck_id": d.deck_id, "season": season.reset_index(drop=True), "leader": leader,
        "wins": d.results["wins"], "losses": d.results["losses"],
        "event": d.extras["event"].reset_index(drop=True), "player": d.extras["player"].reset_index(drop=True),
        "title": d.extras["title"].reset_index(drop=True),
    })[list(DECK_COLUMNS)]
    decks_out = decks_out.iloc[np.argsort(d.deck_rank[d.deck_codes], kind="stable")].reset_index(drop=True)
    return decks_out, seasons


def _card_rows(rows: CardRows, deck_rank: np.ndarray, canonical: list[str],
               deck_ids: pd.Series) -> tuple[pd.DataFrame, int]:
    """The long-form table as categoricals with sorted categories (so sorting by them is sorting
    by name): a deck id's code is its row in the deck table (``deck_ids``, sorted), a card's its
    place in name order; and how many rows were added to another spelling's row of their deck."""
    card_names = rows.card_names
    qty, deck_row, card_code = rows.take_sorted(deck_rank)
    card_list = sorted(set(canonical))
    column_of = pd.Index(card_list).get_indexer(canonical).astype(CODE)
    if not is_arange(column_of):  # names read sorted and spelt once (the usual case) are their columns already
        card_code = column_of[card_code]
    added_up = 0
    if any(c != n for c, n in zip(canonical, card_names)):
        # Spellings that became one name may now sit twice in a deck: add them up and re-sort.
        before = qty.size
        key = deck_row * np.int64(len(card_list)) + card_code
        unique_key, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        qty = np.bincount(inverse, weights=qty, minlength=unique_key.size).astype(np.int64)
        deck_row, card_code = deck_row[first], card_code[first]
        added_up = before - qty.size
    cards_out = pd.DataFrame(copy=False, data={
        "deck_id": coded(deck_row.astype(np.int32, copy=False), pd.Index(deck_ids, dtype="str")),
        "card": coded(card_code, pd.Index(card_list, dtype="str")),  # card_list is sorted and distinct
        "quantity": narrow_counts(qty),
    })
    return cards_out, added_up
