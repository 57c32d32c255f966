"""Validating and normalising read tables into one :class:`DeckData`.

Input tables are already read (see :mod:`.tables`, :mod:`.decklists`) and
hold text. Here every row-level rule is checked and every problem collected
as a DataError naming file, row, column, value and fix, so a user fixes them
all in one go. Work on the long-form table is vectorised on integer codes
(names are cleaned once per distinct value, not per row), so tens of
millions of rows take seconds.
"""
from __future__ import annotations

import datetime as dt
import difflib
import re
import unicodedata
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from ..config import Config
from ..errors import ConfigError, DataError, DataErrors, visible
from ..model import DECK_COLUMNS, DeckData, Finding, coded, in_row_order, narrowest_int
from .tables import CSV_SUFFIXES, Table, _arrow_text

#: Individual errors listed per problem before the rest are counted in one line.
ERRORS_PER_PROBLEM = 50

# Stripped from both ends of names: whitespace, C0 controls, DEL, byte-order mark.
_EDGE = "".join(chr(c) for c in range(0x20)) + "\x7f\ufeff"


def clean_text(text: str) -> str:
    """A name with whitespace and control characters trimmed from both ends (inner text kept as is)."""
    return text.strip().strip(_EDGE).strip()


def clean_name(text: str) -> str:
    """A name (card, leader, season) in the one form names are compared in: invisible format
    characters (Unicode category Cf: zero-width space, joiners, direction marks and overrides,
    byte-order mark) removed, Unicode NFC (composed accents), trimmed as :func:`clean_text`."""
    text = clean_text(text)
    if text.isascii():
        return text
    text = "".join(c for c in text if unicodedata.category(c) != "Cf")
    return clean_text(unicodedata.normalize("NFC", text))


def variant_key(name: str) -> str:
    """Names equal under this key differ only by case or spacing (or look alike: see :func:`clean_name`)."""
    return unicodedata.normalize("NFC", " ".join(clean_name(name).split()).casefold())


def told_apart(value: str, other: str) -> str:
    """Words telling two names apart at their first differing character, when either character
    there is not ASCII (so a look-alike letter of another script is named); '' otherwise."""
    for i, (a, b) in enumerate(zip(value, other), start=1):
        if a != b:
            if a.isascii() and b.isascii():
                return ""
            return (f"; character {i} differs: U+{ord(a):04X} {unicodedata.name(a, 'unnamed')} here, "
                    f"U+{ord(b):04X} {unicodedata.name(b, 'unnamed')} there")
    return ""


def natural_key(text: str) -> tuple:
    """Sort key that puts 'Season 2' before 'Season 10'."""
    return tuple((0, int(part), "") if part.isdigit() else (1, 0, part.casefold() + "\0" + part)
                 for part in re.split(r"([0-9]+)", text) if part)


class _Problems:
    """Collects DataErrors; each vectorised check reports at most a few rows in full."""

    def __init__(self) -> None:
        self.errors: list[DataError] = []

    def flag(self, table: Table, positions: np.ndarray, problem: str, *, column: str, values=None,
             notes: list[str] | None = None, fix: str = "") -> None:
        """One DataError per row position; ``values`` and ``notes`` (extra words) go with the first shown rows."""
        positions = np.asarray(positions, dtype=np.int64)
        if positions.size == 0:
            return
        shown = positions[:ERRORS_PER_PROBLEM]
        places = table.where(shown, column)
        name = table.names.get(column, column)
        for i, (file, row) in enumerate(places):
            text = problem + (notes[i] if notes is not None else "")
            value = values[i] if values is not None else None
            self.errors.append(DataError(file, text, row=row, column=name, value=value,
                                         has_value=values is not None, fix=fix))
        rest = positions.size - shown.size
        if rest:
            file, row = table.where(positions[shown.size: shown.size + 1], column)[0]
            self.errors.append(DataError(file, f"{rest} more rows like this from here on: {problem}", row=row,
                                         column=name, fix=fix))

    def raise_if_any(self) -> None:
        if self.errors:
            order = sorted(range(len(self.errors)),
                           key=lambda i: (self.errors[i].file, self.errors[i].row or 0, i))
            raise DataErrors([self.errors[i] for i in order])


#: Integer codes of distinct values: numpy gathers with 32-bit indices several times faster than with 64-bit.
_CODE = np.int32
_NARROW_CODES = (np.dtype(np.int8), np.dtype(np.int16), np.dtype(np.int32))


def _factorize(series: pd.Series) -> tuple[np.ndarray, list]:
    """pd.factorize, faster when equal values sit in runs (a long table grouped by deck).

    A categorical needs no work: its codes are the answer, less the
    categories no row uses (a missing value counts as '')."""
    if isinstance(series.dtype, pd.CategoricalDtype):
        return _category_codes(series)
    series = series.fillna("")
    n = len(series)
    if n > 100_000:
        try:
            arrow = pa.chunked_array(series.array.__arrow_array__())
            differs = pc.not_equal(arrow[1:], arrow[:-1]).to_numpy(zero_copy_only=False)
        except (AttributeError, TypeError, pa.ArrowException):
            differs = None
        if differs is not None:
            starts = np.flatnonzero(np.concatenate([[True], differs]))
            if starts.size < n // 4:
                head_codes, uniques = pd.factorize(series.iloc[starts], sort=False)
                return np.repeat(head_codes, np.diff(np.append(starts, n))), _as_list(uniques)
    codes, uniques = pd.factorize(series, sort=False)
    return codes, _as_list(uniques)


def _as_list(values) -> list:
    """Values as a list of Python objects, without iterating an Arrow array one item at a time."""
    return np.asarray(values, dtype=object).tolist()


