"""The analysis as downloadable files: CSV and JSON, byte for byte repeatable.

``data/assignments.csv`` / ``.json``: every deck with its archetype slug
(``other`` for decks that fit no archetype, empty for decks that were not
clustered: left out by a rule or in a partition too small to cluster), its
distance to the archetype's centre and its map position where drawn.
``data/archetypes.json``: every archetype and each partition's chosen k and
silhouette curve. Per-archetype CSV downloads (card table, decklist) are made
here too.

CSV cells that hold data text (names, ids) and start with ``=``, ``+``,
``-``, ``@``, a tab or a carriage return get a leading single quote, so a
spreadsheet shows them as text instead of running them as formulas (the
OWASP "CSV Injection" advice). Numbers we format ourselves are left alone.
"""
from __future__ import annotations

import csv
import hashlib
import io
import json
import math
from dataclasses import dataclass, field, replace
from typing import Any, Callable, Iterable, Sequence

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from ..reuse.digest import feed_column
from ..model import ALL_LEADERS, OTHER_KEY, Archetype, DeckData, PartitionResult

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def safe_cell(text: object) -> str:
    """A data text cell made harmless for spreadsheets (OWASP CSV injection)."""
    s = "" if text is None else str(text)
    return "'" + s if s.startswith(_FORMULA_START) else s


def fixed(x: float | None, digits: int = 4) -> str:
    """A float in fixed notation, empty for missing or NaN (stable across runs)."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    text = f"{float(x):.{digits}f}"
    return "0." + "0" * digits if text == "-0." + "0" * digits else text


def csv_bytes(header: Sequence[str], rows: Iterable[Sequence[str]]) -> bytes:
    """UTF-8 CSV (RFC 4180 quoting, CRLF line ends) of already-made-safe string cells."""
    buf = io.StringIO(newline="")
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(header)
    for row in rows:
        w.writerow(row)
    return buf.getvalue().encode("utf-8")


def json_bytes(obj: Any) -> bytes:
    """Sorted, indented UTF-8 JSON with a final newline."""
    return (json.dumps(obj, sort_keys=True, indent=1, ensure_ascii=False, allow_nan=False) + "\n").encode("utf-8")


def lines_json(doc: dict[str, list]) -> bytes:
    """UTF-8 JSON of a document of lists, one list item per line (keys sorted).

    Each item is written by the json module's C encoder, which indented
    output cannot use: at a million decks the archetypes document took 0.9 s
    indented and takes a tenth of that so. A diff of two builds' files still
    shows which archetypes and partitions changed, line by line.
    """
    def dumps(value: Any) -> str:
        return json.dumps(value, sort_keys=True, ensure_ascii=False, allow_nan=False)

    parts = []
    for key in sorted(doc):
        items = ",\n".join(dumps(item) for item in doc[key])
        parts.append(f"{dumps(key)}: [\n{items}\n]" if items else f"{dumps(key)}: []")
    return ("{\n" + ",\n".join(parts) + "\n}\n").encode("utf-8")


def _round(x: float | None, digits: int = 6) -> float | None:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return None
    return round(float(x), digits)


CARD_TABLE_HEADER = ("card", "type", "share", "mean_copies", "at_1", "at_2", "at_3_plus", "tier")


def card_table_csv(arch: Archetype) -> bytes:
    """An archetype's card-inclusion table as CSV (shares as fractions, 4 places)."""
    rows = [(safe_cell(c.card), safe_cell(c.card_type), fixed(c.share), fixed(c.mean_copies, 2),
             fixed(c.at_1), fixed(c.at_2), fixed(c.at_3_plus), safe_cell(c.tier)) for c in arch.inclusion]
    return csv_bytes(CARD_TABLE_HEADER, rows)


#: Columns of an archetype's card-results CSV (the site-wide file puts season, leader, archetype first).
CARD_RESULT_HEADER = ("card", "copies", "decks_with", "wins_with", "games_with", "rate_with", "decks_without",
                      "wins_without", "games_without", "rate_without", "diff", "low", "high", "p_value", "verdict")


