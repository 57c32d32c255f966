"""No silent wrong numbers or names: bounded counts, one form per name, clear errors for what
used to be tracebacks, dates in the season of the date as written, sideboards kept apart,
and seasons whose decks were all left out still shown (issue 17, items 4 to 9).

Every case is invented (names of an invented game) and planted by hand; references outside
this project are named beside each check.
"""
from __future__ import annotations

import re
import subprocess
import sys
import unicodedata
from pathlib import Path

import html5lib
import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from sitegen.errors import ConfigError, DataError, DataErrors, SitegenError
from sitegen.load import load_data

from _load_helpers import config, tables, write

ROOT = Path(__file__).resolve().parents[1]


def _run(*args, cwd=ROOT):
    return subprocess.run([sys.executable, "-m", "sitegen", *args], capture_output=True, text=True, cwd=cwd)


def _doc(path: Path):
    """A built page parsed as browsers parse HTML (html5lib follows the WHATWG parsing algorithm)."""
    return html5lib.parse(path.read_bytes(), namespaceHTMLElements=False)


def _text(el) -> str:
    return "".join(el.itertext())


def _messages(exc: SitegenError) -> str:
    return "\n".join(str(e) for e in exc.errors) if isinstance(exc, DataErrors) else str(exc)


# -- 4. numbers that wrap ----------------------------------------------------------------------

def test_huge_csv_quantity_is_an_error_naming_file_row_and_value(tmp_path):
    # The case as seen: int64's largest value (2**63 - 1, numpy.iinfo) as a CSV quantity.
    big = str(np.iinfo(np.int64).max)
    cfg = tables(tmp_path, cards=f"deck_id,card,quantity\nd1,Tide Call,{big}\nd1,Ember Fox,3\nd2,Ember Fox,1\nd3,Stone Wall,4\n")
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    assert re.search(rf"deck_cards\.csv, row 2, column 'quantity': quantity is more than 1,000 copies.*'{big}'",
                     _messages(info.value))


def test_csv_quantity_beyond_int64_is_named_too_big_not_badly_written(tmp_path):
    cfg = tables(tmp_path, cards="deck_id,card,quantity\nd1,Tide Call,99999999999999999999999\nd2,Ember Fox,1\nd3,Stone Wall,1001\n")
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    text = _messages(info.value)
    assert "row 2" in text and "'99999999999999999999999'" in text and "row 4" in text and "'1001'" in text
    assert text.count("more than 1,000 copies") == 2 and "not a whole number" not in text


def test_parquet_uint64_quantity_is_an_error_not_minus_one(tmp_path):
    # The case as seen: uint64's largest value (2**64 - 1), which an int64 cast makes -1.
    write(tmp_path, "decks.csv", "deck_id,season,leader\nd1,S1,Orm\n")
    top = int(np.iinfo(np.uint64).max)
    pq.write_table(pa.table({"deck_id": ["d1", "d1"], "card": ["Ash", "Brine"],
                             "quantity": pa.array([top, 2], pa.uint64())}), tmp_path / "c.parquet")
    cfg = config(tmp_path, data={"decks": "decks.csv", "deck_cards": "c.parquet"})
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    assert re.search(rf"c\.parquet, row 2, column 'quantity': quantity is more than 1,000 copies.*{top}",
                     _messages(info.value))


def test_parquet_uint64_wins_are_an_error_not_negative(tmp_path):
    top = int(np.iinfo(np.uint64).max)
    pq.write_table(pa.table({"deck_id": ["d1"], "season": ["S1"], "leader": ["Orm"],
                             "wins": pa.array([top], pa.uint64()), "losses": pa.array([1], pa.uint64())}),
                   tmp_path / "decks.parquet")
    write(tmp_path, "cards.csv", "deck_id,card,quantity\nd1,Ash,2\n")
    cfg = config(tmp_path, data={"decks": "decks.parquet", "deck_cards": "cards.csv"})
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    assert re.search(rf"decks\.parquet, row 2, column 'wins': wins is more than 1,000,000 games.*{top}",
                     _messages(info.value))


