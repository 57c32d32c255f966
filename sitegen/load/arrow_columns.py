"""Arrow columns as pandas columns: whole numbers as narrow as they fit, text with few distinct
values as categoricals (without hashing every row), other text as plain strings."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from ..model import coded, narrowest_int


def arrow_text(series: pd.Series) -> pa.Array | None:
    """A text column as one Arrow string array (no copy for Arrow-backed text), or None."""
    try:
        array = pa.chunked_array(series.array.__arrow_array__()).combine_chunks()
    except (AttributeError, TypeError, pa.ArrowException):
        return None
    return array.cast(pa.string()) if pa.types.is_large_string(array.type) else array


def arrow_numbers(column: pa.ChunkedArray) -> pd.Series:
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


def as_categories(column: pa.ChunkedArray, guess: pd.Series | None = None) -> pd.Series:
    """A text column as a pandas categorical of its distinct values: nulls become ''.
    ``guess``: the categories it probably has, in order (see :func:`~.tables.read_table`)."""
    if not (pa.types.is_dictionary(column.type) and pa.types.is_string(column.type.value_type)):
        return pd.Series(pd.Categorical(as_text(column)))
    runs = runs_as_categories(column, guess)
    if runs is not None:
        return runs
    series = chunks_as_categories(column) if column.num_chunks > 1 else pd.Series(column.to_pandas(), copy=False)
    if series.isna().any():
        if "" not in series.cat.categories:
            series = series.cat.add_categories([""])
        series = series.fillna("")
    return series


def runs_as_categories(column: pa.ChunkedArray, guess: pd.Series | None = None) -> pd.Series | None:
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
        expected = arrow_text(guess)
        if expected is not None and heads.equals(expected):
            return pd.Series(coded(np.repeat(np.arange(len(heads), dtype=np.int32), lengths),
                                   pd.Index(guess, dtype="str")), copy=False)
    encoded = pc.dictionary_encode(heads)
    codes = np.repeat(encoded.indices.to_numpy(zero_copy_only=False).astype(np.int32, copy=False),
                      lengths)
    return pd.Series(coded(codes, pd.Index(encoded.dictionary.to_pandas(), dtype="str")), copy=False)


def chunks_as_categories(column: pa.ChunkedArray) -> pd.Series:
    """A dictionary column of many chunks (row groups) as one categorical, categories sorted
    (code point order, as Python sorts text), so a code's order is its name's: the later
    lookups by name order (``card_rows._sort_order``, ``normalise._card_rows``) then change
    nothing and are skipped. Each chunk's small dictionary is looked up among the categories
    by Arrow and its indices taken into one array; unifying the dictionaries in Arrow and
    converting makes two copies of every row instead."""
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


def as_text(column: pa.ChunkedArray) -> pd.Series:
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
