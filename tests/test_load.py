"""Reading deck data: layout of DeckData, and one clear error per kind of bad input.

Truth for most tests is planted by hand in tiny invented tables. CSV parsing
is checked against Python's csv module (RFC 4180 reader), Parquet against
pandas writing the same frame.
"""
from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from sitegen.errors import ConfigError, DataError, DataErrors, SitegenError
from sitegen.load import load_data
from sitegen.model import CARD_ROW_COLUMNS, DECK_COLUMNS, DeckData

from _load_helpers import CARDS_CSV, DECKS_CSV, config, tables, write

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data"


def _messages(exc: SitegenError) -> list[str]:
    return [str(e) for e in exc.errors] if isinstance(exc, DataErrors) else [str(exc)]


def _load_fails(cfg) -> list[str]:
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    return _messages(info.value)


# -- the good path ---------------------------------------------------------------

def test_tables_load_to_the_documented_layout(tmp_path):
    # Planted: three decks, four card rows; checks columns, dtypes and sort orders of sitegen/model.py.
    data = load_data(tables(tmp_path))
    assert isinstance(data, DeckData)
    assert tuple(data.decks.columns) == DECK_COLUMNS
    assert tuple(data.cards.columns) == CARD_ROW_COLUMNS
    assert data.decks["deck_id"].tolist() == ["d1", "d2", "d3"]
    assert str(data.decks["wins"].dtype) == "Int64" and str(data.decks["losses"].dtype) == "Int64"
    assert data.decks["wins"].isna().tolist() == [False, False, True]
    assert data.decks.loc[0, "player"] == "Bo"  # kept: the site decides whether to publish it
    assert pd.isna(data.decks.loc[0, "event"])  # an empty optional cell is missing, not ""
    assert data.cards.values.tolist() == [["d1", "Ember Fox", 3], ["d1", "Tide Call", 2],
                                          ["d2", "Ember Fox", 1], ["d3", "Stone Wall", 4]]
    assert data.cards["quantity"].dtype == np.int8  # the narrowest type for counts up to 127
    # No seasons.order, no dates: by name, numbers compared as numbers.
    assert data.seasons == ("Season 2", "Season 10")
    assert data.card_info is None and data.findings == ()


def test_optional_columns_may_be_absent(tmp_path):
    # Planted: a deck table with only the required columns.
    cfg = tables(tmp_path, decks="deck_id,season,leader\nd1,S1,Orm\n", cards="deck_id,card,quantity\nd1,A,1\n")
    data = load_data(cfg)
    assert data.decks[["wins", "losses", "event", "player", "title"]].isna().all().all()


def test_column_names_come_from_settings(tmp_path):
    # Planted: renamed columns mapped through columns.* settings.
    cfg = tables(tmp_path, decks="id,period,hero\nx,S1,Orm\n", cards="id,name,n\nx,A,2\n",
                 columns={"deck_id": "id", "season": "period", "leader": "hero", "card": "name", "quantity": "n"})
    data = load_data(cfg)
    assert data.cards.values.tolist() == [["x", "A", 2]]
    assert data.decks[["deck_id", "season", "leader"]].values.tolist() == [["x", "S1", "Orm"]]


def test_byte_order_mark_and_surrounding_spaces_are_stripped(tmp_path):
    # Planted: a BOM before the header (spreadsheet "CSV UTF-8" export) and padded names.
    cfg = tables(tmp_path, decks="\ufeffdeck_id,season,leader\nd1, S1 ,  Orm \n",
                 cards="\ufeffdeck_id,card,quantity\nd1,  Ember Fox ,2\n")
    data = load_data(cfg)
    assert data.decks[["season", "leader"]].values.tolist() == [["S1", "Orm"]]
    assert data.cards["card"].tolist() == ["Ember Fox"]


def test_hostile_text_is_kept_as_data(tmp_path):
    # Escaping is the site's job: markup and quotes survive loading unchanged. Direction marks,
    # invisible format characters (Unicode category Cf, per Python's unicodedata), are taken out
    # of names, so that a name with one is not a second card (README: names).
    import unicodedata

    name = '<script>alert("x")</script> \u202eevil\u200f & \'q\''
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows([["deck_id", "card", "quantity"], ["d1", name, "1"]])
    cfg = tables(tmp_path, decks="deck_id,season,leader\nd1,S1,<b>Orm</b>\n", cards=buf.getvalue())
    data = load_data(cfg)
    assert data.cards["card"].tolist() == ["".join(c for c in name if unicodedata.category(c) != "Cf")]
    assert data.decks["leader"].tolist() == ["<b>Orm</b>"]


