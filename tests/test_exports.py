"""The assignments export is written column-wise for speed; its bytes must be what Python's own
json and csv modules write for the same rows (the outside reference here: json.dumps with
indent=1, sort_keys=True, ensure_ascii=False; csv.writer with CRLF line ends, RFC 4180 quoting).

The tables are random and hostile by design (formula-looking ids, commas, quotes, line breaks,
NUL, emoji, -0.0, tiny and huge numbers, NaN, duplicate ids, decks in no result); their
truth is what the stdlib writes, not anything planted.
"""
from __future__ import annotations

import csv
import io
import json
import random
import types

import pandas as pd
import pytest

from sitegen.model import DeckData
from sitegen.site import exports

WEIRD = ["=1+2", "-x", "+y", "@z", "\tt", "\rr", "a,b", 'q"uote', "line\nbreak", "cr\rx", "ünï", "😀", "\x00nul",
         "sp ace", "", "'", "a\u2028b", "\\back"]
NUMBERS = [float("nan"), -0.0, 0.0, -1e-9, 1e-9, 1e-5, 123.4567891, -3.0000005, 2.5e-7, 1e20]


def _hostile(seed: int):
    rng = random.Random(seed)
    n = rng.randint(1, 60)
    ids = [rng.choice(WEIRD) + str(i) if rng.random() < 0.3 else f"d{rng.randint(0, 10**6):07d}" for i in range(n)]
    if seed % 3 == 0:
        ids[-1] = ids[0]  # a deck id twice
    seasons = ["S1", "S2", "=S3", "a,b"]
    decks = pd.DataFrame({
        "deck_id": pd.Series(ids, dtype="str"),
        "season": pd.Series([rng.choice(seasons + ["Zextra"]) for _ in ids], dtype="str"),
        "leader": pd.Series([rng.choice(["L1", "-L2", "Ł3", 'q"']) for _ in ids], dtype="str"),
    })
    if seed % 4 != 1:  # reported results (nullable, as the loader gives them), or none at all
        for col in ("wins", "losses"):
            decks[col] = pd.array([rng.choice([None, 0, 3, 12, 2**40]) for _ in ids], dtype="Int64")
    data = DeckData(decks=decks, cards=pd.DataFrame(), card_info=None, seasons=tuple(seasons[:3]))
    results = []
    for _ in range(rng.randint(0, 4)):
        sub = [i for i in ids if rng.random() < 0.5] + (["ghost"] if rng.random() < 0.3 else [])

        def number():
            return rng.choice(NUMBERS + [rng.uniform(-50, 50), round(rng.uniform(-50, 50), 3)])

        frame = pd.DataFrame({"deck_id": pd.Series(sub, dtype=object),
                              "archetype": pd.Series([rng.choice(["a1", "a2", "other", "zz"]) for _ in sub], dtype=object),
                              "distance": [number() for _ in sub], "x": [number() for _ in sub],
                              "y": [number() for _ in sub]})
        archetypes = (types.SimpleNamespace(key="a1", season="S1", leader="L1", slug="slug-1"),
                      types.SimpleNamespace(key="a2", season="S1", leader="L1", slug="slug,2"))
        results.append(types.SimpleNamespace(assignments=frame, archetypes=archetypes))
    slugs = {("S1", "L1", "a1"): "=page-1"} if seed % 2 else {}
    return data, results, slugs


@pytest.mark.parametrize("seed", range(25))
def test_assignment_exports_are_what_json_and_csv_write(seed):
    data, results, slugs = _hostile(seed)
    table = exports.assignment_table(data, results, slugs)
    rows = table.rows()
    assert len(rows) == len(data.decks)

    reference_json = (json.dumps(rows, sort_keys=True, indent=1, ensure_ascii=False, allow_nan=False) + "\n").encode("utf-8")
    assert exports.assignments_json(table) == reference_json
    assert json.loads(exports.assignments_json(table)) == json.loads(reference_json)

    buf = io.StringIO(newline="")
    writer = csv.writer(buf, lineterminator="\r\n")
    writer.writerow(exports.ASSIGNMENT_COLUMNS)
    for row in rows:
        writer.writerow([exports.safe_cell(row[c]) for c in exports.ASSIGNMENT_COLUMNS[:4]]
                        + [exports.fixed(row[c], 6) for c in exports.ASSIGNMENT_COLUMNS[4:7]]
                        + ["" if row[c] is None else str(row[c]) for c in ("wins", "losses")])
    written = exports.assignments_csv(table)
    assert written == buf.getvalue().encode("utf-8")
    # And read back by the csv module: every row whole, formula-looking text defused (OWASP).
    back = list(csv.reader(io.StringIO(written.decode("utf-8"), newline="")))
    assert len(back) == len(rows) + 1
    assert not any(cell.startswith(("=", "+", "-", "@")) for line in back[1:] for cell in line[:4])


