"""No silent wrong numbers or names: bounded counts, one form per name, clear errors for what
used to be tracebacks, dates in the season of the date as written, sideboards kept apart,
and seasons whose decks were all left out still shown (issue 17, items 4 to 9).

Every case is invented (names of an invented game) and planted by hand; references outside
this project are named beside each check.
"""
from __future__ import annotations

import os
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
    assert "no map is drawn" in _text(block) and "Map of the decks" not in _text(block)


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