# -- CSV agrees with Python's csv module (RFC 4180) --------------------------------

RFC_NAMES = ['Fox, the "Quick"', 'line one\nline two', '""', 'a""b', ' spaced ', 'tab\there', 'crlf\r\ninside']


def test_csv_quoting_agrees_with_python_csv_module(tmp_path):
    # Reference: Python's csv module (RFC 4180 quoting) reads the same bytes; card names must agree.
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)
    writer.writerow(["deck_id", "card", "quantity"])
    for i, name in enumerate(RFC_NAMES):
        writer.writerow(["d1", name, str(i + 1)])
    path = write(tmp_path, "deck_cards.csv", buf.getvalue())
    with open(path, encoding="utf-8", newline="") as f:
        expected = sorted(row[1].strip() for row in list(csv.reader(f))[1:])
    cfg = tables(tmp_path, decks="deck_id,season,leader\nd1,S1,Orm\n", cards=buf.getvalue())
    data = load_data(cfg)
    assert sorted(data.cards["card"].tolist()) == expected
    assert data.cards["quantity"].sum() == sum(range(1, len(RFC_NAMES) + 1))


def test_row_numbers_count_like_a_spreadsheet(tmp_path):
    # A quoted cell spanning lines is one row and a blank line is a row, as the csv module numbers records.
    cards = 'deck_id,card,quantity\nd1,"two\nlines",1\n\nd1,Ember Fox,zero\n'
    rows = list(csv.reader(io.StringIO(cards, newline="")))
    expected_row = next(i for i, r in enumerate(rows, start=1) if r and r[2] == "zero")
    messages = _load_fails(tables(tmp_path, decks="deck_id,season,leader\nd1,S1,Orm\n", cards=cards))
    assert any(f"row {expected_row}, column 'quantity'" in m for m in messages), messages


def test_parquet_and_csv_of_the_same_data_load_equal(tmp_path):
    # Reference: pandas writes one frame as CSV and as Parquet; both must load to equal tables.
    decks = pd.read_csv(io.StringIO(DECKS_CSV), dtype=str, keep_default_na=False)
    cards = pd.read_csv(io.StringIO(CARDS_CSV), dtype={"deck_id": str, "card": str})
    decks.to_csv(tmp_path / "decks.csv", index=False)
    cards.to_csv(tmp_path / "deck_cards.csv", index=False)
    decks.to_parquet(tmp_path / "decks.parquet", index=False)
    cards.to_parquet(tmp_path / "deck_cards.pq", index=False)
    from_csv = load_data(config(tmp_path, data={"decks": "decks.csv", "deck_cards": "deck_cards.csv"}))
    from_parquet = load_data(config(tmp_path, data={"decks": "decks.parquet", "deck_cards": "deck_cards.pq"}))
    pd.testing.assert_frame_equal(from_csv.decks, from_parquet.decks)
    pd.testing.assert_frame_equal(from_csv.cards, from_parquet.cards)
    assert from_csv.seasons == from_parquet.seasons


def test_parquet_numbers_for_ids_and_results(tmp_path):
    # Planted: integer deck ids and float wins with a gap in Parquet become text ids and Int64 results.
    pd.DataFrame({"deck_id": [7, 8], "season": ["S1", "S1"], "leader": ["Orm", "Orm"],
                  "wins": [2.0, np.nan]}).to_parquet(tmp_path / "decks.parquet")
    pd.DataFrame({"deck_id": [7, 8], "card": ["A", "B"], "quantity": [1, 2]}).to_parquet(tmp_path / "cards.parquet")
    data = load_data(config(tmp_path, data={"decks": "decks.parquet", "deck_cards": "cards.parquet"}))
    assert data.decks["deck_id"].tolist() == ["7", "8"]
    assert data.decks["wins"].tolist()[0] == 2 and pd.isna(data.decks["wins"].tolist()[1])


