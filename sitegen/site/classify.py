"""The models a decklist from outside the data is placed by, and the page that places one.

Per season and leader the build writes ``classify/<season>/<leader>.json``
(read by ``sitegen classify``) and a ``.js`` twin that registers the same
model in ``window.SITEGEN_CLASSIFY`` under its path (read by classify.html
through ``<script src>``, which works from file:// and under the site's
Content-Security-Policy, where fetch() of a file does not). ``classify/index.json``
lists them for the command line.

A model holds the partition's rule as stored with its result
(:class:`sitegen.model.Placement`): the cards with their idf weights, each
archetype centre (only its nonzero weights) with its card rates (``rates``:
log-odds per card, only those off the group's ``floor``, and a constant
``b``; ``levels``: its log-shares of copy levels where they differ from the
model's ``levels``, the value most rows share), the other decks' card rates
(``other_rates``: small groups of their own given up, then all other decks),
how deck lengths are read (``length``: a full deck's copies, ``full``, which
shorter decks are read against as partial lists in ``steps`` down to
``floor``, from ``whole`` of it on as full, as :func:`sitegen.analysis.card_rates.length_shares`; full 0:
every deck is read as full), and which published
group each centre's decks are shown in (after season linking and the notes'
merge_into and hide, exactly as the assignments export labels them). For each
group: its page slug, name and address, its spread (median and 90th percentile
of its decks' distances, from the assignments) and its card table (share,
mean copies, usual copies), for the page's comparison.
"""
from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np
import pandas as pd

from ..analysis.card_rates import LENGTH_FLOOR, LENGTH_FULL, LENGTH_STEPS, LEVEL_FLOOR, LEVELS
from ..model import ALL_LEADERS, OTHER_KEY, CardLine, PartitionResult
from . import pages as P

#: Version of the model file layout; the command line refuses others.
MODEL_FORMAT = 4
#: The window global model scripts register in.
MODEL_GLOBAL = "SITEGEN_CLASSIFY"
#: Significant digits of centre weights: enough that every distance (4 decimals) of the demo's decks comes out
#: as in the build (tested), at a third of the bytes of full precision.
CENTRE_DIGITS = 12
#: Significant digits of card log-odds: a deck's score sums a few dozen of them, and every placement of the
#: demo's decks still comes out as in the build (tested) at two thirds of the bytes of CENTRE_DIGITS.
RATE_DIGITS = 8
#: Cards of an archetype's table shipped for the comparison (most played first).
TABLE_CARDS = 40
#: Where the manifest for the command line is written.
INDEX_PATH = "classify/index.json"
PAGE_PATH = "classify.html"


def relabelling(before: Sequence[PartitionResult], after: Sequence[PartitionResult]) -> dict[tuple[str, str], dict[str, str]]:
    """Per (season, leader), the archetype key each deck of a placement key ends up under once the
    notes' overrides relabel the assignments (``before`` and ``after`` in the same order, as
    :func:`sitegen.analysis.overrides.apply_overrides` keeps it). Only partitions that changed."""
    out: dict[tuple[str, str], dict[str, str]] = {}
    for b, a in zip(before, after):
        if b.assignments is a.assignments or b.assignments is None or a.assignments is None:
            continue
        pairs = pd.DataFrame({"was": b.assignments["archetype"].astype(str).to_numpy(),
                              "now": a.assignments["archetype"].astype(str).to_numpy()}).drop_duplicates()
        out[(a.season, a.leader)] = dict(zip(pairs["was"], pairs["now"]))
    return out


def _g(x: float, digits: int = CENTRE_DIGITS) -> float:
    return float(f"{float(x):.{digits}g}")


def _sparse(vector: np.ndarray, digits: int = CENTRE_DIGITS) -> dict[str, list]:
    nz = np.flatnonzero(vector)
    return {"i": nz.tolist(), "w": [_g(v, digits) for v in vector[nz].tolist()]}


def _rates(log_odds: np.ndarray, constant: float, levels: np.ndarray, mix: np.ndarray) -> dict[str, Any]:
    """A row of card log-odds as the value most cards share (``floor``: a group's cards none of its
    decks plays) and the cards off it, with the row's constant ``b``; its copy levels' log-shares
    (``levels``) only where they differ from ``mix``, the value most rows share (the partition's
    own mix, which a row differs from for the cards its decks play)."""
    row = np.asarray(log_odds, dtype=np.float64)
    values, counts = np.unique(row, return_counts=True)
    floor = float(values[np.argmax(counts)]) if len(values) else 0.0
    off = np.flatnonzero(row != floor)
    differ = np.flatnonzero(np.asarray(levels, dtype=np.float64) != mix)
    return {"i": off.tolist(), "w": [_g(v, RATE_DIGITS) for v in row[off].tolist()], "floor": _g(floor, RATE_DIGITS),
            "b": _g(constant, RATE_DIGITS),
            "levels": {"i": differ.tolist(), "w": [_g(v, RATE_DIGITS) for v in levels[differ].tolist()]}}


