"""Large long-form tables: the fast paths taken at scale give what pandas and pyarrow give.

Tables of 150 000 card rows are planted here (invented names). Past 100 000
rows the reader takes a long table's deck ids by their runs, confirms the
deck table's order instead of hashing the ids again, and the splitter cuts
partitions by each deck's run of rows. Each check compares with pyarrow
reading the same file, or with pandas sorting and grouping the same rows.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from sitegen.load import load_data
from sitegen.load.tables import read_table
from sitegen.partitions import split

from _load_helpers import config

DECKS, CARDS_PER_DECK, POOL = 6000, 25, 400


def _planted(seed: int = 0) -> tuple[pd.DataFrame, pd.DataFrame]:
    """6 000 decks of 25 distinct cards each (150 000 rows), grouped by deck, cards by name."""
    rng = np.random.default_rng(seed)
    pool = np.array([f"Card {i:03d}" for i in range(POOL)])
    ids = np.array([f"d{i:05d}" for i in range(DECKS)])
    decks = pd.DataFrame({"deck_id": ids, "season": np.where(np.arange(DECKS) % 3 == 0, "Season 1", "Season 2"),
                          "leader": np.where(np.arange(DECKS) % 2 == 0, "Vessa", "Orm")})
    picks = np.sort(np.argsort(rng.random((DECKS, POOL)), axis=1)[:, :CARDS_PER_DECK], axis=1)
    cards = pd.DataFrame({"deck_id": np.repeat(ids, CARDS_PER_DECK), "card": pool[picks.ravel()],
                          "quantity": rng.integers(1, 4, DECKS * CARDS_PER_DECK)})
    return decks, cards


def _write(tmp_path, decks: pd.DataFrame, cards: pd.DataFrame, fmt: str = "parquet"):
    decks.to_csv(tmp_path / "decks.csv", index=False)
    if fmt == "parquet":
        # Small row groups: many deck runs are cut by a row group's end and go on in the next.
        pq.write_table(pa.Table.from_pandas(cards, preserve_index=False), tmp_path / "deck_cards.parquet",
                       row_group_size=7_001)
        name = "deck_cards.parquet"
    else:
        cards.to_csv(tmp_path / "deck_cards.csv", index=False)
        name = "deck_cards.csv"
    return config(tmp_path, data={"decks": "decks.csv", "deck_cards": name})


def _read_cards(path, deck_ids=None) -> pd.DataFrame:
    return read_table(path, setting="data.deck_cards", required={"deck_id": "deck_id", "card": "card",
                                                                "quantity": "quantity"},
                      numeric=frozenset({"quantity"}), categorical=frozenset({"deck_id", "card"}),
                      deck_ids=deck_ids).frame


@pytest.mark.parametrize("guess", ["deck table order", "other order", "none"])
def test_deck_ids_read_by_runs_equal_pyarrow(tmp_path, guess):
    # Reference: pyarrow reading the same file without dictionaries; the categories must be distinct.
    decks, cards = _planted()
    _write(tmp_path, decks, cards)
    ids = {"deck table order": decks["deck_id"], "other order": decks["deck_id"][::-1].reset_index(drop=True),
           "none": None}[guess]
    frame = _read_cards(tmp_path / "deck_cards.parquet", None if ids is None else pd.Series(ids, dtype="str"))
    reference = pq.read_table(tmp_path / "deck_cards.parquet")
    assert frame["deck_id"].astype(str).tolist() == reference.column("deck_id").to_pylist()
    assert frame["card"].astype(str).tolist() == reference.column("card").to_pylist()
    assert frame["deck_id"].cat.categories.is_unique
    if guess == "deck table order":
        assert frame["deck_id"].cat.categories.tolist() == decks["deck_id"].tolist()


def test_deck_ids_not_in_runs_equal_pyarrow(tmp_path):
    # Rows shuffled, so no deck's rows sit together: the reader falls back; pyarrow is the reference.
    decks, cards = _planted(1)
    cards = cards.sample(frac=1.0, random_state=3).reset_index(drop=True)
    _write(tmp_path, decks, cards)
    frame = _read_cards(tmp_path / "deck_cards.parquet", pd.Series(decks["deck_id"], dtype="str"))
    assert frame["deck_id"].astype(str).tolist() == pq.read_table(tmp_path / "deck_cards.parquet").column("deck_id").to_pylist()


def _reference_rows(decks: pd.DataFrame, cards: pd.DataFrame) -> pd.DataFrame:
    """The card rows as DeckData documents them, by pandas alone: sorted by deck id, then card."""
    return cards.sort_values(["deck_id", "card"], kind="stable").reset_index(drop=True)


@pytest.mark.parametrize("layout", ["parquet", "csv", "parquet shuffled", "decks in another order"])
def test_large_load_equals_pandas_sorting(tmp_path, layout):
    # Reference: pandas sort_values of the planted rows (DeckData's documented order, sitegen/model.py).
    decks, cards = _planted(2)
    if layout == "parquet shuffled":
        cards = cards.sample(frac=1.0, random_state=5).reset_index(drop=True)
    if layout == "decks in another order":
        decks = decks.sample(frac=1.0, random_state=7).reset_index(drop=True)
    data = load_data(_write(tmp_path, decks, cards, "csv" if layout == "csv" else "parquet"))
    expected = _reference_rows(decks, cards)
    got = data.cards
    assert got["deck_id"].astype(str).tolist() == expected["deck_id"].tolist()
    assert got["card"].astype(str).tolist() == expected["card"].tolist()
    assert got["quantity"].tolist() == expected["quantity"].tolist()
    # A deck's code is its row of the deck table, which is sorted by id.
    assert data.decks["deck_id"].tolist() == sorted(decks["deck_id"])
    assert (data.decks["deck_id"].to_numpy()[got["deck_id"].cat.codes.to_numpy()] == expected["deck_id"].to_numpy()).all()


@pytest.mark.parametrize("shuffled", [False, True])
def test_large_split_equals_pandas_grouping(tmp_path, shuffled):
    # Reference: pandas merge and groupby of the planted rows by season and leader.
    decks, cards = _planted(4)
    if shuffled:
        cards = cards.sample(frac=1.0, random_state=9).reset_index(drop=True)
    cfg = _write(tmp_path, decks, cards)
    data = load_data(cfg)
    parts = split(data, cfg["analysis.by_leader"])
    merged = _reference_rows(decks, cards).merge(decks, on="deck_id")
    groups = {key: g for key, g in merged.groupby(["season", "leader"], sort=True)}
    assert [(p.season, p.leader) for p in parts] == sorted(groups)
    for p in parts:
        g = groups[(p.season, p.leader)]
        assert p.decks["deck_id"].tolist() == sorted(g["deck_id"].unique())
        got = p.cards.assign(deck_id=p.cards["deck_id"].astype(str), card=p.cards["card"].astype(str))
        assert got.values.tolist() == g[["deck_id", "card", "quantity"]].values.tolist()
        assert list(p.cards["deck_id"].cat.categories) == p.decks["deck_id"].tolist()


def test_count_values_equals_pandas_value_counts(tmp_path):
    # Reference: pandas value_counts of the same column (a missing value counted as ''), over several row groups.
    from sitegen.load.tables import count_values

    _, cards = _planted(6)
    cards.loc[cards.index[::997], "card"] = None
    path = tmp_path / "deck_cards.parquet"
    pq.write_table(pa.Table.from_pandas(cards, preserve_index=False), path, row_group_size=9_999)
    got = count_values(path, setting="data.parquet_folder", logical="card", column="card")
    expected = cards["card"].fillna("").value_counts().to_dict()
    assert got == expected
    assert sum(got.values()) == len(cards)


def test_card_names_over_many_row_groups_equal_pyarrow(tmp_path):
    # Reference: pyarrow's own reading of the column (nulls as ''), for a card column read
    # dictionary-encoded over 16 row groups, each with a dictionary of its own, some with nulls.
    _, cards = _planted(7)
    cards.loc[cards.index[::4999], "card"] = None
    cards.loc[cards.index[20_000:30_000], "card"] = "Card only here"  # in a few row groups only
    path = tmp_path / "deck_cards.parquet"
    pq.write_table(pa.Table.from_pandas(cards, preserve_index=False), path, row_group_size=9_999)
    assert pq.ParquetFile(path).metadata.num_row_groups == 16
    got = _read_cards(path)["card"]
    assert isinstance(got.dtype, pd.CategoricalDtype) and got.cat.categories.is_unique
    assert got.astype(str).tolist() == [v or "" for v in pq.read_table(path).column("card").to_pylist()]


def _in_order_by_lexsort(rows: np.ndarray, columns: np.ndarray) -> bool:
    # numpy's lexsort (rows first, then columns) is the reference: in order means sorting
    # moves nothing and no (row, column) pair repeats.
    order = np.lexsort((columns, rows))
    if not np.array_equal(order, np.arange(rows.size)):
        return False
    return not bool(((rows[1:] == rows[:-1]) & (columns[1:] == columns[:-1])).any())


@pytest.mark.parametrize("dtype", [np.int64, np.int32, np.uint16])
def test_row_order_check_agrees_with_lexsort_at_block_edges(dtype):
    # The check runs in blocks of 2**20 rows; each planted fault sits at or next to a block edge.
    from sitegen.model import in_row_order

    edge = 1 << 20
    n = 2 * edge + 5
    rows = (np.arange(n) // 7).astype(dtype) if dtype != np.uint16 else (np.arange(n) // 7000).astype(dtype)
    columns = (np.arange(n) % (7 if dtype != np.uint16 else 7000)).astype(dtype)
    cases = {"sorted": (rows, columns)}
    for at in (edge - 1, edge, edge + 1, 2 * edge):
        r, c = rows.copy(), columns.copy()
        r[at] = r[at - 1] - 1 if r[at - 1] > 0 else r[at]  # a row that goes back
        cases[f"row back at {at}"] = (r, c)
        r, c = rows.copy(), columns.copy()
        r[at], c[at] = r[at - 1], c[at - 1]  # the same pair twice
        cases[f"pair twice at {at}"] = (r, c)
    cases["tiny"] = (rows[:1], columns[:1])
    cases["empty"] = (rows[:0], columns[:0])
    for name, (r, c) in cases.items():
        assert in_row_order(r, c) == _in_order_by_lexsort(r, c), name
    assert sum(not _in_order_by_lexsort(r, c) for r, c in cases.values()) == 8  # every planted fault is one


def test_card_categories_come_sorted_as_python_sorts():
    # Reference: Python's sorted() (code point order); the reader sorts the categories of a card
    # column of many row groups, so later steps can skip looking codes up by name.
    _, cards = _planted(8)
    cards.loc[cards.index[::3], "card"] = "Émile"  # non-ASCII sorts after every ASCII name
    table = pa.Table.from_pandas(cards, preserve_index=False)
    from sitegen.load.arrow_columns import chunks_as_categories

    names = table.column("card").combine_chunks()
    # 15 chunks, each with a dictionary of its own in order of first appearance (as row groups read).
    column = pa.chunked_array([names.slice(i, 10_000).dictionary_encode() for i in range(0, len(cards), 10_000)])
    got = chunks_as_categories(column)
    assert list(got.cat.categories) == sorted(set(cards["card"]))
    assert got.astype(str).tolist() == cards["card"].tolist()


def test_dates_parsed_once_per_text_equal_python_fromisoformat():
    # Reference: Python's datetime.date.fromisoformat (stdlib, ISO 8601 dates) row by row, on
    # 6 000 rows of 5 distinct texts: the loader parses each distinct text once.
    import datetime as dt

    from sitegen.load.seasons import parse_dates

    texts = ["2026-03-01", "2026-03-02", "not a date", "", " 2026-02-28 "]
    column = pd.Series([texts[i % 5] for i in range(6000)], dtype="str")
    dates, bad, empty = parse_dates(column)

    def reference(text):
        try:
            return dt.date.fromisoformat(text.strip())
        except ValueError:
            return None

    expected = [reference(t) for t in column]
    assert [None if pd.isna(d) else d.date() for d in dates] == expected
    assert bad.tolist() == [i for i, t in enumerate(column) if t.strip() and expected[i] is None]
    assert empty.tolist() == [i for i, t in enumerate(column) if not t.strip()]


def test_trim_check_agrees_with_python_unicode_data():
    # Reference: Python's str.isspace and unicodedata's Cc category (C0/C1 controls), plus the
    # byte order mark, at either end of a text: what the loader trims. The check looks at bytes
    # first, so texts ending in multi-byte characters (accents, CJK spaces) are the hard cases.
    import unicodedata

    from sitegen.load.codes import needs_trim

    def trims(c):
        return c.isspace() or unicodedata.category(c) == "Cc" or c == "\ufeff"

    edges = ["a", "Z", "9", "é", "ß", " ", "\t", "\u00a0", "\u3000", "\u2009", "\ufeff", "\x7f", "\x85", "中", "-"]
    texts = [f"{a}mid{b}" for a in edges for b in edges] + ["", "é", " ", "x"]
    values = pa.array(texts * 3).slice(7)  # a sliced array: its offsets do not start at 0
    expected = [bool(t) and (trims(t[0]) or trims(t[-1])) for t in values.to_pylist()]
    assert needs_trim(values).tolist() == expected


@pytest.mark.parametrize("values", [[1, 2, 3], [1, 300, 2], [-5, 1, 70_000], [1, None, 2]])
def test_parquet_whole_numbers_read_narrow_equal_pyarrow(tmp_path, values):
    # Reference: pyarrow's own reading of an int64 column over 12 row groups. The reader keeps the
    # numbers in the least signed type holding them (numpy's min_scalar_type of the far end);
    # a column with gaps is left to pandas as it was.
    _, cards = _planted(9)
    cards["quantity"] = pd.array([values[i % len(values)] for i in range(len(cards))], dtype="Int64")
    path = tmp_path / "deck_cards.parquet"
    pq.write_table(pa.Table.from_pandas(cards, preserve_index=False), path, row_group_size=12_500)
    got = _read_cards(path)["quantity"]
    expected = pq.read_table(path).column("quantity").to_pylist()
    assert [None if pd.isna(v) else int(v) for v in got] == expected
    if None not in values:
        far = max(max(values), -min(values) - 1)
        assert got.dtype == np.min_scalar_type(-far - 1)


@pytest.mark.parametrize("big", [127, 1_000])
def test_csv_whole_numbers_equal_python_csv(tmp_path, big):
    # Reference: Python's csv module and int(). Copies are parsed as 16-bit numbers first (the most
    # copies sitegen reads, 1,000, fits), and no value may change on the way; copies beyond that
    # bound are an error (tests/test_data_safety.py).
    import csv

    decks, cards = _planted(10)
    cards.loc[cards.index[::50_001], "quantity"] = big
    data = load_data(_write(tmp_path, decks, cards, "csv"))
    with open(tmp_path / "deck_cards.csv", newline="", encoding="utf-8") as fh:
        rows = sorted((r["deck_id"], r["card"], int(r["quantity"])) for r in csv.DictReader(fh))
    got = list(zip(data.cards["deck_id"].astype(str), data.cards["card"].astype(str), data.cards["quantity"].tolist()))
    assert got == rows


@pytest.mark.parametrize("fmt", ["parquet", "csv"])
def test_renamed_long_form_columns_are_read_as_categories(tmp_path, fmt):
    # Reference: pandas sort_values of the planted rows, as in the tests above. The long-form
    # table's card and copies columns have names of their own (columns.* settings): its names are
    # still read as categoricals, not one string per row.
    from sitegen.load.tables import read_table

    decks, cards = _planted(11)
    _write(tmp_path, decks, cards.rename(columns={"card": "name", "quantity": "copies"}), fmt)
    name = "deck_cards.parquet" if fmt == "parquet" else "deck_cards.csv"
    cfg = config(tmp_path, data={"decks": "decks.csv", "deck_cards": name},
                 columns={"card": "name", "quantity": "copies"})
    table = read_table(tmp_path / name, setting="data.deck_cards",
                       required={"deck_id": "deck_id", "card": "name", "quantity": "copies"},
                       numeric=frozenset({"quantity"}), categorical=frozenset({"deck_id", "card"}))
    assert isinstance(table.frame["card"].dtype, pd.CategoricalDtype)
    data = load_data(cfg)
    expected = _reference_rows(decks, cards)
    assert data.cards["card"].astype(str).tolist() == expected["card"].tolist()
    assert data.cards["quantity"].tolist() == expected["quantity"].tolist()


@pytest.mark.parametrize("statistics, quantities", [
    (True, (1, 4)),          # copies of a card: int8
    (True, (-40_000, 40_000)),  # wider: int32
    (False, (1, 4)),         # no statistics: read whole
])
def test_whole_numbers_read_by_row_group_equal_pyarrow(tmp_path, statistics, quantities):
    # Reference: pyarrow reading the whole column; the dtype must be the narrowest holding the values
    # (numpy's own np.min_scalar_type of the extremes, signed), over 16 row groups.
    _, cards = _planted(8)
    cards["quantity"] = np.random.default_rng(8).integers(*quantities, len(cards))
    path = tmp_path / "deck_cards.parquet"
    pq.write_table(pa.Table.from_pandas(cards, preserve_index=False), path, row_group_size=9_999,
                   write_statistics=statistics)
    got = _read_cards(path)["quantity"]
    expected = pq.read_table(path).column("quantity").to_numpy()
    assert got.to_numpy().tolist() == expected.tolist()
    widest = np.promote_types(np.min_scalar_type(-int(np.abs(expected).max()) - 1), np.int8)
    assert got.dtype == widest


@pytest.mark.parametrize("statistics", [True, False])
def test_deck_ids_read_row_group_by_row_group_equal_pyarrow(tmp_path, statistics):
    # Reference: pyarrow reading the whole file. With statistics (no nulls), the deck ids are read a row
    # group at a time; without, whole; some decks' runs are cut by a row group's end (7 001 rows each).
    decks, cards = _planted(9)
    path = tmp_path / "deck_cards.parquet"
    pq.write_table(pa.Table.from_pandas(cards, preserve_index=False), path, row_group_size=7_001,
                   write_statistics=statistics)
    frame = _read_cards(path, pd.Series(decks["deck_id"], dtype="str"))
    assert frame["deck_id"].astype(str).tolist() == pq.read_table(path).column("deck_id").to_pylist()
    assert frame["deck_id"].cat.categories.tolist() == decks["deck_id"].tolist()