def test_bounded_quantities_load_exactly(tmp_path):
    # The bound itself is accepted; the deck total is the plain sum (1000 + 999 + 1).
    cfg = tables(tmp_path, cards="deck_id,card,quantity\nd1,Tide Call,1000\nd1,Ember Fox,999\nd2,Ember Fox,1\nd3,Stone Wall,4\n")
    data = load_data(cfg)
    got = dict(zip(zip(data.cards["deck_id"].astype(str), data.cards["card"].astype(str)),
                   data.cards["quantity"].astype(int)))
    assert got[("d1", "Tide Call")] == 1000 and got[("d1", "Ember Fox")] == 999
    assert int(data.cards.loc[data.cards["deck_id"] == "d1", "quantity"].astype(np.int64).sum()) == 1999


def test_huge_quantity_fails_the_build_and_publishes_nothing(tmp_path):
    from _sites import make_project, read_rows, write_rows

    project = make_project(tmp_path / "guide")
    data = project.parent / "data"
    header, rows = read_rows(data / "deck_cards.csv")
    rows[0][2] = "9223372036854775807"
    write_rows(data / "deck_cards.csv", header, rows)
    proc = _run("build", "--quiet", str(project))
    assert proc.returncode == 1 and "Traceback" not in proc.stderr
    assert re.search(r"deck_cards\.csv, row 2, column 'quantity': quantity is more than 1,000", proc.stderr)
    assert not (project.parent / "site").exists()


# -- 6. tracebacks that became clear errors or results ---------------------------------------------

def test_seed_beyond_range_is_a_config_error_naming_the_range(tmp_path):
    from sitegen.config import from_dict

    with pytest.raises(ConfigError, match=r"analysis\.seed'.*4294967296 is above the largest allowed value "
                                          r"2147483647; allowed: 0 to 2147483647"):
        from_dict({"analysis": {"seed": 4294967296}}, root=tmp_path)
    from_dict({"analysis": {"seed": 2**31 - 1}}, root=tmp_path)  # the top of the range is accepted


def test_seed_beyond_range_fails_the_build_in_one_line(tmp_path):
    from _sites import make_project

    project = make_project(tmp_path / "guide")
    text = project.read_text(encoding="utf-8").replace("[analysis]\n", "[analysis]\nseed = 4294967296\n", 1)
    project.write_text(text, encoding="utf-8")
    proc = _run("build", "--quiet", str(project))
    assert proc.returncode == 1 and "Traceback" not in proc.stderr
    assert re.fullmatch(r"error: .*analysis\.seed.*allowed: 0 to 2147483647.*\n", proc.stderr)


def test_two_calendar_entries_of_one_name_are_a_config_error(tmp_path):
    from sitegen.config import from_dict

    calendar = [{"name": "Frost", "start": "2025-01-01", "end": "2025-01-31"},
                {"name": "Frost", "start": "2025-03-01", "end": "2025-03-31"}]
    with pytest.raises(ConfigError, match=r"seasons\.calendar'.*entries 1 and 2 are both named 'Frost'"):
        from_dict({"seasons": {"source": "calendar", "calendar": calendar}}, root=tmp_path)


def test_partition_of_one_single_card_skips_its_map_with_a_reason():
    # Forty decks of one leader, each holding the one card "Lone Ember": the map had failed.
    import pandas as pd

    from sitegen.analysis.embed import NO_MAP
    from sitegen.analysis.params import AnalysisParams
    from sitegen.analysis.partition import analyse_partition
    from sitegen.model import PartitionInput

    ids = [f"d{i:02d}" for i in range(40)]
    decks = pd.DataFrame({"deck_id": ids, "season": "S", "leader": "L",
                          "wins": pd.array([pd.NA] * 40, dtype="Int64"), "losses": pd.array([pd.NA] * 40, dtype="Int64")})
    part = PartitionInput("S", "L", decks, pd.DataFrame([(i, "Lone Ember", 1 + n % 3) for n, i in enumerate(ids)],
                                                        columns=["deck_id", "card", "quantity"]))
    result = analyse_partition(part, AnalysisParams(map_points=200, map_iterations=100))
    assert result.status == "clustered" and result.map_sample is None and result.map_points.empty
    assert NO_MAP in result.k_reason