def _category_codes(series: pd.Series) -> tuple[np.ndarray, list]:
    codes = series.array.codes  # int8, int16 or int32: as narrow as the categories allow (no copy)
    categories = _as_list(series.cat.categories)
    if (codes < 0).any():
        if "" not in categories:
            categories.append("")
        codes = np.where(codes < 0, categories.index(""), codes)
    used = np.zeros(len(categories), dtype=bool)
    used[codes] = True  # several times faster than counting with np.bincount
    if used.all():
        return codes, categories
    new_code = (np.cumsum(used) - 1).astype(_CODE)
    return new_code[codes], [c for c, u in zip(categories, used) if u]


# Characters clean_text trims (Python's str.isspace set, C0 controls, DEL, BOM), for a vectorised pre-check.
_EDGE_CLASS = "[\\x00-\\x20\\x7f\\x85\\xa0\\x{1680}\\x{2000}-\\x{200a}\\x{2028}\\x{2029}\\x{202f}\\x{205f}\\x{3000}\\x{feff}]"
_NEEDS_TRIM = f"^{_EDGE_CLASS}|{_EDGE_CLASS}$"


def _codes(series: pd.Series, *, names: bool = False,
           merged: list[tuple[str, list[tuple[str, int]]]] | None = None) -> tuple[np.ndarray, list[str]]:
    """Integer codes of the cleaned values and the cleaned distinct values.

    ``names``: the values are names, cleaned by :func:`clean_name` (one form for look-alike
    spellings) rather than only trimmed; spellings that became one are appended to ``merged``
    as (name, [(spelling as written, rows)...]).
    """
    codes, uniques = _factorize(series)
    values = uniques if all(type(u) is str for u in uniques) else [str(u) for u in uniques]
    pattern = _NEEDS_TRIM + ("|[^\\x00-\\x7f]" if names else "")  # any non-ASCII text may need NFC or hide a Cf
    try:
        flagged = np.flatnonzero(pc.match_substring_regex(pa.array(values, pa.string()), pattern)
                                 .to_numpy(zero_copy_only=False))
    except (pa.ArrowException, ValueError):
        flagged = np.arange(len(values))
    clean = clean_name if names else clean_text
    changed = False
    written = list(values) if names and merged is not None else None
    for i in flagged:
        cleaned = clean(values[i])
        if cleaned != values[i]:
            values[i] = cleaned
            changed = True
    if codes.dtype not in _NARROW_CODES:
        codes = codes.astype(_CODE)  # a categorical's own codes stay as narrow as they are (no copy)
    if not changed:
        return codes, values
    codes2, uniq2 = pd.factorize(pd.Series(values, dtype=object), sort=False)
    if written is not None and len(uniq2) < len(values):
        _look_alikes(written, values, codes, merged)
    return np.asarray(codes2, dtype=_CODE)[codes], [str(u) for u in uniq2]


def _look_alikes(written: list[str], cleaned: list[str], codes: np.ndarray,
                 merged: list[tuple[str, list[tuple[str, int]]]]) -> None:
    """Append to ``merged`` each name that two or more spellings (trimmed, as written) became."""
    groups: dict[str, dict[str, list[int]]] = defaultdict(lambda: defaultdict(list))
    for i, (w, c) in enumerate(zip(written, cleaned)):
        groups[c][clean_text(w)].append(i)
    rows = None
    for name in sorted(groups):
        spellings = groups[name]
        if len(spellings) < 2:
            continue
        if rows is None:
            rows = np.bincount(np.asarray(codes, dtype=np.int64), minlength=len(written))
        merged.append((name, [(w, int(rows[idx].sum())) for w, idx in sorted(spellings.items())]))


def _spelt(column: pd.Series, row: int, other: int) -> str:
    """Words showing how two rows spell one name, when they spell it differently (look-alikes)."""
    a, b = clean_text(str(column.iloc[row])), clean_text(str(column.iloc[other]))
    return f"; written {visible(a)} here, {visible(b)} there" if a != b else ""


def look_alike_findings(merged: list[tuple[str, list[tuple[str, int]]]], what: str) -> list[Finding]:
    """One ``name-variants`` finding per name that look-alike spellings became, each shown by
    :func:`visible` so that the spellings look different in the message."""
    return [Finding("name-variants", f"{what} written {len(spellings)} ways that look alike: "
                    + ", ".join(f"{visible(w)} ({n} rows)" for w, n in spellings)
                    + f"; all read as {visible(name)} (Unicode NFC, invisible format characters removed)")
            for name, spellings in merged]


def merge_look_alikes(counts: dict[str, int], what: str) -> tuple[dict[str, int], list[Finding]]:
    """Row counts by name (as written) added up by :func:`clean_name`, and the findings of
    :func:`look_alike_findings` for the names that several spellings became."""
    out: dict[str, int] = {}
    spellings: dict[str, dict[str, int]] = defaultdict(dict)
    for name, n in counts.items():
        key = clean_name(name)
        out[key] = out.get(key, 0) + n
        trimmed = clean_text(name)
        spellings[key][trimmed] = spellings[key].get(trimmed, 0) + n
    merged = [(name, sorted(s.items())) for name, s in sorted(spellings.items()) if len(s) > 1]
    return out, look_alike_findings(merged, what)


def _cleaned(series: pd.Series, *, names: bool = False,
             merged: list[tuple[str, list[tuple[str, int]]]] | None = None) -> pd.Series:
    codes, uniques = _codes(series, names=names, merged=merged)
    out = _text(uniques, codes)
    out.index = series.index
    return out


#: Most copies of one card one deck row may hold. A hard bound, no setting: no deck of any card game
#: holds a thousand copies of one card (rules.max_copies, a warning, is the game's own rule), so a
#: larger number is a typo or a misplaced column; and with it, a deck's total of even millions of
#: rows stays far inside every integer type the numbers pass through (no sum can wrap).
QUANTITY_MAX = 1000
#: Most wins, or losses, one deck may record: a million games per deck, so the sums over ten million
#: decks (10**13) stay exact in int64 and in float64 (exact to 2**53).
GAMES_MAX = 1_000_000
_WHOLE = re.compile(r"[+]?\d+")


