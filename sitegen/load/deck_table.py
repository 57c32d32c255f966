"""The deck table checked on its own: ids, leaders, dates and seasons, results, further columns.

:func:`check_decks` needs the deck table only, so it can run while the
long-form table is still being read (see :func:`sitegen.load.load_data`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import DataError
from ..model import Finding
from .arrow_columns import arrow_text
from .codes import (cleaned_column, distinct_codes, empty_code, first_positions, name_rank, named_codes,
                    text_codes, text_column, trimmed_column)
from .names import Spellings, look_alike_findings, name_variants, variant_key
from .numbers import GAMES_MAX, parse_counts
from .problems import ERRORS_PER_PROBLEM, Problems, as_written
from .seasons import calendar_of, parse_dates
from .settings import LoadSettings
from .tables import Table


@dataclass
class DeckChecks:
    """A deck table checked on its own (:func:`check_decks`): its problems and cleaned columns."""

    problems: Problems
    frame: pd.DataFrame
    deck_codes: np.ndarray
    deck_names: list[str]
    deck_rank: np.ndarray
    deck_id: pd.Series
    season: pd.Series
    dates: pd.Series | None
    calendar: list | None
    results: dict[str, pd.Series]
    extras: dict[str, pd.Series]
    leader_codes: np.ndarray
    leader_canon: list[str]
    leader_findings: list[Finding]


def check_decks(decks: Table, settings: LoadSettings, spellings: Spellings | None = None) -> DeckChecks:
    """The checks of :func:`~.normalise.build` that need the deck table only, so they can run while
    the long-form table is still being read (see :func:`sitegen.load.load_data`).

    A ConfigError when the calendar does not fit (see :func:`~.seasons.calendar_of`), a DataError
    when the column the seasons come from is missing; every other problem is collected.
    """
    problems = Problems()
    frame = decks.frame
    deck_codes, deck_names, deck_rank, deck_id = _deck_ids(decks, problems)
    merged_leaders: list = []
    leader = cleaned_column(frame["leader"], names=True, merged=merged_leaders)
    problems.flag(decks, np.flatnonzero((leader == "").to_numpy()), "deck has no leader", column="leader",
                  fix="fill in the deck's leader")
    dates, undated = _dates(decks, problems)
    calendar = None
    look_alike_seasons: list[Finding] = []
    if settings.season_source == "calendar":
        calendar = calendar_of(settings)
        season = _seasons_by_calendar(decks, dates, undated, calendar, settings, problems)
    else:
        season, look_alike_seasons = _seasons_by_column(decks, settings, problems)
    results = _results(decks, problems)
    extras = _further_columns(frame)
    if deck_rank is None:
        deck_rank = name_rank(deck_names)
    leader_codes, leader_canon, leader_findings = _leader_spellings(leader, merged_leaders, settings, spellings)
    if spellings is None:
        leader_findings = look_alike_seasons + leader_findings
    return DeckChecks(problems, frame, deck_codes, deck_names, deck_rank, deck_id, season, dates, calendar, results,
                      extras, leader_codes, leader_canon, leader_findings)


def _deck_ids(decks: Table, problems: Problems) -> tuple[np.ndarray, list[str], np.ndarray | None, pd.Series]:
    """The deck ids' codes, distinct names and sort ranks (None when not found on the way), and
    the ids as a column; an empty id, or one on two rows, is a problem."""
    frame = decks.frame
    distinct = distinct_codes(frame["deck_id"])
    deck_codes, deck_names, deck_rank = distinct if distinct is not None else (*text_codes(frame["deck_id"]), None)
    empty_id = empty_code(deck_names)
    if empty_id is not None:
        problems.flag(decks, np.flatnonzero(deck_codes == empty_id), "deck id is empty", column="deck_id",
                      fix="give every deck an id")
    named = named_codes(deck_names, empty_id)
    seen = pd.Series(deck_codes).duplicated().to_numpy() & named[deck_codes]
    if seen.any():
        dup = np.flatnonzero(seen)
        shown = dup[:ERRORS_PER_PROBLEM]
        first = first_positions(deck_codes, deck_codes[shown])
        problems.flag(decks, dup, "deck id appears on two rows", column="deck_id",
                      values=[deck_names[deck_codes[p]] for p in shown],
                      notes=[f" (also row {decks.where(np.array([first[int(deck_codes[p])]]), 'deck_id')[0][1]})" for p in shown],
                      fix="give each deck one row and its own id")
    ids = arrow_text(frame["deck_id"]) if distinct is not None and frame["deck_id"].dtype == "str" else None
    if ids is not None:
        # The ids as read (distinct, none needed trimming), in one piece: a CSV reader's hundred
        # blocks would make every later gather of decks (a partition's, say) several times slower.
        deck_id = pd.Series(ids.to_pandas(), dtype="str")
    else:
        deck_id = text_column(deck_names, deck_codes)
    return deck_codes, deck_names, deck_rank, deck_id


def _dates(decks: Table, problems: Problems) -> tuple[pd.Series | None, np.ndarray | None]:
    """The date column as dates (None without one) and the positions of empty dates; a date
    that is not one is a problem."""
    frame = decks.frame
    if "date" not in frame:
        return None, None
    dates, bad, empty = parse_dates(frame["date"])
    problems.flag(decks, bad, "not a date", column="date", values=frame["date"].iloc[bad[:ERRORS_PER_PROBLEM]].to_numpy(),
                  fix="write dates as YYYY-MM-DD, for example 2026-03-01")
    return dates, empty


def _seasons_by_calendar(decks: Table, dates: pd.Series | None, undated: np.ndarray | None, calendar: list,
                         settings: LoadSettings, problems: Problems) -> pd.Series:
    """Each deck's season, the calendar's season its date falls in ('' when none); a DataError
    without a date column, and a deck without a date or whose date falls in no season is a problem."""
    if dates is None:
        raise DataError(decks.file, f"missing column '{decks.names.get('date', settings.columns.date)}' "
                        "(seasons.source is 'calendar', so every deck needs a date)", row=1,
                        fix="add a date column, set columns.date to its name, or set seasons.source = \"column\"")
    problems.flag(decks, undated, "deck has no date", column="date",
                  fix="fill in the date the deck was played (YYYY-MM-DD)")
    season = pd.Series([""] * len(decks.frame), dtype=object)
    for name, start, end in calendar:
        low, high = pd.Timestamp(start), pd.Timestamp(end) + pd.Timedelta(days=1)
        inside = (dates.notna() & (dates >= low) & (dates < high) & (season == "")).to_numpy()
        season[inside] = name
    outside = np.flatnonzero(dates.notna().to_numpy() & (season == "").to_numpy())
    problems.flag(decks, outside, "date falls in no season of seasons.calendar",
                  column="date", values=decks.frame["date"].iloc[outside[:ERRORS_PER_PROBLEM]].to_numpy(),
                  fix="add a season covering this date to seasons.calendar, or correct the date")
    return season.astype("str")


def _seasons_by_column(decks: Table, settings: LoadSettings, problems: Problems) -> tuple[pd.Series, list[Finding]]:
    """Each deck's season from the season column (names cleaned) and the findings of look-alike
    spellings; a DataError without the column, and a deck without a season is a problem."""
    frame = decks.frame
    if "season" not in frame:
        raise DataError(decks.file, f"missing column '{settings.columns.season}'", row=1, column=settings.columns.season,
                        fix="add a season column, set columns.season to its name, or use seasons.source = \"calendar\"")
    merged_seasons: list = []
    season = cleaned_column(frame["season"], names=True, merged=merged_seasons)
    look_alike_seasons = look_alike_findings(merged_seasons, "season")
    problems.flag(decks, np.flatnonzero((season == "").to_numpy()), "deck has no season", column="season",
                  fix="fill in the deck's season")
    return season, look_alike_seasons


def _results(decks: Table, problems: Problems) -> dict[str, pd.Series]:
    """Wins and losses as Int64 (missing where not given); a value that is not a whole number
    from 0 to :data:`~.numbers.GAMES_MAX` is a problem."""
    frame = decks.frame
    results = {}
    for column in ("wins", "losses"):
        if column in frame:
            values, bad, over = parse_counts(frame[column], positive=False, most=GAMES_MAX)
            problems.flag(decks, bad, f"{column} is not a whole number of 0 or more", column=column,
                          values=as_written(decks, frame[column].iloc[bad[:ERRORS_PER_PROBLEM]].to_numpy()),
                          fix="write a count like 3, or leave it empty")
            problems.flag(decks, over, f"{column} is more than {GAMES_MAX:,} games, the most sitegen reads for one deck",
                          column=column, values=as_written(decks, frame[column].iloc[over[:ERRORS_PER_PROBLEM]].to_numpy()),
                          fix=f"write the deck's {column} (at most {GAMES_MAX:,}); a larger number is a typo or a misplaced column")
            results[column] = values.reset_index(drop=True)
        else:
            results[column] = pd.Series(pd.array([pd.NA] * len(frame), dtype="Int64"))
    return results


def _further_columns(frame: pd.DataFrame) -> dict[str, pd.Series]:
    """Event, player and title, trimmed (missing where empty or not given)."""
    extras = {}
    for column in ("event", "player", "title"):
        if column in frame:
            text = trimmed_column(frame[column])
            extras[column] = text.where(text != "")
        else:
            extras[column] = pd.Series([np.nan] * len(frame), dtype="str")
    return extras


def _leader_spellings(leader: pd.Series, merged_leaders: list, settings: LoadSettings,
                      spellings: Spellings | None) -> tuple[np.ndarray, list[str], list[Finding]]:
    """The leaders' codes, the spelling each distinct leader is read as (``spellings``' when
    given), and the findings of names written several ways."""
    leader_codes, leader_names = text_codes(leader)
    leader_canon, leader_findings, _ = name_variants(
        leader_names, np.bincount(leader_codes, minlength=len(leader_names)), None, settings.leader_word)
    leader_findings = look_alike_findings(merged_leaders, settings.leader_word) + leader_findings
    if spellings is not None:
        leader_canon = [spellings.leaders.get(variant_key(n), c) for n, c in zip(leader_names, leader_canon)]
    return leader_codes, leader_canon, leader_findings