def test_site_with_a_single_card_partition_builds_and_says_why_it_has_no_map(tmp_path):
    from _sites import make_project

    project = make_project(tmp_path / "guide")
    data = project.parent / "data"
    with open(data / "decks.csv", "a", encoding="utf-8") as f:
        f.writelines(f"z{i:03d},First Tide,Ilsa Lonewick,1,1\n" for i in range(40))
    with open(data / "deck_cards.csv", "a", encoding="utf-8") as f:
        f.writelines(f"z{i:03d},Quiet Oath,1\n" for i in range(40))
    proc = _run("build", "--quiet", str(project))
    assert proc.returncode == 0, proc.stderr
    page = _doc(project.parent / "site" / "seasons" / "first-tide" / "index.html")
    block = next(s for s in page.iter("section") if "leader-block" in (s.get("class") or "")
                 and "Ilsa Lonewick" in _text(s.find("h2")))
    assert "No map is drawn" in _text(block) and "Map of the decks" not in _text(block)


# -- 7. dates with a time zone ---------------------------------------------------------------------

def test_zoned_dates_count_in_the_season_of_the_date_as_written(tmp_path):
    # 2025-04-10T01:00+05:00 is 10 April where it was written (ISO 8601); in UTC it is 9 April, 20:00.
    import datetime as dt

    assert dt.datetime.fromisoformat("2025-04-10T01:00+05:00").date() == dt.date(2025, 4, 10)  # stdlib reference
    calendar = [{"name": "Mud", "start": "2025-04-01", "end": "2025-04-09"},
                {"name": "Thaw", "start": "2025-04-10", "end": "2025-04-30"}]
    decks = ("deck_id,date,leader\n"
             "d1,2025-04-10T01:00+05:00,Orm\n"
             "d2,2025-04-09T23:30-07:00,Orm\n"
             "d3,2025-04-10T00:15Z,Vessa\n"
             "d4,2025-04-09,Vessa\n")
    cfg = tables(tmp_path, decks=decks, cards="deck_id,card,quantity\nd1,A,1\nd2,A,1\nd3,A,1\nd4,A,1\n",
                 seasons={"source": "calendar", "calendar": calendar})
    data = load_data(cfg)
    season = dict(zip(data.decks["deck_id"], data.decks["season"]))
    expected = {i: ("Thaw" if dt.datetime.fromisoformat(t).date() >= dt.date(2025, 4, 10) else "Mud")
                for i, t in (line.split(",")[:2] for line in decks.splitlines()[1:])}
    assert season == expected == {"d1": "Thaw", "d2": "Mud", "d3": "Thaw", "d4": "Mud"}


# -- 9. decklists: sideboards; CSV separators ----------------------------------------------------

_HEAD = "Leader: Orm\nSeason: Frost\n\n3 Ember Fox\n2 Tide Call\n"


@pytest.mark.parametrize("marker", ["# Sideboard", "Sideboard:", "Sideboard", "SIDEBOARD", "## sideboard :"])
def test_a_marked_sideboard_is_kept_out_of_the_main_deck(tmp_path, marker):
    # The case as seen: "# Sideboard" was a comment and its cards joined the main deck.
    write(tmp_path / "lists", "d1.txt", _HEAD + f"{marker}\n4 Stone Wall\n\n1 Ember Fox\n")
    data = load_data(config(tmp_path, data={"decklists": "lists"}))
    rows = sorted(zip(data.cards["card"].astype(str), data.cards["quantity"].astype(int)))
    assert rows == [("Ember Fox", 3), ("Tide Call", 2)]  # Stone Wall and the 4th fox are sideboard only
    assert not any(f.kind == "sideboard" for f in data.findings)  # marked: nothing to warn about


