"""Archetype identity across seasons: who continues, who is new, who split or merged.

Each partition's analysis names its archetypes afresh; readers and analysts'
notes need one archetype to keep one slug from season to season. For every
leader, each season's archetypes are compared with those of the leader's
previous analysed season (the most recent earlier season in which it had
clustered archetypes: a season in which the leader is missing or too small
to cluster is skipped, so lineages link across the gap). The other-decks
group takes no part and keeps its slug.

Similarity of two archetypes is the weighted Jaccard (Ruzicka) similarity of
their distinctive card profiles (:func:`distinctive`): each card's share of
member decks minus its share over the leader's archetypes that season
(deck-weighted), and 0 where that is negative::

    sum_c min(a_c, b_c) / sum_c max(a_c, b_c)

It is 1 for equal profiles and 0 for disjoint ones. Unlike cosine
similarity it counts the cards one archetype plays and the other does not
at their full weight. Taking the leader's usual cards off first leaves what
sets an archetype apart: two unrelated archetypes that share only the
leader's staples come out near 0, not at the staples' weight. On the
development stress sets (bench/stress.py ``identity_dev``) a planted
archetype and itself a season later scored 0.22 or more in 99 pairs of
100 (median 0.46), two planted archetypes of different lineages 0.21 or
less in 99 of 100 (most under 0.12); the default floor
(``analysis.link_threshold``) is 0.15.

Pairs are matched one to one by the Hungarian algorithm, maximising total
similarity (:func:`match`); a matched pair at least ``threshold`` similar
continues: the later archetype takes the earlier one's slug. Then:

* an unmatched later archetype whose whole profile is at least
  :data:`RELATED` similar to an earlier one (that continued into another)
  is a ``split`` from it;
* a matched later archetype whose whole profile is also at least
  :data:`RELATED` similar to earlier ones that continued nowhere is a
  ``merge`` of them all;
* any other unmatched later archetype is ``new``; an earlier one that
  continues nowhere retires (its last season is in ``History.last_seen``).

A link's ``similarity`` is that of the pair that continues (for
``continues`` and ``merge``), else the best similarity to any earlier
archetype (for ``split`` and ``new``; 0 in a leader's first season).

Names follow the lineage too (:func:`keep_name`): a continuing (or
merging) archetype keeps its earlier name while at least half the cards
that name is made of still mark it: among its top :data:`NAME_HOLDS_WITHIN`
signature cards, or played by half its decks or more and by more than the
leader's archetypes on average; otherwise it takes the name its own
signature gives it, and its pages say what it was called before. A name
never passes to a second lineage of the same leader: a new or renamed
archetype whose name another lineage of the leader holds or held takes one
signature card more (then a number) until its name is its own.
An analyst's ``rename`` is applied later (overrides) and always wins.

New archetypes get their provisional slug, made unique site-wide with one
:class:`~sitegen.slugs.SlugSet`. Slugs are handed out season by season
(then leader by leader, in name order), so adding a later season never
changes the slugs of earlier ones.
"""
from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np
from scipy.optimize import linear_sum_assignment

from ..model import Archetype, History, Link, PartitionResult
from ..slugs import SlugSet
from .describe import archetype_name

#: Least similarity of whole card profiles for an unmatched archetype to be read as a split from,
#: or a merge into, another (the distinctive profiles of a split's two halves share the parent's
#: core, which the leader's mean then holds, so they are compared whole).
RELATED = 0.5

#: A continuing archetype keeps its name while at least :data:`NAME_KEEP_SHARE` of the cards it is
#: named after (one of two) stay within this many of its top signature cards. Measured on the
#: development stress sets (four seasons each, a core card drifting out with chance 0.1 a season):
#: all name cards within the top 8 kept 67% of names, half of them within the top 3, 5 and 8
#: kept 78%, 88% and 93%; counting also a name card played by half the decks and above the
#: leader's mean, 96.7% (the demo data, whose archetypes have 12-14 core cards, 82% without it).
NAME_HOLDS_WITHIN = 8
NAME_KEEP_SHARE = 0.5


def name_cards(a: Archetype) -> tuple[str, ...]:
    """The signature cards ``a``'s default name is made of (empty when the name is not a default one)."""
    for n in range(1, len(a.signature) + 1):
        if archetype_name(a.leader, a.signature, n, "") == a.name:
            return tuple(s.card for s in a.signature[:n])
    return ()


def keep_name(earlier_cards: Sequence[str], later: Archetype, within: int = NAME_HOLDS_WITHIN,
              least: float = NAME_KEEP_SHARE, distinct: dict[str, float] | None = None) -> bool:
    """True when at least ``least`` of the earlier name's cards still mark ``later``: among its top
    ``within`` signature cards, or (with ``distinct``, its distinctive profile) played by at least
    half its decks and more than by the leader's archetypes on average."""
    top = {s.card for s in later.signature[:within]}
    distinct = distinct or {}

    def marks(card: str) -> bool:
        return card in top or (distinct.get(card, 0.0) > 0 and later.profile.get(card, 0.0) >= 0.5)
    return bool(earlier_cards) and sum(map(marks, earlier_cards)) >= least * len(earlier_cards) - 1e-9