def parse_counts(series: pd.Series, *, positive: bool, most: int) -> tuple[pd.Series, np.ndarray, np.ndarray]:
    """Whole numbers (>= 1 when ``positive``, else >= 0, and at most ``most``) as Int64, positions
    of bad values, and positions of whole numbers above ``most`` (missing in the result; no value
    of any size or integer type wraps on the way).

    Empty cells become missing values without being bad (the caller decides
    whether a missing value is allowed).
    """
    least = 1 if positive else 0
    n = len(series)
    kind = series.dtype
    bad_format = np.array([], dtype=np.int64)
    if isinstance(kind, np.dtype) and kind.kind in "iu":  # numbers already (Parquet): one pass
        raw = series.to_numpy()
        over = raw > most  # compared in the column's own type: uint64 beyond int64 stays itself
        plain = (np.where(over, 0, raw) if over.any() else raw).astype(np.int64, copy=False)
        return (pd.Series(pd.arrays.IntegerArray(plain, over.copy())),
                np.flatnonzero(plain < least).astype(np.int64), np.flatnonzero(over).astype(np.int64))
    if pd.api.types.is_integer_dtype(kind) and not pd.api.types.is_bool_dtype(kind):
        raw = series.to_numpy(dtype=object, na_value=None)
        over_mask = np.array([v is not None and int(v) > most for v in raw], dtype=bool)
        values = pd.Series(pd.array([None if (v is None or o) else int(v) for v, o in zip(raw, over_mask)],
                                    dtype="Int64"))
    elif pd.api.types.is_float_dtype(kind):
        arr = series.to_numpy(dtype=float, na_value=np.nan)
        whole = np.isfinite(arr) & (np.floor(arr) == arr)
        over_mask = whole & (arr > most)
        fits = whole & ~over_mask & (arr >= -(2.0 ** 62))
        values = pd.Series(pd.array(np.where(fits, arr, 0).astype(np.int64), dtype="Int64"))
        values[~fits] = pd.NA
        bad_format = np.flatnonzero(~fits & ~over_mask & ~np.isnan(arr))
    else:
        text = pd.Series(series.to_numpy(dtype=object), dtype="str").fillna("")
        try:
            values = pd.Series(text.astype("int64").to_numpy(), dtype="Int64")
            over_mask = (values > most).to_numpy(dtype=bool, na_value=False)
            if over_mask.any():
                values[over_mask] = pd.NA
        except (ValueError, TypeError, OverflowError):
            stripped = text.str.strip()
            ok = stripped.str.fullmatch(_WHOLE.pattern).fillna(False).to_numpy(dtype=bool)
            empty = (stripped == "").to_numpy(dtype=bool)
            numbers = [int(v) if k else 0 for v, k in zip(stripped.tolist(), ok.tolist())]  # Python ints: any size
            over_mask = np.array([k and v > most for v, k in zip(numbers, ok.tolist())], dtype=bool)
            fits = ok & ~over_mask
            values = pd.Series(pd.array([v if f else None for v, f in zip(numbers, fits.tolist())], dtype="Int64"))
            bad_format = np.flatnonzero(~ok & ~empty)
    low = np.flatnonzero((values < least).fillna(False).to_numpy(dtype=bool))
    return values, np.union1d(bad_format, low).astype(np.int64), np.flatnonzero(over_mask).astype(np.int64)


def _distinct_codes(series: pd.Series) -> tuple[np.ndarray, list[str], np.ndarray] | None:
    """Codes, values and sort ranks of a text column whose values are distinct and need no
    cleaning (a deck table's ids, as a rule), or None when they are not.

    One sort of the values, needed for the ranks anyway, shows that no two
    are equal, so the hash table of :func:`_codes` is never built.
    """
    values = _arrow_text(series)
    if values is None or values.null_count or len(values) < 2:
        return None
    if _needs_trim(values).any():
        return None
    every = np.arange(len(values), dtype=_CODE)
    if pc.all(pc.greater(values[1:], values[:-1])).as_py():
        return every, values.to_pylist(), every  # ascending already (ids written in order): no sort
    by_name = pc.sort_indices(values)
    in_order = values.take(by_name)
    if pc.any(pc.equal(in_order[1:], in_order[:-1])).as_py():
        return None
    rank = np.empty(len(values), dtype=_CODE)
    rank[by_name.to_numpy()] = every
    return every, values.to_pylist(), rank


def _needs_trim(values: pa.Array) -> np.ndarray:
    """For each text of ``values`` (no nulls), whether it starts or ends with a character
    :func:`clean_text` trims. Each text's first and last byte are looked at first: ASCII
    letters, digits and punctuation there clear it; only the rest (spaces, controls, any
    non-ASCII byte) are matched against the pattern, usually a handful of a million."""
    if not pa.types.is_string(values.type) or values.null_count:
        return pc.match_substring_regex(values, _NEEDS_TRIM).to_numpy(zero_copy_only=False)
    _, offsets_buffer, data_buffer = values.buffers()
    offsets = np.frombuffer(offsets_buffer, dtype=np.int32, count=len(values) + 1, offset=values.offset * 4)
    data = np.frombuffer(data_buffer, dtype=np.uint8) if data_buffer is not None else np.zeros(0, dtype=np.uint8)
    starts, ends = offsets[:-1], offsets[1:]
    filled = np.flatnonzero(ends > starts)
    first, last = data[starts[filled]], data[ends[filled] - 1]
    suspect = np.zeros(len(values), dtype=bool)
    suspect[filled] = (first <= 0x20) | (first >= 0x7F) | (last <= 0x20) | (last >= 0x7F)
    maybe = np.flatnonzero(suspect)
    if maybe.size:
        suspect[maybe] = pc.match_substring_regex(values.take(pa.array(maybe)), _NEEDS_TRIM).to_numpy(
            zero_copy_only=False)
    return suspect


