"""The demo data generator: deterministic, and true to the archetypes it plants.

The deck rules checked here (40-50 cards, at most 3 copies) are common
practice, no source; they are the rules the generator plants, so these are
checks of our own planted truth.
"""
from __future__ import annotations

import hashlib
import importlib.util
import json
from pathlib import Path

import pandas as pd
import pytest

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "demo_data"

_spec = importlib.util.spec_from_file_location("demo_generate", DEMO / "generate.py")
gen = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(gen)

SMALL = dict(seed=7, decks_per_season=400, seasons=3, leaders=3, cards_per_leader=160, neutral_cards=60, decklists=20)
FILES = ("cards.csv", "deck_cards.parquet", "decks.csv", "truth.csv", "truth.json", "matches.csv", "matches_truth.json")


def _digests(folder: Path) -> dict[str, str]:
    out = {}
    for p in sorted(folder.rglob("*")):
        if p.is_file():
            out[str(p.relative_to(folder))] = hashlib.sha256(p.read_bytes()).hexdigest()
    return out


def _parse_decklist(path: Path) -> tuple[dict[str, str], dict[str, int]]:
    """Header keys and {card: copies} of one text decklist (comments and blank lines skipped)."""
    header, cards = {}, {}
    for line in path.read_text(encoding="utf-8").splitlines():
        if not line.strip() or line.startswith("#"):
            continue
        if not cards and ":" in line and not line[0].isdigit():
            key, value = line.split(":", 1)
            header[key.strip()] = value.strip()
        else:
            qty, name = line.split(" ", 1)
            cards[name] = int(qty)
    return header, cards


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo_small")
    summary = gen.generate(out, **SMALL)
    return out, summary


def test_same_seed_same_bytes(small, tmp_path):
    # Two runs with the same seed write byte-identical files, decklists included.
    out, _ = small
    gen.generate(tmp_path, **SMALL)
    assert _digests(tmp_path) == _digests(out)
    assert len(_digests(out)) == len(FILES) + SMALL["decklists"]


def test_matches_leave_the_other_files_as_they_were(small, tmp_path):
    # The matches come from a random stream of their own: without them every other file has the same bytes.
    out, _ = small
    gen.generate(tmp_path, **{**SMALL, "matches_per_season": 0})
    without, with_matches = _digests(tmp_path), _digests(out)
    assert "matches.csv" not in without and "matches.csv" in with_matches
    assert without == {k: v for k, v in with_matches.items() if not k.startswith("matches")}


def test_matches_name_decks_of_one_season_and_allowed_results(small):
    # Checked with pandas against the deck table the generator wrote.
    out, _ = small
    decks = pd.read_csv(out / "decks.csv", dtype=str).set_index("deck_id")
    matches = pd.read_csv(out / "matches.csv", dtype=str)
    assert len(matches) > 0 and set(matches["result"]) <= {"win", "loss", "draw"}
    assert (matches["deck_id"] != matches["opponent_id"]).all()
    seasons = decks.loc[matches["deck_id"], "season"].to_numpy()
    assert (seasons == decks.loc[matches["opponent_id"], "season"].to_numpy()).all()


def test_other_seed_other_decks(small, tmp_path):
    # A different seed changes the decks (so the seed is really used).
    out, _ = small
    gen.generate(tmp_path, **{**SMALL, "seed": 8})
    assert (tmp_path / "deck_cards.parquet").read_bytes() != (out / "deck_cards.parquet").read_bytes()


def _same_parquet(fresh: Path, committed: Path) -> None:
    """Same schema (names, types, nullability) and the same rows, by content.

    Not by bytes: a Parquet file records the writer's version (pyarrow's "created_by", pandas'
    schema metadata), and pyproject allows any pyarrow from 14, so only the content is the data.
    """
    import pyarrow.parquet as pq

    a, b = pq.read_table(fresh), pq.read_table(committed)
    assert a.schema.equals(b.schema, check_metadata=False), (a.schema, b.schema)
    assert a.num_rows == b.num_rows > 0
    assert a.equals(b)


