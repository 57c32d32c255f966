"""Whole numbers in cells: copies of a card and games of a deck, checked, bounded and narrowed."""
from __future__ import annotations

import re

import numpy as np
import pandas as pd

from ..model import narrowest_int


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
    kind = series.dtype
    bad_format = np.array([], dtype=np.int64)
    if isinstance(kind, np.dtype) and kind.kind in "iu":  # numbers already (Parquet, or plain whole numbers in a CSV): one pass
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


def narrow_counts(values: np.ndarray) -> np.ndarray:
    """Copies (whole numbers of 1 or more) in the narrowest signed integer type that holds the
    largest: int8 for the usual 1 to 127. Tens of millions of rows are an eighth of int64's size
    wherever they are cut, copied or gathered later."""
    low, high = (int(values.min()), int(values.max())) if values.size else (0, 0)
    kind = narrowest_int(low, high)
    if kind is None:  # never from read data (quantities are bounded by QUANTITY_MAX): refuse rather than wrap
        raise OverflowError(f"copies from {low} to {high} fit no signed 64-bit integer")
    return values.astype(kind, copy=False)
