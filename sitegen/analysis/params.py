"""The analysis settings one partition needs, as one small frozen (picklable) record."""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class AnalysisParams:
    """Settings ``analysis.*`` (plus ``site.leader_word``) that shape a partition's analysis.

    ``pinned_k`` holds (season, leader, k) triples; a leader of None pins
    every leader of that season. Built by :meth:`from_config`; the defaults
    here equal the defaults in :data:`sitegen.config.SETTINGS`.
    """

    k_min: int = 2
    k_max: int = 12
    pinned_k: tuple[tuple[str, str | None, int], ...] = ()
    min_decks: int = 30
    min_share: float = 0.02
    seed: int = 0
    silhouette_sample: int = 3000
    inclusion_min_share: float = 0.05
    name_cards: int = 2
    map_points: int = 1500
    leader_word: str = "leader"
    svd_dims: int = 32
    kmeans_starts: int = 4
    fit_sample: int = 20000
    split_silhouette: float = 0.3
    min_signature: float = 0.6
    map_iterations: int = 150

    @classmethod
    def from_config(cls, cfg) -> "AnalysisParams":
        """Read the settings from a :class:`sitegen.config.Config` (already validated)."""
        pins = tuple(
            (str(p["season"]), None if p.get("leader") in (None, "") else str(p["leader"]), int(p["k"]))
            for p in cfg["analysis.pinned_k"]
        )
        return cls(
            k_min=cfg["analysis.k_min"],
            k_max=cfg["analysis.k_max"],
            pinned_k=pins,
            min_decks=cfg["analysis.min_decks"],
            min_share=cfg["analysis.min_share"],
            seed=cfg["analysis.seed"],
            silhouette_sample=cfg["analysis.silhouette_sample"],
            inclusion_min_share=cfg["analysis.inclusion_min_share"],
            name_cards=cfg["analysis.name_cards"],
            map_points=cfg["analysis.map_points"],
            leader_word=cfg["site.leader_word"],
            svd_dims=cfg["analysis.svd_dims"],
            kmeans_starts=cfg["analysis.kmeans_starts"],
            fit_sample=cfg["analysis.fit_sample"],
            split_silhouette=cfg["analysis.split_silhouette"],
            min_signature=cfg["analysis.min_signature"],
            map_iterations=cfg["analysis.map_iterations"],
        )

    def pinned(self, season: str, leader: str) -> int | None:
        """The pinned k of this season and leader, or None; a pin naming the leader beats one for the whole season."""
        whole = None
        for s, l_, k in self.pinned_k:
            if s != season:
                continue
            if l_ == leader:
                return k
            if l_ is None and whole is None:
                whole = k
        return whole
