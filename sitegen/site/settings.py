"""The settings the site stage reads, as one small frozen record made once per build."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

#: The settings the method page lists, in its order (what shaped the archetypes, maps and tables).
METHOD_KEYS = ("analysis.by_leader", "analysis.k_max", "analysis.min_decks", "analysis.min_share",
               "analysis.inclusion_min_share", "analysis.map_points", "analysis.link_threshold", "trends.min_games",
               "analysis.seed")


def _text(value: object) -> str:
    """A setting as the method page writes it (true/false for a switch)."""
    return str(value).lower() if isinstance(value, bool) else str(value)


@dataclass(frozen=True)
class SiteSettings:
    """Every setting the pages are made with. Built by :meth:`from_config` (see sitegen.config for each
    setting's meaning); the renderer makes it once and every page part reads it."""

    title: str
    description: str
    base_url: str
    publish_players: bool
    leader_word: str
    leader_word_plural: str
    #: site.content, resolved (None when not set).
    content: Path | None
    #: cache.folder, resolved (None when not set).
    cache_folder: Path | None
    #: analysis.seed: the map thinning samples with it.
    seed: int
    #: analysis.inclusion_min_share: a card rarer in an archetype is left out of its classify model table.
    inclusion_min_share: float
    #: trends.min_games: fewer games make a win rate a small sample.
    min_games: int
    #: matchups.min_games: fewer games make a matchup cell a small sample.
    matchup_min_games: int
    #: (setting, value as text) of each of :data:`METHOD_KEYS`, for the method page.
    method_settings: tuple[tuple[str, str], ...]

    @classmethod
    def from_config(cls, cfg) -> "SiteSettings":
        """Read the settings from a :class:`sitegen.config.Config` (already validated)."""
        return cls(
            title=cfg["site.title"], description=cfg["site.description"], base_url=cfg["site.base_url"],
            publish_players=bool(cfg["site.publish_players"]), leader_word=cfg["site.leader_word"],
            leader_word_plural=cfg["site.leader_word_plural"], content=cfg.path("site.content"),
            cache_folder=cfg.path("cache.folder"), seed=int(cfg["analysis.seed"]),
            inclusion_min_share=float(cfg["analysis.inclusion_min_share"]), min_games=int(cfg["trends.min_games"]),
            matchup_min_games=int(cfg["matchups.min_games"]),
            method_settings=tuple((k, _text(cfg[k])) for k in METHOD_KEYS),
        )
