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

from ..model import OTHER_KEY, Archetype, MapLayout, MapSample, PartitionInput, PartitionResult, Placement
from ..slugs import SlugSet, slugify
from . import cluster, describe, embed, features, membership, random_decks, results, stability
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
    idf = features.idf(counts)
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
        placement = Placement(cards=tuple(cards), idf=idf, keys=(), centres=np.zeros((0, len(cards))),
                              log_odds=np.zeros((0, len(cards))), constants=np.zeros(0), mean=_mean(weights))
        return PartitionResult(part.season, part.leader, n, "too-small", reason, None, (), "", (), other,
                               assignments, _empty_map(), inclusion, part.fingerprint, placement=placement)

    with np.errstate(invalid="ignore", divide="ignore"):  # identical decks: zero variance is expected
        rows = features.reduce(weights, params.svd_dims, params.seed, params.fit_sample)
    least = max(1, math.ceil(params.min_share * n - 1e-9))
    # One set of random decks for the rule and its reruns on halves (the same seed would make the same ones).
    nulls = random_decks.RandomDecks(counts, idf, params.seed)
    found = _rule(rows, present, weights, idf, least, part, params, nulls, counts)
    labels = found.labels
    k = len(found.centres)

    # Archetypes keyed a1, a2... by size (ties: smallest deck id); decks placed nowhere are the other decks.
    groups = [np.flatnonzero(labels == c) for c in range(k)]
    order = sorted(range(k), key=lambda c: (-len(groups[c]), groups[c][0]))
    keys = np.empty(n, dtype=object)
    archetypes = []
    centres = found.centres[order] if k else found.centres
    # The archetypes' card rates in key order, then the other decks' rows (none at all without archetypes).
    rows_kept = np.asarray(list(order) + list(range(k, found.rates.log_odds.shape[0])) if k else [], dtype=np.intp)
    steady = _stability(rows, present, weights, idf, nulls, labels, part, params, counts) if k else np.zeros(0)
    for i, c in enumerate(order, start=1):
        keys[groups[c]] = f"a{i}"
        archetypes.append(replace(ctx.group(f"a{i}", groups[c]), stability=round(float(steady[c]), 3)))
    rest = np.flatnonzero(labels < 0)
    other = None
    if len(rest):
        keys[rest] = OTHER_KEY
        other = ctx.group(OTHER_KEY, rest, is_other=True)
    reason = _k_reason(found, k, len(rest), n, least, params, params.pinned(part.season, part.leader),
                       _partial_lists(counts, found.rates.full_size) if k else 0)
    placement = Placement(cards=tuple(cards), idf=idf, keys=tuple(f"a{i}" for i in range(1, k + 1)),
                          centres=np.ascontiguousarray(centres),
                          log_odds=np.ascontiguousarray(found.rates.log_odds[rows_kept]),
                          constants=np.asarray(found.rates.constants[rows_kept], dtype=np.float64), mean=_mean(weights),
                          levels=(None if found.rates.levels is None
                                  else np.ascontiguousarray(found.rates.levels[rows_kept])),
                          full_size=found.rates.full_size)
    archetypes = _unique_slugs(archetypes, other)
    if other is not None:
        archetypes, other = archetypes[:-1], archetypes[-1]

    # Distance: 1 - cosine similarity to its archetype's centre (an other deck's: to the nearest).
    dist = np.clip(1.0 - found.similarity, 0.0, 2.0) if k else ctx.distances(np.arange(n))

    # The map itself is drawn later (draw_map), from the leader's previous map where there is one.
    xy = np.full((n, 2), np.nan)
    drawn = embed.stratified_sample(keys, params.map_points, params.seed)
    if not embed.can_map(rows):
        drawn = drawn[:0]
        reason += f" {embed.NO_MAP}."
    sample = MapSample(drawn=drawn, rows=np.ascontiguousarray(rows[drawn], dtype=np.float64),
                       copies=counts[drawn], cards=tuple(cards)) if len(drawn) else None
    map_points = pd.DataFrame({
        "deck_id": [ids[i] for i in drawn],
        "archetype": [keys[i] for i in drawn],
        "x": xy[drawn, 0],
        "y": xy[drawn, 1],
        "cards": features.top_cards(weights, cards, drawn, TOOLTIP_CARDS),
    }, columns=list(MAP_COLUMNS))

    return PartitionResult(
        season=part.season, leader=part.leader, n_decks=n, status="clustered", reason="",
        chosen_k=len(archetypes), silhouette=(), k_reason=reason, archetypes=tuple(archetypes),
        other=other, assignments=_assignments(ids, keys.tolist(), dist, xy), map_points=map_points,
        inclusion=inclusion, fingerprint=part.fingerprint, map_sample=sample, placement=placement,
    )


def draw_map(sample: MapSample, params: AnalysisParams, previous: tuple[MapSample, MapLayout] | None = None) -> MapLayout:
    """The 2-D map of a partition's drawn decks, started from ``previous`` (the same
    leader's last map, with its layout) when there is one, so archetypes that carry on
    keep their place from season to season. Coordinates are rounded to 3 decimals."""
    with threadpool_limits(limits=1):
        start = None
        if previous is not None:
            prev_sample, prev_layout = previous
            start = embed.warm_start(features.presence(sample.copies), sample.cards,
                                     features.presence(prev_sample.copies), prev_sample.cards, prev_layout.coords)
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
            card_results=self.card_results(members, sub) if known and not is_other else (),
        )

    def card_results(self, members: np.ndarray, sub: pd.DataFrame) -> tuple:
        """The group's card results (:mod:`.results`) from its decks' wins and losses."""
        def counts(col: str) -> np.ndarray:
            return pd.to_numeric(sub[col], errors="coerce").to_numpy(dtype=np.float64, na_value=np.nan) \
                if col in sub else np.zeros(len(members))

        return results.card_results(self.counts, members, self.cards, counts("wins"), counts("losses"))