def _trimmed(series: pd.Series) -> pd.Series:
    """A text column cleaned as :func:`clean_text` does, with a fresh index; only the rows
    that need it are touched (for columns of mostly distinct values: players, titles)."""
    values = _arrow_text(series)
    if values is None:
        return _cleaned(series).reset_index(drop=True)
    values = pc.fill_null(values, "")
    flagged = np.flatnonzero(_needs_trim(values))
    out = pd.Series(values.to_pandas(), dtype="str")
    if flagged.size:
        out.iloc[flagged] = [clean_text(v) for v in out.iloc[flagged].tolist()]
    return out


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
            if _is_arange(deck_codes):  # the deck table's ids were distinct: a category is its code
                return codes.astype(_CODE, copy=False), deck_names, True
            return np.asarray(deck_codes, dtype=_CODE)[codes], deck_names, True
    codes, names = _codes(ids)
    return codes, names, names == deck_names


def _as_written(table: Table, values: np.ndarray) -> list:
    """Values to quote in messages: a CSV cell is text, even when it was read as a number."""
    if Path(table.file).suffix.lower() in CSV_SUFFIXES:
        return [str(v) for v in values.tolist()]
    return values.tolist()


def _empty_code(names: list[str]) -> int | None:
    """The code of the empty name among distinct ``names``, if there is one."""
    try:
        return names.index("")
    except ValueError:
        return None


def _named(names: list[str], empty: int | None) -> np.ndarray:
    """True for each distinct name but the empty one."""
    out = np.ones(len(names), dtype=bool)
    if empty is not None:
        out[empty] = False
    return out


def _first_positions(codes: np.ndarray, wanted: np.ndarray) -> dict[int, int]:
    """First row position of each wanted code."""
    uniq, first = np.unique(codes, return_index=True)
    found = dict(zip(uniq.tolist(), first.tolist()))
    return {int(c): found[int(c)] for c in wanted if int(c) in found}


def _calendar(cfg: Config) -> list[tuple[str, dt.date, dt.date]]:
    out = []
    source = str(cfg.source or "<config>")
    for i, entry in enumerate(cfg["seasons.calendar"], start=1):
        bounds = []
        for part in ("start", "end"):
            value = entry[part]
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
            raise ConfigError(source, "seasons.calendar", f"entry {i} ({entry['name']!r}) ends before it starts",
                              "swap start and end")
        out.append((clean_name(str(entry["name"])), bounds[0], bounds[1]))
    if not out:
        raise ConfigError(source, "seasons.calendar", "is empty but seasons.source is 'calendar'",
                          'add [[seasons.calendar]] entries with name, start and end, or set seasons.source = "column"')
    ranked = sorted(out, key=lambda e: e[1])
    for a, b in zip(ranked, ranked[1:]):
        if b[1] <= a[2]:
            raise ConfigError(source, "seasons.calendar", f"seasons {a[0]!r} and {b[0]!r} overlap",
                              "make each date belong to one season")
    return out


def _parse_dates(series: pd.Series) -> tuple[pd.Series, np.ndarray, np.ndarray]:
    """Dates (NaT where empty or bad), positions of bad values, positions of empty ones.

    A time with an offset (or Z) keeps its own calendar date: the offset is dropped, not applied
    (2025-04-10T01:00+05:00 is 10 April), so mixed offsets never fail the parse either.
    A season's decks share a few hundred dates: each distinct text is parsed once.
    """
    values = _arrow_text(series)
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
    """:func:`_parse_dates` of every row on its own."""
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


def _season_order(present: set[str], cfg: Config, calendar, first_date: dict[str, pd.Timestamp]) -> tuple[str, ...]:
    order = [clean_name(s) for s in cfg["seasons.order"]]
    if order:
        missing = sorted(present - set(order), key=natural_key)
        if missing:
            raise ConfigError(str(cfg.source or "<config>"), "seasons.order",
                              f"does not list season(s) {', '.join(map(repr, missing))} found in the data",
                              "add them to seasons.order, or empty it to sort seasons automatically")
        return tuple(s for s in dict.fromkeys(order) if s in present)
    if calendar:
        return tuple(name for name, start, _ in sorted(calendar, key=lambda e: e[1]) if name in present)
    dated = [s for s in present if s in first_date]
    undated = sorted(present - set(dated), key=natural_key)
    return tuple(sorted(dated, key=lambda s: (first_date[s], natural_key(s)))) + tuple(undated)


def _name_variants(names: list[str], counts: np.ndarray, known: dict[str, str] | None,
                   what: str) -> tuple[list[str], list[Finding], list[int]]:
    """Canonical spelling per distinct name, findings, and indices of names unknown to ``known``.

    Without ``known`` (the card table's names by variant key) the most used
    spelling wins, ties to the first in sort order.
    """
    groups: dict[str, list[int]] = defaultdict(list)
    for i, name in enumerate(names):
        groups[variant_key(name)].append(i)
    canonical = list(names)
    findings: list[Finding] = []
    unknown: list[int] = []
    for key in sorted(groups):
        members = groups[key]
        if known is not None:
            if key not in known:
                unknown.extend(members)
                continue
            winner = known[key]
        else:
            winner = names[min(members, key=lambda i: (-int(counts[i]), names[i]))]
        spellings = sorted({names[i] for i in members} | {winner})
        for i in members:
            canonical[i] = winner
        if len(spellings) > 1:
            listed = ", ".join(visible(s) + (f" ({int(counts[names.index(s)])} rows)" if s in names else "")
                               for s in spellings)
            findings.append(Finding("name-variants",
                                    f"{what} written {len(spellings)} ways: {listed}; all read as {visible(winner)}"))
    return canonical, findings, unknown


@dataclass(frozen=True)
class Spellings:
    """Spellings decided over the whole data, for a build that reads one season at a time.

    ``cards`` and ``leaders`` map a name's :func:`variant_key` to the
    spelling every season uses; their findings are made once, over the
    whole data, so each season's build makes none of its own.
    """

    cards: dict[str, str]
    leaders: dict[str, str]