def _by_season(seed: int):
    """The hostile tables with each result holding the decks of one season, as a partition does,
    and each deck id once (the loader allows nothing else)."""
    data, results, slugs = _hostile(seed)
    data = DeckData(decks=data.decks.drop_duplicates("deck_id").reset_index(drop=True), cards=data.cards,
                    card_info=None, seasons=data.seasons)
    season_of = dict(zip(data.decks["deck_id"], data.decks["season"]))
    per_season = []
    for i, r in enumerate(results):
        for season in sorted(set(data.decks["season"])):
            frame = r.assignments[[season_of.get(d) == season for d in r.assignments["deck_id"]]]
            per_season.append(types.SimpleNamespace(assignments=frame.reset_index(drop=True), archetypes=r.archetypes,
                                                    season=season, leader=f"L{i}", fingerprint=f"fp{i}",
                                                    n_decks=len(frame), rows_key=""))
    return data, per_season, slugs


@pytest.mark.parametrize("seed", range(12))
def test_assignments_made_season_by_season_are_the_same_bytes(seed):
    # Reference: the whole-table writers, themselves checked against json.dumps and csv.writer above.
    data, results, slugs = _by_season(seed)
    blocks = exports.ExportBlocks()
    csv_file, json_file = exports._assignment_files(data, results, slugs, blocks)
    _same_as_whole(csv_file, json_file, data, results, slugs)
    # Each block's byte ranges cut the files into the seasons' rows, in file order.
    seasons_in_file = [row["season"] for row in json.loads(json_file)]
    assert len(blocks.new_index) == len(set(seasons_in_file))
    header = csv_file.index(b"\r\n") + 2
    assert blocks.new_index[0][1] == header and blocks.new_index[-1][2] == len(csv_file)


def _same_as_whole(csv_file: bytes, json_file: bytes, data, results, slugs) -> None:
    table = exports.assignment_table(data, results, slugs)
    assert csv_file == exports.assignments_csv(table)
    assert json_file == exports.assignments_json(table)


@pytest.mark.parametrize("seed", [1, 4, 7])
def test_unchanged_seasons_are_copied_and_the_bytes_stay_the_same(seed):
    # Planted: a second export where one season's rows changed (a result's distances): that season's block
    # is made again, every other block copied from the first export's files, and the bytes equal a fresh export.
    data, results, slugs = _by_season(seed)
    first = exports.ExportBlocks()
    old_csv, old_json = exports._assignment_files(data, results, slugs, first)
    changed = [r for r in results if len(r.assignments)]
    if not changed:
        pytest.skip("this seed assigns no deck")
    victim = changed[0]
    victim.assignments = victim.assignments.assign(distance=[0.5] * len(victim.assignments))
    blocks = exports.ExportBlocks.from_files(old_csv, old_json, first.new_index)
    csv_file, json_file = exports._assignment_files(data, results, slugs, blocks)
    _same_as_whole(csv_file, json_file, data, results, slugs)
    assert blocks.reused == len(first.new_index) - 1


def _partitioned(excluded: frozenset = frozenset()):
    """Planted: two seasons x two leaders, each result holding exactly its partition's decks, as a
    build's results do; ``excluded`` decks are in no partition."""
    decks = pd.DataFrame({"deck_id": [f"d{i}" for i in range(12)],
                          "season": ["S1"] * 6 + ["S2"] * 6,
                          "leader": ["L1", "L2"] * 6})
    data = DeckData(decks=decks, cards=pd.DataFrame(), card_info=None, seasons=("S1", "S2"), excluded=excluded)
    results = []
    for (season, leader), part in decks[~decks["deck_id"].isin(excluded)].groupby(["season", "leader"]):
        frame = pd.DataFrame({"deck_id": part["deck_id"].tolist(), "archetype": ["a1"] * len(part),
                              "distance": [0.25] * len(part), "x": [1.0] * len(part), "y": [-1.0] * len(part)})
        results.append(types.SimpleNamespace(assignments=frame, archetypes=(), season=season, leader=leader,
                                             fingerprint=f"fp-{season}-{leader}", n_decks=len(part),
                                             rows_key=f"rows-{season}-{leader}"))
    return data, results


