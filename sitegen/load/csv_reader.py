"""Reading a CSV file's columns (see :func:`sitegen.load.tables.read_table`): the header and its
separator, pyarrow's fast read, and on a refusal the row to blame (bad UTF-8, a row of the wrong width)."""
from __future__ import annotations

import codecs
import csv
import mmap
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv

from ..errors import DataError
from .arrow_columns import arrow_numbers, as_categories


#: Bytes looked at to tell text from binary before parsing.
_SNIFF_BYTES = 1 << 16

#: Largest single CSV cell the csv module accepts when diagnosing a file.
_FIELD_LIMIT = 1 << 20


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


def csv_header(path: Path) -> tuple[list[str], str]:
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


def read_csv(path: Path, wanted: dict[str, str], numeric: frozenset[str],
              categorical: frozenset[str] = frozenset(), guess: dict[str, pd.Series] | None = None,
              delimiter: str = ",") -> pd.DataFrame:
    """The ``wanted`` columns of a CSV file (logical name -> the file's name), read by pyarrow.

    The ``numeric`` columns are parsed by pyarrow when every cell is a plain
    whole number or empty, as 16-bit numbers first (a quarter of the memory
    of 64-bit, which on a large file is most of the parse), then 64-bit;
    otherwise the file is read again as text, and the rows to blame are
    found later, where they can be named. When pyarrow refuses the file,
    :func:`_read_csv_slow` blames a row, or else reads it with pandas.
    """
    raw_names = list(dict.fromkeys(wanted.values()))
    whole = [wanted[c] for c in numeric if c in wanted]
    try:
        table = None
        # 16-bit numbers first (copies of a card); a count beyond them (or any other refusal) tries
        # 64-bit, then text.
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
                columns[name] = as_categories(column, (guess or {}).get(name))
            elif name in whole and pa.types.is_integer(column.type):
                columns[name] = arrow_numbers(column)
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