def card_result_verdict(r) -> str:
    """'holds up', 'could be chance' or 'small sample' (see sitegen.analysis.results)."""
    return "small sample" if r.small else ("holds up" if r.survives else "could be chance")


def card_result_cells(r) -> tuple[str, ...]:
    """One card result as CSV cells (rates and interval as fractions, 4 places; p-value 6 significant digits)."""
    return (safe_cell(r.card), r.copies, str(r.decks_with), str(r.wins_with), str(r.games_with),
            fixed(r.wins_with / r.games_with), str(r.decks_without), str(r.wins_without), str(r.games_without),
            fixed(r.wins_without / r.games_without), fixed(r.diff), fixed(r.low), fixed(r.high),
            "" if r.p_value is None else f"{r.p_value:.6g}", card_result_verdict(r))


def card_results_csv(arch: Archetype) -> bytes:
    """An archetype's card results as CSV (see :data:`CARD_RESULT_HEADER`)."""
    return csv_bytes(CARD_RESULT_HEADER, [card_result_cells(r) for r in arch.card_results])


#: Columns of ``data/matchups.csv`` (and keys of ``data/matchups.json``).
MATCHUP_HEADER = ("season", "leader", "archetype", "opponent_leader", "opponent", "wins", "losses", "draws", "games",
                  "win_rate", "low", "high", "small", "mirror")

_CARD_RESULT_COLUMNS = (
    ("card", "The card."),
    ("copies", "Which decks count as playing it: any (1 or more copies), 1, 2 or 3+ copies."),
    ("decks_with, wins_with, games_with", "Decks playing it so (with reported results), their won games, their won plus lost games."),
    ("rate_with", "wins_with / games_with."),
    ("decks_without, wins_without, games_without", "The same for the archetype's decks not playing the card."),
    ("rate_without", "wins_without / games_without."),
    ("diff", "rate_with - rate_without."),
    ("low, high", "95% interval of diff: Newcombe's hybrid score interval (method 10 of Newcombe 1998)."),
    ("p_value", "Two-sided Fisher exact test on the won and lost games; empty for a small sample."),
    ("verdict", "holds up (kept by the Benjamini-Hochberg rule at a 5% false discovery rate over the archetype's "
                "tested rows), could be chance, or small sample (fewer than 50 games or 10 decks on a side: not tested)."),
)


