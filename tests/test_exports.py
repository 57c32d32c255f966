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
                        + [exports.fixed(row[c], 6) for c in exports.ASSIGNMENT_COLUMNS[4:]])
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
                                                    season=season, leader=f"L{i}", fingerprint=f"fp{i}"))
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