def test_a_blank_line_then_cards_is_a_sideboard_and_says_so(tmp_path):
    write(tmp_path / "lists", "d1.txt", _HEAD + "\n4 Stone Wall\n1 Ember Fox\n")
    data = load_data(config(tmp_path, data={"decklists": "lists"}))
    assert sorted(data.cards["card"].astype(str)) == ["Ember Fox", "Tide Call"]
    assert int(data.cards["quantity"].astype(int).sum()) == 5
    (note,) = [f.message for f in data.findings if f.kind == "sideboard"]
    assert "d1.txt (2 card line(s) after the blank line 6)" in note and "'Sideboard' line" in note


def test_a_second_unmarked_block_or_sideboard_is_an_error(tmp_path):
    write(tmp_path / "lists", "d1.txt", _HEAD + "\n4 Stone Wall\n\n1 Bell Tower\n")
    write(tmp_path / "lists", "d2.txt", _HEAD + "Sideboard\n4 Stone Wall\nSideboard:\n1 Bell Tower\n")
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(config(tmp_path, data={"decklists": "lists"}))
    text = _messages(info.value)
    assert re.search(r"d1\.txt, row 9.*card lines after a second blank line below the main cards", text)
    assert re.search(r"d2\.txt, row 8.*a second sideboard \(the first starts on line 6\)", text)
    assert "move header lines" not in text


def test_sideboard_before_the_main_cards_is_an_error_with_the_right_advice(tmp_path):
    write(tmp_path / "lists", "d1.txt", "Leader: Orm\nSeason: Frost\nSideboard:\n4 Stone Wall\n")
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(config(tmp_path, data={"decklists": "lists"}))
    text = _messages(info.value)
    assert "d1.txt, row 3" in text and "sideboard line before any card of the main deck" in text
    assert "move header lines" not in text


@pytest.mark.parametrize("sep", [";", "\t"])
def test_semicolon_and_tab_separated_tables_are_read(tmp_path, sep):
    # What a spreadsheet saves as "CSV" where the decimal mark is a comma; the csv module (stdlib)
    # writes the reference files with that delimiter.
    import csv
    import io

    def table(rows):
        out = io.StringIO()
        csv.writer(out, delimiter=sep, lineterminator="\n").writerows(rows)
        return out.getvalue()

    decks = table([["deck_id", "season", "leader", "title"], ["d1", "S1", "Orm", "Fox; or not"], ["d2", "S1", "Vessa", ""]])
    cards = table([["deck_id", "card", "quantity"], ["d1", "Ash, the Elder", "2"], ["d2", "Bell", "1"]])
    data = load_data(tables(tmp_path, decks=decks, cards=cards))
    assert data.decks["title"].tolist()[0] == "Fox; or not"
    assert sorted(zip(data.cards["card"].astype(str), data.cards["quantity"].astype(int))) == [("Ash, the Elder", 2), ("Bell", 1)]


def test_an_unknown_separator_is_named_in_the_error(tmp_path):
    cfg = tables(tmp_path, decks="deck_id|season|leader\nd1|S1|Orm\n")
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    assert re.search(r"decks\.csv, row 1.*missing column 'deck_id'.*holding '\|'.*commas, semicolons or tabs",
                     _messages(info.value))


# -- 5. look-alike names -----------------------------------------------------------------------------

def _one_form(text: str) -> str:
    """The reference form of a name (README: names), from Python's unicodedata: format characters
    (category Cf) removed, Unicode NFC, surrounding whitespace trimmed."""
    text = "".join(c for c in text if unicodedata.category(c) != "Cf")
    return unicodedata.normalize("NFC", text).strip()


COMPOSED = "Ash\u00e9n Oracle"          # é as one code point
DECOMPOSED = "Ashe\u0301n Oracle"       # e + COMBINING ACUTE ACCENT
ZERO_WIDTH = "Ash\u00e9n\u200b Oracle"  # a zero-width space inside
RTL_MARK = "Ash\u00e9n Oracle\u200f"    # a trailing right-to-left mark