def downloads(with_matches: bool) -> tuple:
    """Every download of a site, with its columns described, for the data page."""
    from .pages import Download

    where = (("season", "The season."), ("leader", "The leader of the partition (* when leaders are pooled)."),
             ("archetype", "The archetype's slug, as in its page's address; other for decks that fit no archetype."))
    out = [
        Download(title="Every deck and its archetype", href="data/assignments.csv", linked=True,
                 description="One row per deck, by season, leader and deck id; also as JSON (data/assignments.json, "
                             "one object per deck).",
                 columns=(("deck_id", "The deck's id."), where[0], ("leader", "The deck's leader."),
                          ("archetype", "Its archetype's slug; other when it fits none; empty when it was not "
                                        "analysed (left out by a rule)."),
                          ("distance", "Cosine distance of the deck to its archetype's centre (0 is at the centre)."),
                          ("x, y", "Its place on the season's map, empty when it was not drawn."),
                          ("wins, losses", "The deck's reported wins and losses, empty when not reported."))),
        Download(title="Every archetype", href="data/archetypes.json", linked=True,
                 description="Each archetype (slug, name, season, leader, decks, share, signature cards, representative "
                             "deck, wins, losses, card table) and each partition (decks, how many archetypes and why).",
                 columns=(("archetypes", "One object per archetype and season."),
                          ("partitions", "One object per season and leader."))),
        Download(title="Card results of every archetype", href="data/card-results.csv", linked=True,
                 description="How the games of decks playing each card went against those of decks not playing it, "
                             "inside each archetype; also as JSON (data/card-results.json). An association, not a cause.",
                 columns=where + _CARD_RESULT_COLUMNS),
    ]
    if with_matches:
        out.append(Download(
            title="Head-to-head results", href="data/matchups.csv", linked=True,
            description="Each season's archetypes against each other from the matches table; a game between two "
                        "archetypes is in two rows, one from each side; also as JSON (data/matchups.json).",
            columns=where + (("opponent_leader, opponent", "The opposing archetype's leader and slug."),
                             ("wins, losses", "Games the archetype won and lost against it (a mirror: both are its games)."),
                             ("draws", "Drawn games, not counted in the win rate."),
                             ("games", "wins + losses; a mirror's games once."),
                             ("win_rate", "wins / (wins + losses); 0.5 for a mirror, by construction."),
                             ("low, high", "95% Wilson interval of the win rate (0.5 and 0.5 for a mirror)."),
                             ("small", "yes when games are fewer than matchups.min_games: not ranked."),
                             ("mirror", "yes when the two sides are the same archetype."))))
    out += [
        Download(title="An archetype's card table", href="archetypes/<slug>/<season>-cards.csv", linked=False,
                 description="On each archetype page: the share of its decks playing each card and the copies played.",
                 columns=tuple((c, d) for c, d in zip(CARD_TABLE_HEADER, (
                     "The card.", "Its type (empty without a card table).", "Share of the decks playing it.",
                     "Mean copies in the decks playing it.", "Share of the decks playing 1 copy.", "... 2 copies.",
                     "... 3 or more copies.", "mainstay (90% or more), regular (50% or more) or occasional.")))),
        Download(title="An archetype's representative deck", href="archetypes/<slug>/<season>-decklist.csv",
                 linked=False, description="On each archetype page: its medoid deck.",
                 columns=(("deck_id", "The deck's id."), ("type", "Card type."), ("card", "The card."),
                          ("quantity", "Copies."))),
        Download(title="An archetype's card results", href="archetypes/<slug>/<season>-card-results.csv",
                 linked=False, description="On each archetype page with results: the rows of data/card-results.csv "
                                           "for that archetype.", columns=_CARD_RESULT_COLUMNS),
    ]
    return tuple(out)


def decklist_csv(arch: Archetype) -> bytes:
    """An archetype's representative (medoid) deck as CSV."""
    rows = [(safe_cell(arch.medoid_deck_id), safe_cell(line.card_type), safe_cell(line.card), str(line.quantity))
            for line in arch.medoid]
    return csv_bytes(("deck_id", "type", "card", "quantity"), rows)


def _slug_of(result: PartitionResult, page_slugs: dict[tuple[str, str, str], str]) -> dict[str, str]:
    out = {OTHER_KEY: OTHER_KEY}
    for a in result.archetypes:
        out[a.key] = page_slugs.get((a.season, a.leader, a.key), a.slug)
    return out


#: Column order of ``assignments.csv``; ``assignments.json`` has the same keys, sorted.
ASSIGNMENT_COLUMNS = ("deck_id", "season", "leader", "archetype", "distance", "x", "y", "wins", "losses")
_TEXT_COLUMNS = ASSIGNMENT_COLUMNS[:4]
_NUMBER_COLUMNS = ASSIGNMENT_COLUMNS[4:7]
#: Whole numbers from the deck table: empty in CSV and null in JSON when not reported.
_COUNT_COLUMNS = ASSIGNMENT_COLUMNS[7:]
_ARROW_TEXT = pa.large_string()


@dataclass(frozen=True)
class Column:
    """One column of the assignments export: row ``i`` holds ``distinct[codes[i]]``.

    Every value is formatted once however many decks share it, and the rows
    are put together by Arrow, not one Python object per cell.
    """

    distinct: list
    codes: np.ndarray

    def values(self) -> list:
        return [self.distinct[c] for c in self.codes.tolist()]

    def cells(self, fmt: Callable[[list], list[str]]) -> pa.Array:
        """The column as text: ``fmt`` maps the distinct values to their texts."""
        return pa.array(fmt(self.distinct), type=_ARROW_TEXT).take(pa.array(self.codes, type=pa.int64()))


