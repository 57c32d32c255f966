"""Text columns as integer codes of their distinct values, and the code arithmetic the checks share.

Names are cleaned once per distinct value, not once per row
(:func:`text_codes`), and a column's codes are gathered, ranked, counted and
sorted as numpy integers, so tens of millions of rows take seconds.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from .arrow_columns import arrow_text
from .names import clean_name, clean_text, look_alikes


#: Integer codes of distinct values: numpy gathers with 32-bit indices several times faster than with 64-bit.
CODE = np.int32
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
    new_code = (np.cumsum(used) - 1).astype(CODE)
    return new_code[codes], [c for c, u in zip(categories, used) if u]


# Characters clean_text trims (Python's str.isspace set, C0 controls, DEL, BOM), for a vectorised pre-check.
_EDGE_CLASS = "[\\x00-\\x20\\x7f\\x85\\xa0\\x{1680}\\x{2000}-\\x{200a}\\x{2028}\\x{2029}\\x{202f}\\x{205f}\\x{3000}\\x{feff}]"
_NEEDS_TRIM = f"^{_EDGE_CLASS}|{_EDGE_CLASS}$"


def text_codes(series: pd.Series, *, names: bool = False,
           merged: list[tuple[str, list[tuple[str, int]]]] | None = None) -> tuple[np.ndarray, list[str]]:
    """Integer codes of the cleaned values and the cleaned distinct values.

    ``names``: the values are names, cleaned by :func:`~.names.clean_name` (one form for look-alike
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
        codes = codes.astype(CODE)  # a categorical's own codes stay as narrow as they are (no copy)
    if not changed:
        return codes, values
    codes2, uniq2 = pd.factorize(pd.Series(values, dtype=object), sort=False)
    if written is not None and len(uniq2) < len(values):
        look_alikes(written, values, codes, merged)
    return np.asarray(codes2, dtype=CODE)[codes], [str(u) for u in uniq2]


def cleaned_column(series: pd.Series, *, names: bool = False,
             merged: list[tuple[str, list[tuple[str, int]]]] | None = None) -> pd.Series:
    codes, uniques = text_codes(series, names=names, merged=merged)
    out = text_column(uniques, codes)
    out.index = series.index
    return out


def distinct_codes(series: pd.Series) -> tuple[np.ndarray, list[str], np.ndarray] | None:
    """Codes, values and sort ranks of a text column whose values are distinct and need no
    cleaning (a deck table's ids, as a rule), or None when they are not.

    One sort of the values, needed for the ranks anyway, shows that no two
    are equal, so the hash table of :func:`text_codes` is never built.
    """
    values = arrow_text(series)
    if values is None or values.null_count or len(values) < 2:
        return None
    if needs_trim(values).any():
        return None
    every = np.arange(len(values), dtype=CODE)
    if pc.all(pc.greater(values[1:], values[:-1])).as_py():
        return every, values.to_pylist(), every  # ascending already (ids written in order): no sort
    by_name = pc.sort_indices(values)
    in_order = values.take(by_name)
    if pc.any(pc.equal(in_order[1:], in_order[:-1])).as_py():
        return None
    rank = np.empty(len(values), dtype=CODE)
    rank[by_name.to_numpy()] = every
    return every, values.to_pylist(), rank


def needs_trim(values: pa.Array) -> np.ndarray:
    """For each text of ``values`` (no nulls), whether it starts or ends with a character
    :func:`~.names.clean_text` trims. Each text's first and last byte are looked at first: ASCII
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


def trimmed_column(series: pd.Series) -> pd.Series:
    """A text column cleaned as :func:`~.names.clean_text` does, with a fresh index; only the rows
    that need it are touched (for columns of mostly distinct values: players, titles)."""
    values = arrow_text(series)
    if values is None:
        return cleaned_column(series).reset_index(drop=True)
    values = pc.fill_null(values, "")
    flagged = np.flatnonzero(needs_trim(values))
    out = pd.Series(values.to_pandas(), dtype="str")
    if flagged.size:
        out.iloc[flagged] = [clean_text(v) for v in out.iloc[flagged].tolist()]
    return out


def text_column(uniques: list[str], codes: np.ndarray) -> pd.Series:
    """A text column built from distinct values and codes without a Python-object detour."""
    return pd.Series(pd.Index(uniques, dtype="str").take(codes), dtype="str")


def name_rank(names: list[str]) -> np.ndarray:
    """Position of each name in sorted order (code point order, as Python sorts text)."""
    rank = np.empty(len(names), dtype=CODE)
    try:
        # Arrow sorts UTF-8 bytes, which is code point order, many times faster than Python objects.
        by_name = pc.sort_indices(pa.array(names, pa.string())).to_numpy()
    except (pa.ArrowException, UnicodeEncodeError):  # lone surrogates cannot be UTF-8
        by_name = np.argsort(np.asarray(names, dtype=object), kind="stable")
    rank[by_name] = np.arange(len(names), dtype=CODE)
    return rank


def is_arange(values: np.ndarray) -> bool:
    """True when ``values`` is 0, 1, 2, ...: a lookup through it changes nothing."""
    return values.size == 0 or (int(values[0]) == 0 and int(values[-1]) == values.size - 1
                                and bool((np.diff(values) == 1).all()))


def sort_order(key: np.ndarray, stable: bool = False) -> np.ndarray | None:
    """Order of ``key``, or None when it is already sorted (the usual case, found in one pass)."""
    if key.size < 2 or bool(np.all(key[1:] >= key[:-1])):
        return None
    return np.argsort(key, kind="stable" if stable else None)


def code_counts(codes: np.ndarray, size: int) -> np.ndarray:
    """``np.bincount(codes, minlength=size)`` a block at a time: bincount turns its input
    into 8-byte integers first, a copy of tens of millions of values at once otherwise."""
    counts = np.zeros(size, dtype=np.int64)
    step = 1 << 20
    for start in range(0, codes.size, step):
        counts += np.bincount(codes[start:start + step], minlength=size)
    return counts


def first_positions(codes: np.ndarray, wanted: np.ndarray) -> dict[int, int]:
    """First row position of each wanted code."""
    uniq, first = np.unique(codes, return_index=True)
    found = dict(zip(uniq.tolist(), first.tolist()))
    return {int(c): found[int(c)] for c in wanted if int(c) in found}


def empty_code(names: list[str]) -> int | None:
    """The code of the empty name among distinct ``names``, if there is one."""
    try:
        return names.index("")
    except ValueError:
        return None


def named_codes(names: list[str], empty: int | None) -> np.ndarray:
    """True for each distinct name but the empty one."""
    out = np.ones(len(names), dtype=bool)
    if empty is not None:
        out[empty] = False
    return out