def test_look_alike_card_and_leader_spellings_are_one_name_with_a_warning(tmp_path):
    assert len({COMPOSED, DECOMPOSED, ZERO_WIDTH, RTL_MARK}) == 4  # four different strings...
    assert len({_one_form(n) for n in (COMPOSED, DECOMPOSED, ZERO_WIDTH, RTL_MARK)}) == 1  # ...one name (stdlib)
    cards = "deck_id,card,quantity\n" + "".join(
        f"d{i},{n},{i}\n" for i, n in enumerate((COMPOSED, DECOMPOSED, ZERO_WIDTH, RTL_MARK), start=1))
    decks = "deck_id,season,leader\nd1,Fr\u00f8st,Orm\u00e9\nd2,Fr\u00f8st,Orme\u0301\nd3,Fr\u00f8st,Orm\u00e9\u200b\nd4,Fr\u00f8st,Vessa\n"
    data = load_data(tables(tmp_path, decks=decks, cards=cards))
    assert set(data.cards["card"].astype(str)) == {_one_form(COMPOSED)}
    assert sorted(set(data.decks["leader"])) == sorted({_one_form("Orm\u00e9"), "Vessa"})
    messages = [f.message for f in data.findings if f.kind == "name-variants"]
    card_note = next(m for m in messages if m.startswith("card name written 4 ways that look alike"))
    # The spellings as a reader can tell them apart: escapes for the invisible and combining characters.
    for written in ("'Ashe\\u0301n Oracle' (1 rows)", "'Ashén Oracle' (1 rows)", "'Ashén\\u200b Oracle' (1 rows)",
                    "'Ashén Oracle\\u200f' (1 rows)"):
        assert written in card_note
    assert any(m.startswith("leader written 3 ways that look alike") for m in messages)


def test_a_look_alike_card_table_name_is_matched_and_a_foreign_letter_is_named(tmp_path):
    write(tmp_path, "cards.csv", f"card,type\n{COMPOSED},Omen\n")
    cfg = tables(tmp_path, decks="deck_id,season,leader\nd1,S1,Orm\n",
                 cards=f"deck_id,card,quantity\nd1,{DECOMPOSED},2\nd1,\u0410sh\u00e9n Oracle,1\n", data={"cards": "cards.csv"})
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    text = _messages(info.value)
    assert "row 2" not in text  # the decomposed spelling is the card table's card
    # The Cyrillic А (U+0410) looks like the Latin A: the message names both code points (unicodedata.name).
    assert re.search(rf"row 3.*did you mean 'Ashén Oracle'\?; character 1 differs: U\+0410 {unicodedata.name(chr(0x410))} "
                     rf"here, U\+0041 {unicodedata.name('A')} there", text)


def test_card_table_listing_one_card_in_two_look_alike_spellings_shows_both(tmp_path):
    write(tmp_path, "cards.csv", f"card,type\n{COMPOSED},Omen\n{DECOMPOSED},Omen\n")
    cfg = tables(tmp_path, decks="deck_id,season,leader\nd1,S1,Orm\n",
                 cards=f"deck_id,card,quantity\nd1,{COMPOSED},2\n", data={"cards": "cards.csv"})
    with pytest.raises((DataError, DataErrors)) as info:
        load_data(cfg)
    assert re.search(r"cards\.csv, row 3.*card listed twice.*\(also row 2: 'Ashén Oracle'\).*value 'Ashe\\u0301n Oracle'",
                     _messages(info.value))