@dataclass(frozen=True)
class AssignmentTable:
    """The assignments export, one row per deck in file order, as :class:`Column` s.

    Text columns hold strings; distance, x and y hold the values rounded to
    6 places, None when missing.
    """

    columns: dict[str, Column]

    def __len__(self) -> int:
        return len(self.columns["deck_id"].codes)

    def rows(self) -> list[dict[str, Any]]:
        """One dict per deck (the shape of ``assignments.json``)."""
        cols = [self.columns[c].values() for c in ASSIGNMENT_COLUMNS]
        return [dict(zip(ASSIGNMENT_COLUMNS, values)) for values in zip(*cols)]


def _strings(values: pd.Series) -> np.ndarray:
    """``str()`` of each value, as an object array (no copy when they already are strings)."""
    arr = values.to_numpy(dtype=object)
    if len(arr) and pd.api.types.infer_dtype(arr, skipna=False) != "string":
        arr = np.array([str(v) for v in arr], dtype=object)
    return arr


def _factorized(values: pd.Series) -> tuple[np.ndarray, list[str]]:
    """(codes, distinct ``str()`` texts) of a column with few distinct values."""
    codes, uniques = pd.factorize(values, use_na_sentinel=False)
    return np.asarray(codes, dtype=np.int64), [str(u) for u in uniques]


def _float_column(values: np.ndarray) -> Column:
    """``_round`` of each value, once per distinct bit pattern (so -0.0 stays apart from 0.0)."""
    bits, codes = np.unique(np.ascontiguousarray(values, dtype=np.float64).view(np.int64), return_inverse=True)
    return Column([_round(float(v)) for v in bits.view(np.float64)], codes.reshape(-1).astype(np.int64))


def assignment_table(data: DeckData, results: Sequence[PartitionResult],
                     page_slugs: dict[tuple[str, str, str], str]) -> AssignmentTable:
    """Every deck with its archetype slug, sorted by season order, leader, deck id.

    A deck assigned in several results takes the last one; a deck in none
    gets an empty archetype and no numbers.
    """
    ids: list[np.ndarray] = []
    slug_codes: list[np.ndarray] = []
    slug_texts: dict[str, int] = {}
    numbers: dict[str, list[np.ndarray]] = {c: [] for c in _NUMBER_COLUMNS}
    for r in results:
        df = r.assignments
        if df is None or len(df) == 0:
            continue
        slug_of = _slug_of(r, page_slugs)
        cols = [df["deck_id"], df["archetype"], df["distance"], df["x"], df["y"]]
        ids.append(_strings(cols[0]))
        codes, keys = _factorized(cols[1])
        names = [slug_texts.setdefault(slug_of.get(k, k), len(slug_texts)) for k in keys]
        slug_codes.append(np.array(names, dtype=np.int64)[codes])
        for name, col in zip(_NUMBER_COLUMNS, cols[2:]):
            numbers[name].append(col.to_numpy(dtype=np.float64, na_value=np.nan))

    decks = data.decks
    deck_ids = _strings(decks["deck_id"])
    n = len(deck_ids)
    assigned = np.concatenate(ids) if ids else np.empty(0, dtype=object)
    # Later results win, as they would overwrite: look each deck up in the assigned ids last to first.
    last_first = pc.index_in(pa.array(deck_ids, type=_ARROW_TEXT),
                             value_set=pa.array(assigned[::-1], type=_ARROW_TEXT)).fill_null(-1)
    found = np.asarray(last_first.to_numpy(zero_copy_only=False), dtype=np.int64)
    found = np.where(found >= 0, len(assigned) - 1 - found, -1)
    season_codes, seasons = _factorized(decks["season"])
    leader_codes, leaders = _factorized(decks["leader"])

    # Sort key (season order, season, leader, deck id) as ranks, then one stable lexsort.
    season_rank = {s: i for i, s in enumerate(data.seasons)}
    season_pos = {s: i for i, s in enumerate(sorted(seasons, key=lambda s: (season_rank.get(s, len(season_rank)), s)))}
    leader_pos = {x: i for i, x in enumerate(sorted(leaders))}
    deck_list = deck_ids.tolist()
    deck_rank = np.empty(n, dtype=np.int64)
    deck_rank[sorted(range(n), key=deck_list.__getitem__)] = np.arange(n)
    order = np.lexsort((deck_rank,
                        np.array([leader_pos[x] for x in leaders], dtype=np.int64)[leader_codes],
                        np.array([season_pos[s] for s in seasons], dtype=np.int64)[season_codes]))

    hit = found[order]
    missing = hit < 0
    safe_hit = np.where(missing, 0, hit)
    slug_all = np.concatenate(slug_codes) if slug_codes else np.empty(0, dtype=np.int64)
    columns = {
        "deck_id": Column(deck_list, order.astype(np.int64)),
        "season": Column(seasons, season_codes[order]),
        "leader": Column(leaders, leader_codes[order]),
        "archetype": Column([*slug_texts, ""], np.where(missing, len(slug_texts), slug_all[safe_hit] if len(slug_all) else 0)),
    }
    for name in _NUMBER_COLUMNS:
        values = np.concatenate(numbers[name]) if numbers[name] else np.empty(0)
        chosen = values[safe_hit] if len(values) else np.nan
        columns[name] = _float_column(np.where(missing, np.nan, chosen))
    for name in _COUNT_COLUMNS:
        columns[name] = _count_column(decks[name] if name in decks.columns else None, n, order)
    return AssignmentTable(columns)


