"""Head-to-head results: the matches table's checks, the matchup counts and intervals, and the demo's planted matchups."""
from __future__ import annotations

import csv
import json
import types
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.proportion import proportion_confint

from _sites import make_project, read_rows, write_rows
from sitegen import config
from sitegen.analysis.matchups import matchups
from sitegen.build import build
from sitegen.errors import DataError, DataErrors
from sitegen.load.matches import read_matches

ROOT = Path(__file__).resolve().parents[1]


def _result(season: str, leader: str, assignment: dict[str, str]):
    """What matchups() reads of a partition's result: season, leader and the deck -> group assignments."""
    frame = pd.DataFrame({"deck_id": list(assignment), "archetype": list(assignment.values())})
    return types.SimpleNamespace(season=season, leader=leader, assignments=frame)


def _random_case(seed: int):
    rng = np.random.default_rng(seed)
    ids = [f"d{i:03d}" for i in range(60)]
    decks = pd.DataFrame({"deck_id": ids, "season": ["S1"] * 50 + ["S2"] * 10})
    group = {d: ("L1", f"a{rng.integers(1, 4)}") if i < 30 else ("L2", f"a{rng.integers(1, 3)}")
             for i, d in enumerate(ids[:50])}
    results = [_result("S1", "L1", {d: g[1] for d, g in group.items() if g[0] == "L1"}),
               _result("S1", "L2", {d: g[1] for d, g in group.items() if g[0] == "L2"})]
    n = 800
    first, second = rng.integers(0, 50, n), rng.integers(0, 50, n)
    keep = first != second
    matches = pd.DataFrame({"deck": np.array(ids)[first[keep]], "opponent": np.array(ids)[second[keep]],
                            "result": rng.choice(["win", "loss", "draw"], size=int(keep.sum()), p=[0.5, 0.45, 0.05])})
    return decks, results, matches, group


@pytest.mark.parametrize("seed", range(5))
def test_matchup_counts_and_wilson_intervals(seed):
    decks, results, matches, group = _random_case(seed)
    found = matchups(matches, decks, results, ["S1", "S2"])["S1"]
    cells = {(c.group, c.opponent): c for c in found.cells}
    # Reference counts: a plain Python loop over the rows, each game once per side (draws apart).
    want: dict = {}
    for deck, opp, res in matches.itertuples(index=False):
        a, b = group[deck], group[opp]
        if a == b:
            w = want.setdefault((a, a), [0, 0, 0])
            w[0 if res != "draw" else 2] += 1
            continue
        for x, y, r in ((a, b, res), (b, a, {"win": "loss", "loss": "win", "draw": "draw"}[res])):
            w = want.setdefault((x, y), [0, 0, 0])
            w[{"win": 0, "loss": 1, "draw": 2}[r]] += 1
    assert set(cells) == set(want)
    for key, (wins, losses, draws) in want.items():
        c = cells[key]
        assert c.draws == draws
        if key[0] == key[1]:
            # A mirror counts each decisive game once and is 50% by construction.
            assert c.mirror and c.games == wins and c.rate == 0.5
            continue
        assert (c.wins, c.losses, c.games) == (wins, losses, wins + losses)
        # Reference library: statsmodels proportion_confint(method="wilson"), 95%, over won and lost games.
        ref = proportion_confint(wins, wins + losses, alpha=0.05, method="wilson")
        assert c.rate == pytest.approx(wins / (wins + losses))
        assert c.interval == pytest.approx(ref, abs=1e-12)
        # The mirrored cell holds the same games from the other side.
        other = cells[(key[1], key[0])]
        assert (other.wins, other.losses, other.draws) == (c.losses, c.wins, c.draws)
    assert found.matches == len(matches) and found.skipped == 0


def test_matches_across_seasons_or_outside_any_partition_are_skipped():
    decks, results, matches, _ = _random_case(0)
    extra = pd.DataFrame({"deck": ["d000", "d055"], "opponent": ["d055", "d056"], "result": ["win", "loss"]})
    found = matchups(pd.concat([matches, extra], ignore_index=True), decks, results, ["S1", "S2"])
    assert found["S1"].skipped == 1  # d000 (S1) against d055 (S2)
    assert found["S2"].skipped == 1 and found["S2"].cells == ()  # S2's decks are in no partition here


# ---------------------------------------------------------------- the matches table's checks

def _project(tmp_path: Path, rows: list[list[str]]) -> tuple[config.Config, Path]:
    site = make_project(tmp_path / "p")
    _, decks = read_rows(site.parent / "data" / "decks.csv")
    write_rows(site.parent / "data" / "matches.csv", ["deck_id", "opponent_id", "result"],
               [[decks[int(a)][0] if a.isdigit() else a, decks[int(b)][0] if b.isdigit() else b, r] for a, b, r in rows])
    cfg = config.load(site).replace(data__matches="data/matches.csv", site__output=str(tmp_path / "out"),
                                    cache__folder=str(tmp_path / "cache"))
    return cfg, tmp_path / "out"