def _own_name(a: Archetype, taken: set[str]) -> tuple[str, tuple[str, ...]]:
    """``a``'s default name, or a longer one (one signature card more, then a number) while ``taken`` holds it."""
    cards = name_cards(a)
    if a.name not in taken:
        return a.name, cards
    for n in range(len(cards) + 1, len(a.signature) + 1):
        name = archetype_name(a.leader, a.signature, n, "")
        if name not in taken:
            return name, tuple(s.card for s in a.signature[:n])
    n = 2
    while f"{a.name} ({n})" in taken:
        n += 1
    return f"{a.name} ({n})", cards


def profile_similarity(earlier: Sequence[dict[str, float]], later: Sequence[dict[str, float]]) -> np.ndarray:
    """Weighted Jaccard similarity of every earlier profile (rows) with every later one (columns)."""
    cards = sorted({c for p in (*earlier, *later) for c in p})
    index = {c: i for i, c in enumerate(cards)}

    def dense(profiles: Sequence[dict[str, float]]) -> np.ndarray:
        out = np.zeros((len(profiles), len(cards)))
        for r, p in enumerate(profiles):
            for c, v in p.items():
                out[r, index[c]] = float(v)
        return out

    a, b = dense(earlier), dense(later)
    # (n, 1, cards) against (1, m, cards): archetypes per partition are few.
    low = np.minimum(a[:, None, :], b[None, :, :]).sum(axis=2)
    high = np.maximum(a[:, None, :], b[None, :, :]).sum(axis=2)
    with np.errstate(invalid="ignore", divide="ignore"):
        sim = np.where(high > 0, low / np.where(high > 0, high, 1.0), 0.0)
    return sim


def distinctive(archetypes: Sequence[Archetype]) -> list[dict[str, float]]:
    """Each archetype's profile less the deck-weighted mean profile of all of them (negative parts
    dropped); a partition of one archetype has nothing to set it apart from: its own profile."""
    total = sum(a.n_decks for a in archetypes)
    if total <= 0 or len(archetypes) < 2:
        return [dict(a.profile) for a in archetypes]
    base: dict[str, float] = {}
    for a in archetypes:
        for c, v in a.profile.items():
            base[c] = base.get(c, 0.0) + float(v) * a.n_decks / total
    return [{c: float(v) - base[c] for c, v in a.profile.items() if float(v) - base[c] > 0} for a in archetypes]


def match(similarity: np.ndarray, threshold: float) -> list[tuple[int, int]]:
    """One-to-one pairs (row, column) of greatest total similarity, each at least ``threshold``.

    Pairs below the threshold count as worth nothing, so the Hungarian
    algorithm never gives up a qualifying pair to make room for one that
    will be dropped anyway; those are then left out. Sorted by row.
    """
    sim = np.asarray(similarity, dtype=float)
    if sim.ndim != 2 or sim.size == 0:
        return []
    worth = np.where(sim >= threshold, sim, 0.0)
    rows, cols = linear_sum_assignment(worth, maximize=True)
    return sorted((int(i), int(j)) for i, j in zip(rows, cols) if sim[i, j] >= threshold)


def _classify(sim: np.ndarray, pairs: list[tuple[int, int]], threshold: float,
              related: np.ndarray | None = None, related_threshold: float | None = None
              ) -> list[tuple[str, list[int], float]]:
    """For each later archetype: (kind, indices of its earlier sources, best similarity).

    Input is already checked: ``pairs`` come from :func:`match` on ``sim``.
    Splits and merges are read from ``related`` (default ``sim``) at
    ``related_threshold`` (default ``threshold``); the similarity reported
    is always from ``sim``.
    """
    rel = sim if related is None else related
    rel_t = threshold if related_threshold is None else related_threshold
    n_earlier, n_later = sim.shape
    earlier_of = {j: i for i, j in pairs}
    matched_earlier = {i for i, _ in pairs}
    out: list[tuple[str, list[int], float]] = []
    # An earlier archetype that continued nowhere merges into the one later
    # archetype it is most similar to, if that is similar enough and matched.
    merged_into: dict[int, list[int]] = {}
    for i in range(n_earlier):
        if i in matched_earlier or n_later == 0:
            continue
        j = int(np.argmax(rel[i]))
        if rel[i, j] >= rel_t and j in earlier_of:
            merged_into.setdefault(j, []).append(i)
    for j in range(n_later):
        best = float(sim[:, j].max()) if n_earlier else 0.0
        if j in earlier_of:
            i = earlier_of[j]
            extra = sorted(merged_into.get(j, []), key=lambda e: (-rel[e, j], e))
            if extra:
                out.append(("merge", [i, *extra], float(sim[i, j])))
            else:
                out.append(("continues", [i], float(sim[i, j])))
        elif n_earlier and float(rel[:, j].max()) >= rel_t:
            # Similar enough to an earlier archetype that went on as another:
            # a split from the most similar one.
            out.append(("split", [int(np.argmax(rel[:, j]))], best))
        else:
            out.append(("new", [], best))
    return out