def _export_again(first: exports.ExportBlocks, old: tuple[bytes, bytes], data, results):
    blocks = exports.ExportBlocks.from_files(old[0], old[1], first.new_index)
    files = exports._assignment_files(data, results, {}, blocks)
    return blocks, files


def test_a_block_whose_partitions_rows_come_from_the_same_place_is_copied():
    # Planted: when every partition of a season names where its rows come from (rows_key: its
    # fingerprint and its map), the block is keyed by that and not by the rows; the bytes of a
    # block made again still equal what the whole-table writers give.
    data, results = _partitioned()
    first = exports.ExportBlocks()
    old = exports._assignment_files(data, results, {}, first)
    _same_as_whole(*old, data, results, {})

    blocks, files = _export_again(first, old, data, results)
    assert blocks.reused == 2 and files == old

    # A partition of S2 whose rows come from elsewhere (another map, say): that block alone is made again.
    results[3].assignments = results[3].assignments.assign(x=[2.0] * len(results[3].assignments))
    results[3].rows_key = "rows-elsewhere"
    blocks, files = _export_again(first, old, data, results)
    assert blocks.reused == 1
    _same_as_whole(*files, data, results, {})


def test_a_deck_left_out_changes_its_seasons_block():
    # Planted: d0 (S1) breaks a rule and is left out of its partition; the partitions' keys are
    # left as they were, so only the left-out decks can tell the blocks apart.
    data, results = _partitioned()
    first = exports.ExportBlocks()
    old = exports._assignment_files(data, results, {}, first)
    left_data, left_results = _partitioned(frozenset({"d0"}))
    for r in left_results:
        r.rows_key = f"rows-{r.season}-{r.leader}"
    blocks, files = _export_again(first, old, left_data, left_results)
    assert blocks.reused == 1  # S2's block
    _same_as_whole(*files, left_data, left_results, {})
    assert b'"d0"' in files[1] and b'"archetype": ""' in files[1]


def test_blocks_are_keyed_by_their_rows_when_the_counts_do_not_add_up():
    # Planted: a partition missing one of its decks (d1); the season's block then digests the rows
    # themselves, so a change of distances with the same rows_key is not copied over.
    data, results = _partitioned()
    results[1].n_decks -= 1
    first = exports.ExportBlocks()
    old = exports._assignment_files(data, results, {}, first)
    results[1].assignments = results[1].assignments.assign(distance=[0.5] * len(results[1].assignments))
    blocks, files = _export_again(first, old, data, results)
    assert blocks.reused == 1  # S2's block only
    _same_as_whole(*files, data, results, {})


@pytest.mark.parametrize("doc", [
    {"archetypes": [], "partitions": []},
    {"b": [{"z": 1, "a": [0.5, None, 'Ærin "quoted" \\ end']}, {"k": {"n": 2}}], "a": [1, "two"]},
])
def test_one_item_per_line_json_is_what_the_json_module_reads(doc):
    # Reference: the standard library's json.loads gives the document back; the file is UTF-8,
    # keys sorted as json.dumps(sort_keys=True) sorts them, one list item per line.
    data = exports.lines_json(doc)
    assert json.loads(data.decode("utf-8")) == doc
    lines = data.decode("utf-8").splitlines()
    for key, items in doc.items():
        for item in items:
            assert json.dumps(item, sort_keys=True, ensure_ascii=False) + "," in lines or \
                json.dumps(item, sort_keys=True, ensure_ascii=False) in lines
    assert data.endswith(b"}\n")


@pytest.mark.parametrize("seed", [0, 2, 3, 5])
def test_assignments_carry_each_decks_wins_losses_and_leader(seed):
    # Reference: the deck table itself, looked up row by row with pandas (nullable counts become null).
    data, results, slugs = _by_season(seed)
    rows = json.loads(exports.assignments_json(exports.assignment_table(data, results, slugs)))
    by_id = data.decks.set_index("deck_id")
    assert rows
    for row in rows:
        deck = by_id.loc[row["deck_id"]]
        assert row["leader"] == deck["leader"]
        for col in ("wins", "losses"):
            want = None if col not in by_id.columns or pd.isna(deck[col]) else int(deck[col])
            assert row[col] == want
