"""Reading the optional matches table (``data.matches``): head-to-head results between decks.

One row per match or game: the first deck's id, the opposing deck's id and
the first deck's result, ``win``, ``loss`` or ``draw`` (any case, spaces
around ignored). Column names are the settings ``columns.match_deck``,
``columns.match_opponent`` and ``columns.match_result``. Every row is
checked against the deck table: an empty or unknown deck id, a deck set
against itself, or a result that is not one of the three is a
:class:`~sitegen.errors.DataError` naming the file, row, column and value;
all of them are raised at once, before anything is written.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..config import Config
from ..errors import DataError, DataErrors
from .settings import LoadSettings
from .tables import read_table

#: The results a row may give, as read (after trimming and lower-casing).
RESULTS = ("win", "loss", "draw")
#: Errors listed before the rest are only counted.
_MOST_ERRORS = 50


def read_matches(cfg: Config | LoadSettings, deck_ids: pd.Series) -> pd.DataFrame | None:
    """The checked matches table: columns ``deck``, ``opponent`` (deck ids as text) and ``result``
    (one of :data:`RESULTS`), in file order; None when ``data.matches`` is not set.

    ``deck_ids``: every deck id of the deck table. ``cfg``: the config, or
    the load stage's settings read from it.
    """
    settings = LoadSettings.of(cfg)
    path = settings.matches
    if path is None:
        return None
    names = settings.columns
    columns = {"match_deck": names.match_deck, "match_opponent": names.match_opponent,
               "match_result": names.match_result}
    table = read_table(path, setting="data.matches", required=columns)
    frame = table.frame
    deck = frame["match_deck"].astype("string").fillna("").str.strip()
    opponent = frame["match_opponent"].astype("string").fillna("").str.strip()
    result = frame["match_result"].astype("string").fillna("").str.strip().str.lower()
    known = pd.Index(pd.Series(deck_ids).astype(str).unique())

    problems: list[tuple[np.ndarray, str, str, pd.Series, str]] = []
    for logical, ids in (("match_deck", deck), ("match_opponent", opponent)):
        empty = (ids == "").to_numpy(dtype=bool)
        problems.append((np.flatnonzero(empty), logical, "empty deck id", ids,
                         "give the id of a deck of the deck table (data.decks) or remove the row"))
        unknown = ~empty & ~ids.isin(known).to_numpy(dtype=bool)
        problems.append((np.flatnonzero(unknown), logical, "deck id not in the deck table", ids,
                         "use an id of the deck table (data.decks) or remove the row"))
    itself = ((deck == opponent) & (deck != "")).to_numpy(dtype=bool)
    problems.append((np.flatnonzero(itself), "match_opponent", "a deck set against itself", opponent,
                     "give the opposing deck's id, not the first deck's"))
    bad = ~result.isin(RESULTS).to_numpy(dtype=bool)
    problems.append((np.flatnonzero(bad), "match_result", "result is not one of win, loss, draw",
                     frame["match_result"], "write the first deck's result as win, loss or draw"))

    errors: list[DataError] = []
    flagged = sorted((int(pos), k) for k, (rows, *_rest) in enumerate(problems) for pos in rows)
    for pos, k in flagged[:_MOST_ERRORS]:
        _, logical, problem, values, fix = problems[k]
        (file, row), = table.where(np.array([pos]), logical)
        errors.append(DataError(file, problem, row=row, column=table.names.get(logical, columns[logical]),
                                value=values.iloc[pos], fix=fix, has_value=True))
    if len(flagged) > _MOST_ERRORS:
        errors.append(DataError(table.file, f"{len(flagged) - _MOST_ERRORS} more problems in the matches table "
                                            "not listed", fix="fix the rows above and build again"))
    if errors:
        raise errors[0] if len(errors) == 1 else DataErrors(errors)
    return pd.DataFrame({"deck": deck.astype(object).to_numpy(), "opponent": opponent.astype(object).to_numpy(),
                         "result": result.astype(object).to_numpy()})
