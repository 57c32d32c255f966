"""One season x leader partition, start to end: features, clusters, descriptions, map.

:func:`analyse_partition` is a top-level function of plain data in, plain
data out, so it runs in worker processes and its result can be cached.
Numeric libraries are held to one thread inside it: results then do not
depend on the machine's core count, and parallelism comes from running
partitions side by side.
"""
from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

from ..model import OTHER_KEY, Archetype, MapLayout, MapSample, PartitionInput, PartitionResult
from ..slugs import SlugSet, slugify
from . import cluster, describe, embed, features
from .params import AnalysisParams

ASSIGNMENT_COLUMNS = ("deck_id", "archetype", "distance", "x", "y")
MAP_COLUMNS = ("deck_id", "archetype", "x", "y", "cards")
#: Cards named per deck in the map tooltip.
TOOLTIP_CARDS = 3
#: Cards kept in an archetype's signature list.
SIGNATURE_CARDS = 8


def analyse_partition(part: PartitionInput, params: AnalysisParams) -> PartitionResult:
    """Find, name and describe the archetypes of one partition.

    Below ``params.min_decks`` decks the partition is not clustered: status
    ``"too-small"``, no archetypes, every deck assigned to the other-decks
    group (``result.other`` describes them all: card table, medoid), no map.
    """
    with threadpool_limits(limits=1):
        return _analyse(part, params)


def _analyse(part: PartitionInput, params: AnalysisParams) -> PartitionResult:
    """:func:`analyse_partition`'s work, already on one thread."""
    decks = part.decks.sort_values("deck_id", kind="stable").reset_index(drop=True)
    ids = decks["deck_id"].tolist()
    n = len(ids)
    counts, cards = features.build_matrix(part.cards, ids)
    present = features.presence(counts)
    weights = features.tfidf(counts)
    everyone = np.arange(n)
    inclusion = describe.inclusion_table(counts, everyone, cards, part.card_types, params.inclusion_min_share)
    ctx = _Context(part, params, decks, ids, counts, present, weights, cards)

    if n < params.min_decks:
        word = "deck" if n == 1 else "decks"
        reason = (f"only {n} {word}; archetypes are looked for from {params.min_decks} decks "
                  f"(setting analysis.min_decks)")
        other = ctx.group(OTHER_KEY, everyone, is_other=True) if n else None
        dist = ctx.distances(everyone) if n else np.zeros(0)
        assignments = _assignments(ids, [OTHER_KEY] * n, dist, np.full((n, 2), np.nan))
        return PartitionResult(part.season, part.leader, n, "too-small", reason, None, (), "", (), other,
                               assignments, _empty_map(), inclusion, part.fingerprint)

    with np.errstate(invalid="ignore", divide="ignore"):  # identical decks: zero variance is expected
        rows = features.reduce(weights, params.svd_dims, params.seed, params.fit_sample)
    least = max(1, math.ceil(params.min_share * n - 1e-9))
    found = cluster.choose_k(
        rows, k_min=params.k_min, k_max=params.k_max, seed=params.seed, n_init=params.kmeans_starts,
        silhouette_sample=params.silhouette_sample, fit_sample=params.fit_sample,
        pinned=params.pinned(part.season, part.leader), split_silhouette=params.split_silhouette,
        min_piece=least, accept=lambda pieces: _distinct(present, pieces, params.min_signature),
    )

    # Clusters big enough are archetypes, keyed a1, a2... by size (ties: smallest deck id).
    labels = found.labels
    clusters = [np.flatnonzero(labels == c) for c in range(found.k)]
    clusters = [m for m in clusters if len(m)]
    # Too small, or a loose pile with no cards of its own (one-off decks): the other decks.
    kept = [len(m) >= least and describe.best_score(present, m) >= params.min_signature for m in clusters]
    big = sorted((m for m, ok in zip(clusters, kept) if ok), key=lambda m: (-len(m), m[0]))
    small = [m for m, ok in zip(clusters, kept) if not ok and len(m) < least]
    loose = [m for m, ok in zip(clusters, kept) if not ok and len(m) >= least]
    keys = np.empty(n, dtype=object)
    archetypes = []
    for i, members in enumerate(big, start=1):
        keys[members] = f"a{i}"
        archetypes.append(ctx.group(f"a{i}", members))
    other = None
    reason = found.reason
    if small or loose:
        rest = np.sort(np.concatenate(small + loose))
        keys[rest] = OTHER_KEY
        other = ctx.group(OTHER_KEY, rest, is_other=True)
        if small:
            reason += (f"; {_count(len(small), 'cluster')} below {params.min_share:.0%} of the decks "
                       f"({least} decks) joined the other decks")
        if loose:
            reason += (f"; {_count(len(loose), 'cluster')} without cards of {'its' if len(loose) == 1 else 'their'} own "
                       f"(top 3 cards lead by less than {params.min_signature:.2f}) joined the other decks")
    archetypes = _unique_slugs(archetypes, other)
    if other is not None:
        archetypes, other = archetypes[:-1], archetypes[-1]

    dist = np.zeros(n)
    for g in archetypes + ([other] if other is not None else []):
        members = np.flatnonzero(keys == g.key)
        dist[members] = ctx.distances(members)

    # The map itself is drawn later (draw_map), from the leader's previous map where there is one.
    xy = np.full((n, 2), np.nan)
    drawn = embed.stratified_sample(keys, params.map_points, params.seed)
    if not embed.can_map(rows):
        drawn = drawn[:0]
        reason += f"; {embed.NO_MAP}"
    sample = MapSample(drawn=drawn, rows=np.ascontiguousarray(rows[drawn], dtype=np.float64),
                       presence=present[drawn], cards=tuple(cards)) if len(drawn) else None
    map_points = pd.DataFrame({
        "deck_id": [ids[i] for i in drawn],
        "archetype": [keys[i] for i in drawn],
        "x": xy[drawn, 0],
        "y": xy[drawn, 1],
        "cards": features.top_cards(weights, cards, drawn, TOOLTIP_CARDS),
    }, columns=list(MAP_COLUMNS))

    return PartitionResult(
        season=part.season, leader=part.leader, n_decks=n, status="clustered", reason="",
        chosen_k=found.k, silhouette=found.curve, k_reason=reason, archetypes=tuple(archetypes),
        other=other, assignments=_assignments(ids, keys.tolist(), dist, xy), map_points=map_points,
        inclusion=inclusion, fingerprint=part.fingerprint, map_sample=sample,
    )


