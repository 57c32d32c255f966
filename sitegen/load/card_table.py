"""The optional card table (``data.cards``): card names checked, one row per card, further columns kept."""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import DataError, visible
from .codes import cleaned_column
from .names import clean_text, variant_key
from .problems import ERRORS_PER_PROBLEM, Problems
from .settings import LoadSettings
from .tables import Table


def checked_card_table(table: Table, settings: LoadSettings) -> tuple[pd.DataFrame, dict[str, str]]:
    """The card table, card and type first, and its names by :func:`~.names.variant_key`;
    DataErrors naming every problem of the table (see :func:`card_info`)."""
    problems = Problems()
    info = card_info(table, settings, problems)
    problems.raise_if_any()
    return info


def card_info(table: Table, settings: LoadSettings, problems: Problems) -> tuple[pd.DataFrame, dict[str, str]]:
    """The card table, card and type first, and its names by variant key; the table's problems
    (empty or repeated names, columns of ``columns.card_extra`` it lacks) go to ``problems``."""
    frame = table.frame
    names = cleaned_column(frame["card"], names=True)
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
    extra_wanted = list(settings.columns.card_extra)
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
    out = pd.DataFrame({"card": names, "type": cleaned_column(frame["type"])})
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