def _count_column(values: pd.Series | None, n: int, order: np.ndarray) -> Column:
    """A whole-number deck column (wins, losses) in file order: ints, None where not reported."""
    if values is None:
        return Column([None], np.zeros(n, dtype=np.int64))
    codes, uniques = pd.factorize(pd.to_numeric(values, errors="coerce").astype("Int64"), use_na_sentinel=True)
    distinct = [int(u) for u in uniques] + [None]
    codes = np.where(np.asarray(codes) < 0, len(distinct) - 1, codes).astype(np.int64)
    return Column(distinct, codes[order])


def assignment_rows(data: DeckData, results: Sequence[PartitionResult],
                    page_slugs: dict[tuple[str, str, str], str]) -> list[dict[str, Any]]:
    """One row per deck, sorted by season order, leader, deck id."""
    return assignment_table(data, results, page_slugs).rows()


#: Characters for which csv.writer (QUOTE_MINIMAL) may quote or refuse a cell; cells without one are written as they are.
_CSV_SPECIAL = ',"\r\n\x00'


def _csv_cell(text: str) -> str:
    """One cell exactly as :func:`csv_bytes` writes it inside a row."""
    buf = io.StringIO(newline="")
    csv.writer(buf, lineterminator="\r\n").writerow((text, ""))
    return buf.getvalue()[:-3]  # drop the empty second cell and the line end


def _csv_cells(texts: list[str]) -> list[str]:
    """Each text as a CSV cell; texts with nothing to quote (looked for in all of them at once) stay as they are."""
    joined = "\t".join(texts)
    if any(ch in joined for ch in _CSV_SPECIAL):
        return [_csv_cell(t) if any(ch in t for ch in _CSV_SPECIAL) else t for t in texts]
    return texts


def _safe_csv_cells(texts: list[str]) -> list[str]:
    """:func:`safe_cell` then CSV quoting of each data text."""
    joined = "\n" + "\n".join(texts)  # a text starting with a formula character has it after a newline here
    if any("\n" + ch in joined for ch in _FORMULA_START):
        texts = [safe_cell(t) for t in texts]
    return _csv_cells(texts)


def _joined(pieces: list[pa.Array | str]) -> bytes | memoryview:
    """Row by row, the pieces (columns, or one text for every row) one after another, as UTF-8 bytes
    (a view of Arrow's result: a million rows are a few hundred MB, not copied again here)."""
    rows = pc.binary_join_element_wise(*[pa.scalar(p, type=_ARROW_TEXT) if isinstance(p, str) else p for p in pieces],
                                       pa.scalar("", type=_ARROW_TEXT))
    if len(rows) == 0:
        return b""
    offsets = np.frombuffer(rows.buffers()[1], dtype=np.int64)[rows.offset:rows.offset + len(rows) + 1]
    return memoryview(rows.buffers()[2])[int(offsets[0]):int(offsets[-1])]