def test_look_alike_names_make_one_page_and_right_to_left_names_are_isolated(tmp_path):
    from _sites import make_project, read_rows, write_rows

    from sitegen.site.templating import isolate

    project = make_project(tmp_path / "guide")
    data = project.parent / "data"
    header, rows = read_rows(data / "deck_cards.csv")
    spellings = ["Quiet \u00d3ath", "Quiet O\u0301ath", "Quiet \u00d3ath\u200b", "\u200fQuiet \u00d3ath"]
    seen = 0
    for row in rows:
        if row[1] == "Quiet Oath":
            row[1] = spellings[seen % 4]
            seen += 1
    assert seen >= 4
    write_rows(data / "deck_cards.csv", header, rows)
    header, cards = read_rows(data / "cards.csv")
    write_rows(data / "cards.csv", header, [[("Quiet \u00d3ath" if r[0] == "Quiet Oath" else r[0]), *r[1:]] for r in cards])
    # A leader whose name is written in a right-to-left script (invented: "Dalet of the Marsh" in Hebrew letters).
    rtl_leader = "\u05d3\u05dc\u05ea Marsh"
    header, decks = read_rows(data / "decks.csv")
    old_leader = decks[0][2]
    write_rows(data / "decks.csv", header, [[*r[:2], rtl_leader if r[2] == old_leader else r[2], *r[3:]] for r in decks])
    proc = _run("build", "--quiet", str(project))
    assert proc.returncode == 0, proc.stderr
    site = project.parent / "site"
    pages = sorted(p.name for p in (site / "cards").glob("quiet-*ath*.html"))
    assert len(pages) == 1 and not any(p.endswith("-2.html") for p in pages), pages
    page = _doc(site / "cards" / pages[0])
    assert _text(page.find(".//h1")) == _one_form("Quiet O\u0301ath")
    # The right-to-left name: <bdi> in the heading, FIRST STRONG ISOLATE ... POP DIRECTIONAL ISOLATE
    # (U+2068, U+2069; Unicode UAX #9) in the title, where no markup can go.
    leader_page = next(p for p in (site / "leaders").glob("*.html") if rtl_leader in p.read_text("utf-8"))
    doc = _doc(leader_page)
    assert doc.find(".//h1/bdi") is not None and _text(doc.find(".//h1/bdi")) == rtl_leader
    assert _text(doc.find(".//title")).startswith("\u2068" + rtl_leader + "\u2069")
    assert isolate("\u202eevil") == "\u2068\u202eevil\u2069" and isolate("Quiet Oath") == "Quiet Oath"


# -- 8. a season whose every deck was left out -----------------------------------------------------

def test_season_of_only_excluded_decks_keeps_its_page_with_its_breakers(tmp_path):
    from _sites import make_project, read_rows, write_rows

    project = make_project(tmp_path / "guide")
    data = project.parent / "data"
    _, decks = read_rows(data / "decks.csv")
    second = {r[0] for r in decks if r[1] == "Second Tide"}
    assert second and len(second) < len(decks)
    header, rows = read_rows(data / "deck_cards.csv")
    broken: dict[str, str] = {}
    for row in rows:
        if row[0] in second and row[0] not in broken:
            row[2] = "5"  # over rules.max_copies (3): every deck of the season breaks a rule
            broken[row[0]] = row[1]
    write_rows(data / "deck_cards.csv", header, rows)
    text = project.read_text(encoding="utf-8").replace("[rules]\n", "[rules]\nexclude_breakers = true\n", 1)
    project.write_text(text, encoding="utf-8")
    proc = _run("build", "--quiet", str(project))
    assert proc.returncode == 0, proc.stderr
    site = project.parent / "site"
    page = _doc(site / "seasons" / "second-tide" / "index.html")
    notes = [_text(li) for li in page.iter("li")]
    assert any("Every deck of this season breaks a deck-building rule" in n and "rules.exclude_breakers" in n for n in notes)
    left_out = next(n for n in notes if "left out of the analysis" in n)
    assert left_out.startswith(f"{len(second)} decks left out") and sorted(second)[0] in left_out
    first = sorted(second)[0]
    assert f"deck {first} plays 5 copies of '{broken[first]}'; the limit is 3 copies of a card" in notes
    lede = next(p for p in page.iter("p") if "lede" in (p.get("class") or ""))
    assert _text(lede).startswith("No deck of this season is analysed")
    # The front page's latest season is the last one analysed.
    front = _doc(site / "index.html")
    latest = next(a for a in front.iter("a") if _text(a) == "Latest season")
    assert latest.get("href").endswith("seasons/first-tide/index.html")