def draw_map(sample: MapSample, params: AnalysisParams, previous: tuple[MapSample, MapLayout] | None = None) -> MapLayout:
    """The 2-D map of a partition's drawn decks, started from ``previous`` (the same
    leader's last map, with its layout) when there is one, so archetypes that carry on
    keep their place from season to season. Coordinates are rounded to 3 decimals."""
    with threadpool_limits(limits=1):
        start = None
        if previous is not None:
            prev_sample, prev_layout = previous
            start = embed.warm_start(sample.presence, sample.cards, prev_sample.presence, prev_sample.cards,
                                     prev_layout.coords)
        steps = params.map_iterations if start is None else embed.warm_steps(params.map_iterations)
        with np.errstate(invalid="ignore", divide="ignore"):
            coords = embed.tsne(sample.rows, params.seed, steps, init=start)
    # Decks all alike leave t-SNE nothing to spread (NaN): they are drawn on one spot.
    return MapLayout(coords=np.round(np.where(np.isfinite(coords), coords, 0.0), 3) + 0.0, warm=start is not None)


class _Context:
    """The matrices of one partition, to describe any group of its decks."""

    def __init__(self, part, params, decks, ids, counts, present, weights, cards):
        self.part, self.params, self.decks, self.ids = part, params, decks, ids
        self.counts, self.present, self.weights, self.cards = counts, present, weights, cards

    def distances(self, members: np.ndarray) -> np.ndarray:
        """Cosine distance of each member's TF-IDF row to the group's mean direction."""
        sub = self.weights[members]
        centre = np.asarray(sub.mean(axis=0)).ravel()
        norm = np.linalg.norm(centre)
        if norm == 0:
            return np.ones(len(members))
        return np.clip(1.0 - np.asarray(sub @ (centre / norm)).ravel(), 0.0, 2.0)

    def group(self, key: str, members: np.ndarray, is_other: bool = False) -> Archetype:
        """The full description of one group: signature, name, slug, medoid, tables, results."""
        part, params = self.part, self.params
        n = len(self.ids)
        signature = () if is_other else describe.signature_cards(self.present, members, self.cards, SIGNATURE_CARDS)
        if is_other:
            name = f"{part.leader} · other decks"
            slug = slugify(f"{part.leader} other decks", fallback="other-decks")
        else:
            name = describe.archetype_name(part.leader, signature, params.name_cards, f"archetype {key[1:]}")
            words = [s.card for s in signature[:params.name_cards]] or [f"archetype {key[1:]}"]
            slug = slugify(" ".join([part.leader, *words]), fallback="archetype")
        row = describe.medoid(self.weights, members)
        medoid, total = describe.decklist(self.counts, row, self.cards, part.card_types)
        sub = self.decks.iloc[members]
        wins, losses, known = describe.results(sub.get("wins", pd.Series(dtype="Int64")),
                                               sub.get("losses", pd.Series(dtype="Int64")))
        return Archetype(
            key=key, slug=slug, name=name, season=part.season, leader=part.leader,
            n_decks=len(members), share=round(len(members) / n, 6), signature=signature,
            medoid_deck_id=self.ids[row], medoid=medoid, medoid_total=total,
            inclusion=describe.inclusion_table(self.counts, members, self.cards, part.card_types,
                                               params.inclusion_min_share),
            profile=describe.profile(self.present, members, self.cards),
            wins=wins, losses=losses, is_other=is_other,
            mean_distance=round(float(self.distances(members).mean()), 6), has_results=known,
        )


def _count(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def _distinct(present, pieces: list[np.ndarray], least: float) -> bool:
    """True when every piece of a proposed split has cards of its own, compared with its sibling pieces."""
    for i, piece in enumerate(pieces):
        siblings = np.sort(np.concatenate([p for j, p in enumerate(pieces) if j != i]))
        if describe.best_score(present, np.sort(piece), siblings) < least:
            return False
    return True


def _unique_slugs(archetypes: list[Archetype], other: Archetype | None) -> list[Archetype]:
    """Archetypes (then the other group) with slugs made unique in key order."""
    taken = SlugSet()
    return [replace(g, slug=taken.add(g.slug)) for g in archetypes + ([other] if other is not None else [])]


def _assignments(ids, keys, dist, xy) -> pd.DataFrame:
    return pd.DataFrame({
        "deck_id": pd.Series(ids, dtype=object),
        "archetype": pd.Series(keys, dtype=object),
        "distance": np.round(np.asarray(dist, dtype=float), 4),
        "x": xy[:, 0],
        "y": xy[:, 1],
    }, columns=list(ASSIGNMENT_COLUMNS))


def _empty_map() -> pd.DataFrame:
    return pd.DataFrame({"deck_id": pd.Series(dtype=object), "archetype": pd.Series(dtype=object),
                         "x": pd.Series(dtype=float), "y": pd.Series(dtype=float),
                         "cards": pd.Series(dtype=object)}, columns=list(MAP_COLUMNS))
