"""Reading a Parquet file's columns (see :func:`sitegen.load.tables.read_table`) one column, and
where the statistics allow one row group, at a time, so the table is never held whole twice."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from ..errors import DataError
from ..model import narrowest_int
from .arrow_columns import arrow_numbers, as_categories, as_text, runs_as_categories


def not_parquet(path: Path, exc: Exception) -> DataError:
    first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
    return DataError(path, f"not a readable Parquet file ({first})",
                     fix="write the file with a Parquet writer (pandas to_parquet), or name a CSV file .csv")


def parquet_header(path: Path) -> list[str]:
    try:
        return list(pq.ParquetFile(path).schema_arrow.names)
    except Exception as exc:  # pyarrow raises several types for a corrupt file
        raise not_parquet(path, exc) from None


def read_parquet(path: Path, wanted: dict[str, str], numeric: frozenset[str],
                  categorical: frozenset[str] = frozenset(), guess: dict[str, pd.Series] | None = None) -> pd.DataFrame:
    raw_names = list(dict.fromkeys(wanted.values()))
    as_category = categorical  # the file's own column names, as read_table passes them
    try:
        parquet = pq.ParquetFile(path)
        schema = parquet.schema_arrow
    except Exception as exc:  # pyarrow raises several types for a corrupt file
        raise not_parquet(path, exc) from None
    out: dict[str, pd.Series] = {}
    # One column at a time, each turned into its pandas form before the next is read: Arrow's
    # buffers are then reused from column to column, and the table never sits whole in memory
    # beside its converted copy (fresh memory is what costs most on a virtual machine).
    for raw in raw_names:
        kind = schema.field(raw).type
        logicals = [name for name, r in wanted.items() if r == raw]
        if pa.types.is_integer(kind) and all(name in numeric for name in logicals):
            try:
                streamed = _numbers_by_row_group(parquet, raw)
            except Exception as exc:  # pyarrow raises several types for a corrupt file
                raise not_parquet(path, exc) from None
            if streamed is not None:
                out.update((name, streamed) for name in logicals)
                continue
        # Only text columns can be read dictionary-encoded; others are turned into text below.
        dictionary = raw in as_category and (pa.types.is_string(kind) or pa.types.is_large_string(kind))
        if dictionary and (guess or {}).get(raw) is not None:  # the card rows' deck ids, likely in runs
            try:
                runs = runs_as_categories(_RowGroups(path, raw, parquet), guess[raw])
            except Exception as exc:  # pyarrow raises several types for a corrupt file
                raise not_parquet(path, exc) from None
            if runs is not None:
                out.update((name, runs) for name in logicals)
                continue
        try:
            column = pq.read_table(path, columns=[raw], read_dictionary=[raw] if dictionary else None).column(raw)
        except Exception as exc:  # pyarrow raises several types for a corrupt file
            raise not_parquet(path, exc) from None
        for logical in (name for name, r in wanted.items() if r == raw):
            if logical in numeric and (pa.types.is_integer(kind) or pa.types.is_floating(kind)):
                out[logical] = arrow_numbers(column)
            elif raw in as_category:
                out[logical] = as_categories(column, (guess or {}).get(raw))
            else:
                out[logical] = as_text(column)
        del column
    frame = pd.DataFrame({logical: out[logical] for logical in wanted}, copy=False)
    del out
    pa.default_memory_pool().release_unused()  # Arrow's allocator keeps freed memory otherwise
    return frame


def _leaf(meta: pq.FileMetaData, raw: str) -> int | None:
    """The Parquet column (leaf) holding the top-level column ``raw``, whose row-group
    statistics describe it; None when there is not exactly one (a nested column)."""
    leaves = [j for j in range(meta.num_columns) if meta.schema.column(j).path == raw]
    return leaves[0] if len(leaves) == 1 else None


class _RowGroups:
    """One text column of a Parquet file as :func:`~.arrow_columns.runs_as_categories` reads it: its chunks
    read dictionary-encoded one row group at a time as they are iterated, so no more than one
    row group's indices are held (115 MB at 28.8M rows, when read whole). Its ``null_count``
    comes from the row groups' statistics; without them it is unknown (-1) and the column is
    read whole instead."""

    def __init__(self, path: Path, raw: str, parquet: pq.ParquetFile) -> None:
        self.path, self.raw, self.meta = path, raw, parquet.metadata
        leaf = _leaf(self.meta, raw)
        counts = []
        for i in range(self.meta.num_row_groups if leaf is not None else 0):
            stats = self.meta.row_group(i).column(leaf).statistics
            counts.append(stats.null_count if stats is not None and stats.has_null_count else None)
        self.null_count = sum(counts) if counts and None not in counts else -1

    def __len__(self) -> int:
        return self.meta.num_rows

    @property
    def chunks(self):
        parquet = pq.ParquetFile(self.path, read_dictionary=[self.raw])
        for i in range(self.meta.num_row_groups):
            yield from parquet.read_row_group(i, columns=[self.raw]).column(0).chunks


def _numbers_by_row_group(parquet: pq.ParquetFile, raw: str) -> pd.Series | None:
    """A whole-number column read one row group at a time into the narrowest type that the row
    groups' statistics allow, so it is never held whole as the 64-bit numbers a writer stores
    (230 MB at 28.8M rows, against 29 MB for copies of a card as int8). None when a row group
    has no statistics, or nulls, or values its statistics did not say: then the column is read
    whole (:func:`~.arrow_columns.arrow_numbers`)."""
    meta = parquet.metadata
    leaf = _leaf(meta, raw)
    if leaf is None or meta.num_row_groups == 0:
        return None
    lows, highs = [], []
    for i in range(meta.num_row_groups):
        stats = meta.row_group(i).column(leaf).statistics
        if stats is None or not stats.has_min_max or stats.null_count != 0:
            return None
        lows.append(int(stats.min))
        highs.append(int(stats.max))
    narrow = narrowest_int(min(lows), max(highs))
    if narrow is None:
        return None
    values = np.empty(meta.num_rows, dtype=narrow)
    at, seen_low, seen_high = 0, max(highs), min(lows)
    for i in range(meta.num_row_groups):
        column = parquet.read_row_group(i, columns=[raw]).column(0)
        for chunk in column.chunks:
            if chunk.null_count:
                return None
            if len(chunk) == 0:
                continue
            low, high = (v.as_py() for v in pc.min_max(chunk).values())
            if low < lows[i] or high > highs[i] or at + len(chunk) > len(values):
                return None  # statistics that do not hold: trust the values
            values[at:at + len(chunk)] = chunk.to_numpy(zero_copy_only=False)
            at += len(chunk)
            seen_low, seen_high = min(seen_low, low), max(seen_high, high)
    if at != len(values):
        return None
    tighter = narrowest_int(seen_low, seen_high) if at else narrow
    if tighter is not None and np.dtype(tighter).itemsize < values.itemsize:  # statistics wider than the values
        values = values.astype(tighter)
    return pd.Series(values, copy=False)