def _level_mix(levels: np.ndarray) -> np.ndarray:
    """The value most rows hold in each column of copy-level log-shares: the partition's own mix,
    which a row holds for the cards its decks do not play (the first row's value on a tie)."""
    if levels.shape[0] == 0:
        return np.zeros(levels.shape[1])
    same = (levels[:, None, :] == levels[None, :, :]).sum(axis=1)  # rows x columns: rows sharing its value
    return levels[np.argmax(same, axis=0), np.arange(levels.shape[1])]


def _usual(line: CardLine) -> int:
    """The most common copy count among the decks playing the card (3 stands for 3 or more)."""
    counts = (line.at_1, line.at_2, line.at_3_plus)
    return 1 + max(range(3), key=lambda i: (counts[i], -i))


def _spread(distances: np.ndarray) -> dict[str, float | None]:
    d = distances[np.isfinite(distances)]
    if len(d) == 0:
        return {"median": None, "p90": None}
    return {"median": round(float(np.median(d)), 4), "p90": round(float(np.quantile(d, 0.9)), 4)}


def _table(lines: Sequence[CardLine], index: dict[str, int]) -> list[list]:
    out = []
    for c in lines[:TABLE_CARDS]:
        if c.card in index:
            out.append([index[c.card], round(c.share, 3), round(c.mean_copies, 2), _usual(c)])
    return out


def _mean_direction(data, r: PartitionResult) -> tuple[list[str], np.ndarray, np.ndarray] | None:
    """Cards, idf and the unit mean TF-IDF direction of all of a partition's decks (what a partition
    without archetypes measures distances to), from the data's card rows; None without them."""
    from ..analysis import features

    if r.placement is not None:  # stored by the analysis: the same whether the build held card rows or not
        if r.placement.mean is None:
            return None
        return list(r.placement.cards), np.asarray(r.placement.idf), np.asarray(r.placement.mean)
    cards = data.cards
    if cards is None or len(cards) == 0 or r.assignments is None or len(r.assignments) == 0:
        return None
    ids = sorted(str(x) for x in r.assignments["deck_id"])
    rows = cards[cards["deck_id"].isin(ids)]
    if len(rows) == 0:
        return None
    rows = pd.DataFrame({"deck_id": rows["deck_id"].astype(str).to_numpy(), "card": rows["card"].astype(str).to_numpy(),
                         "quantity": rows["quantity"].to_numpy()})
    counts, names = features.build_matrix(rows, ids)
    weights = features.tfidf(counts)
    centre = np.asarray(weights.mean(axis=0)).ravel()
    norm = np.linalg.norm(centre)
    if norm == 0:
        return None
    return list(names), features.idf(counts), centre / norm


def model_of(site, r: PartitionResult, keys_to: dict[str, str] | None, data, rare: float) -> dict[str, Any]:
    """The model document of one partition (see the module notes); ``site`` is render's lookup table."""
    s = site
    groups = list(r.archetypes)
    group_index = {a.key: i for i, a in enumerate(groups)}
    assignments = r.assignments if r.assignments is not None else pd.DataFrame(columns=["archetype", "distance"])
    labels = assignments["archetype"].astype(str).to_numpy()
    dist = assignments["distance"].to_numpy(dtype=np.float64, na_value=np.nan)
    placement = r.placement
    doc: dict[str, Any] = {
        "format": MODEL_FORMAT, "season": r.season, "leader": r.leader, "leader_name": s.leader_name(r.leader),
        "decks": int(r.n_decks), "status": r.status, "reason": r.reason, "rare": rare,
        "centres": [], "mean": None,
    }
    if placement is not None and len(placement.keys):
        cards = list(placement.cards)
        doc["idf"] = [float(x) for x in placement.idf.tolist()]
        levels = placement.levels
        mix = _level_mix(levels)
        kept = np.flatnonzero(mix != LEVEL_FLOOR)
        doc["levels"] = {"count": LEVELS, "floor": LEVEL_FLOOR, "i": kept.tolist(),
                         "w": [_g(v, RATE_DIGITS) for v in mix[kept].tolist()]}

        def rates_of(i: int) -> dict[str, Any]:
            return _rates(placement.log_odds[i], float(placement.constants[i]), levels[i], mix)

        for i, (key, centre) in enumerate(zip(placement.keys, placement.centres)):
            now = (keys_to or {}).get(key, key)
            to = group_index.get(now, -1)
            doc["centres"].append({"key": key, "to": to, "hidden": to < 0, "rates": rates_of(i),
                                   **_sparse(np.asarray(centre, dtype=np.float64))})
        doc["other_rates"] = [rates_of(i) for i in range(len(placement.keys), placement.log_odds.shape[0])]
        doc["length"] = {"full": float(placement.full_size), "steps": LENGTH_STEPS, "floor": LENGTH_FLOOR,
                         "whole": LENGTH_FULL}
    else:
        found = _mean_direction(data, r)
        cards = found[0] if found else []
        doc["idf"] = [float(x) for x in found[1].tolist()] if found else []
        if found:
            doc["mean"] = _sparse(found[2])
    doc["cards"] = cards
    index = {c: i for i, c in enumerate(cards)}
    doc["groups"] = [{
        "key": a.key, "slug": s.slug_of(a), "name": s.name_of(a), "href": s.arch_href(a), "decks": int(a.n_decks),
        "share": round(float(a.share), 4), **_spread(dist[labels == a.key]), "table": _table(a.inclusion, index),
    } for a in groups]
    other = r.other
    doc["other"] = {"slug": OTHER_KEY, "name": "Other decks", "decks": int(other.n_decks) if other is not None else 0,
                    **_spread(dist[labels == OTHER_KEY]),
                    "table": _table(other.inclusion, index) if other is not None else []}
    return doc


