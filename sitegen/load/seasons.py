"""Dates and seasons: the ``seasons.calendar`` setting, deck dates, and the order seasons are published in."""
from __future__ import annotations

import datetime as dt
import re

import numpy as np
import pandas as pd
import pyarrow.compute as pc

from ..errors import ConfigError
from .arrow_columns import arrow_text
from .names import clean_name
from .settings import LoadSettings


def natural_key(text: str) -> tuple:
    """Sort key that puts 'Season 2' before 'Season 10'."""
    return tuple((0, int(part), "") if part.isdigit() else (1, 0, part.casefold() + "\0" + part)
                 for part in re.split(r"([0-9]+)", text) if part)


def calendar_of(settings: LoadSettings) -> list[tuple[str, dt.date, dt.date]]:
    """The ``seasons.calendar`` entries as (season name, first day, last day); a ConfigError
    when a date is not one, an entry ends before it starts, entries overlap or there are none."""
    out = []
    source = settings.source
    for i, (name, *dates) in enumerate(settings.calendar, start=1):
        bounds = []
        for part, value in zip(("start", "end"), dates):
            if isinstance(value, dt.datetime):
                value = value.date()
            if isinstance(value, str):
                try:
                    value = dt.date.fromisoformat(value.strip())
                except ValueError:
                    raise ConfigError(source, "seasons.calendar", f"entry {i} {part} {value!r} is not a date",
                                      "write dates as 2026-03-01") from None
            if not isinstance(value, dt.date):
                raise ConfigError(source, "seasons.calendar", f"entry {i} {part} {value!r} is not a date",
                                  "write dates as 2026-03-01")
            bounds.append(value)
        if bounds[0] > bounds[1]:
            raise ConfigError(source, "seasons.calendar", f"entry {i} ({name!r}) ends before it starts",
                              "swap start and end")
        out.append((clean_name(str(name)), bounds[0], bounds[1]))
    if not out:
        raise ConfigError(source, "seasons.calendar", "is empty but seasons.source is 'calendar'",
                          'add [[seasons.calendar]] entries with name, start and end, or set seasons.source = "column"')
    ranked = sorted(out, key=lambda e: e[1])
    for a, b in zip(ranked, ranked[1:]):
        if b[1] <= a[2]:
            raise ConfigError(source, "seasons.calendar", f"seasons {a[0]!r} and {b[0]!r} overlap",
                              "make each date belong to one season")
    return out


def parse_dates(series: pd.Series) -> tuple[pd.Series, np.ndarray, np.ndarray]:
    """Dates (NaT where empty or bad), positions of bad values, positions of empty ones.

    A time with an offset (or Z) keeps its own calendar date: the offset is dropped, not applied
    (2025-04-10T01:00+05:00 is 10 April), so mixed offsets never fail the parse either.
    A season's decks share a few hundred dates: each distinct text is parsed once.
    """
    values = arrow_text(series)
    if values is None or len(values) < 1000:
        return _parse_each_date(series)
    encoded = pc.dictionary_encode(pc.fill_null(values, ""))
    dates, bad, empty = _parse_each_date(pd.Series(encoded.dictionary.to_pandas(), dtype="str"))
    codes = encoded.indices.to_numpy(zero_copy_only=False)
    is_bad, is_empty = np.zeros(len(dates), dtype=bool), np.zeros(len(dates), dtype=bool)
    is_bad[bad], is_empty[empty] = True, True
    return (pd.Series(dates.to_numpy()[codes], dtype=dates.dtype), np.flatnonzero(is_bad[codes]),
            np.flatnonzero(is_empty[codes]))


#: A date and time with a zone designator (Z or an offset): group 1 is the date and time as written.
_ZONED = r"^(\d{4}-?\d{2}-?\d{2}[Tt ]\d{2}(?::?\d{2}(?::?\d{2}(?:[.,]\d+)?)?)?)\s*(?:[Zz]|[+-]\d{2}(?::?\d{2})?)$"


def _parse_each_date(series: pd.Series) -> tuple[pd.Series, np.ndarray, np.ndarray]:
    """:func:`parse_dates` of every row on its own."""
    text = pd.Series(series.to_numpy(dtype=object), dtype="str").fillna("").str.strip()
    empty = (text == "").to_numpy(dtype=bool)
    # The calendar date as written counts, local to its own offset: 2025-04-10T01:00+05:00 is
    # 10 April (in UTC it is still 9 April), so the offset is dropped, not applied.
    text = text.str.replace(_ZONED, r"\1", regex=True)
    try:
        dates = pd.to_datetime(text.where(~empty), format="ISO8601", errors="coerce", utc=True).dt.tz_localize(None)
    except (ValueError, TypeError, OverflowError):
        dates = pd.Series([_one_date(t) for t in text], dtype="datetime64[ns]")
    bad = np.flatnonzero(dates.isna().to_numpy() & ~empty)
    return dates.reset_index(drop=True), bad, np.flatnonzero(empty)


def _one_date(text: str):
    try:
        return pd.Timestamp(dt.date.fromisoformat(text))
    except (ValueError, TypeError, OverflowError):
        return pd.NaT


def season_order(present: set[str], settings: LoadSettings, calendar: list[tuple[str, dt.date, dt.date]] | None,
                 first_date: dict[str, pd.Timestamp]) -> tuple[str, ...]:
    """The seasons ``present`` in the data in publication order: as ``seasons.order`` lists them
    (a ConfigError when it leaves one out), else by ``calendar`` (:func:`calendar_of`), else by
    each season's first date (``first_date``), the undated ones last by name."""
    order = [clean_name(s) for s in settings.season_order]
    if order:
        missing = sorted(present - set(order), key=natural_key)
        if missing:
            raise ConfigError(settings.source, "seasons.order",
                              f"does not list season(s) {', '.join(map(repr, missing))} found in the data",
                              "add them to seasons.order, or empty it to sort seasons automatically")
        return tuple(s for s in dict.fromkeys(order) if s in present)
    if calendar:
        return tuple(name for name, start, _ in sorted(calendar, key=lambda e: e[1]) if name in present)
    dated = [s for s in present if s in first_date]
    undated = sorted(present - set(dated), key=natural_key)
    return tuple(sorted(dated, key=lambda s: (first_date[s], natural_key(s)))) + tuple(undated)