def assignments_csv(table: AssignmentTable) -> bytes:
    """``data/assignments.csv``: the same bytes :func:`csv_bytes` makes from the rows."""
    cols = table.columns
    cells = [cols[c].cells(_safe_csv_cells) for c in _TEXT_COLUMNS]
    cells += [cols[c].cells(lambda values: _csv_cells([fixed(v, 6) for v in values])) for c in _NUMBER_COLUMNS]
    cells += [cols[c].cells(lambda values: ["" if v is None else str(v) for v in values]) for c in _COUNT_COLUMNS]
    pieces: list[pa.Array | str] = []
    for cell in cells:
        pieces += [cell, ","]
    pieces[-1] = "\r\n"
    return csv_bytes(ASSIGNMENT_COLUMNS, ()) + (_joined(pieces) if len(table) else b"")


def _json_number(value: float | None) -> str:
    """A rounded value as ``json.dumps(allow_nan=False)`` writes it."""
    if value is None:
        return "null"
    if math.isinf(value):
        raise ValueError("Out of range float values are not JSON compliant: " + repr(value))
    return float.__repr__(value)


def assignments_json(table: AssignmentTable) -> bytes:
    """``data/assignments.json``: the same bytes as :func:`json_bytes` of ``table.rows()``.

    That is a list of one object per deck, indent 1, keys sorted; each row
    is written here as that layout and the rows put together by Arrow.
    """
    if not len(table):
        return json_bytes([])
    return b"[\n" + _json_rows(table)[:-2] + b"\n]\n"


def _json_rows(table: AssignmentTable) -> bytes | memoryview:
    """The rows of ``assignments.json``, each object followed by ``,\\n`` (the last one too)."""
    if not len(table):
        return b""
    encode = json.encoder.encode_basestring  # what json.dumps(ensure_ascii=False) writes strings with
    cols = table.columns
    pieces: list[pa.Array | str] = []
    for i, key in enumerate(sorted(ASSIGNMENT_COLUMNS)):
        pieces.append((" {\n" if i == 0 else ",\n") + f'  "{key}": ')
        if key in _TEXT_COLUMNS:
            pieces.append(cols[key].cells(lambda values: list(map(encode, values))))
        elif key in _COUNT_COLUMNS:
            pieces.append(cols[key].cells(lambda values: ["null" if v is None else str(v) for v in values]))
        else:
            pieces.append(cols[key].cells(lambda values: list(map(_json_number, values))))
    pieces.append("\n },\n")
    return _joined(pieces)


def archetypes_doc(results: Sequence[PartitionResult], season_order: Sequence[str],
                   page_slugs: dict[tuple[str, str, str], str]) -> dict[str, Any]:
    """Every archetype and partition, as plain JSON-ready data."""
    rank = {s: i for i, s in enumerate(season_order)}
    ordered = sorted(results, key=lambda r: (rank.get(r.season, len(rank)), r.season, r.leader))
    archetypes: list[dict[str, Any]] = []
    partitions: list[dict[str, Any]] = []
    for r in ordered:
        partitions.append({
            "season": r.season, "leader": r.leader, "decks": int(r.n_decks), "status": r.status, "reason": r.reason,
            "chosen_k": r.chosen_k, "k_reason": r.k_reason,
            "silhouette": [[int(k), _round(s)] for k, s in r.silhouette],
            "other_decks": int(r.other.n_decks) if r.other is not None else 0,
        })
        for a in r.archetypes:
            archetypes.append({
                "slug": page_slugs.get((a.season, a.leader, a.key), a.slug), "key": a.key, "name": a.name,
                "season": a.season, "leader": a.leader, "decks": int(a.n_decks), "share": _round(a.share),
                "signature": [s.card for s in a.signature], "medoid_deck_id": a.medoid_deck_id,
                "wins": int(a.wins), "losses": int(a.losses),
                "cards": [{"card": c.card, "type": c.card_type, "share": _round(c.share, 4),
                           "mean_copies": _round(c.mean_copies, 2), "at_1": _round(c.at_1, 4),
                           "at_2": _round(c.at_2, 4), "at_3_plus": _round(c.at_3_plus, 4), "tier": c.tier}
                          for c in a.inclusion],
            })
    return {"archetypes": archetypes, "partitions": partitions}


