"""Reading one CSV or Parquet table, with every file-level problem as a DataError.

The format follows the file name: ``.csv`` is CSV (RFC 4180, UTF-8, an
optional byte-order mark), ``.parquet`` or ``.pq`` is Parquet. CSV is read
with pyarrow (fast, multi-threaded, only the needed columns); when pyarrow
refuses a file the csv module finds the row to blame, and the pandas C
engine is the last resort (:mod:`.csv_reader`; Parquet: :mod:`.parquet_reader`).
Every CSV value but those of the number columns is read as text, so ids
keep their leading zeros and a card called ``NA`` stays a card; a number
column is read as numbers when every cell is a plain whole number, else as
text, and checked later, where the row can be named.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import partial
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from ..errors import DataError, DataErrors
from .csv_reader import OTHER_DELIMITERS, csv_header, read_csv
from .origin import Origin, TableOrigin
from .parquet_reader import not_parquet, parquet_header, read_parquet


CSV_SUFFIXES = (".csv",)
PARQUET_SUFFIXES = (".parquet", ".pq")


@dataclass(frozen=True)
class Table:
    """One table as read: ``frame`` has logical column names (deck_id, card...).

    ``names`` maps each logical name to the column's name in the file, for
    messages; ``origin`` turns row positions into (file, spreadsheet row).
    """

    file: str
    frame: pd.DataFrame
    origin: Origin
    names: dict[str, str] = field(default_factory=dict)
    column_origins: dict[str, Origin] = field(default_factory=dict)

    def where(self, positions: np.ndarray, column: str | None = None) -> list[tuple[str, int]]:
        """(file, row) of each row position; some columns of a decklist sit on their own line."""
        origin = self.column_origins.get(column, self.origin) if column else self.origin
        return origin.where(positions)


def _suffix(path: Path) -> str:
    return path.suffix.lower()


def _check_file(path: Path, setting: str) -> None:
    """Fail early on a missing, empty or mis-named file."""
    if not path.exists():
        raise DataError(path, "file not found", fix=f"check the path given in setting '{setting}' (relative to the config file)")
    if path.is_dir():
        raise DataError(path, "is a folder, not a file", fix=f"give a CSV or Parquet file in setting '{setting}'")
    if _suffix(path) not in CSV_SUFFIXES + PARQUET_SUFFIXES:
        raise DataError(path, f"unknown table format '{path.suffix or '(no extension)'}'",
                        fix="name the file .csv for CSV or .parquet/.pq for Parquet")
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise DataError(path, f"cannot be read: {exc.strerror}", fix="check the file's permissions") from None
    if size == 0:
        raise DataError(path, "empty file (no header, no rows)", fix="give a table with a header row and one row per deck")


def read_table(
    path: Path,
    *,
    setting: str,
    required: dict[str, str],
    optional: dict[str, str] | None = None,
    numeric: frozenset[str] = frozenset(),
    categorical: frozenset[str] = frozenset(),
    all_columns: bool = False,
    deck_ids: pd.Series | None = None,
) -> Table:
    """Read the columns a stage needs from one table file.

    ``required`` and ``optional`` map logical names to the file's column
    names; a missing required column is an error that lists the columns the
    file has, a missing optional one is left out. ``numeric`` names logical
    columns a file may give as numbers (a Parquet file's own number columns;
    a CSV column whose every cell is a plain whole number); everything else
    becomes text. ``categorical`` names text columns of few distinct values over
    many rows (the long-form table's deck ids and card names): they are read
    dictionary-encoded and come back as pandas categoricals, which costs a
    fraction of the time and memory of one string per row; every later
    per-row step works on their codes (32-bit or narrower). At 28.8M rows
    that is what makes loading take seconds and hundreds of MB rather than
    a minute and gigabytes. With ``all_columns`` every further column is
    kept under its own name (the card table). ``deck_ids``, the deck table's ids as read, is a guess at a
    categorical deck_id column's categories: when its rows come grouped by
    deck in that order, the guess is confirmed without hashing the ids again.
    """
    _check_file(path, setting)
    optional = optional or {}
    separated = ""
    if _suffix(path) in CSV_SUFFIXES:
        header, delimiter = csv_header(path)
        reader = partial(read_csv, delimiter=delimiter)
        separated = f"; read as {OTHER_DELIMITERS[delimiter]}-separated" if delimiter != "," else ""
        if len(header) == 1 and not separated:
            odd = sorted({c for c in header[0] if c in "|:^~"})
            if odd:
                separated = (f"; its header is one column holding {', '.join(repr(c) for c in odd)}: columns are "
                             "separated by commas, semicolons or tabs only")
    else:
        header = parquet_header(path)
        reader = read_parquet
    present = {name.strip(): name for name in header}
    missing = [(logical, col) for logical, col in required.items() if col not in present]
    if missing:
        shown = ", ".join(f"'{h}'" for h in present) or "none"
        errors = [
            DataError(path, f"missing column '{col}' (the file has {shown}{separated})", row=1, column=col,
                      fix=f"add the column or set columns.{_setting_of(logical)} to the name the file uses")
            for logical, col in missing
        ]
        raise errors[0] if len(errors) == 1 else DataErrors(errors)
    wanted = {logical: present[col] for logical, col in required.items()}
    wanted.update({logical: present[col] for logical, col in optional.items() if col in present})
    if all_columns:
        taken = set(wanted.values())
        for raw in header:
            if raw not in taken and raw.strip():
                name = raw.strip()
                while name in wanted:
                    name = f"{name}_extra"
                wanted[name] = raw
    guess = {wanted["deck_id"]: deck_ids} if deck_ids is not None and "deck_id" in categorical and "deck_id" in wanted else {}
    frame = reader(path, wanted, numeric, frozenset(wanted[c] for c in categorical if c in wanted), guess)
    if len(frame) == 0:
        raise DataError(path, "header only, no rows", row=2,
                        fix="add one row per deck (or card) under the header")
    names = {logical: raw.strip() for logical, raw in wanted.items()}
    return Table(str(path), frame, TableOrigin(path, is_csv=_suffix(path) in CSV_SUFFIXES), names)


def count_values(path: Path, *, setting: str, logical: str, column: str) -> dict[str, int]:
    """Rows per distinct value (as written; a missing value counts as '') of one text column.

    A Parquet column is read dictionary-encoded and counted row group by row
    group, never made into one value per row. Anything else (a CSV file, a
    column that is missing or not text) goes through :func:`read_table`,
    whose errors it raises.
    """
    if _suffix(path) in PARQUET_SUFFIXES:
        _check_file(path, setting)
        raw = {name.strip(): name for name in parquet_header(path)}.get(column)
        try:
            kind = pq.ParquetFile(path).schema_arrow.field(raw).type if raw is not None else None
            if kind is not None and (pa.types.is_string(kind) or pa.types.is_large_string(kind)):
                counts: dict[str, int] = {}
                for chunk in pq.read_table(path, columns=[raw], read_dictionary=[raw]).column(raw).chunks:
                    names = chunk.dictionary.to_pylist() + [""]  # the last one stands for a missing value
                    index = pc.fill_null(chunk.indices, len(names) - 1).to_numpy(zero_copy_only=False)
                    for name, n in zip(names, np.bincount(index, minlength=len(names)).tolist()):
                        if n:
                            counts[name or ""] = counts.get(name or "", 0) + n
                return counts
        except Exception as exc:  # pyarrow raises several types for a corrupt file
            raise not_parquet(path, exc) from None
    frame = read_table(path, setting=setting, required={logical: column}, categorical=frozenset({logical})).frame
    return {str(k): int(v) for k, v in frame[logical].value_counts(sort=False).items() if v}


def _setting_of(logical: str) -> str:
    return {"card": "card", "name": "card_name", "type": "card_type"}.get(logical, logical)
