"""Planted deck data for the analysis tests: archetypes whose truth we set.

Each archetype has core cards (almost always played, 2-3 copies), flex
cards (about half the time), and every deck also draws from staples shared
by all archetypes and from a pool of fillers. Some archetypes are planted as
close variants of another (most core cards shared), which is the case where
silhouette alone tends to pick too few clusters. "brew" decks are one-offs
drawn from the whole pool.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from sitegen.model import PartitionInput


def planted_partition(
    n_decks: int = 600,
    n_archetypes: int = 4,
    *,
    seed: int = 0,
    variants: int = 1,
    variant_shared: int = 7,
    brew_share: float = 0.02,
    season: str = "S1",
    leader: str = "Vessa",
    with_results: bool = True,
) -> tuple[PartitionInput, pd.Series, dict[str, list[str]]]:
    """One partition, its true labels (indexed by deck_id) and core cards per archetype."""
    rng = np.random.default_rng(seed)
    pool = [f"card {i:03d}" for i in range(400)]
    order = rng.permutation(len(pool))
    staples = [pool[i] for i in order[:8]]
    fillers = [pool[i] for i in order[8:150]]
    free = [pool[i] for i in order[150:]]
    cores: dict[str, list[str]] = {}
    flexes: dict[str, list[str]] = {}
    at = 0
    for a in range(n_archetypes):
        name = f"arch{a + 1}"
        if a >= 1 and a <= variants:
            # A variant: shares ``variant_shared`` of its 12 core cards with archetype 1.
            fresh = 12 - variant_shared
            cores[name] = cores["arch1"][:variant_shared] + free[at:at + fresh]
            at += fresh
        else:
            cores[name] = free[at:at + 12]
            at += 12
        flexes[name] = free[at:at + 10]
        at += 10
    weights = rng.dirichlet(np.full(n_archetypes, 4.0))
    weights = 0.6 * weights + 0.4 / n_archetypes
    n_brew = int(round(brew_share * n_decks))
    labels = list(rng.choice([f"arch{a + 1}" for a in range(n_archetypes)], size=n_decks - n_brew, p=weights))
    labels += ["brew"] * n_brew
    labels = [labels[i] for i in rng.permutation(n_decks)]
    deck_ids = [f"{season}-{leader[:3].lower()}-{i:05d}" for i in range(n_decks)]
    rows: list[tuple[str, str, int]] = []
    for deck_id, label in zip(deck_ids, labels):
        chosen: dict[str, int] = {}
        if label == "brew":
            for c in rng.choice(pool, size=18, replace=False):
                chosen[str(c)] = int(rng.integers(1, 4))
        else:
            for c in cores[label]:
                if rng.random() < 0.93:
                    chosen[c] = int(rng.integers(2, 4))
            for c in flexes[label]:
                if rng.random() < 0.45:
                    chosen[c] = int(rng.integers(1, 3))
            for c in staples:
                if rng.random() < 0.8:
                    chosen[c] = 3
            for c in rng.choice(fillers, size=5, replace=False):
                chosen.setdefault(str(c), 1)
        rows.extend((deck_id, c, q) for c, q in sorted(chosen.items()))
    cards = pd.DataFrame(rows, columns=["deck_id", "card", "quantity"])
    decks = pd.DataFrame({
        "deck_id": deck_ids,
        "season": season,
        "leader": leader,
        "wins": pd.array(rng.integers(0, 6, n_decks) if with_results else [pd.NA] * n_decks, dtype="Int64"),
        "losses": pd.array(rng.integers(0, 4, n_decks) if with_results else [pd.NA] * n_decks, dtype="Int64"),
    })
    types = {c: ("Unit" if i % 3 else "Spell") for i, c in enumerate(pool)}
    part = PartitionInput(season=season, leader=leader, decks=decks, cards=cards, card_types=types, fingerprint="planted")
    return part, pd.Series(labels, index=deck_ids, name="truth"), cores