def test_committed_files_equal_a_fresh_default_run(tmp_path):
    # The committed demo_data files are what the default command writes (about 3 s).
    gen.generate(tmp_path)
    for name in FILES:
        if name.endswith(".parquet"):
            _same_parquet(tmp_path / name, DEMO / name)
        else:
            assert (tmp_path / name).read_bytes() == (DEMO / name).read_bytes(), name
    fresh = sorted(p.name for p in (tmp_path / "decklists").glob("*.txt"))
    assert fresh == sorted(p.name for p in (DEMO / "decklists").glob("*.txt"))
    for name in fresh:
        assert (tmp_path / "decklists" / name).read_bytes() == (DEMO / "decklists" / name).read_bytes()


def test_parquet_reads_back_as_plain_columns(small):
    # Long table: string deck_id and card, int quantity, sorted by deck_id then card, no duplicates.
    out, summary = small
    cards = pd.read_parquet(out / "deck_cards.parquet")
    assert list(cards.columns) == ["deck_id", "card", "quantity"]
    assert cards["quantity"].dtype == "int64"
    assert cards["deck_id"].map(type).eq(str).all() and cards["card"].map(type).eq(str).all()
    ordered = cards.sort_values(["deck_id", "card"]).reset_index(drop=True)
    pd.testing.assert_frame_equal(cards, ordered)
    assert not cards.duplicated(["deck_id", "card"]).any()
    assert len(cards) == summary["rows"]


def test_csv_format_has_the_same_rows(small, tmp_path):
    # --format csv writes the same long table as Parquet, and no Parquet file.
    out, _ = small
    gen.generate(tmp_path, **{**SMALL, "fmt": "csv"})
    assert not (tmp_path / "deck_cards.parquet").exists()
    as_csv = pd.read_csv(tmp_path / "deck_cards.csv", keep_default_na=False)
    pd.testing.assert_frame_equal(as_csv, pd.read_parquet(out / "deck_cards.parquet"))


def test_deck_rules_hold(small):
    # Every deck has 40-50 cards and at most 3 copies of a card (common practice, no source; planted).
    out, _ = small
    cards = pd.read_parquet(out / "deck_cards.parquet")
    sizes = cards.groupby("deck_id")["quantity"].sum()
    assert sizes.between(40, 50).all()
    assert cards["quantity"].between(1, 3).all()
    known = set(pd.read_csv(out / "cards.csv")["card"])
    assert set(cards["card"]) <= known


def test_decks_table_and_truth_cover_every_deck(small):
    # decks.csv and truth.csv list the same sorted deck ids as the long table; dates lie in their season.
    out, summary = small
    decks = pd.read_csv(out / "decks.csv")
    truth = pd.read_csv(out / "truth.csv")
    cards = pd.read_parquet(out / "deck_cards.parquet")
    assert list(decks.columns) == ["deck_id", "season", "date", "leader", "wins", "losses", "event", "player", "title"]
    assert decks["deck_id"].is_monotonic_increasing and decks["deck_id"].is_unique
    assert list(truth["deck_id"]) == list(decks["deck_id"])
    assert set(cards["deck_id"]) == set(decks["deck_id"])
    assert len(decks) == summary["decks"] == SMALL["seasons"] * SMALL["decks_per_season"]
    assert ((decks["wins"] + decks["losses"]).between(0, 12)).all()
    meta = json.loads((out / "truth.json").read_text())
    ranges = {s["name"]: (s["first"], s["last"]) for s in meta["seasons"]}
    lo = decks["season"].map(lambda s: ranges[s][0])
    hi = decks["season"].map(lambda s: ranges[s][1])
    assert ((decks["date"] >= lo) & (decks["date"] <= hi)).all()


