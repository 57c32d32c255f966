"""The analysis as downloadable files: CSV and JSON, byte for byte repeatable.

``data/assignments.csv`` / ``.json`` (made by :mod:`.assignments`): every
deck with its archetype slug (``other`` for decks that fit no archetype, empty
for decks that were not clustered: left out by a rule or in a partition too
small to cluster), its distance to the archetype's centre and its map
position where drawn; here they are cut into season blocks reused between
builds (:class:`ExportBlocks`). ``data/archetypes.json``: every archetype and
each partition's chosen k. Per-archetype CSV downloads (card table, card
results, decklist) are made here too, all through the spreadsheet-safe cells
of :mod:`.cells`.
"""
from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field, replace
from typing import Any, Sequence

import numpy as np
import pandas as pd

from ..model import ALL_LEADERS, Archetype, DeckData, PartitionResult
from ..reuse.digest import feed_column
from .assignments import (ASSIGNMENT_COLUMNS, COUNT_COLUMNS, json_rows, slugs_of, assignment_table,
                          assignments_csv, assignments_json)
from .cells import csv_bytes, fixed, json_bytes, lines_json, safe_cell
from .cells import rounded as _round

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
    for column in COUNT_COLUMNS:  # the decks left out are in no fingerprint: their results are digested here
        if column in decks.columns:
            feed_column(h, column, decks[column].iloc[rows])
    for r in results:
        h.update(f"\0{r.leader}\0{r.fingerprint}\0".encode())
        h.update(json.dumps(sorted(slugs_of(r, page_slugs).items())).encode())
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
            json_block = json_rows(table)
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