def test_parquet_folder_partitioned_by_season(tmp_path):
    # Planted: two hive-style season folders; the season comes from the folder name.
    for season, ids in (("Spring", ["a1", "a2"]), ("Autumn", ["b1"])):
        part = tmp_path / "pq" / f"season={season}"
        part.mkdir(parents=True)
        pd.DataFrame({"deck_id": ids, "leader": "Orm"}).to_parquet(part / "decks.parquet")
        pd.DataFrame({"deck_id": ids, "card": "A", "quantity": 2}).to_parquet(part / "deck_cards.parquet")
    data = load_data(config(tmp_path, data={"parquet_folder": "pq"}))
    assert data.decks[["deck_id", "season"]].values.tolist() == [["a1", "Spring"], ["a2", "Spring"], ["b1", "Autumn"]]
    assert data.seasons == ("Autumn", "Spring")  # by name: no order given, no dates


# -- card table and name variants -------------------------------------------------

CARD_TABLE = "card,type,cost,rarity\nEmber Fox,Unit,2,common\nTide Call,Spell,1,rare\nStone Wall,Unit,3,common\n"


def test_card_table_is_kept_with_card_and_type_first(tmp_path):
    # Planted: card table with two further columns; all kept when columns.card_extra is empty.
    write(tmp_path, "cards.csv", "rarity,type,card,cost\ncommon,Unit,Ember Fox,2\nrare,Spell,Tide Call,1\ncommon,Unit,Stone Wall,3\n")
    data = load_data(tables(tmp_path, data={"cards": "cards.csv"}))
    assert list(data.card_info.columns)[:2] == ["card", "type"]
    assert set(data.card_info.columns) == {"card", "type", "rarity", "cost"}
    assert data.card_info["card"].tolist() == ["Ember Fox", "Stone Wall", "Tide Call"]
    assert data.card_info["cost"].tolist() == [2, 3, 1] and str(data.card_info["cost"].dtype) == "Int64"


def test_card_table_problems(tmp_path):
    # Planted: the same card twice (row 3, differs only by case) and a card_extra column that is absent.
    write(tmp_path, "cards.csv", "card,type\nEmber Fox,Unit\nember fox,Unit\nTide Call,Spell\nStone Wall,Unit\n")
    messages = _load_fails(tables(tmp_path, data={"cards": "cards.csv"}, columns={"card_extra": ["rarity"]}))
    assert "cards.csv, row 1, column 'rarity': missing column 'rarity' named in columns.card_extra" in messages[0]
    assert "cards.csv, row 3, column 'card': card listed twice" in messages[1] and "also row 2" in messages[1]


def test_card_extra_picks_columns(tmp_path):
    # Planted: columns.card_extra names one of two further columns.
    write(tmp_path, "cards.csv", CARD_TABLE)
    data = load_data(tables(tmp_path, data={"cards": "cards.csv"}, columns={"card_extra": ["rarity"]}))
    assert list(data.card_info.columns) == ["card", "type", "rarity"]


def test_unknown_card_is_an_error_when_a_card_table_is_given(tmp_path):
    # Planted: 'Ember Fax' is a misspelling; row 3 of the long table.
    write(tmp_path, "cards.csv", CARD_TABLE)
    cards = "deck_id,card,quantity\nd1,Tide Call,2\nd1,Ember Fax,3\nd2,Ember Fox,1\nd3,Stone Wall,4\n"
    messages = _load_fails(tables(tmp_path, cards=cards, data={"cards": "cards.csv"}))
    assert len(messages) == 1
    assert "deck_cards.csv, row 3, column 'card': card is not in the card table" in messages[0]
    assert "did you mean 'Ember Fox'?" in messages[0] and "'Ember Fax'" in messages[0]


def test_names_differing_by_case_or_spacing_become_one(tmp_path):
    # Planted: 'Ember Fox' twice, 'ember  fox' once: the most common spelling wins, with a warning.
    cards = "deck_id,card,quantity\nd1,Ember Fox,3\nd2,ember  fox,1\nd3,Ember Fox,2\n"
    data = load_data(tables(tmp_path, cards=cards))
    assert data.cards["card"].tolist() == ["Ember Fox"] * 3
    (finding,) = data.findings
    assert finding.kind == "name-variants" and "'ember  fox'" in finding.message and "'Ember Fox'" in finding.message


def test_two_spellings_in_one_deck_are_added_up(tmp_path):
    # Planted: d1 lists 'Ember Fox' 2 and 'ember fox' 1 -> one row of 3, and a finding saying so.
    cards = "deck_id,card,quantity\nd1,Ember Fox,2\nd1,ember fox,1\nd2,Ember Fox,1\nd3,Stone Wall,4\n"
    data = load_data(tables(tmp_path, cards=cards))
    assert data.cards.values.tolist() == [["d1", "Ember Fox", 3], ["d2", "Ember Fox", 1], ["d3", "Stone Wall", 4]]
    assert [f.kind for f in data.findings] == ["name-variants", "name-variants"]
    assert "1 card row(s)" in data.findings[1].message