def _rule(rows, present, weights, idf, least, part, params, nulls=None, copies=None) -> membership.Membership:
    """The archetype-finding rule on any set of a partition's decks (the whole, or a half for stability):
    candidate groups (dense regions, or k-means at a pinned k), then the rule of :mod:`.membership`, with
    random decks drawn from the whole partition (``nulls``); ``copies``: the decks' copies of each card."""
    pinned = params.pinned(part.season, part.leader)
    if pinned is not None:
        candidates = cluster.pinned_groups(rows, pinned, seed=params.seed, n_init=params.kmeans_starts,
                                           fit_sample=params.fit_sample)
        smalls: list[np.ndarray] = []
    else:  # one HDBSCAN fit read at two sizes: candidate archetypes, and small groups of their own
        density = cluster.Density(rows, params.seed)
        candidates = cluster.dense_groups(rows, min_share=params.min_share, seed=params.seed, density=density)
        smalls = cluster.small_groups(rows, share=params.min_share * membership.SMALL_SHARE, seed=params.seed,
                                      density=density)
    return membership.settle(present, weights, idf, candidates, least=least, seed=params.seed,
                             merge=pinned is None, rows=rows, most=params.k_max, nulls=nulls, smalls=smalls,
                             copies=copies)


def _stability(rows, present, weights, idf, nulls, labels, part, params, copies) -> np.ndarray:
    """Each found group's stability (:mod:`.stability`): the same rule rerun on random halves."""

    def rerun(picked: np.ndarray) -> np.ndarray:
        least = max(1, math.ceil(params.min_share * len(picked) - 1e-9))
        return _rule(rows[picked], present[picked], weights[picked], idf, least, part, params, nulls,
                     copies[picked]).labels

    return stability.stability(labels, rerun, seed=params.seed)


def _partial_lists(counts, full_size: float) -> int:
    """Decks read as partial lists by the card rates (shorter than LENGTH_FULL of a full deck)."""
    from .card_rates import deck_sizes, length_shares

    return int((length_shares(deck_sizes(counts), full_size) < 1.0).sum())


def _k_reason(found: membership.Membership, k: int, n_other: int, n: int, least: int, params,
              pinned: int | None, partial: int = 0) -> str:
    """How the number of archetypes came about, in plain words with the numbers of this partition;
    ``partial``: decks read as partial lists."""
    if pinned is not None:
        words = [f"k-means with the {pinned} groups pinned in the settings (analysis.pinned_k); "
                 f"{_count(k, 'archetype')} kept"]
    else:
        words = [f"{_count(k, 'archetype')}: dense groups of decks, each with cards (or copy counts) of its own"]
    if found.merged:
        words.append(f"{_count(found.merged, 'pair')} of groups without cards or copy counts of their own against each other "
                     f"{'was' if found.merged == 1 else 'were'} joined")
    if found.split:
        words.append(f"{_count(found.split, 'group')} holding two sets of decks with cards of their own "
                     f"{'was' if found.split == 1 else 'were'} cut in two")
    if found.promoted:
        words.append(f"{_count(found.promoted, 'small group')} with cards of {'its' if found.promoted == 1 else 'their'} own "
                     f"drew at least {least} decks and so {'is an archetype' if found.promoted == 1 else 'are archetypes'}")
    if found.dropped_small:
        words.append(f"{_count(found.dropped_small, 'group')} with fewer than {least} decks "
                     f"({params.min_share:.0%} of the partition, setting analysis.min_share) "
                     f"{'was' if found.dropped_small == 1 else 'were'} given up")
    if found.dropped_loose:
        words.append(f"{_count(found.dropped_loose, 'group')} whose decks were no more alike than random decks "
                     f"{'was' if found.dropped_loose == 1 else 'were'} given up")
    text = "; ".join(words) + "."
    if n_other:
        text += (f" {_count(n_other, 'deck')} of {n:,} ({_share(n_other, n)}) fit no archetype: the cards each plays "
                 f"(and at how many copies) and lacks are likelier among the other decks and random decks of "
                 f"this partition than in any archetype")
        if found.dropped_small or found.dropped_loose:
            text += ", among them decks of the groups given up"
        if found.own_decks:
            text += (f"; {_count(found.own_decks, 'deck')} of them {'is' if found.own_decks == 1 else 'are'} likeliest "
                     f"in {_count(found.own_groups, 'small group')} with cards of {'its' if found.own_groups == 1 else 'their'} "
                     f"own, too few decks for an archetype")
        text += "."
    if partial:
        from .card_rates import LENGTH_FULL

        text += (f" {_count(partial, 'deck')} of {n:,} ({_share(partial, n)}) {'is' if partial == 1 else 'are'} shorter than "
                 f"{LENGTH_FULL:.0%} of this partition's usual deck of {found.rates.full_size:g} cards and "
                 f"{'was' if partial == 1 else 'were'} read as partial lists: each card such a list lacks "
                 f"counted for less.")
    return text


def _mean(weights) -> np.ndarray | None:
    """The unit mean direction of a partition's TF-IDF rows (None without decks or cards)."""
    if weights.shape[0] == 0:
        return None
    centre = np.asarray(weights.mean(axis=0)).ravel()
    norm = np.linalg.norm(centre)
    return centre / norm if norm > 0 else None


def _share(part: int, n: int) -> str:
    """``part`` of ``n`` as a whole percentage, "under 1%" where that would read 0%."""
    text = f"{part / n:.0%}"
    return "under 1%" if part and text == "0%" else text


def _count(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


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
