"""The analysis settings one partition needs, as one small frozen (picklable) record."""
from __future__ import annotations

from dataclasses import dataclass, fields

from ..config import SETTINGS_BY_KEY


def _default(name: str):
    """The declared default of ``analysis.<name>`` (declared once, in sitegen.config)."""
    return SETTINGS_BY_KEY[f"analysis.{name}"].default


@dataclass(frozen=True)
class AnalysisParams:
    """Settings ``analysis.*`` (plus ``site.leader_word``) that shape a partition's analysis.

    ``pinned_k`` holds (season, leader, k) triples; a leader of None pins
    every leader of that season. Built by :meth:`from_config`; every other
    field is the setting ``analysis.<field name>``, with its declared default.
    """

    k_max: int = _default("k_max")
    pinned_k: tuple[tuple[str, str | None, int], ...] = ()
    min_decks: int = _default("min_decks")
    min_share: float = _default("min_share")
    seed: int = _default("seed")
    inclusion_min_share: float = _default("inclusion_min_share")
    name_cards: int = _default("name_cards")
    map_points: int = _default("map_points")
    leader_word: str = SETTINGS_BY_KEY["site.leader_word"].default
    svd_dims: int = _default("svd_dims")
    kmeans_starts: int = _default("kmeans_starts")
    fit_sample: int = _default("fit_sample")
    map_iterations: int = _default("map_iterations")

    @classmethod
    def from_config(cls, cfg) -> "AnalysisParams":
        """Read the settings from a :class:`sitegen.config.Config` (already validated)."""
        pins = tuple(
            (str(p["season"]), None if p.get("leader") in (None, "") else str(p["leader"]), int(p["k"]))
            for p in cfg["analysis.pinned_k"]
        )
        same_name = {f.name: cfg[f"analysis.{f.name}"] for f in fields(cls) if f.name not in ("pinned_k", "leader_word")}
        return cls(pinned_k=pins, leader_word=cfg["site.leader_word"], **same_name)

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