def test_card_table_spelling_wins_over_deck_spelling(tmp_path):
    # Planted: decks write 'EMBER FOX'; the card table's 'Ember Fox' is used.
    write(tmp_path, "cards.csv", CARD_TABLE)
    cards = "deck_id,card,quantity\nd1,EMBER FOX,3\nd2,EMBER FOX,1\nd3,Stone Wall,4\n"
    data = load_data(tables(tmp_path, cards=cards, data={"cards": "cards.csv"}))
    assert set(data.cards["card"]) == {"Ember Fox", "Stone Wall"}
    assert [f.kind for f in data.findings] == ["name-variants"]


# -- seasons ------------------------------------------------------------------------

CALENDAR = [{"name": "Spring", "start": "2026-03-01", "end": "2026-05-31"},
            {"name": "Winter", "start": "2025-12-01", "end": "2026-02-28"}]


def test_calendar_assigns_seasons_in_calendar_order(tmp_path):
    # Planted: dates inside the two ranges (inclusive ends); Winter starts first.
    decks = "deck_id,date,leader\nd1,2026-03-01,Orm\nd2,2026-02-28,Orm\nd3,2026-05-31,Orm\n"
    cfg = tables(tmp_path, decks=decks, cards="deck_id,card,quantity\nd1,A,1\nd2,A,1\nd3,A,1\n",
                 seasons={"source": "calendar", "calendar": CALENDAR})
    data = load_data(cfg)
    assert data.decks["season"].tolist() == ["Spring", "Winter", "Spring"]
    assert data.seasons == ("Winter", "Spring")


def test_date_outside_every_season_is_an_error(tmp_path):
    # Planted: 2026-06-01 is one day after Spring ends (row 3).
    decks = "deck_id,date,leader\nd1,2026-03-01,Orm\nd2,2026-06-01,Orm\n"
    cfg = tables(tmp_path, decks=decks, cards="deck_id,card,quantity\nd1,A,1\nd2,A,1\n",
                 seasons={"source": "calendar", "calendar": CALENDAR})
    (message,) = _load_fails(cfg)
    assert "decks.csv, row 3, column 'date': date falls in no season of seasons.calendar (value '2026-06-01')" in message


def test_seasons_order_setting_and_earliest_date(tmp_path):
    # Planted: seasons.order wins; without it, the season whose first deck is earliest comes first.
    decks = "deck_id,season,date,leader\nd1,Zeta,2025-01-01,Orm\nd2,Alpha,2025-06-01,Orm\n"
    cards = "deck_id,card,quantity\nd1,A,1\nd2,A,1\n"
    assert load_data(tables(tmp_path, decks=decks, cards=cards)).seasons == ("Zeta", "Alpha")
    cfg = tables(tmp_path, decks=decks, cards=cards, seasons={"order": ["Alpha", "Zeta", "Unused"]})
    assert load_data(cfg).seasons == ("Alpha", "Zeta")
    with pytest.raises(ConfigError, match="seasons.order.*'Zeta'"):
        load_data(tables(tmp_path, decks=decks, cards=cards, seasons={"order": ["Alpha"]}))


# -- bad input: one clear message each ----------------------------------------------

def test_no_input_is_a_config_error(tmp_path):
    # Neither tables nor decklists: the message names both settings.
    with pytest.raises(ConfigError, match="data.decks.*data.decklists"):
        load_data(config(tmp_path))


def test_missing_file(tmp_path):
    write(tmp_path, "decks.csv", DECKS_CSV)
    cfg = config(tmp_path, data={"decks": "decks.csv", "deck_cards": "nope.csv"})
    with pytest.raises(DataError, match=r"nope\.csv: file not found; check the path given in setting 'data.deck_cards'"):
        load_data(cfg)


def test_missing_column_lists_the_columns_there_are(tmp_path):
    messages = _load_fails(tables(tmp_path, decks="deck_id,season,hero\nd1,S1,Orm\n"))
    assert messages == [f"{tmp_path / 'decks.csv'}, row 1, column 'leader': missing column 'leader' "
                        "(the file has 'deck_id', 'season', 'hero'); add the column or set columns.leader "
                        "to the name the file uses"]


