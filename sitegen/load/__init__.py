"""Reading deck data: tables (CSV/Parquet), a Parquet folder, or text decklists.

:func:`load_data` is the entry point for a build's deck data (a season folder
is opened with :func:`open_season_folder`; :mod:`sitegen.load.settings` lists
every entry point). It reads whichever input the config names, checks every row, and returns a validated
:class:`~sitegen.model.DeckData`; every problem in the data becomes a
:class:`~sitegen.errors.DataError` (many at once as
:class:`~sitegen.errors.DataErrors`), never a traceback.
"""
from __future__ import annotations

import dataclasses

from concurrent.futures import Future, ThreadPoolExecutor
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from pandas.api.types import union_categoricals

from ..config import Config
from ..errors import ConfigError, DataError, DataErrors
from ..model import DeckData
from .decklists import read_decklists
from .deck_table import check_decks
from .normalise import build
from .origin import StackedOrigin
from .settings import LoadSettings
from .tables import Table, read_table

if TYPE_CHECKING:
    from ..cache import Cache

__all__ = ["LoadSettings", "load_data", "open_season_folder", "read_decklists", "read_table"]

_DECK_OPTIONAL = ("wins", "losses", "event", "player", "title")
#: Long-form columns read as categoricals: a few thousand cards and one id per deck over tens of millions of rows.
_CARD_ROW_CATEGORIES = frozenset({"deck_id", "card"})


def _deck_columns(settings: LoadSettings) -> tuple[dict[str, str], dict[str, str]]:
    columns = settings.columns
    required = {"deck_id": columns.deck_id, "leader": columns.leader}
    optional = {c: getattr(columns, c) for c in _DECK_OPTIONAL}
    if settings.season_source == "calendar":
        required["date"] = columns.date
    else:
        required["season"] = columns.season
        optional["date"] = columns.date
    return required, optional


def _card_rows_columns(settings: LoadSettings) -> dict[str, str]:
    columns = settings.columns
    return {"deck_id": columns.deck_id, "card": columns.card, "quantity": columns.quantity}


def _read_card_table(settings: LoadSettings) -> Table | None:
    if settings.cards is None:
        return None
    return read_table(settings.cards, setting="data.cards",
                      required={"card": settings.columns.card_name, "type": settings.columns.card_type},
                      all_columns=True)


def _read_both(reads) -> list[Table]:
    """Run several reads, raising every file's errors together (file order)."""
    tables, errors = [], []
    for read in reads:
        try:
            tables.append(read())
        except DataErrors as exc:
            errors.extend(exc.errors)
        except DataError as exc:
            errors.append(exc)
    if errors:
        raise errors[0] if len(errors) == 1 else DataErrors(errors)
    return tables


def _check_inputs(settings: LoadSettings) -> None:
    """A ConfigError when the settings name more than one form of input."""
    source = settings.source
    decks_path, cards_path = settings.decks, settings.deck_cards
    folder, parquet_folder = settings.decklists, settings.parquet_folder
    given = [k for k, v in (("data.decks", decks_path), ("data.deck_cards", cards_path),
                            ("data.decklists", folder), ("data.parquet_folder", parquet_folder)) if v is not None]
    if folder is not None and (decks_path or cards_path or parquet_folder):
        raise ConfigError(source, "data.decklists", f"given together with {', '.join(k for k in given if k != 'data.decklists')}",
                          "give either a decklist folder or the tables, not both")
    if parquet_folder is not None and (decks_path or cards_path):
        raise ConfigError(source, "data.parquet_folder", "given together with data.decks/data.deck_cards",
                          "give either the Parquet folder or the two tables, not both")