def link_seasons(
    results: Sequence[PartitionResult], seasons: Sequence[str], threshold: float
) -> tuple[tuple[PartitionResult, ...], History]:
    """Give archetypes slugs that are stable across seasons and say how they relate.

    Returns the results in the order given, each archetype's ``slug``
    replaced (assignments keep their archetype keys), and the
    :class:`~sitegen.model.History`.
    """
    order = {s: i for i, s in enumerate(seasons)}
    if len(order) != len(seasons):
        raise ValueError("link_seasons: seasons must not repeat")
    seen: set[tuple[str, str]] = set()
    for r in results:
        if r.season not in order:
            raise ValueError(f"link_seasons: partition season {r.season!r} is not among the seasons {list(seasons)!r}")
        if (r.season, r.leader) in seen:
            raise ValueError(f"link_seasons: two results for season {r.season!r} and leader {r.leader!r}")
        seen.add((r.season, r.leader))

    slugs = SlugSet()
    # Other-decks groups keep their slugs; no lineage may take one of them.
    for r in results:
        if r.other is not None and r.other.slug:
            slugs.reserve(r.other.slug)

    by_place = {(r.season, r.leader): r for r in results}
    leaders = sorted({r.leader for r in results})
    previous: dict[str, list[Archetype]] = {}  # leader -> its last analysed season's archetypes, slugs final
    previous_profiles: dict[str, list[dict[str, float]]] = {}  # leader -> their distinctive profiles
    new_slug: dict[tuple[str, str, str], str] = {}  # (season, leader, key) -> slug
    new_name: dict[tuple[str, str, str], str] = {}  # (season, leader, key) -> name
    names_held: dict[str, dict[str, str]] = {}  # leader -> name -> slug of the lineage that first held it
    lineage_name: dict[str, tuple[str, tuple[str, ...]]] = {}  # slug -> (name, cards it is made of)
    links: list[Link] = []

    for season in seasons:
        for leader in leaders:
            r = by_place.get((season, leader))
            if r is None or not r.archetypes:
                continue  # the leader skips this season: its lineages wait for the next one
            later = list(r.archetypes)
            earlier = previous.get(leader, [])
            if leader not in previous_profiles:
                previous_profiles[leader] = []
            later_profiles = distinctive(later)
            sim = profile_similarity(previous_profiles[leader], later_profiles)
            raw = profile_similarity([a.profile for a in earlier], [a.profile for a in later])
            kinds = _classify(sim, match(sim, threshold), threshold, raw, max(threshold, RELATED))
            linked: list[Archetype] = []
            held = names_held.setdefault(leader, {})  # name -> slug of the lineage holding it
            # Continuing lineages first keep their names (when their name cards hold), then the
            # rest name themselves without taking a name another lineage holds or held.
            naming: dict[str, tuple[str, tuple[str, ...]]] = {}
            slug_of: dict[str, str] = {}
            for arch, profile, (kind, sources, best) in zip(later, later_profiles, kinds):
                if kind in ("continues", "merge"):
                    slug_of[arch.key] = earlier[sources[0]].slug
                    old_name, old_cards = lineage_name[slug_of[arch.key]]
                    if keep_name(old_cards, arch, distinct=profile) or (not old_cards and old_name == arch.name):
                        naming[arch.key] = (old_name, old_cards)
            for arch, (kind, sources, best) in zip(later, kinds):
                if arch.key not in slug_of:
                    slug_of[arch.key] = slugs.add(arch.slug or arch.name, fallback="archetype")
                slug = slug_of[arch.key]
                if arch.key not in naming:
                    taken = {n for n, holder in held.items() if holder != slug}
                    taken |= {v[0] for k, v in naming.items()}
                    naming[arch.key] = _own_name(arch, taken)
                name, cards = naming[arch.key]
                held.setdefault(name, slug)
                lineage_name[slug] = (name, cards)
                new_slug[(season, leader, arch.key)] = slug
                new_name[(season, leader, arch.key)] = name
                links.append(Link(season, leader, slug, kind, tuple(earlier[i].slug for i in sources), round(best, 6)))
                linked.append(dataclasses.replace(arch, slug=slug, name=name))
            previous[leader] = linked
            previous_profiles[leader] = later_profiles

    out: list[PartitionResult] = []
    for r in results:
        if not r.archetypes:
            out.append(r)
            continue
        archetypes = tuple(dataclasses.replace(a, slug=new_slug[(r.season, r.leader, a.key)],
                                               name=new_name[(r.season, r.leader, a.key)]) for a in r.archetypes)
        out.append(dataclasses.replace(r, archetypes=archetypes))

    seasons_of: dict[str, list[str]] = {}
    for link in links:  # links are in season order already
        got = seasons_of.setdefault(link.slug, [])
        if not got or got[-1] != link.season:
            got.append(link.season)
    history = History(
        links=tuple(links),
        last_seen={slug: got[-1] for slug, got in sorted(seasons_of.items())},
        seasons_of={slug: tuple(got) for slug, got in sorted(seasons_of.items())},
    )
    return tuple(out), history