@pytest.mark.parametrize("bad", ["0", "-1", "2.5", "three", ""])
def test_quantity_must_be_a_positive_whole_number(tmp_path, bad):
    # Planted: the bad quantity sits on row 3.
    cards = f"deck_id,card,quantity\nd1,Tide Call,2\nd1,Ember Fox,{bad}\nd2,Ember Fox,1\nd3,Stone Wall,4\n"
    (message,) = _load_fails(tables(tmp_path, cards=cards))
    assert f"deck_cards.csv, row 3, column 'quantity': quantity is not a whole number of 1 or more (value '{bad}')" in message


def test_wins_must_be_a_whole_number(tmp_path):
    decks = "deck_id,season,leader,wins\nd1,S1,Orm,lots\nd2,S1,Orm,2\nd3,S1,Orm,-1\n"
    messages = _load_fails(tables(tmp_path, decks=decks))
    assert [m.split(": ", 1)[0].rsplit(", ", 2)[-2:] for m in messages] == [["row 2", "column 'wins'"], ["row 4", "column 'wins'"]]


def test_deck_without_leader_or_season(tmp_path):
    decks = "deck_id,season,leader\nd1,,Orm\nd2,S1,  \nd3,S1,Vessa\n"
    messages = _load_fails(tables(tmp_path, decks=decks))
    assert "row 2, column 'season': deck has no season" in messages[0]
    assert "row 3, column 'leader': deck has no leader" in messages[1]


def test_calendar_needs_a_date_on_every_deck(tmp_path):
    decks = "deck_id,date,leader\nd1,,Orm\nd2,March 3rd,Orm\nd3,2026-03-03,Orm\n"
    messages = _load_fails(tables(tmp_path, decks=decks, seasons={"source": "calendar", "calendar": CALENDAR}))
    assert "row 2, column 'date': deck has no date" in messages[0]
    assert "row 3, column 'date': not a date (value 'March 3rd')" in messages[1]


def test_deck_ids_must_match_in_both_directions(tmp_path):
    # Planted: d4 only in the long table (row 5), d3 only in the deck table (row 4).
    cards = "deck_id,card,quantity\nd1,Tide Call,2\nd1,Ember Fox,3\nd2,Ember Fox,1\nd4,Stone Wall,4\n"
    messages = _load_fails(tables(tmp_path, cards=cards))
    assert any("deck_cards.csv, row 5, column 'deck_id': deck id is not in the deck table" in m and "'d4'" in m
               for m in messages)
    assert any("decks.csv, row 4, column 'deck_id': deck has no cards in" in m and "'d3'" in m for m in messages)
    files = [m.split(",", 1)[0] for m in messages]
    assert files == sorted(files)  # file then row order


def test_duplicate_deck_and_card_rows(tmp_path):
    cards = "deck_id,card,quantity\nd1,Ember Fox,2\nd2,Ember Fox,1\nd3,Stone Wall,4\nd1,Ember Fox,1\n"
    (message,) = _load_fails(tables(tmp_path, cards=cards))
    assert "row 5, column 'card': the same deck and card on two rows (deck 'd1', also row 2)" in message


def test_duplicate_deck_ids(tmp_path):
    decks = "deck_id,season,leader\nd1,S1,Orm\nd2,S1,Orm\nd1,S1,Orm\nd3,S1,Orm\n"
    (message,) = _load_fails(tables(tmp_path, decks=decks))
    assert "decks.csv, row 4, column 'deck_id': deck id appears on two rows (also row 2)" in message


def test_empty_card_name_after_stripping(tmp_path):
    cards = "deck_id,card,quantity\nd1,\x01 \t,2\nd2,Ember Fox,1\nd3,Stone Wall,4\n"
    (message,) = _load_fails(tables(tmp_path, cards=cards))
    assert "row 2, column 'card': card name is empty" in message


def test_not_utf8_names_the_byte_offset(tmp_path):
    raw = "deck_id,card,quantity\nd1,Ember Fox,2\n".encode() + b"d2,Caf\xe9,1\n"
    offset = raw.index(b"\xe9")
    (message,) = _load_fails(tables(tmp_path, cards=raw))
    assert f"not valid UTF-8 text (bad byte 0xe9 at byte offset {offset}, line 3)" in message


