"""The table of every deck with its archetype: ``data/assignments.csv`` and ``.json``.

Built column by column from the results (one Arrow or numpy column per field,
never a Python object per deck), so a million decks write in seconds; cells
that hold data text are made safe for spreadsheets as in :mod:`.cells`.
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass
from typing import Any, Callable, Sequence

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from ..model import OTHER_KEY, DeckData, PartitionResult
from .cells import csv_bytes, csv_cells, fixed, json_bytes, safe_csv_cells
from .cells import rounded as _round


def slugs_of(result: PartitionResult, page_slugs: dict[tuple[str, str, str], str]) -> dict[str, str]:
    out = {OTHER_KEY: OTHER_KEY}
    for a in result.archetypes:
        out[a.key] = page_slugs.get((a.season, a.leader, a.key), a.slug)
    return out


#: Column order of ``assignments.csv``; ``assignments.json`` has the same keys, sorted.
ASSIGNMENT_COLUMNS = ("deck_id", "season", "leader", "archetype", "distance", "x", "y", "wins", "losses")
_TEXT_COLUMNS = ASSIGNMENT_COLUMNS[:4]
_NUMBER_COLUMNS = ASSIGNMENT_COLUMNS[4:7]
#: Whole numbers from the deck table: empty in CSV and null in JSON when not reported.
COUNT_COLUMNS = ASSIGNMENT_COLUMNS[7:]
_ARROW_TEXT = pa.large_string()


@dataclass(frozen=True)
class Column:
    """One column of the assignments export: row ``i`` holds ``distinct[codes[i]]``.

    Every value is formatted once however many decks share it, and the rows
    are put together by Arrow, not one Python object per cell.
    """

    distinct: list
    codes: np.ndarray

    def values(self) -> list:
        return [self.distinct[c] for c in self.codes.tolist()]

    def cells(self, fmt: Callable[[list], list[str]]) -> pa.Array:
        """The column as text: ``fmt`` maps the distinct values to their texts."""
        return pa.array(fmt(self.distinct), type=_ARROW_TEXT).take(pa.array(self.codes, type=pa.int64()))


@dataclass(frozen=True)
class AssignmentTable:
    """The assignments export, one row per deck in file order, as :class:`Column` s.

    Text columns hold strings; distance, x and y hold the values rounded to
    6 places, None when missing.
    """

    columns: dict[str, Column]

    def __len__(self) -> int:
        return len(self.columns["deck_id"].codes)

    def rows(self) -> list[dict[str, Any]]:
        """One dict per deck (the shape of ``assignments.json``)."""
        cols = [self.columns[c].values() for c in ASSIGNMENT_COLUMNS]
        return [dict(zip(ASSIGNMENT_COLUMNS, values)) for values in zip(*cols)]


def _strings(values: pd.Series) -> np.ndarray:
    """``str()`` of each value, as an object array (no copy when they already are strings)."""
    arr = values.to_numpy(dtype=object)
    if len(arr) and pd.api.types.infer_dtype(arr, skipna=False) != "string":
        arr = np.array([str(v) for v in arr], dtype=object)
    return arr


def _factorized(values: pd.Series) -> tuple[np.ndarray, list[str]]:
    """(codes, distinct ``str()`` texts) of a column with few distinct values."""
    codes, uniques = pd.factorize(values, use_na_sentinel=False)
    return np.asarray(codes, dtype=np.int64), [str(u) for u in uniques]


def _float_column(values: np.ndarray) -> Column:
    """``_round`` of each value, once per distinct bit pattern (so -0.0 stays apart from 0.0)."""
    bits, codes = np.unique(np.ascontiguousarray(values, dtype=np.float64).view(np.int64), return_inverse=True)
    return Column([_round(float(v)) for v in bits.view(np.float64)], codes.reshape(-1).astype(np.int64))


def assignment_table(data: DeckData, results: Sequence[PartitionResult],
                     page_slugs: dict[tuple[str, str, str], str]) -> AssignmentTable:
    """Every deck with its archetype slug, sorted by season order, leader, deck id.

    A deck assigned in several results takes the last one; a deck in none
    gets an empty archetype and no numbers.
    """
    ids: list[np.ndarray] = []
    slug_codes: list[np.ndarray] = []
    slug_texts: dict[str, int] = {}
    numbers: dict[str, list[np.ndarray]] = {c: [] for c in _NUMBER_COLUMNS}
    for r in results:
        df = r.assignments
        if df is None or len(df) == 0:
            continue
        slug_of = slugs_of(r, page_slugs)
        cols = [df["deck_id"], df["archetype"], df["distance"], df["x"], df["y"]]
        ids.append(_strings(cols[0]))
        codes, keys = _factorized(cols[1])
        names = [slug_texts.setdefault(slug_of.get(k, k), len(slug_texts)) for k in keys]
        slug_codes.append(np.array(names, dtype=np.int64)[codes])
        for name, col in zip(_NUMBER_COLUMNS, cols[2:]):
            numbers[name].append(col.to_numpy(dtype=np.float64, na_value=np.nan))

    decks = data.decks
    deck_ids = _strings(decks["deck_id"])
    n = len(deck_ids)
    assigned = np.concatenate(ids) if ids else np.empty(0, dtype=object)
    # Later results win, as they would overwrite: look each deck up in the assigned ids last to first.
    last_first = pc.index_in(pa.array(deck_ids, type=_ARROW_TEXT),
                             value_set=pa.array(assigned[::-1], type=_ARROW_TEXT)).fill_null(-1)
    found = np.asarray(last_first.to_numpy(zero_copy_only=False), dtype=np.int64)
    found = np.where(found >= 0, len(assigned) - 1 - found, -1)
    season_codes, seasons = _factorized(decks["season"])
    leader_codes, leaders = _factorized(decks["leader"])

    # Sort key (season order, season, leader, deck id) as ranks, then one stable lexsort.
    season_rank = {s: i for i, s in enumerate(data.seasons)}
    season_pos = {s: i for i, s in enumerate(sorted(seasons, key=lambda s: (season_rank.get(s, len(season_rank)), s)))}
    leader_pos = {x: i for i, x in enumerate(sorted(leaders))}
    deck_list = deck_ids.tolist()
    deck_rank = np.empty(n, dtype=np.int64)
    deck_rank[sorted(range(n), key=deck_list.__getitem__)] = np.arange(n)
    order = np.lexsort((deck_rank,
                        np.array([leader_pos[x] for x in leaders], dtype=np.int64)[leader_codes],
                        np.array([season_pos[s] for s in seasons], dtype=np.int64)[season_codes]))

    hit = found[order]
    missing = hit < 0
    safe_hit = np.where(missing, 0, hit)
    slug_all = np.concatenate(slug_codes) if slug_codes else np.empty(0, dtype=np.int64)
    columns = {
        "deck_id": Column(deck_list, order.astype(np.int64)),
        "season": Column(seasons, season_codes[order]),
        "leader": Column(leaders, leader_codes[order]),
        "archetype": Column([*slug_texts, ""], np.where(missing, len(slug_texts), slug_all[safe_hit] if len(slug_all) else 0)),
    }
    for name in _NUMBER_COLUMNS:
        values = np.concatenate(numbers[name]) if numbers[name] else np.empty(0)
        chosen = values[safe_hit] if len(values) else np.nan
        columns[name] = _float_column(np.where(missing, np.nan, chosen))
    for name in COUNT_COLUMNS:
        columns[name] = _count_column(decks[name] if name in decks.columns else None, n, order)
    return AssignmentTable(columns)


def _count_column(values: pd.Series | None, n: int, order: np.ndarray) -> Column:
    """A whole-number deck column (wins, losses) in file order: ints, None where not reported."""
    if values is None:
        return Column([None], np.zeros(n, dtype=np.int64))
    codes, uniques = pd.factorize(pd.to_numeric(values, errors="coerce").astype("Int64"), use_na_sentinel=True)
    distinct = [int(u) for u in uniques] + [None]
    codes = np.where(np.asarray(codes) < 0, len(distinct) - 1, codes).astype(np.int64)
    return Column(distinct, codes[order])


def _joined(pieces: list[pa.Array | str]) -> bytes | memoryview:
    """Row by row, the pieces (columns, or one text for every row) one after another, as UTF-8 bytes
    (a view of Arrow's result: a million rows are a few hundred MB, not copied again here)."""
    rows = pc.binary_join_element_wise(*[pa.scalar(p, type=_ARROW_TEXT) if isinstance(p, str) else p for p in pieces],
                                       pa.scalar("", type=_ARROW_TEXT))
    if len(rows) == 0:
        return b""
    offsets = np.frombuffer(rows.buffers()[1], dtype=np.int64)[rows.offset:rows.offset + len(rows) + 1]
    return memoryview(rows.buffers()[2])[int(offsets[0]):int(offsets[-1])]


def assignments_csv(table: AssignmentTable) -> bytes:
    """``data/assignments.csv``: the same bytes :func:`csv_bytes` makes from the rows."""
    cols = table.columns
    cells = [cols[c].cells(safe_csv_cells) for c in _TEXT_COLUMNS]
    cells += [cols[c].cells(lambda values: csv_cells([fixed(v, 6) for v in values])) for c in _NUMBER_COLUMNS]
    cells += [cols[c].cells(lambda values: ["" if v is None else str(v) for v in values]) for c in COUNT_COLUMNS]
    pieces: list[pa.Array | str] = []
    for cell in cells:
        pieces += [cell, ","]
    pieces[-1] = "\r\n"
    return csv_bytes(ASSIGNMENT_COLUMNS, ()) + (_joined(pieces) if len(table) else b"")


def _json_number(value: float | None) -> str:
    """A rounded value as ``json.dumps(allow_nan=False)`` writes it."""
    if value is None:
        return "null"
    if math.isinf(value):
        raise ValueError("Out of range float values are not JSON compliant: " + repr(value))
    return float.__repr__(value)


def assignments_json(table: AssignmentTable) -> bytes:
    """``data/assignments.json``: the same bytes as :func:`json_bytes` of ``table.rows()``.

    That is a list of one object per deck, indent 1, keys sorted; each row
    is written here as that layout and the rows put together by Arrow.
    """
    if not len(table):
        return json_bytes([])
    return b"[\n" + json_rows(table)[:-2] + b"\n]\n"


def json_rows(table: AssignmentTable) -> bytes | memoryview:
    """The rows of ``assignments.json``, each object followed by ``,\\n`` (the last one too)."""
    if not len(table):
        return b""
    encode = json.encoder.encode_basestring  # what json.dumps(ensure_ascii=False) writes strings with
    cols = table.columns
    pieces: list[pa.Array | str] = []
    for i, key in enumerate(sorted(ASSIGNMENT_COLUMNS)):
        pieces.append((" {\n" if i == 0 else ",\n") + f'  "{key}": ')
        if key in _TEXT_COLUMNS:
            pieces.append(cols[key].cells(lambda values: list(map(encode, values))))
        elif key in COUNT_COLUMNS:
            pieces.append(cols[key].cells(lambda values: ["null" if v is None else str(v) for v in values]))
        else:
            pieces.append(cols[key].cells(lambda values: list(map(_json_number, values))))
    pieces.append("\n },\n")
    return _joined(pieces)