def test_core_cards_are_played_by_nearly_every_member(small):
    # Planted: core cards are in ~96% of their archetype's decks each season; brews are ~3% of decks.
    out, _ = small
    truth = pd.read_csv(out / "truth.csv")
    cards = pd.read_parquet(out / "deck_cards.parquet").merge(truth, on="deck_id")
    meta = json.loads((out / "truth.json").read_text())
    for arch, info in meta["archetypes"].items():
        for season, core in info["core"].items():
            members = cards[(cards["archetype"] == arch) & (cards["season"] == season)]
            n = members["deck_id"].nunique()
            played = members[members["card"].isin(core)].groupby("card")["deck_id"].nunique()
            rate = played.reindex(core, fill_value=0) / n
            assert n > 0 and rate.mean() >= 0.9, (arch, season)
            if n >= 50:  # a rate over few decks is too noisy to hold each card to
                assert (rate >= 0.85).all(), (arch, season)
    assert 0.01 <= (truth["archetype"] == "brew").mean() <= 0.06


def test_truth_json_plants_a_split_and_counts(small):
    # At least one split whose children keep most of the parent's core; 3-6 archetypes per season x leader.
    out, _ = small
    meta = json.loads((out / "truth.json").read_text())
    assert meta["splits"], "no split planted"
    names = [s["name"] for s in meta["seasons"]]
    for split in meta["splits"]:
        parent = meta["archetypes"][split["parent"]]
        before = names[names.index(split["season"]) - 1]
        pcore = set(parent["core"][before])
        assert len(split["children"]) == 2
        for child in split["children"]:
            c = meta["archetypes"][child]
            assert c["split_from"] == split["parent"] and c["seasons"][0] == split["season"]
            assert len(pcore & set(c["core"][split["season"]])) >= 0.7 * len(pcore)
    for per_leader in meta["archetype_counts"].values():
        assert all(3 <= k <= 6 for k in per_leader.values())
    truth = pd.read_csv(out / "truth.csv")
    planted = truth[truth["archetype"] != "brew"].groupby(["season", "leader"])["archetype"].nunique()
    for (season, leader), k in planted.items():
        assert k == meta["archetype_counts"][season][leader]


def test_text_decklists_equal_the_long_table(small):
    # Each text decklist has the header of its deck row and exactly its cards and copies.
    out, _ = small
    decks = pd.read_csv(out / "decks.csv").set_index("deck_id")
    cards = pd.read_parquet(out / "deck_cards.parquet")
    files = sorted((out / "decklists").glob("*.txt"))
    assert len(files) == SMALL["decklists"]
    first_season = json.loads((out / "truth.json").read_text())["seasons"][0]["name"]
    for path in files:
        header, listed = _parse_decklist(path)
        row = decks.loc[path.stem]
        assert header["Season"] == row["season"] == first_season
        for key in ("Leader", "Date", "Title", "Event", "Player"):
            assert header[key] == row[key.lower()]
        assert int(header["Wins"]) == row["wins"] and int(header["Losses"]) == row["losses"]
        mine = cards[cards["deck_id"] == path.stem]
        assert listed == dict(zip(mine["card"], mine["quantity"]))


def test_more_leaders_than_named_get_invented_names(tmp_path):
    # Beyond the named leaders, generated names are distinct; card names are unique.
    gen.generate(tmp_path, **{**SMALL, "leaders": len(gen.LEADERS) + 2, "decks_per_season": 300, "seasons": 1})
    decks = pd.read_csv(tmp_path / "decks.csv")
    assert decks["leader"].nunique() == len(gen.LEADERS) + 2
    assert pd.read_csv(tmp_path / "cards.csv")["card"].is_unique


def test_bad_arguments_are_refused(tmp_path):
    # Arguments the generator cannot honour raise with the argument named.
    with pytest.raises(ValueError, match="fmt must be 'csv' or 'parquet'"):
        gen.generate(tmp_path, fmt="xlsx")
    with pytest.raises(ValueError, match="cards_per_leader must be at least 150"):
        gen.generate(tmp_path, cards_per_leader=20)