@pytest.mark.parametrize("content, expected", [
    (b"", "empty file"),
    (b"deck_id,card,quantity\n", "header only, no rows"),
    (b"\n\n\n", "no header row"),
    (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "binary data, not CSV text"),
])
def test_empty_header_only_and_binary_csv(tmp_path, content, expected):
    (message,) = _load_fails(tables(tmp_path, cards=content))
    assert expected in message and "deck_cards.csv" in message


def test_parquet_that_is_not_parquet(tmp_path):
    (message,) = _load_fails(tables(tmp_path, cards=CARDS_CSV, cards_name="deck_cards.parquet"))
    assert "deck_cards.parquet: not a readable Parquet file" in message


def test_unknown_extension(tmp_path):
    (message,) = _load_fails(tables(tmp_path, cards=CARDS_CSV, cards_name="deck_cards.xlsx"))
    assert "unknown table format '.xlsx'" in message


def test_ragged_row_is_named(tmp_path):
    cards = "deck_id,card,quantity\nd1,Ember Fox,2\nd2,Ember, Fox,1\nd3,Stone Wall,4\n"
    (message,) = _load_fails(tables(tmp_path, cards=cards))
    assert "deck_cards.csv, row 3: row has 4 fields but the header has 3" in message


def test_many_errors_are_all_collected(tmp_path):
    # Planted: 120 bad quantities; 50 are listed and one line counts the rest.
    rows = "".join(f"d1,Card {i},none\n" for i in range(120))
    messages = _load_fails(tables(tmp_path, decks="deck_id,season,leader\nd1,S1,Orm\n",
                                  cards="deck_id,card,quantity\n" + rows))
    assert len(messages) == 51 and "70 more rows like this" in messages[-1]


# -- text decklists ---------------------------------------------------------------

DECKLIST = """# tournament list
Leader: Vessa
season: S1
TITLE: Fox rush
Wins: 3

3 Ember Fox
2x Tide Call
1 Stone, "Old" Wall
"""


def test_decklists_load(tmp_path):
    write(tmp_path, "lists/deck-a.txt", DECKLIST)
    write(tmp_path, "lists/deck-b.txt", "Leader: Orm\nSeason: S1\n4 Stone Wall\n")
    data = load_data(config(tmp_path, data={"decklists": "lists"}))
    assert data.decks["deck_id"].tolist() == ["deck-a", "deck-b"]  # deck id = file stem
    assert data.decks["leader"].tolist() == ["Vessa", "Orm"]  # header keys in any case
    assert data.decks["title"].tolist()[0] == "Fox rush" and pd.isna(data.decks["title"].tolist()[1])
    assert data.decks["wins"].tolist()[0] == 3 and pd.isna(data.decks["wins"].tolist()[1])
    assert data.cards.values.tolist() == [["deck-a", "Ember Fox", 3], ["deck-a", "Stone, \"Old\" Wall", 1],
                                          ["deck-a", "Tide Call", 2], ["deck-b", "Stone Wall", 4]]


@pytest.mark.parametrize("text, line, expected", [
    ("Leader: Orm\nSeason: S1\n3 Ember Fox\nthree Tide Call\n", 4, "not a header line nor a card line"),
    ("Leader: Orm\nSeason: S1\n3 Ember Fox\nSeason: S2\n", 4, "header line 'Season:' after the first card line"),
    ("Leader: Orm\nColour: red\n3 Ember Fox\n", 2, "unknown header 'Colour'"),
    ("Leader: Orm\nSeason: S1\n0 Ember Fox\n", 3, "quantity is not a whole number of 1 or more"),
    ("Season: S1\n3 Ember Fox\n", 2, "deck has no leader"),
    ("Leader: Orm\nSeason: S1\n", 2, "no card lines"),
    ("Leader: Orm\nSeason: S1\n3 Ember Fox\n1 Ember Fox\n", 4, "the same deck and card on two rows"),
])
def test_decklist_errors_name_file_and_line(tmp_path, text, line, expected):
    write(tmp_path, "lists/bad.txt", text)
    write(tmp_path, "lists/good.txt", "Leader: Orm\nSeason: S1\n3 Ember Fox\n")
    messages = _load_fails(config(tmp_path, data={"decklists": "lists"}))
    assert any(m.startswith(f"{tmp_path / 'lists' / 'bad.txt'}, row {line}") and expected in m for m in messages), messages


