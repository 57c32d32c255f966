"""Property tests: hostile tables and decklists end in DeckData or a documented error, never a crash.

Hypothesis writes random and hostile inputs (markup, quotes, control
characters, direction marks, broken UTF-8, binary junk) to files and calls
load_data. Every outcome must be a DeckData that keeps the documented layout,
or a SitegenError subclass (DataError, DataErrors, ConfigError).

Rejecting everything would satisfy that, so each property also draws
well-formed inputs that carry hostile text only where text belongs (names,
titles): those must load, and each test counts what loaded and requires some.
"""
from __future__ import annotations

import csv
import io
import tempfile
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, assume, event, given, settings, strategies as st

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


# Hostile text that is still a valid name: markup, quotes, separators, spreadsheet formulas, direction
# marks, non-ASCII digits and symbols, set between plain words (invented) so it is never blank.
NAME_NOISE = ["<script>alert(1)</script>", '"', '""', ",", "&amp;", "'", "NA", "null", "1e309", "-0", "٣", "🃏",
              "\\", "#", "\u202e", "\u200f", "<b>x</b>", "=HYPERLINK(\"http://x\")", ";", "\t"]
WORDS = ["Ember", "Tide", "Stone", "Lantern", "Quiet", "Salt", "Ash", "Wren", "Marrow", "Gale"]
noise = st.sampled_from(NAME_NOISE)


@st.composite
def well_formed(draw, max_decks: int = 4) -> tuple[list[list[str]], list[list]]:
    """Deck rows (deck_id, season, leader) and card rows (deck_id, card, copies 1-3) that are valid data."""
    n = draw(st.integers(1, max_decks))
    seasons = [f"Season {i} {draw(noise)} end" for i in range(draw(st.integers(1, 2)))]
    leaders = [f"{WORDS[-1 - i]} {draw(noise)} {WORDS[-1 - i]}" for i in range(draw(st.integers(1, 2)))]
    decks, cards = [], []
    for d in range(n):
        deck_id = f"deck-{d} {draw(noise)} x"
        decks.append([deck_id, draw(st.sampled_from(seasons)), draw(st.sampled_from(leaders))])
        for c in draw(st.sets(st.integers(0, 7), min_size=1, max_size=5)):
            cards.append([deck_id, f"{WORDS[c]} {draw(noise)} {WORDS[c]}", draw(st.integers(1, 3))])
    return decks, cards


class Outcomes:
    """What a property's examples ended in; a property that never loads anything tests nothing."""

    def __init__(self) -> None:
        self.loaded = 0
        self.refused = 0

    def require_some_loaded(self) -> None:
        assert self.loaded > 0, f"no input loaded ({self.refused} refused): the property checked only refusals"


def _check_outcome(cfg, outcomes: Outcomes, *, must_load: bool = False) -> None:
    try:
        data = load_data(cfg)
    except DOCUMENTED as exc:
        assert not must_load, f"well-formed input refused: {exc}"
        outcomes.refused += 1
        event("refused")
        return
    outcomes.loaded += 1
    event("loaded")
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
    valid=st.one_of(st.none(), well_formed()),
)
def _random_tables(outcomes, deck_header, deck_rows, card_rows, mangle, good_header, valid):
    header = ["deck_id", "season", "leader", "wins"] if good_header else deck_header
    rows = [list(r)[: len(header)] + [""] * max(0, len(header) - len(r)) for r in deck_rows]
    card_rows = [list(r) for r in card_rows]
    if valid is not None:
        (rows, card_rows), header, mangle = valid, ["deck_id", "season", "leader"], None
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        (root / "decks.csv").write_bytes(_csv_bytes(header, rows, None))
        (root / "deck_cards.csv").write_bytes(_csv_bytes(["deck_id", "card", "quantity"], card_rows, mangle))
        _check_outcome(from_dict({"data": {"decks": "decks.csv", "deck_cards": "deck_cards.csv"}}, root=root),
                       outcomes, must_load=valid is not None)


def test_random_tables_never_crash():
    outcomes = Outcomes()
    _random_tables(outcomes)
    outcomes.require_some_loaded()


@SETTINGS
@given(junk=st.one_of(st.binary(max_size=300), st.text(max_size=40).map(lambda t: t.encode("utf-8", "surrogatepass"))),
       name=st.sampled_from(["deck_cards.csv", "deck_cards.parquet", "deck_cards.pq"]),
       in_a_name=st.booleans())
def _random_bytes(outcomes, junk, name, in_a_name):
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        (root / "decks.csv").write_text("deck_id,season,leader\nd1,S1,Orm\n", encoding="utf-8")
        if in_a_name and name.endswith(".csv"):
            # The junk inside a quoted card name: loads when it is UTF-8 without NUL, quote or line break.
            data = b'deck_id,card,quantity\nd1,"Ember ' + junk + b' Fox",2\n'
            text = junk.decode("utf-8", errors="replace")
            must_load = "\ufffd" not in text and not set(text) & {"\x00", '"', "\r", "\n"}
        else:
            data = b"deck_id,card,quantity\n" + junk if name.endswith(".csv") and junk[:1] == b"d" else junk
            must_load = False
        (root / name).write_bytes(data)
        _check_outcome(from_dict({"data": {"decks": "decks.csv", "deck_cards": name}}, root=root), outcomes,
                       must_load=must_load)