#: Bumped when the bytes of an assignments block change for the same inputs.
BLOCK_FORMAT = 2


@dataclass
class ExportBlocks:
    """The assignments files season by season, as the last build wrote them.

    Rows go by season first, so each file is one block of rows per season.
    ``index`` maps a block's key (a digest of everything its rows are made
    from) to its byte ranges in ``old_csv`` (the CSV file) and ``old_json``
    (the JSON file's rows, each object followed by a comma and a line end);
    a block whose key is there is copied instead of made again.
    :func:`export_files` fills ``new_index`` with the blocks it wrote, for
    the next build.
    """

    old_csv: bytes | memoryview = b""
    old_json: bytes | memoryview = b""
    index: dict[str, tuple[int, int, int, int]] = field(default_factory=dict)
    new_index: list[tuple[str, int, int, int, int]] = field(default_factory=list)
    reused: int = 0

    @classmethod
    def from_files(cls, csv_file: bytes, json_file: bytes, index: Sequence[Sequence]) -> "ExportBlocks":
        """The blocks of a last build's two files and the ``new_index`` that build made."""
        # The JSON rows are the file less its opening "[\n" and closing "\n]\n"; the last row lost its ",\n".
        rows = memoryview(json_file)[2:-3] if json_file.startswith(b"[\n {") and json_file.endswith(b"\n]\n") else b""
        return cls(old_csv=memoryview(csv_file), old_json=rows,
                   index={k: (int(a), int(b), int(c), int(d)) for k, a, b, c, d in index})

    def copy(self, key: str) -> tuple[bytes | memoryview, bytes | memoryview] | None:
        """The CSV and JSON bytes of the block filed under ``key``, or None."""
        found = self.index.get(key)
        if found is None:
            return None
        a, b, c, d = found
        if c == d or d <= len(self.old_json):
            json_rows = self.old_json[c:d]
        else:  # the old file's last block, whose ",\n" the file does not hold
            json_rows = bytes(self.old_json[c:]) + b",\n"
        self.reused += 1
        return self.old_csv[a:b], json_rows


def _block_key(season: str, rows: np.ndarray, decks: pd.DataFrame, results: Sequence[PartitionResult],
               page_slugs: dict[tuple[str, str, str], str], left_out: list[tuple[str, str]]) -> str:
    """A digest of everything one season's block of rows is made from.

    The season's decks are its partitions' decks and the decks left out of them (``left_out``,
    (deck id, leader) sorted), and each partition's rows follow from its ``rows_key`` (the
    partition's fingerprint, which covers its decks, and the map placed into them): those are
    digested when every partition has one and the counts add up. Otherwise the decks' ids and
    leaders and the rows themselves are."""
    h = hashlib.sha256(f"assignments\0{BLOCK_FORMAT}\0{season}\0".encode())
    by_origin = bool(results) and all(r.rows_key and r.leader != ALL_LEADERS for r in results) \
        and sum(int(r.n_decks) for r in results) + len(left_out) == len(rows)
    if by_origin:
        h.update(b"by-origin\0" + json.dumps(left_out, ensure_ascii=True).encode("ascii"))
    else:
        for column in ("deck_id", "leader"):
            feed_column(h, column, decks[column].iloc[rows])
    for column in _COUNT_COLUMNS:  # the decks left out are in no fingerprint: their results are digested here
        if column in decks.columns:
            feed_column(h, column, decks[column].iloc[rows])
    for r in results:
        h.update(f"\0{r.leader}\0{r.fingerprint}\0".encode())
        h.update(json.dumps(sorted(_slug_of(r, page_slugs).items())).encode())
        if by_origin:
            h.update(f"\0{r.rows_key}\0".encode())
        elif r.assignments is not None and len(r.assignments):
            for column in ("deck_id", "archetype", "distance", "x", "y"):
                feed_column(h, column, r.assignments[column])
    return h.hexdigest()