def spellings_of(names: list[str], counts: np.ndarray, known: dict[str, str] | None,
                 what: str) -> tuple[dict[str, str], list[Finding]]:
    """The spelling of every variant key among ``names`` (row ``counts`` each), and the findings."""
    canonical, findings, _ = _name_variants(names, counts, known, what)
    return {variant_key(n): c for n, c in zip(names, canonical)}, findings


@dataclass
class DeckChecks:
    """A deck table checked on its own (:func:`check_decks`): its problems and cleaned columns."""

    problems: _Problems
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


def check_decks(decks: Table, cfg: Config, spellings: Spellings | None = None) -> DeckChecks:
    """The checks of :func:`build` that need the deck table only, so they can run while the
    long-form table is still being read (see :func:`sitegen.load.load_data`)."""
    problems = _Problems()
    frame = decks.frame
    source = cfg["seasons.source"]

    # -- deck table
    distinct = _distinct_codes(frame["deck_id"])
    deck_codes, deck_names, deck_rank = distinct if distinct is not None else (*_codes(frame["deck_id"]), None)
    n_decks = len(frame)
    empty_id = _empty_code(deck_names)
    if empty_id is not None:
        problems.flag(decks, np.flatnonzero(deck_codes == empty_id), "deck id is empty", column="deck_id",
                      fix="give every deck an id")
    named = _named(deck_names, empty_id)
    seen = pd.Series(deck_codes).duplicated().to_numpy() & named[deck_codes]
    if seen.any():
        dup = np.flatnonzero(seen)
        shown = dup[:ERRORS_PER_PROBLEM]
        first = _first_positions(deck_codes, deck_codes[shown])
        problems.flag(decks, dup, "deck id appears on two rows", column="deck_id",
                      values=[deck_names[deck_codes[p]] for p in shown],
                      notes=[f" (also row {decks.where(np.array([first[int(deck_codes[p])]]), 'deck_id')[0][1]})" for p in shown],
                      fix="give each deck one row and its own id")
    ids = _arrow_text(frame["deck_id"]) if distinct is not None and frame["deck_id"].dtype == "str" else None
    if ids is not None:
        # The ids as read (distinct, none needed trimming), in one piece: a CSV reader's hundred
        # blocks would make every later gather of decks (a partition's, say) several times slower.
        deck_id = pd.Series(ids.to_pandas(), dtype="str")
    else:
        deck_id = _text(deck_names, deck_codes)

    merged_leaders: list = []
    leader = _cleaned(frame["leader"], names=True, merged=merged_leaders)
    problems.flag(decks, np.flatnonzero((leader == "").to_numpy()), "deck has no leader", column="leader",
                  fix="fill in the deck's leader")

    dates = None
    if "date" in frame:
        dates, bad, empty = _parse_dates(frame["date"])
        problems.flag(decks, bad, "not a date", column="date", values=frame["date"].iloc[bad[:ERRORS_PER_PROBLEM]].to_numpy(),
                      fix="write dates as YYYY-MM-DD, for example 2026-03-01")
    calendar = None
    if source == "calendar":
        calendar = _calendar(cfg)
        if dates is None:
            raise DataError(decks.file, f"missing column '{decks.names.get('date', cfg['columns.date'])}' "
                            "(seasons.source is 'calendar', so every deck needs a date)", row=1,
                            fix="add a date column, set columns.date to its name, or set seasons.source = \"column\"")
        problems.flag(decks, empty, "deck has no date", column="date",
                      fix="fill in the date the deck was played (YYYY-MM-DD)")
        season = pd.Series([""] * n_decks, dtype=object)
        for name, start, end in calendar:
            low, high = pd.Timestamp(start), pd.Timestamp(end) + pd.Timedelta(days=1)
            inside = (dates.notna() & (dates >= low) & (dates < high) & (season == "")).to_numpy()
            season[inside] = name
        outside = np.flatnonzero(dates.notna().to_numpy() & (season == "").to_numpy())
        problems.flag(decks, outside, "date falls in no season of seasons.calendar",
                      column="date", values=frame["date"].iloc[outside[:ERRORS_PER_PROBLEM]].to_numpy(),
                      fix="add a season covering this date to seasons.calendar, or correct the date")
        season = season.astype("str")
    else:
        if "season" not in frame:
            raise DataError(decks.file, f"missing column '{cfg['columns.season']}'", row=1, column=cfg["columns.season"],
                            fix="add a season column, set columns.season to its name, or use seasons.source = \"calendar\"")
        merged_seasons: list = []
        season = _cleaned(frame["season"], names=True, merged=merged_seasons)
        look_alike_seasons = look_alike_findings(merged_seasons, "season")
        problems.flag(decks, np.flatnonzero((season == "").to_numpy()), "deck has no season", column="season",
                      fix="fill in the deck's season")

    results = {}
    for column in ("wins", "losses"):
        if column in frame:
            values, bad, over = parse_counts(frame[column], positive=False, most=GAMES_MAX)
            problems.flag(decks, bad, f"{column} is not a whole number of 0 or more", column=column,
                          values=_as_written(decks, frame[column].iloc[bad[:ERRORS_PER_PROBLEM]].to_numpy()),
                          fix="write a count like 3, or leave it empty")
            problems.flag(decks, over, f"{column} is more than {GAMES_MAX:,} games, the most sitegen reads for one deck",
                          column=column, values=_as_written(decks, frame[column].iloc[over[:ERRORS_PER_PROBLEM]].to_numpy()),
                          fix=f"write the deck's {column} (at most {GAMES_MAX:,}); a larger number is a typo or a misplaced column")
            results[column] = values.reset_index(drop=True)
        else:
            results[column] = pd.Series(pd.array([pd.NA] * n_decks, dtype="Int64"))
    extras = {}
    for column in ("event", "player", "title"):
        if column in frame:
            text = _trimmed(frame[column])
            extras[column] = text.where(text != "")
        else:
            extras[column] = pd.Series([np.nan] * n_decks, dtype="str")

    if deck_rank is None:
        deck_rank = _rank(deck_names)
    leader_codes, leader_names = _codes(leader)
    leader_canon, leader_findings, _ = _name_variants(
        leader_names, np.bincount(leader_codes, minlength=len(leader_names)), None, cfg["site.leader_word"])
    leader_findings = look_alike_findings(merged_leaders, cfg["site.leader_word"]) + leader_findings
    if source != "calendar" and spellings is None:
        leader_findings = look_alike_seasons + leader_findings
    if spellings is not None:
        leader_canon = [spellings.leaders.get(variant_key(n), c) for n, c in zip(leader_names, leader_canon)]
    return DeckChecks(problems, frame, deck_codes, deck_names, deck_rank, deck_id, season, dates, calendar, results,
                      extras, leader_codes, leader_canon, leader_findings)


