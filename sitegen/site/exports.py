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
import io
import json
import math
from typing import Any, Iterable, Sequence

from ..model import OTHER_KEY, Archetype, DeckData, PartitionResult

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


def assignment_rows(data: DeckData, results: Sequence[PartitionResult],
                    page_slugs: dict[tuple[str, str, str], str]) -> list[dict[str, Any]]:
    """One row per deck, sorted by season order, leader, deck id."""
    by_deck: dict[str, dict[str, Any]] = {}
    for r in results:
        slugs = _slug_of(r, page_slugs)
        df = r.assignments
        if df is None or len(df) == 0:
            continue
        for deck_id, key, dist, x, y in zip(df["deck_id"], df["archetype"], df["distance"], df["x"], df["y"]):
            by_deck[str(deck_id)] = {"archetype": slugs.get(str(key), str(key)), "distance": _round(dist),
                                     "x": _round(x), "y": _round(y)}
    season_rank = {s: i for i, s in enumerate(data.seasons)}
    rows: list[dict[str, Any]] = []
    for deck_id, season, leader in zip(data.decks["deck_id"], data.decks["season"], data.decks["leader"]):
        got = by_deck.get(str(deck_id), {"archetype": "", "distance": None, "x": None, "y": None})
        rows.append({"deck_id": str(deck_id), "season": str(season), "leader": str(leader), **got})
    rows.sort(key=lambda r: (season_rank.get(r["season"], len(season_rank)), r["season"], r["leader"], r["deck_id"]))
    return rows


def assignments_csv(rows: list[dict[str, Any]]) -> bytes:
    out = [(safe_cell(r["deck_id"]), safe_cell(r["season"]), safe_cell(r["leader"]), safe_cell(r["archetype"]),
            fixed(r["distance"], 6), fixed(r["x"], 6), fixed(r["y"], 6)) for r in rows]
    return csv_bytes(("deck_id", "season", "leader", "archetype", "distance", "x", "y"), out)


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


def export_files(data: DeckData, results: Sequence[PartitionResult],
                 page_slugs: dict[tuple[str, str, str], str]) -> dict[str, bytes]:
    """The site's ``data/`` folder: output path -> bytes."""
    rows = assignment_rows(data, results, page_slugs)
    return {
        "data/assignments.csv": assignments_csv(rows),
        "data/assignments.json": json_bytes(rows),
        "data/archetypes.json": json_bytes(archetypes_doc(results, data.seasons, page_slugs)),
    }