def _left_out_by_season(data: DeckData) -> dict[str, list[tuple[str, str]]]:
    """The decks in no partition (rule breakers left out), as sorted (deck id, leader) per season."""
    out: dict[str, list[tuple[str, str]]] = {}
    if not data.excluded:
        return out
    d = data.decks
    d = d.loc[d["deck_id"].isin(data.excluded), ["deck_id", "season", "leader"]]
    for deck_id, season, leader in zip(d["deck_id"].tolist(), d["season"].tolist(), d["leader"].tolist()):
        out.setdefault(str(season), []).append((str(deck_id), str(leader)))
    return {season: sorted(rows) for season, rows in out.items()}


def _assignment_files(data: DeckData, results: Sequence[PartitionResult],
                      page_slugs: dict[tuple[str, str, str], str], blocks: ExportBlocks | None) -> tuple[bytes, bytes]:
    """``data/assignments.csv`` and ``.json``, one season's block of rows at a time (see :class:`ExportBlocks`)."""
    if blocks is None:
        table = assignment_table(data, results, page_slugs)
        return assignments_csv(table), assignments_json(table)
    rank = {s: i for i, s in enumerate(data.seasons)}
    decks = data.decks
    seasons = sorted(pd.unique(decks["season"]).tolist(), key=lambda s: (rank.get(s, len(rank)), s))
    by_season: dict[str, list[PartitionResult]] = {}
    for r in results:
        by_season.setdefault(r.season, []).append(r)
    season_codes, season_names = pd.factorize(decks["season"])
    rows_of = {name: np.flatnonzero(season_codes == i) for i, name in enumerate(season_names)}
    left_out = _left_out_by_season(data)
    csv_parts, json_parts = [csv_bytes(ASSIGNMENT_COLUMNS, ())], []
    csv_at, json_at = len(csv_parts[0]), 0
    for season in seasons:
        mine = by_season.get(season, [])
        key = _block_key(season, rows_of[season], decks, mine, page_slugs, left_out.get(str(season), []))
        copied = blocks.copy(key)
        if copied is not None:
            csv_block, json_block = copied
        else:
            part = decks.iloc[rows_of[season]].reset_index(drop=True)
            table = assignment_table(replace(data, decks=part), mine, page_slugs)
            csv_block = memoryview(assignments_csv(table))[len(csv_parts[0]):]
            json_block = _json_rows(table)
        blocks.new_index.append((key, csv_at, csv_at + len(csv_block), json_at, json_at + len(json_block)))
        csv_parts.append(csv_block)
        json_parts.append(json_block)
        csv_at += len(csv_block)
        json_at += len(json_block)
    csv_file = b"".join(csv_parts)
    del csv_parts  # each file's blocks are let go once it is joined: at a million rows, hundreds of MB
    while json_parts and not len(json_parts[-1]):
        json_parts.pop()
    if not json_parts:
        return csv_file, json_bytes([])
    json_parts[-1] = memoryview(json_parts[-1])[:-2]  # the last row has no ",\n" (a view: no copy of the block)
    return csv_file, b"".join([b"[\n", *json_parts, b"\n]\n"])  # one copy of every block


def export_files(data: DeckData, results: Sequence[PartitionResult],
                 page_slugs: dict[tuple[str, str, str], str], blocks: ExportBlocks | None = None) -> dict[str, bytes]:
    """The site's ``data/`` folder: output path -> bytes. With ``blocks``, the assignments
    files are made a season at a time and unchanged seasons copied from the last build's."""
    csv_file, json_file = _assignment_files(data, results, page_slugs, blocks)
    return {
        "data/assignments.csv": csv_file,
        "data/assignments.json": json_file,
        "data/archetypes.json": lines_json(archetypes_doc(results, data.seasons, page_slugs)),
    }