def model_js(path: str, doc: dict[str, Any]) -> bytes:
    """The model as a script registering it under ``path`` in :data:`MODEL_GLOBAL` (``<``, ``>``, ``&``
    written as \\u escapes, so no text of the data can end the script or open markup)."""
    text = json.dumps(doc, ensure_ascii=True, separators=(",", ":"), allow_nan=False, sort_keys=True)
    text = text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")
    return f"(window.{MODEL_GLOBAL} = window.{MODEL_GLOBAL} || {{}})[{json.dumps(path)}] = {text};\n".encode("utf-8")


def model_json(doc: dict[str, Any]) -> bytes:
    return (json.dumps(doc, ensure_ascii=False, separators=(",", ":"), allow_nan=False, sort_keys=True)
            + "\n").encode("utf-8")


@dataclass(frozen=True, kw_only=True)
class ClassifyPage(P.Page):
    """classify.html: paste a decklist, learn the archetype the build's rule places it in."""

    seasons: tuple[str, ...] = P._f("Seasons with models, latest first.")
    leaders: tuple[str, ...] = P._f("Leaders with a model in some season, by name.")
    manifest: str = P._f("JSON (escaped for a <script type=\"application/json\"> block): per season, per leader, "
                         "the path of its model script from the site root.")
    script: str = P._f("Path from the site root of assets/classify.js.")
    pooled: bool = P._f("True when leaders are analysed together (analysis.by_leader = false).")
    max_lines: int = P._f("Most pasted lines read.")


#: Most pasted lines the page reads (a decklist has far fewer); the rest are left with a note.
MAX_LINES = 2000


def files_and_page(renderer) -> dict[str, bytes]:
    """Every model file (json and js), the manifest, and classify.html's context, made for ``renderer``
    (sitegen.site.render.Renderer); returns the files and emits the page through the renderer."""
    s = renderer.s
    site = renderer.site
    rare = renderer.settings.inclusion_min_share
    relabelled = getattr(site, "relabelled", None) or {}
    files: dict[str, bytes] = {}
    manifest: dict[str, dict[str, str]] = {}
    index: dict[str, Any] = {"format": MODEL_FORMAT, "seasons": [], "models": {}}
    for r in s.results:
        sslug = s.season_slug[r.season]
        lslug = s.leader_slug[r.leader]
        base = f"classify/{sslug}/{lslug}"
        doc = model_of(s, r, relabelled.get((r.season, r.leader)), site.data, rare)
        files[base + ".json"] = model_json(doc)
        files[base + ".js"] = model_js(base + ".js", doc)
        manifest.setdefault(r.season, {})[s.leader_name(r.leader)] = base + ".js"
        index["models"].setdefault(r.season, {})[r.leader] = base + ".json"
    seasons = [x for x in s.seasons if x in manifest]
    index["seasons"] = seasons
    index["pooled"] = any(r.leader == ALL_LEADERS for r in s.results)
    files[INDEX_PATH] = model_json(index)
    text = json.dumps({"seasons": seasons, "models": manifest}, ensure_ascii=True, sort_keys=True)
    text = text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")
    leaders = sorted({name for by in manifest.values() for name in by})
    base = renderer._base(PAGE_PATH, "Place a decklist",
                          "Paste a decklist and see which archetype it belongs to, by the same rule as the site's.")
    base["scripts"] = tuple(base["scripts"]) + (renderer.urls["classify_js"],)
    renderer._emit("classify.html", ClassifyPage(
        **base, seasons=tuple(reversed(seasons)), leaders=tuple(leaders), manifest=text,
        script=renderer.urls["classify_js"], pooled=bool(index["pooled"]), max_lines=MAX_LINES))
    return files


def total_bytes(files: dict[str, bytes], suffix: str) -> int:
    return sum(len(v) for k, v in files.items() if k.startswith("classify/") and k.endswith(suffix))
