"""Hand-made archetypes and partition results for the season-linking, override and trend tests."""
from __future__ import annotations

import pandas as pd

from sitegen.model import OTHER_KEY, Archetype, PartitionResult


def arch(key: str, slug: str, profile: dict[str, float], *, season: str = "S1", leader: str = "Vessa",
         n_decks: int = 10, share: float = 0.1, wins: int = 0, losses: int = 0, name: str | None = None,
         is_other: bool = False) -> Archetype:
    return Archetype(
        key=key, slug=slug, name=name or slug.replace("-", " ").title(), season=season, leader=leader,
        n_decks=n_decks, share=share, signature=(), medoid_deck_id=f"{season}-{key}-0", medoid=(), medoid_total=0,
        inclusion=(), profile=dict(profile), wins=wins, losses=losses, is_other=is_other,
    )


def result(season: str, leader: str, archetypes: list[Archetype], other: Archetype | None = None) -> PartitionResult:
    rows = []
    for a in archetypes + ([other] if other else []):
        rows += [(f"{season}-{leader}-{a.key}-{i}", a.key) for i in range(a.n_decks)]
    assignments = pd.DataFrame(rows, columns=["deck_id", "archetype"])
    return PartitionResult(
        season=season, leader=leader, n_decks=len(rows), status="clustered", reason="", chosen_k=len(archetypes),
        silhouette=(), k_reason="", archetypes=tuple(archetypes), other=other, assignments=assignments,
        map_points=pd.DataFrame(columns=["deck_id", "archetype", "x", "y", "cards"]), inclusion=(),
    )


def other(season: str = "S1", leader: str = "Vessa", n_decks: int = 3) -> Archetype:
    return arch(OTHER_KEY, "other", {"stray": 0.3}, season=season, leader=leader, n_decks=n_decks, is_other=True,
                name="Other decks")


def cards(prefix: str, n: int, share: float = 0.9) -> dict[str, float]:
    """A block of ``n`` cards named ``prefix 0``... all played by ``share`` of the decks."""
    return {f"{prefix} {i}": share for i in range(n)}