def load_data(cfg: Config | LoadSettings) -> DeckData:
    """Read, check and normalise the deck data the config names.

    Give either ``data.decks`` with ``data.deck_cards``, or
    ``data.decklists`` (a folder of ``*.txt``), or ``data.parquet_folder``;
    ``data.cards`` (optional) adds the card table. Raises ConfigError when
    the settings name no usable input, DataError/DataErrors for bad data.

    ``data.parquet_folder`` layout: one sub-folder per season named
    ``season=NAME`` (hive style), each holding ``decks.parquet`` and
    ``deck_cards.parquet``; the season comes from the folder name and
    replaces any season column in the files. ``cfg``: the config, or the
    load stage's settings read from it (:class:`LoadSettings`).
    """
    settings = LoadSettings.of(cfg)
    source = settings.source
    _check_inputs(settings)
    decks_path, cards_path = settings.decks, settings.deck_cards
    folder, parquet_folder = settings.decklists, settings.parquet_folder
    if folder is not None:
        notes: list = []
        decks, cards = read_decklists(folder, findings=notes)
        (card_table,) = _read_both([lambda: _read_card_table(settings)])
        data = build(decks, cards, card_table, settings)
        return dataclasses.replace(data, findings=tuple(notes) + data.findings) if notes else data
    if parquet_folder is not None:
        decks, cards = _read_parquet_folder(parquet_folder, settings)
        (card_table,) = _read_both([lambda: _read_card_table(settings)])
        return build(decks, cards, card_table, settings)
    if decks_path is None or cards_path is None:
        missing = "data.decks" if decks_path is None else "data.deck_cards"
        raise ConfigError(source, missing,
                          "no deck data: give data.decks and data.deck_cards (tables), or data.decklists (a folder of text decklists)",
                          f"set {missing} to the path of the table, relative to the config file")
    required, optional = _deck_columns(settings)
    read: dict[str, Table] = {}
    checking: dict[str, Future] = {}

    def read_decks() -> Table:
        read["decks"] = read_table(decks_path, setting="data.decks", required=required, optional=optional,
                                   numeric=frozenset({"wins", "losses"}))
        # Checked in another thread while the long-form table is read (Arrow and numpy let go of the lock).
        checking["decks"] = pool.submit(check_decks, read["decks"], settings)
        return read["decks"]

    def read_cards() -> Table:
        # The deck table's ids, in its order, are the likely categories of the card rows' deck ids.
        return read_table(cards_path, setting="data.deck_cards", required=_card_rows_columns(settings),
                          numeric=frozenset({"quantity"}), categorical=_CARD_ROW_CATEGORIES,
                          deck_ids=read["decks"].frame["deck_id"] if "decks" in read else None)

    with ThreadPoolExecutor(max_workers=1) as pool:  # on a read error, waits for the check and drops it
        decks, cards, card_table = _read_both([
            read_decks,
            read_cards,
            lambda: _read_card_table(settings),
        ])
        checked = checking["decks"].result()
    return build(decks, cards, card_table, settings, checked=checked)


def open_season_folder(cfg: Config | LoadSettings, cache: Cache | None = None):
    """The config's season folder opened for reading one season at a time
    (:class:`~sitegen.load.folder.SeasonFolder`), or None when the data is
    read whole: no ``data.parquet_folder``, or seasons taken from a calendar
    of dates (a deck's season is then not its folder's). With a ``cache``
    (:class:`~sitegen.cache.Cache`), the first pass over the folder opens
    only the seasons whose files changed since it last looked."""
    settings = LoadSettings.of(cfg)
    folder = settings.parquet_folder
    if folder is None or settings.season_source == "calendar":
        return None
    _check_inputs(settings)
    from .folder import open_folder

    required, optional = _deck_columns(settings)
    required.pop("season", None)
    optional.pop("season", None)
    (card_table,) = _read_both([lambda: _read_card_table(settings)])
    return open_folder(settings, folder, (required, optional), _card_rows_columns(settings), card_table, cache)


def _read_parquet_folder(folder: Path, settings: LoadSettings) -> tuple[Table, Table]:
    """The season=NAME/ sub-folders as one deck table and one long-form table (the whole
    folder at once, for seasons taken from a calendar; see load/folder.py otherwise)."""
    from .folder import season_files, with_season

    required, optional = _deck_columns(settings)
    required.pop("season", None)
    optional.pop("season", None)
    deck_tables: list[Table] = []
    card_tables: list[Table] = []
    errors: list[DataError] = []
    for files in season_files(folder):
        try:
            d, c = _read_both([
                lambda: read_table(files.decks, setting="data.parquet_folder", required=required, optional=optional,
                                   numeric=frozenset({"wins", "losses"})),
                lambda: read_table(files.cards, setting="data.parquet_folder", required=_card_rows_columns(settings),
                                   numeric=frozenset({"quantity"}), categorical=_CARD_ROW_CATEGORIES),
            ])
        except DataErrors as exc:
            errors.extend(exc.errors)
            continue
        except DataError as exc:
            errors.append(exc)
            continue
        deck_tables.append(with_season(d, files.season))
        card_tables.append(c)
    if errors:
        raise errors[0] if len(errors) == 1 else DataErrors(errors)
    return _stack(deck_tables), _stack(card_tables)


def _stack(tables: list[Table]) -> Table:
    """Several tables as one, each row keeping its own file and row."""
    frames = [t.frame for t in tables]
    columns = list(dict.fromkeys(c for f in frames for c in f.columns))
    # Categorical columns of different categories would concatenate to one string per row.
    categorical = [c for c in columns if all(isinstance(f[c].dtype, pd.CategoricalDtype) for f in frames if c in f)
                   and all(c in f for f in frames)]
    frame = pd.concat([f.reindex(columns=columns).drop(columns=categorical) for f in frames], ignore_index=True)
    for c in categorical:
        frame[c] = pd.Series(union_categoricals([f[c] for f in frames]))
    frame = frame[columns]
    for c in columns:
        if c not in categorical and (pd.api.types.is_string_dtype(frame[c].dtype) or frame[c].dtype == object):
            frame[c] = frame[c].fillna("").astype("str")
    names = {}
    for t in tables:
        names.update(t.names)
    sizes = np.array([len(f) for f in frames], dtype=np.int64)
    return Table(str(tables[0].file), frame, StackedOrigin([t.origin for t in tables], sizes), names)
