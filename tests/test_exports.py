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