def test_decklist_not_utf8(tmp_path):
    write(tmp_path, "lists/bad.txt", b"Leader: Orm\nSeason: S1\n3 Caf\xe9\n")
    (message,) = _load_fails(config(tmp_path, data={"decklists": "lists"}))
    assert "bad.txt, row 3: not valid UTF-8 text" in message


def test_huge_decklist_ends_in_a_clear_error(tmp_path):
    # A million card lines: streamed and refused at the card-line cap, never held whole in memory.
    path = tmp_path / "lists" / "huge.txt"
    path.parent.mkdir()
    with open(path, "w", encoding="utf-8") as f:
        f.write("Leader: Orm\nSeason: S1\n")
        for i in range(1_000_000):
            f.write(f"1 Card {i}\n")
    (message,) = _load_fails(config(tmp_path, data={"decklists": "lists"}))
    assert "huge.txt, row 2003: more than 2000 card lines" in message


def test_decklist_folder_without_decklists(tmp_path):
    (tmp_path / "lists").mkdir()
    with pytest.raises(DataError, match=r"no decklists \(no \*\.txt files\)"):
        load_data(config(tmp_path, data={"decklists": "lists"}))


# -- the demo data ------------------------------------------------------------------

def test_demo_decklists_match_the_demo_tables(tmp_path):
    # The demo generator writes the same first-season decks as a long table and as text decklists.
    needed = [DEMO / "decks.csv", DEMO / "cards.csv", DEMO / "decklists"]
    long_table = next((p for p in (DEMO / "deck_cards.parquet", DEMO / "deck_cards.csv") if p.exists()), None)
    if long_table is None or not all(p.exists() for p in needed) or not any((DEMO / "decklists").glob("*.txt")):
        pytest.skip("demo data not generated yet (run demo_data/generate.py)")
    from_lists = load_data(config(tmp_path, data={"decklists": str(DEMO / "decklists")}))
    from_tables = load_data(config(tmp_path, data={"decks": str(DEMO / "decks.csv"), "deck_cards": str(long_table),
                                                   "cards": str(DEMO / "cards.csv")}))
    ids = from_lists.decks["deck_id"]
    assert len(ids) > 0
    subset = from_tables.decks[from_tables.decks["deck_id"].isin(ids)].reset_index(drop=True)
    cols = ["deck_id", "season", "leader", "title"]
    pd.testing.assert_frame_equal(from_lists.decks[cols], subset[cols])
    cards = from_tables.cards[from_tables.cards["deck_id"].isin(ids)].reset_index(drop=True)
    # The two loads hold different decks, so their categoricals have different categories: compare values.
    as_text = {"deck_id": str, "card": str}
    pd.testing.assert_frame_equal(from_lists.cards.astype(as_text), cards.astype(as_text))


@pytest.mark.parametrize("top", [1, 127, 128, 40_000, 2**31 - 1, 2**31, 2**40])
def test_counts_kept_in_the_narrowest_signed_type_numpy_promotes_to(top):
    # Reference: numpy's min_scalar_type, which for a negative value gives the least signed type
    # holding it; a signed type holds ``top`` exactly when it holds -(top + 1) (two's complement).
    from sitegen.load.numbers import narrow_counts

    values = np.array([1, top, 1], dtype=np.int64)
    got = narrow_counts(values)
    assert got.dtype == np.min_scalar_type(-top - 1)
    assert got.tolist() == values.tolist()


def test_load_settings_hold_every_column_and_rule_setting(tmp_path):
    # Reference: the settings declared in sitegen.config (what a config file may give), so a
    # column or rule setting added there cannot be left out of what the load stage reads.
    from sitegen.config import SETTINGS
    from sitegen.load.settings import LoadSettings

    cfg = config(tmp_path, columns={"card_extra": ["rarity"], "match_result": "outcome"},
                 rules={"max_copies": 4}, data={"cards": "cards.csv"})
    got = LoadSettings.from_config(cfg)
    for setting in SETTINGS:
        if setting.section == "columns":
            want = cfg[setting.key]
            assert getattr(got.columns, setting.name) == (tuple(want) if isinstance(want, list) else want)
        elif setting.section == "rules":
            assert getattr(got.rules, setting.name) == cfg[setting.key]
    assert got.columns.card_extra == ("rarity",) and got.columns.match_result == "outcome"
    assert got.rules.max_copies == 4
    assert got.cards == tmp_path / "cards.csv" and got.decklists is None
    assert LoadSettings.of(got) is got