def build(decks: Table, cards: Table, card_table: Table | None, cfg: Config,
          spellings: Spellings | None = None, checked: DeckChecks | None = None) -> DeckData:
    """Check every row of the read tables and assemble the DeckData.

    Names that differ only by case or spacing are read as one (the card
    table's spelling, else the most used one) with a ``name-variants``
    finding; a deck that lists both spellings gets their copies added up.
    Raises DataErrors with every problem found (file and row order), or a
    ConfigError when the settings do not fit the data. ``checked``: the deck
    table's :func:`check_decks`, when the caller ran it already.
    """
    d = checked if checked is not None else check_decks(decks, cfg, spellings)
    problems = _Problems()
    problems.errors.extend(d.problems.errors)  # the deck table's first, as when checked in one go
    frame, deck_codes, deck_names, deck_rank = d.frame, d.deck_codes, d.deck_names, d.deck_rank
    season, dates, calendar, results, extras = d.season, d.dates, d.calendar, d.results, d.extras
    cards_file = cards.file

    # -- long-form table
    cframe = cards.frame
    cdeck_codes, cdeck_names, same_decks = _row_deck_codes(cframe["deck_id"], frame["deck_id"], deck_codes, deck_names)
    merged_cards: list = []
    card_codes, card_names = _codes(cframe["card"], names=True, merged=merged_cards)
    empty_card = [i for i, name in enumerate(card_names) if not name]
    if empty_card:
        problems.flag(cards, np.flatnonzero(np.isin(card_codes, empty_card)), "card name is empty", column="card",
                      fix="fill in the card's name, or delete the row")
    empty_cdeck = _empty_code(cdeck_names)
    if empty_cdeck is not None:
        problems.flag(cards, np.flatnonzero(cdeck_codes == empty_cdeck), "deck id is empty", column="deck_id",
                      fix="give every row the id of its deck")
    raw_quantity = cframe["quantity"]
    if isinstance(raw_quantity.dtype, np.dtype) and raw_quantity.dtype.kind in "iu":
        # Whole numbers already (Parquet, as narrow as the reader found them): no parsing, no copy.
        quantity = raw_quantity.to_numpy()
        bad = np.flatnonzero(quantity < 1)
        over = np.flatnonzero(quantity > QUANTITY_MAX)  # compared in the column's type (uint64 too)
    else:
        parsed, bad, over = parse_counts(raw_quantity, positive=True, most=QUANTITY_MAX)
        bad = np.setdiff1d(bad, over)
        bad = np.setdiff1d(np.union1d(bad, np.flatnonzero(parsed.isna().to_numpy())), over)
        quantity = parsed.to_numpy(dtype=np.int64, na_value=0)
        del parsed
    problems.flag(cards, bad, "quantity is not a whole number of 1 or more", column="quantity",
                  values=_as_written(cards, cframe["quantity"].iloc[bad[:ERRORS_PER_PROBLEM]].to_numpy()),
                  fix="write the number of copies, like 2 (delete rows of cards the deck does not play)")
    problems.flag(cards, over, f"quantity is more than {QUANTITY_MAX:,} copies, the most sitegen reads for one card in one deck",
                  column="quantity", values=_as_written(cards, cframe["quantity"].iloc[over[:ERRORS_PER_PROBLEM]].to_numpy()),
                  fix=f"write the copies of the card in this deck (at most {QUANTITY_MAX:,}); a larger number is a typo or a misplaced column")

    # Decks known to one table and not the other, both directions.
    if same_decks:
        where_in_decks = np.arange(len(deck_names), dtype=np.intp)
    else:
        where_in_decks = pd.Index(deck_names).get_indexer(cdeck_names)
    orphan_codes = np.flatnonzero((where_in_decks < 0) & _named(cdeck_names, empty_cdeck))
    if orphan_codes.size:
        first = _first_positions(cdeck_codes, orphan_codes)
        pos = np.array(sorted(first.values()), dtype=np.int64)
        problems.flag(cards, pos, f"deck id is not in the deck table {decks.file}", column="deck_id",
                      values=[cdeck_names[cdeck_codes[p]] for p in pos[:ERRORS_PER_PROBLEM]],
                      fix="add the deck to the deck table, or correct the id")
    used = np.zeros(len(deck_names), dtype=bool)
    if same_decks:
        used[cdeck_codes] = True  # the codes may not use every name
    else:
        used[where_in_decks[where_in_decks >= 0]] = True
    if not used.all():
        lonely = [i for i in np.flatnonzero(~used) if deck_names[i]]
        first = _first_positions(deck_codes, np.array(lonely, dtype=np.int64))
        pos = np.array(sorted(first.values()), dtype=np.int64)
        problems.flag(decks, pos, f"deck has no cards in {cards_file}", column="deck_id",
                      values=[deck_names[deck_codes[p]] for p in pos[:ERRORS_PER_PROBLEM]],
                      fix="add its cards to the long-form table, or delete the deck's row")

    # Sort by deck id then card (codes ranked by the names' sort order).
    card_rank = _rank(card_names)
    row_rank = deck_rank if same_decks else _rank(cdeck_names)
    row_deck = cdeck_codes if _is_arange(row_rank) else row_rank[cdeck_codes]  # ids in sorted order already
    if in_row_order(row_deck, card_codes, None if _is_arange(card_rank) else card_rank):
        # The usual case: grouped by deck and sorted by card already, so no row repeats another.
        order, in_order, same = None, True, np.array([], dtype=np.int64)
    else:
        key = row_deck.astype(np.int64)  # in place from here: one 8-byte array, not three
        key *= max(len(card_names), 1)
        key += card_rank[card_codes]
        order = _argsort(key)
        in_order = order is None
        sorted_key = key if in_order else key[order]
        same = np.flatnonzero(sorted_key[1:] == sorted_key[:-1]) + 1
        del sorted_key
    if same.size:
        # Only now pay for a stable sort: within equal keys, file order; name the previous row of the pair.
        order = _argsort(key, stable=True)
        in_order = order is None
        order = np.arange(key.size) if in_order else order
        sorted_key = key[order]
        del key
        same = np.flatnonzero(sorted_key[1:] == sorted_key[:-1]) + 1
        earlier = dict(zip(order[same].tolist(), order[same - 1].tolist()))
        later = np.sort(order[same])
        shown = later[:ERRORS_PER_PROBLEM]
        earlier_rows = [r for _, r in cards.where(np.array([earlier[int(p)] for p in shown]), "card")]
        problems.flag(cards, later, "the same deck and card on two rows", column="card",
                      values=[card_names[card_codes[p]] for p in shown],
                      notes=[f" (deck {cdeck_names[cdeck_codes[p]]!r}, also row {r}{_spelt(cframe['card'], p, earlier[int(p)])})"
                             for p, r in zip(shown, earlier_rows)],
                      fix="keep one row per deck and card, with the total quantity")

    # Card names: one spelling per card, and known to the card table if there is one.
    findings: list[Finding] = []
    card_info = None
    known = None
    if card_table is not None:
        card_info, known = _card_info(card_table, cfg, problems)
    counts = _counts(card_codes, len(card_names))
    canonical, name_findings, unknown = _name_variants(card_names, counts, known, "card name")
    if spellings is None:
        findings.extend(look_alike_findings(merged_cards, "card name"))
        findings.extend(name_findings)
    else:
        canonical = [spellings.cards.get(variant_key(n), c) for n, c in zip(card_names, canonical)]
    unknown = [i for i in unknown if card_names[i]]
    if unknown:
        first = _first_positions(card_codes, np.array(unknown, dtype=np.int64))
        pos = np.array(sorted(first.values()), dtype=np.int64)
        choices = list(known.values()) if known else []
        values = [card_names[card_codes[p]] for p in pos[:ERRORS_PER_PROBLEM]]
        hints = [difflib.get_close_matches(v, choices, n=1) for v in values]
        problems.flag(cards, pos, f"card is not in the card table {card_table.file}", column="card",
                      values=values, notes=[f" (did you mean {visible(h[0])}?{told_apart(v, h[0])})" if h else ""
                                                              for v, h in zip(values, hints)],
                      fix="add the card to the card table, or correct its spelling")

    if spellings is None:
        findings.extend(d.leader_findings)

    problems.raise_if_any()

    # -- assemble
    leader = pd.Series(np.asarray(d.leader_canon, dtype=object)[d.leader_codes], dtype="str")
    present = set(season.unique().tolist())
    first_date: dict[str, pd.Timestamp] = {}
    if dates is not None and dates.notna().any():
        season_codes, season_names = _codes(season)  # grouping by a few codes, not a million texts
        first_date = {season_names[k]: v for k, v in pd.Series(dates.to_numpy()).groupby(season_codes).min().dropna().items()}
    seasons = _season_order(present, cfg, calendar, first_date)
    decks_out = pd.DataFrame({
        "deck_id": d.deck_id, "season": season.reset_index(drop=True), "leader": leader,
        "wins": results["wins"], "losses": results["losses"],
        "event": extras["event"].reset_index(drop=True), "player": extras["player"].reset_index(drop=True),
        "title": extras["title"].reset_index(drop=True),
    })[list(DECK_COLUMNS)]
    decks_out = decks_out.iloc[np.argsort(deck_rank[deck_codes], kind="stable")].reset_index(drop=True)

    # The long-form table as categoricals with sorted categories (so sorting by them is sorting by
    # name): a deck id's code is its row in the deck table, a card's its place in name order.
    key = None  # no longer needed: up to 8 bytes a row
    qty = quantity
    del quantity
    deck_row, card_code = cdeck_codes, card_codes
    if not in_order:
        qty, deck_row, card_code = qty[order], deck_row[order], card_code[order]
    deck_row = row_deck if same_decks and in_order else deck_rank[where_in_decks][deck_row]
    del row_deck
    card_list = sorted(set(canonical))
    column_of = pd.Index(card_list).get_indexer(canonical).astype(_CODE)
    if not _is_arange(column_of):  # names read sorted and spelt once (the usual case) are their columns already
        card_code = column_of[card_code]
    if any(c != n for c, n in zip(canonical, card_names)):
        # Spellings that became one name may now sit twice in a deck: add them up and re-sort.
        before = qty.size
        key = deck_row * np.int64(len(card_list)) + card_code
        unique_key, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        qty = np.bincount(inverse, weights=qty, minlength=unique_key.size).astype(np.int64)
        deck_row, card_code = deck_row[first], card_code[first]
        if qty.size < before:
            findings.append(added_up_finding(before - qty.size))
    cards_out = pd.DataFrame(copy=False, data={
        "deck_id": coded(deck_row.astype(np.int32, copy=False), pd.Index(decks_out["deck_id"], dtype="str")),
        "card": coded(card_code, pd.Index(card_list, dtype="str")),  # card_list is sorted and distinct
        "quantity": narrow_counts(qty),
    })
    return DeckData(decks=decks_out, cards=cards_out, card_info=card_info, seasons=seasons,
                    findings=tuple(findings))


