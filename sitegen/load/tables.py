"""Reading one CSV or Parquet table, with every file-level problem as a DataError.

The format follows the file name: ``.csv`` is CSV (RFC 4180, UTF-8, an
optional byte-order mark), ``.parquet`` or ``.pq`` is Parquet. CSV is read
with pyarrow (fast, multi-threaded, only the needed columns); when pyarrow
refuses a file the csv module finds the row to blame, and the pandas C
engine is the last resort. Every CSV value is read as text so ids keep their
leading zeros and a card called ``NA`` stays a card; numbers are checked
later, where the row can be named.
"""
from __future__ import annotations

import codecs
import csv
import mmap
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from ..errors import DataError, DataErrors
from ..model import coded, narrowest_int
from .origin import Origin, TableOrigin

CSV_SUFFIXES = (".csv",)
PARQUET_SUFFIXES = (".parquet", ".pq")

#: Bytes looked at to tell text from binary before parsing.
_SNIFF_BYTES = 1 << 16
#: Largest single CSV cell the csv module accepts when diagnosing a file.
_FIELD_LIMIT = 1 << 20


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
    columns a Parquet file may keep as numbers (everything else becomes
    text). ``categorical`` names text columns of few distinct values over
    many rows (the long-form table's deck ids and card names): they are read
    dictionary-encoded and come back as pandas categoricals, which costs a
    fraction of the time and memory of one string per row. With
    ``all_columns`` every further column is kept under its own name (the
    card table). ``deck_ids``, the deck table's ids as read, is a guess at a
    categorical deck_id column's categories: when its rows come grouped by
    deck in that order, the guess is confirmed without hashing the ids again.
    """
    _check_file(path, setting)
    optional = optional or {}
    separated = ""
    if _suffix(path) in CSV_SUFFIXES:
        header, delimiter = _csv_header(path)
        reader = partial(_read_csv, delimiter=delimiter)
        separated = f"; read as {OTHER_DELIMITERS[delimiter]}-separated" if delimiter != "," else ""
        if len(header) == 1 and not separated:
            odd = sorted({c for c in header[0] if c in "|:^~"})
            if odd:
                separated = (f"; its header is one column holding {', '.join(repr(c) for c in odd)}: columns are "
                             "separated by commas, semicolons or tabs only")
    else:
        header = _parquet_header(path)
        reader = _read_parquet
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
        raw = {name.strip(): name for name in _parquet_header(path)}.get(column)
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
            raise _not_parquet(path, exc) from None
    frame = read_table(path, setting=setting, required={logical: column}, categorical=frozenset({logical})).frame
    return {str(k): int(v) for k, v in frame[logical].value_counts(sort=False).items() if v}


def _setting_of(logical: str) -> str:
    return {"card": "card", "name": "card_name", "type": "card_type"}.get(logical, logical)


# -- CSV -----------------------------------------------------------------------

def _sniff(path: Path) -> bytes:
    with open(path, "rb") as f:
        head = f.read(_SNIFF_BYTES)
    if b"\x00" in head:
        at = head.index(b"\x00")
        raise DataError(path, f"binary data, not CSV text (a NUL byte at byte offset {at})",
                        row=head[:at].count(b"\n") + 1,
                        fix="export the table as CSV (UTF-8 text), or give a Parquet file a .parquet name")
    if head.startswith((b"PAR1", b"PK\x03\x04", b"\x1f\x8b")):
        raise DataError(path, "binary data (Parquet, zip or gzip), not CSV text",
                        fix="give the file its real extension, or export it as CSV (UTF-8 text)")
    return head


def _find_bad_utf8(path: Path) -> DataError | None:
    """Scan the whole file for invalid UTF-8 (only after a reader complained)."""
    decoder = codecs.getincrementaldecoder("utf-8")()
    offset = 0
    lines = 0
    with open(path, "rb") as f:
        while True:
            chunk = f.read(1 << 22)
            if not chunk:
                try:
                    decoder.decode(b"", final=True)
                except UnicodeDecodeError:
                    return DataError(path, f"not valid UTF-8 text (the file ends inside a character, byte offset {offset})",
                                     fix="save the file as UTF-8 (in a spreadsheet: CSV UTF-8)")
                return None
            try:
                decoder.decode(chunk)
            except UnicodeDecodeError as exc:
                # The decoder may hold up to 3 bytes from the previous chunk.
                at = max(offset + exc.start - len(exc.object) + len(chunk), offset)
                local = at - offset
                line = lines + chunk[:local].count(b"\n") + 1
                bad = chunk[local] if local < len(chunk) else 0
                return DataError(path, f"not valid UTF-8 text (bad byte 0x{bad:02x} at byte offset {at}, line {line})",
                                 fix="save the file as UTF-8 (in a spreadsheet: CSV UTF-8)")
            lines += chunk.count(b"\n")
            offset += len(chunk)


#: Separators read besides the comma, found from the header row: what spreadsheets save in locales
#: whose decimal mark is a comma (semicolon), and tab-separated exports.
OTHER_DELIMITERS = {";": "semicolon", "\t": "tab"}


def _csv_header(path: Path) -> tuple[list[str], str]:
    """The header row's column names and the file's separator: a comma, or a semicolon or tab when
    the header holds no comma but one of those (the header row alone decides)."""
    head = _sniff(path)
    # The sniffed prefix may end inside a character: not an error yet.
    try:
        codecs.getincrementaldecoder("utf-8")().decode(head, final=len(head) < _SNIFF_BYTES)
    except UnicodeDecodeError:
        raise (_find_bad_utf8(path) or DataError(path, "not valid UTF-8 text", fix="save the file as UTF-8")) from None
    csv.field_size_limit(_FIELD_LIMIT)
    delimiter = ","
    try:
        record = _first_record(path, delimiter)
        if len(record) == 1:
            found = [d for d in OTHER_DELIMITERS if d in record[0]]
            if found:
                delimiter = max(found, key=record[0].count)
                record = _first_record(path, delimiter)
    except UnicodeDecodeError:
        raise (_find_bad_utf8(path) or DataError(path, "not valid UTF-8 text", fix="save the file as UTF-8")) from None
    except csv.Error as exc:
        raise DataError(path, f"the header row is not valid CSV: {exc}", row=1,
                        fix="give the table a header row of column names, comma-separated") from None
    if not record or all(not h.strip() for h in record):
        raise DataError(path, "no header row (the file holds only blank lines)", row=1,
                        fix="give the table a header row of column names")
    seen: dict[str, int] = {}
    for i, name in enumerate(record, start=1):
        key = name.strip()
        if key in seen and key:  # unnamed trailing columns (a spreadsheet's extra commas) may repeat
            raise DataError(path, f"column name '{key}' appears twice in the header (columns {seen[key]} and {i})",
                            row=1, column=key, fix="give every column its own name")
        seen[key] = i
    return record, delimiter


def _first_record(path: Path, delimiter: str) -> list[str]:
    """The first non-blank record of a CSV file."""
    with open(path, encoding="utf-8-sig", newline="") as f:
        for record in csv.reader(f, delimiter=delimiter):
            if record:
                return record
    return []


#: Arrow type of a dictionary-encoded text column.
_DICTIONARY = pa.dictionary(pa.int32(), pa.string())


def _read_csv(path: Path, wanted: dict[str, str], numeric: frozenset[str],
              categorical: frozenset[str] = frozenset(), guess: dict[str, pd.Series] | None = None,
              delimiter: str = ",") -> pd.DataFrame:
    raw_names = list(dict.fromkeys(wanted.values()))
    # Numbers are parsed by pyarrow when every cell is a plain whole number or empty; otherwise the
    # file is read again as text, and the rows to blame are found where they can be named.
    whole = [wanted[c] for c in numeric if c in wanted]
    try:
        table = None
        # 16-bit numbers first (copies of a card): a quarter of the memory of 64-bit, which on a large
        # file is most of the parse; a count beyond them (or any other refusal) tries 64-bit, then text.
        for kind in ((pa.int16(), pa.int64()) if whole else ()):
            try:
                table = _arrow_csv(path, raw_names, categorical, frozenset(whole), kind, delimiter)
                break
            except (pa.ArrowInvalid, pa.ArrowException, ValueError, OSError):
                continue
        if table is None:
            table = _arrow_csv(path, raw_names, categorical, frozenset(), delimiter=delimiter)
        for name in whole:
            if name in table.column_names and table.column(name).null_count:
                # Empty cells: back to text, so they are told apart from bad values where rows are checked.
                column = pc.fill_null(pc.cast(table.column(name), pa.string()), "")
                table = table.set_column(table.column_names.index(name), name, column)
        columns: dict[str, pd.Series] = {}
        for name in table.column_names:  # a column at a time, its Arrow form dropped once converted
            column = table.column(name)
            if name in categorical:
                columns[name] = _as_categories(column, (guess or {}).get(name))
            elif name in whole and pa.types.is_integer(column.type):
                columns[name] = _numbers(column)
            else:
                columns[name] = pd.Series(column.to_pandas(), copy=False)
            table = table.drop_columns([name])
            del column
        frame = pd.DataFrame(columns, copy=False)
        del table, columns
        pa.default_memory_pool().release_unused()
    except (pa.ArrowInvalid, pa.ArrowException, ValueError, OSError) as exc:
        frame = _read_csv_slow(path, raw_names, str(exc), delimiter)
    return pd.DataFrame({logical: frame[raw] for logical, raw in wanted.items()}, copy=False)


def _arrow_csv(path: Path, raw_names: list[str], categorical: frozenset[str], whole: frozenset[str],
               number: pa.DataType = pa.int64(), delimiter: str = ",") -> pa.Table:
    def kind(name: str) -> pa.DataType:
        return _DICTIONARY if name in categorical else number if name in whole else pa.string()

    return pacsv.read_csv(
        path,
        # Without any quote character no value can hold a newline, and pyarrow may then
        # split the file into blocks at any newline (several times faster on big files).
        parse_options=pacsv.ParseOptions(delimiter=delimiter, newlines_in_values=_has_quote(path)),
        convert_options=pacsv.ConvertOptions(
            include_columns=raw_names,
            column_types={name: kind(name) for name in raw_names},
            strings_can_be_null=False,
            quoted_strings_can_be_null=False,
        ),
    )


def _has_quote(path: Path) -> bool:
    try:
        with open(path, "rb") as f, mmap.mmap(f.fileno(), 0, access=mmap.ACCESS_READ) as m:
            return m.find(b'"') >= 0
    except (OSError, ValueError):
        return True


def _read_csv_slow(path: Path, raw_names: list[str], first_complaint: str, delimiter: str = ",") -> pd.DataFrame:
    """After pyarrow refused the file: blame a row, else try the pandas C engine."""
    bad = _find_bad_utf8(path)
    if bad is not None:
        raise bad
    problem = _diagnose_csv(path, delimiter)
    if problem is not None:
        raise problem
    try:
        frame = pd.read_csv(path, engine="c", sep=delimiter, usecols=raw_names, dtype=str, keep_default_na=False,
                            na_filter=False, encoding="utf-8-sig")
    except Exception as exc:  # any parser failure becomes a located message, never a traceback
        raise DataError(path, f"cannot be read as CSV: {first_complaint.splitlines()[0] if first_complaint else exc}",
                        fix="check the file is comma-separated UTF-8 text with one header row") from None
    return frame


def _diagnose_csv(path: Path, delimiter: str = ",") -> DataError | None:
    """Find the first record whose field count differs from the header's."""
    csv.field_size_limit(_FIELD_LIMIT)
    reader = None
    try:
        with open(path, encoding="utf-8-sig", newline="") as f:
            reader = csv.reader(f, strict=False, delimiter=delimiter)
            width = None
            for number, record in enumerate(reader, start=1):
                if not record:
                    continue
                if width is None:
                    width = len(record)
                    continue
                if len(record) != width:
                    return DataError(path, f"row has {len(record)} fields but the header has {width}",
                                     row=number, fix="quote values that hold commas (\"a, b\"), and give every row one value per column")
    except csv.Error as exc:
        return DataError(path, f"not valid CSV: {exc}", row=reader.line_num if reader is not None else None,
                         fix="check quotes are balanced and cells are not huge")
    except UnicodeDecodeError:
        return _find_bad_utf8(path)
    return None


# -- Parquet -------------------------------------------------------------------

def _not_parquet(path: Path, exc: Exception) -> DataError:
    first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
    return DataError(path, f"not a readable Parquet file ({first})",
                     fix="write the file with a Parquet writer (pandas to_parquet), or name a CSV file .csv")


def _parquet_header(path: Path) -> list[str]:
    try:
        return list(pq.ParquetFile(path).schema_arrow.names)
    except Exception as exc:  # pyarrow raises several types for a corrupt file
        raise _not_parquet(path, exc) from None


def _read_parquet(path: Path, wanted: dict[str, str], numeric: frozenset[str],
                  categorical: frozenset[str] = frozenset(), guess: dict[str, pd.Series] | None = None) -> pd.DataFrame:
    raw_names = list(dict.fromkeys(wanted.values()))
    as_category = categorical  # the file's own column names, as read_table passes them
    try:
        parquet = pq.ParquetFile(path)
        schema = parquet.schema_arrow
    except Exception as exc:  # pyarrow raises several types for a corrupt file
        raise _not_parquet(path, exc) from None
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
                raise _not_parquet(path, exc) from None
            if streamed is not None:
                out.update((name, streamed) for name in logicals)
                continue
        # Only text columns can be read dictionary-encoded; others are turned into text below.
        dictionary = raw in as_category and (pa.types.is_string(kind) or pa.types.is_large_string(kind))
        if dictionary and (guess or {}).get(raw) is not None:  # the card rows' deck ids, likely in runs
            try:
                runs = _runs_as_categories(_RowGroups(path, raw, parquet), guess[raw])
            except Exception as exc:  # pyarrow raises several types for a corrupt file
                raise _not_parquet(path, exc) from None
            if runs is not None:
                out.update((name, runs) for name in logicals)
                continue
        try:
            column = pq.read_table(path, columns=[raw], read_dictionary=[raw] if dictionary else None).column(raw)
        except Exception as exc:  # pyarrow raises several types for a corrupt file
            raise _not_parquet(path, exc) from None
        for logical in (name for name, r in wanted.items() if r == raw):
            if logical in numeric and (pa.types.is_integer(kind) or pa.types.is_floating(kind)):
                out[logical] = _numbers(column)
            elif raw in as_category:
                out[logical] = _as_categories(column, (guess or {}).get(raw))
            else:
                out[logical] = _as_text(column)
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
    """One text column of a Parquet file as :func:`_runs_as_categories` reads it: its chunks
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
    whole (:func:`_numbers`)."""
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


def _numbers(column: pa.ChunkedArray) -> pd.Series:
    """A numeric column as pandas; whole numbers without gaps in the narrowest signed type that
    holds them (copies of a card: int8, an eighth of the int64 a Parquet writer stores)."""
    kind = column.type
    if not pa.types.is_integer(kind) or column.null_count or len(column) == 0:
        return column.to_pandas()
    narrow = narrowest_int(*(v.as_py() for v in pc.min_max(column).values()))
    if narrow is None:
        return column.to_pandas()  # unsigned beyond int64
    values = np.empty(len(column), dtype=narrow)
    at = 0
    for chunk in column.chunks:
        values[at:at + len(chunk)] = chunk.to_numpy(zero_copy_only=False)
        at += len(chunk)
    return pd.Series(values, copy=False)


def _as_categories(column: pa.ChunkedArray, guess: pd.Series | None = None) -> pd.Series:
    """A text column as a pandas categorical of its distinct values: nulls become ''.
    ``guess``: the categories it probably has, in order (see :func:`read_table`)."""
    if not (pa.types.is_dictionary(column.type) and pa.types.is_string(column.type.value_type)):
        return pd.Series(pd.Categorical(_as_text(column)))
    runs = _runs_as_categories(column, guess)
    if runs is not None:
        return runs
    series = _chunks_as_categories(column) if column.num_chunks > 1 else pd.Series(column.to_pandas(), copy=False)
    if series.isna().any():
        if "" not in series.cat.categories:
            series = series.cat.add_categories([""])
        series = series.fillna("")
    return series


def _runs_as_categories(column: pa.ChunkedArray, guess: pd.Series | None = None) -> pd.Series | None:
    """A dictionary column whose equal values sit in runs (a long table grouped by deck) as a
    categorical, or None when it has nulls or few runs.

    Each chunk (row group) has a dictionary of its own. Unifying them hashes
    every chunk's values, and a deck id sits in one or two chunks only, so
    hashing the first value of each run, once, does the same work several
    times faster. Categories are in order of first appearance. When the
    runs' first values are exactly ``guess`` (the deck table's ids, in its
    order), nothing is hashed: ``guess`` is the categories.
    """
    if len(column) < 100_000 or column.null_count:
        return None
    heads, lengths = [], []
    for chunk in column.chunks:
        if len(chunk) == 0:
            continue
        if chunk.dictionary.null_count:
            return None
        index = chunk.indices.to_numpy(zero_copy_only=False)
        starts = np.flatnonzero(np.concatenate(([True], index[1:] != index[:-1])))
        if starts.size > max(index.size // 4, 1000):
            return None  # not in runs (card names): the usual unification is the cheaper
        heads.append(chunk.dictionary.take(pa.array(index[starts])).cast(pa.string()))
        lengths.append(np.diff(np.append(starts, index.size)))
    heads = pa.concat_arrays(heads)
    lengths = np.concatenate(lengths)
    # A run cut by a chunk boundary starts again in the next chunk: join the two.
    new_run = np.concatenate(([True], pc.not_equal(heads[1:], heads[:-1]).to_numpy(zero_copy_only=False)))
    if not new_run.all():
        starts = np.flatnonzero(new_run)
        heads, lengths = heads.filter(pa.array(new_run)), np.add.reduceat(lengths, starts)
    if guess is not None and len(guess) == len(heads):
        expected = _arrow_text(guess)
        if expected is not None and heads.equals(expected):
            return pd.Series(coded(np.repeat(np.arange(len(heads), dtype=np.int32), lengths),
                                   pd.Index(guess, dtype="str")), copy=False)
    encoded = pc.dictionary_encode(heads)
    codes = np.repeat(encoded.indices.to_numpy(zero_copy_only=False).astype(np.int32, copy=False),
                      lengths)
    return pd.Series(coded(codes, pd.Index(encoded.dictionary.to_pandas(), dtype="str")), copy=False)


def _chunks_as_categories(column: pa.ChunkedArray) -> pd.Series:
    """A dictionary column of many chunks (row groups) as one categorical, categories sorted
    (code point order, as Python sorts text), so a code's order is its name's. Each chunk's
    small dictionary is looked up among the categories by Arrow and its indices taken into
    one array; unifying the dictionaries in Arrow and converting makes two copies of every
    row instead."""
    chunks = [chunk for chunk in column.chunks if len(chunk)]
    dictionaries = [chunk.dictionary.cast(pa.string()) for chunk in chunks]
    names = pc.unique(pa.concat_arrays(dictionaries)).drop_null() if dictionaries else pa.array([], pa.string())
    names = names.take(pc.sort_indices(names))
    # Codes as narrow as pandas keeps them for this many categories, so it need not copy them.
    kind = np.int8 if len(names) < 127 else np.int16 if len(names) < 32_767 else np.int32
    codes = np.empty(len(column), dtype=kind)
    at, nulls = 0, False
    for chunk, dictionary in zip(chunks, dictionaries):
        n = len(chunk)
        lookup = pc.fill_null(pc.index_in(dictionary, value_set=names), -1).to_numpy(zero_copy_only=False)
        nulls = nulls or bool(chunk.null_count) or bool((lookup < 0).any())
        lookup = np.append(lookup.astype(kind), kind(-1))  # a null row's index: the last slot
        indices = chunk.indices
        if chunk.null_count:
            indices = indices.fill_null(len(lookup) - 1)
        # mode="clip": the indices are the chunk's own, and np.take buffers ``out`` in the default mode.
        np.take(lookup, indices.to_numpy(zero_copy_only=False), out=codes[at:at + n], mode="clip")
        at += n
    categories = pd.Index(names.to_pandas(), dtype="str")
    return pd.Series(pd.Categorical.from_codes(codes, dtype=pd.CategoricalDtype(categories), validate=nulls),
                     copy=False)


def _arrow_text(series: pd.Series) -> pa.Array | None:
    """A text column as one Arrow string array (no copy for Arrow-backed text), or None."""
    try:
        array = pa.chunked_array(series.array.__arrow_array__()).combine_chunks()
    except (AttributeError, TypeError, pa.ArrowException):
        return None
    return array.cast(pa.string()) if pa.types.is_large_string(array.type) else array


def _as_text(column: pa.ChunkedArray) -> pd.Series:
    """A Parquet column as text: nulls become empty strings."""
    kind = column.type
    if pa.types.is_dictionary(kind):
        column = column.cast(kind.value_type)
        kind = column.type
    if not (pa.types.is_string(kind) or pa.types.is_large_string(kind)):
        try:
            column = pc.cast(column, pa.string())
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            return pd.Series([("" if v is None else str(v)) for v in column.to_pylist()], dtype="str")
    column = pc.fill_null(column, "")
    return pd.Series(column.to_pandas(), dtype="str")