def test_random_bytes_never_crash():
    outcomes = Outcomes()
    _random_bytes(outcomes)
    outcomes.require_some_loaded()


def clean(text: str) -> str:
    """Lone surrogates cannot go into Parquet text; replace them."""
    return text.encode("utf-8", errors="replace").decode("utf-8")


@SETTINGS
@given(
    decks=st.lists(st.tuples(small_id, cell, cell), min_size=1, max_size=4),
    cards=st.lists(st.tuples(small_id, cell, st.integers(-2, 5)), max_size=6),
    valid=st.one_of(st.none(), well_formed()),
)
def _random_parquet_tables(outcomes, decks, cards, valid):
    if valid is not None:
        decks, cards = valid
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        pd.DataFrame([[clean(v) for v in r] for r in decks], columns=["deck_id", "season", "leader"]).to_parquet(root / "decks.parquet")
        pd.DataFrame([[clean(a), clean(b), q] for a, b, q in cards] or None,
                     columns=["deck_id", "card", "quantity"]).to_parquet(root / "deck_cards.parquet")
        _check_outcome(from_dict({"data": {"decks": "decks.parquet", "deck_cards": "deck_cards.parquet"}}, root=root),
                       outcomes, must_load=valid is not None)


def test_random_parquet_tables_never_crash():
    outcomes = Outcomes()
    _random_parquet_tables(outcomes)
    outcomes.require_some_loaded()


line = st.one_of(
    st.sampled_from(["Leader: Orm", "Season: S1", "leader:", "Date: 2026-01-01", "Wins: 2", "Wins: x", "# note", "",
                     "3 Ember Fox", "2x Tide Call", "0 Stone Wall", "3", "x3 Fox", "Colour: red", "1 <b>Fox</b>"]),
    st.builds(lambda q, n: f"{q} {n}", st.integers(-1, 5), cell),
    cell,
)


@st.composite
def well_formed_decklists(draw) -> list[tuple[str, list[str], None]]:
    """Decklist files with the required headers, comments and card lines; hostile text only in names."""
    decks, cards = draw(well_formed(max_decks=3))
    files = []
    for i, (deck_id, season, leader) in enumerate(decks):
        lines = [f"# {draw(noise)} comment", f"Leader: {leader}", f"Season: {season}", f"Title: {draw(noise)} list", ""]
        lines += [f"{q}{draw(st.sampled_from(['', 'x']))} {card}" for d, card, q in cards if d == deck_id]
        files.append((f"deck-{i}", lines, None))
    return files


@SETTINGS
@given(files=st.one_of(
    st.lists(st.tuples(st.sampled_from(["a", "b", "c", "A"]), st.lists(line, max_size=8),
                       st.one_of(st.none(), st.binary(max_size=4))), min_size=1, max_size=3),
    well_formed_decklists(),
))
def _random_decklists(outcomes, files):
    valid = all(stem.startswith("deck-") for stem, _, _ in files)
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        folder = root / "lists"
        folder.mkdir()
        for stem, lines, junk in files:
            data = "\n".join(lines).encode("utf-8", errors="surrogatepass") + (junk or b"")
            (folder / f"{stem}.txt").write_bytes(data)
        _check_outcome(from_dict({"data": {"decklists": "lists"}}, root=root), outcomes, must_load=valid)


def test_random_decklists_never_crash():
    outcomes = Outcomes()
    _random_decklists(outcomes)
    outcomes.require_some_loaded()


@SETTINGS
@given(names=st.lists(st.one_of(cell, st.text(min_size=1, max_size=20)), min_size=1, max_size=6),
       terminator=st.sampled_from(["\n", "\r\n"]))
def test_card_names_agree_with_python_csv_module(names, terminator):
    # Reference: Python's csv module (RFC 4180 quoting) reading the same bytes gives the same card names
    # (after the loader's documented trimming of surrounding whitespace and control characters).
    # Names are then put in one form (README: names): format characters (category Cf) out, Unicode
    # NFC, per Python's unicodedata.
    import unicodedata

    from sitegen.load.names import clean_text, variant_key

    def as_name(text: str) -> str:
        text = "".join(c for c in clean_text(text) if unicodedata.category(c) != "Cf")
        return clean_text(unicodedata.normalize("NFC", text))

    kept, keys = [], set()
    for name in names:
        name = clean(name)
        if as_name(name) and variant_key(as_name(name)) not in keys and "\x00" not in name:
            kept.append(name)
            keys.add(variant_key(as_name(name)))
    assume(kept)  # hypothesis draws other names instead: an empty table would check nothing
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