def added_up_finding(rows: int) -> Finding:
    """The finding for card rows whose copies were added to another spelling's row of the same deck."""
    return Finding("name-variants", f"{rows} card row(s) named a card a deck already "
                   "listed under another spelling; their copies were added up")


def narrow_counts(values: np.ndarray) -> np.ndarray:
    """Copies (whole numbers of 1 or more) in the narrowest signed integer type that holds the
    largest: int8 for the usual 1 to 127. Tens of millions of rows are an eighth of int64's size
    wherever they are cut, copied or gathered later."""
    low, high = (int(values.min()), int(values.max())) if values.size else (0, 0)
    kind = narrowest_int(low, high)
    if kind is None:  # never from read data (quantities are bounded by QUANTITY_MAX): refuse rather than wrap
        raise OverflowError(f"copies from {low} to {high} fit no signed 64-bit integer")
    return values.astype(kind, copy=False)


def _counts(codes: np.ndarray, size: int) -> np.ndarray:
    """``np.bincount(codes, minlength=size)`` a block at a time: bincount turns its input
    into 8-byte integers first, a copy of tens of millions of values at once otherwise."""
    counts = np.zeros(size, dtype=np.int64)
    step = 1 << 20
    for start in range(0, codes.size, step):
        counts += np.bincount(codes[start:start + step], minlength=size)
    return counts


