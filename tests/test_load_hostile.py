"""Property tests: hostile tables and decklists end in DeckData or a documented error, never a crash.

Hypothesis writes random and hostile inputs (markup, quotes, control
characters, direction marks, broken UTF-8, binary junk) to files and calls
load_data. Every outcome must be a DeckData that keeps the documented layout,
or a SitegenError subclass (DataError, DataErrors, ConfigError).
"""
from __future__ import annotations

import csv
import io
import tempfile
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from sitegen.config import from_dict
from sitegen.errors import ConfigError, DataError, DataErrors
from sitegen.load import load_data
from sitegen.model import CARD_ROW_COLUMNS, DECK_COLUMNS, DeckData

SETTINGS = settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
DOCUMENTED = (DataError, DataErrors, ConfigError)

HOSTILE = ["<script>alert(1)</script>", '"', '""', ",", "\n", "\r\n", "\r", "\x00", "\x1b[31m", "\ufeff",
           "\u202e", "\u200f", "&amp;", "'", "\t", " ", "NA", "null", "1e309", "-0", "0", "3", "٣", "🃏", "\\", "#"]
cell = st.one_of(st.sampled_from(HOSTILE), st.text(max_size=12),
                 st.builds(lambda a, b: a + b, st.sampled_from(HOSTILE), st.text(max_size=6)))
small_id = st.sampled_from(["d1", "d2", "d3", " d1", "D1", ""])
quantity = st.one_of(st.sampled_from(["1", "2", "3", "0", "-1", "2.0", "", " 4 ", "x", "99999999999999999999"]), cell)


def _csv_bytes(header: list[str], rows: list[list[str]], mangle: bytes | None) -> bytes:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows([header, *rows])
    data = buf.getvalue().encode("utf-8", errors="surrogatepass")
    if mangle:
        cut = len(data) // 2
        data = data[:cut] + mangle + data[cut:]
    return data


def _check_outcome(cfg) -> None:
    try:
        data = load_data(cfg)
    except DOCUMENTED:
        return
    assert isinstance(data, DeckData)
    assert tuple(data.decks.columns) == DECK_COLUMNS and tuple(data.cards.columns) == CARD_ROW_COLUMNS
    assert data.decks["deck_id"].is_unique and data.decks["deck_id"].is_monotonic_increasing
    assert (data.cards["quantity"] >= 1).all()
    keys = list(zip(data.cards["deck_id"], data.cards["card"]))
    assert keys == sorted(keys) and len(set(keys)) == len(keys)
    assert set(data.cards["deck_id"]) == set(data.decks["deck_id"])
    assert set(data.seasons) == set(data.decks["season"])
    assert (data.cards["card"].str.strip() != "").all() and (data.decks["leader"].str.strip() != "").all()


@SETTINGS
@given(
    deck_header=st.lists(st.sampled_from(["deck_id", "season", "leader", "wins", "date", "title", "x", ""]),
                         min_size=1, max_size=5),
    deck_rows=st.lists(st.tuples(small_id, cell, cell, quantity), max_size=5),
    card_rows=st.lists(st.tuples(small_id, cell, quantity), max_size=8),
    mangle=st.one_of(st.none(), st.sampled_from([b"\xff", b"\xc3", b"\x00", b'"', b"\r", b"\xef\xbb\xbf"]),
                     st.binary(max_size=6)),
    good_header=st.booleans(),
)
def test_random_tables_never_crash(deck_header, deck_rows, card_rows, mangle, good_header):
    header = ["deck_id", "season", "leader", "wins"] if good_header else deck_header
    rows = [list(r)[: len(header)] + [""] * max(0, len(header) - len(r)) for r in deck_rows]
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        (root / "decks.csv").write_bytes(_csv_bytes(header, rows, None))
        (root / "deck_cards.csv").write_bytes(_csv_bytes(["deck_id", "card", "quantity"], [list(r) for r in card_rows], mangle))
        _check_outcome(from_dict({"data": {"decks": "decks.csv", "deck_cards": "deck_cards.csv"}}, root=root))


@SETTINGS
@given(junk=st.binary(max_size=300), name=st.sampled_from(["deck_cards.csv", "deck_cards.parquet", "deck_cards.pq"]))
def test_random_bytes_never_crash(junk, name):
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        (root / "decks.csv").write_text("deck_id,season,leader\nd1,S1,Orm\n", encoding="utf-8")
        (root / name).write_bytes(b"deck_id,card,quantity\n" + junk if name.endswith(".csv") and junk[:1] == b"d" else junk)
        _check_outcome(from_dict({"data": {"decks": "decks.csv", "deck_cards": name}}, root=root))