@pytest.mark.parametrize("rows,row,column,message", [
    ([["0", "1", "win"], ["0", "nope", "loss"]], 3, "opponent_id", "deck id not in the deck table"),
    ([["0", "0", "win"]], 2, "opponent_id", "a deck set against itself"),
    ([["0", "1", "win"], ["1", "2", "won"]], 3, "result", "result is not one of win, loss, draw"),
    ([["", "1", "win"]], 2, "deck_id", "empty deck id"),
])
def test_bad_matches_tables_give_clear_errors_and_write_nothing(tmp_path, rows, row, column, message):
    cfg, out = _project(tmp_path, rows)
    with pytest.raises((DataError, DataErrors)) as caught:
        build(cfg=cfg, quiet=True)
    text = str(caught.value)
    # The message names the file, the spreadsheet row (header is row 1), the column and the value.
    assert f"matches.csv, row {row}, column '{column}': {message}" in text
    assert "(value " in text and "\n" not in text
    assert not out.exists() or not any(out.iterdir())


def test_matches_results_read_in_any_case_and_several_errors_at_once(tmp_path):
    cfg, _ = _project(tmp_path, [["0", "1", " WIN "], ["1", "2", "Draw"], ["2", "3", "loss"]])
    decks = pd.read_csv(Path(cfg.root) / "data" / "decks.csv", dtype=str)
    got = read_matches(cfg, decks["deck_id"])
    assert got["result"].tolist() == ["win", "draw", "loss"]
    cfg, _ = _project(tmp_path / "two", [["0", "0", "win"], ["1", "x", "tie"]])
    with pytest.raises(DataErrors) as caught:
        read_matches(cfg, decks["deck_id"])
    assert [e.row for e in caught.value.errors] == [2, 3, 3]


def test_missing_match_column_names_the_setting(tmp_path):
    cfg, _ = _project(tmp_path, [["0", "1", "win"]])
    cfg = cfg.replace(columns__match_result="outcome")
    decks = pd.read_csv(Path(cfg.root) / "data" / "decks.csv", dtype=str)
    with pytest.raises(DataError, match="missing column 'outcome'.*columns.match_result"):
        read_matches(cfg, decks["deck_id"])


# ---------------------------------------------------------------- the demo's planted matchups

@pytest.mark.slow
def test_demo_planted_matchups_show_on_the_site(demo_site):
    # Truth: demo_data/matches_truth.json (the generator's planted chances) and truth.csv (each deck's
    # planted archetype). Each found archetype stands for the planted one most of its decks belong to.
    truth = pd.read_csv(ROOT / "demo_data" / "truth.csv", dtype=str).set_index("deck_id")["archetype"]
    planted = json.loads((ROOT / "demo_data" / "matches_truth.json").read_text(encoding="utf-8"))
    assigned = pd.read_csv(demo_site / "data" / "assignments.csv", dtype=str, keep_default_na=False)
    with open(demo_site / "data" / "matchups.csv", newline="", encoding="utf-8") as fh:
        cells = list(csv.DictReader(fh))
    assert cells
    checked = 0
    for season, info in planted.items():
        mine = assigned[(assigned["season"] == season) & (assigned["archetype"] != "other")]
        stands_for = {}
        for slug, ids in mine.groupby("archetype")["deck_id"]:
            labels = truth.loc[ids.tolist()].value_counts()
            if labels.iloc[0] / len(ids) > 0.8:
                stands_for.setdefault(labels.index[0], slug)
        for edge in info["planted"]:
            a, b = stands_for.get(edge["archetype"]), stands_for.get(edge["opponent"])
            assert a and b, f"{season}: planted archetypes {edge} were found"
            row = next(c for c in cells if c["season"] == season and c["archetype"] == a and c["opponent"] == b)
            low, high = float(row["low"]), float(row["high"])
            # Reference: statsmodels' Wilson interval over the row's own counts.
            ref = proportion_confint(int(row["wins"]), int(row["games"]), method="wilson")
            assert (low, high) == pytest.approx(ref, abs=1e-4)
            if edge["chance"] == 0.5:
                assert low <= 0.5 <= high, f"{season}: planted even matchup {edge} reads {row}"
            elif edge["chance"] > 0.5:
                assert low > 0.5, f"{season}: planted edge {edge} reads {row}"
            else:
                assert high < 0.5, f"{season}: planted edge {edge} reads {row}"
            checked += 1
    assert checked >= 6