def _rank(names: list[str]) -> np.ndarray:
    """Position of each name in sorted order (code point order, as Python sorts text)."""
    rank = np.empty(len(names), dtype=_CODE)
    try:
        # Arrow sorts UTF-8 bytes, which is code point order, many times faster than Python objects.
        by_name = pc.sort_indices(pa.array(names, pa.string())).to_numpy()
    except (pa.ArrowException, UnicodeEncodeError):  # lone surrogates cannot be UTF-8
        by_name = np.argsort(np.asarray(names, dtype=object), kind="stable")
    rank[by_name] = np.arange(len(names), dtype=_CODE)
    return rank


def _is_arange(values: np.ndarray) -> bool:
    """True when ``values`` is 0, 1, 2, ...: a lookup through it changes nothing."""
    return values.size == 0 or (int(values[0]) == 0 and int(values[-1]) == values.size - 1
                                and bool((np.diff(values) == 1).all()))


def _argsort(key: np.ndarray, stable: bool = False) -> np.ndarray | None:
    """Order of ``key``, or None when it is already sorted (the usual case, found in one pass)."""
    if key.size < 2 or bool(np.all(key[1:] >= key[:-1])):
        return None
    return np.argsort(key, kind="stable" if stable else None)


def _text(uniques: list[str], codes: np.ndarray) -> pd.Series:
    """A text column built from distinct values and codes without a Python-object detour."""
    return pd.Series(pd.Index(uniques, dtype="str").take(codes), dtype="str")


def _card_info(table: Table, cfg: Config, problems: _Problems) -> tuple[pd.DataFrame, dict[str, str]]:
    """The card table, card and type first, and its names by variant key."""
    frame = table.frame
    names = _cleaned(frame["card"], names=True)
    written = frame["card"].reset_index(drop=True)
    empty = np.flatnonzero((names == "").to_numpy())
    problems.flag(table, empty, "card name is empty", column="card", fix="fill in the card's name, or delete the row")
    keys = names.map(variant_key)
    dup = np.flatnonzero(keys.duplicated().to_numpy() & (names != "").to_numpy())
    if dup.size:
        first = {}
        for i, k in enumerate(keys.tolist()):
            first.setdefault(k, i)
        shown = dup[:ERRORS_PER_PROBLEM]
        problems.flag(table, dup, "card listed twice (names differ at most by case, spacing or look-alike "
                      "characters: Unicode NFC, invisible format characters)", column="card",
                      values=[clean_text(str(written.iloc[p])) for p in shown],
                      notes=[f" (also row {table.where(np.array([first[keys.iloc[p]]]))[0][1]}: "
                             f"{visible(clean_text(str(written.iloc[first[keys.iloc[p]]])))})" for p in shown],
                      fix="keep one row per card")
    known = {}
    for name, key in zip(names.tolist(), keys.tolist()):
        if name:
            known.setdefault(key, name)
    extra_wanted = list(cfg["columns.card_extra"])
    extras = [c for c in frame.columns if c not in ("card", "type")]
    if extra_wanted:
        shown = {table.names.get(c, c): c for c in extras}
        absent = [c for c in extra_wanted if c not in shown]
        if absent:
            have = ", ".join(f"'{c}'" for c in shown) or "none"
            for c in absent:
                problems.errors.append(DataError(table.file, f"missing column '{c}' named in columns.card_extra (further columns: {have})",
                                                 row=1, column=c, fix="correct columns.card_extra, or add the column"))
        extras = [shown[c] for c in extra_wanted if c in shown]
    out = pd.DataFrame({"card": names, "type": _cleaned(frame["type"])})
    for c in extras:
        out[table.names.get(c, c)] = _maybe_numbers(frame[c])
    out = out[out["card"] != ""].drop_duplicates("card").sort_values("card", kind="stable").reset_index(drop=True)
    return out, known


def _maybe_numbers(column: pd.Series) -> pd.Series:
    """A further card-table column as numbers when every filled cell is one (so costs sort as numbers)."""
    if not (pd.api.types.is_string_dtype(column.dtype) or column.dtype == object):
        return column.reset_index(drop=True)
    text = pd.Series(column.to_numpy(dtype=object), dtype="str").fillna("").str.strip()
    filled = (text != "").to_numpy()
    if not filled.any():
        return text.where(filled)
    try:
        numbers = pd.to_numeric(text[filled])
    except (ValueError, TypeError):
        return pd.Series(column.to_numpy(), dtype="str").where(filled)
    out = pd.Series(pd.array([pd.NA] * len(text), dtype="Float64"))
    out[filled] = numbers.to_numpy(dtype=float)
    whole = np.isfinite(numbers.to_numpy(dtype=float)).all() and (numbers % 1 == 0).all()
    return out.astype("Int64") if whole and (out.abs() < 2 ** 53).fillna(True).all() else out
