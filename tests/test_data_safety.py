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