def clean(text: str) -> str:
    """Lone surrogates cannot go into Parquet text; replace them."""
    return text.encode("utf-8", errors="replace").decode("utf-8")


@SETTINGS
@given(
    decks=st.lists(st.tuples(small_id, cell, cell), min_size=1, max_size=4),
    cards=st.lists(st.tuples(small_id, cell, st.integers(-2, 5)), max_size=6),
)
def test_random_parquet_tables_never_crash(decks, cards):
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        pd.DataFrame([[clean(v) for v in r] for r in decks], columns=["deck_id", "season", "leader"]).to_parquet(root / "decks.parquet")
        pd.DataFrame([[clean(a), clean(b), q] for a, b, q in cards] or None,
                     columns=["deck_id", "card", "quantity"]).to_parquet(root / "deck_cards.parquet")
        _check_outcome(from_dict({"data": {"decks": "decks.parquet", "deck_cards": "deck_cards.parquet"}}, root=root))


line = st.one_of(
    st.sampled_from(["Leader: Orm", "Season: S1", "leader:", "Date: 2026-01-01", "Wins: 2", "Wins: x", "# note", "",
                     "3 Ember Fox", "2x Tide Call", "0 Stone Wall", "3", "x3 Fox", "Colour: red", "1 <b>Fox</b>"]),
    st.builds(lambda q, n: f"{q} {n}", st.integers(-1, 5), cell),
    cell,
)


@SETTINGS
@given(files=st.lists(st.tuples(st.sampled_from(["a", "b", "c", "A"]), st.lists(line, max_size=8),
                                st.one_of(st.none(), st.binary(max_size=4))), min_size=1, max_size=3))
def test_random_decklists_never_crash(files):
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        folder = root / "lists"
        folder.mkdir()
        for stem, lines, junk in files:
            data = "\n".join(lines).encode("utf-8", errors="surrogatepass") + (junk or b"")
            (folder / f"{stem}.txt").write_bytes(data)
        _check_outcome(from_dict({"data": {"decklists": "lists"}}, root=root))


@SETTINGS
@given(names=st.lists(st.one_of(cell, st.text(min_size=1, max_size=20)), min_size=1, max_size=6),
       terminator=st.sampled_from(["\n", "\r\n"]))
def test_card_names_agree_with_python_csv_module(names, terminator):
    # Reference: Python's csv module (RFC 4180 quoting) reading the same bytes gives the same card names
    # (after the loader's documented trimming of surrounding whitespace and control characters).
    # Names are then put in one form (README: names): format characters (category Cf) out, Unicode
    # NFC, per Python's unicodedata.
    import unicodedata

    from sitegen.load.normalise import clean_text, variant_key

    def as_name(text: str) -> str:
        text = "".join(c for c in clean_text(text) if unicodedata.category(c) != "Cf")
        return clean_text(unicodedata.normalize("NFC", text))

    kept, keys = [], set()
    for name in names:
        name = clean(name)
        if as_name(name) and variant_key(as_name(name)) not in keys and "\x00" not in name:
            kept.append(name)
            keys.add(variant_key(as_name(name)))
    if not kept:
        return
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator=terminator)
        writer.writerow(["deck_id", "card", "quantity"])
        writer.writerows([["d1", name, "1"] for name in kept])
        (root / "deck_cards.csv").write_bytes(buf.getvalue().encode("utf-8"))
        (root / "decks.csv").write_text("deck_id,season,leader\nd1,S1,Orm\n", encoding="utf-8")
        with open(root / "deck_cards.csv", encoding="utf-8", newline="") as f:
            rows = [row for row in csv.reader(f) if row][1:]
        cfg = from_dict({"data": {"decks": "decks.csv", "deck_cards": "deck_cards.csv"}}, root=root)
        if any(len(row) != 3 for row in rows):
            # A bare CR in an unquoted cell (csv.writer leaves it unquoted with a "\n" terminator)
            # splits the record for both readers: the loader must refuse it with a located error.
            with pytest.raises((DataError, DataErrors), match="fields but the header has 3"):
                load_data(cfg)
            return
        data = load_data(cfg)
        assert sorted(data.cards["card"].tolist()) == sorted(as_name(row[1]) for row in rows)
