"""The settings the load stage reads, as one small frozen record made once from the config.

:meth:`LoadSettings.from_config` is the one place the load stage (this
package and :mod:`sitegen.check`) reads the config by key; everything else
takes the record. The entry points (:func:`sitegen.load.load_data`,
:func:`sitegen.load.open_season_folder`, :func:`sitegen.load.matches.read_matches`,
:func:`sitegen.check.check_rules`) take either a Config or the record
(:meth:`LoadSettings.of`).
"""
from __future__ import annotations

from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

from ..config import Config


@dataclass(frozen=True)
class ColumnNames:
    """The column names the tables use, settings ``columns.<field name>``."""

    deck_id: str
    card: str
    quantity: str
    season: str
    date: str
    leader: str
    wins: str
    losses: str
    event: str
    player: str
    title: str
    card_name: str
    card_type: str
    #: Further card-table columns to keep, in order; empty keeps them all.
    card_extra: tuple[str, ...]
    match_deck: str
    match_opponent: str
    match_result: str


@dataclass(frozen=True)
class RuleSettings:
    """The deck-building rules, settings ``rules.<field name>``."""

    max_copies: int
    min_cards: int
    max_cards: int
    exclude_breakers: bool


@dataclass(frozen=True)
class LoadSettings:
    """Every setting the load stage reads.

    Paths are resolved against the config file's folder (None when the
    setting is empty). ``calendar`` holds the ``seasons.calendar`` entries as
    (name, start, end), as the config gives them: they are checked as dates
    where they are used, when the seasons come from the calendar.
    """

    #: The config file, for messages naming a setting ("<config>" when there is none).
    source: str
    decks: Path | None
    deck_cards: Path | None
    cards: Path | None
    decklists: Path | None
    parquet_folder: Path | None
    matches: Path | None
    columns: ColumnNames
    #: seasons.source: 'column' or 'calendar'.
    season_source: str
    calendar: tuple[tuple[Any, Any, Any], ...]
    #: seasons.order: season names in publication order, as written.
    season_order: tuple[str, ...]
    #: site.leader_word: what the site calls a deck's leader, in findings.
    leader_word: str
    rules: RuleSettings

    @classmethod
    def from_config(cls, cfg: Config) -> LoadSettings:
        """Read the settings from a :class:`sitegen.config.Config` (already validated)."""
        columns = {f.name: cfg[f"columns.{f.name}"] for f in fields(ColumnNames)}
        columns["card_extra"] = tuple(columns["card_extra"])
        return cls(
            source=str(cfg.source or "<config>"),
            decks=cfg.path("data.decks"),
            deck_cards=cfg.path("data.deck_cards"),
            cards=cfg.path("data.cards"),
            decklists=cfg.path("data.decklists"),
            parquet_folder=cfg.path("data.parquet_folder"),
            matches=cfg.path("data.matches"),
            columns=ColumnNames(**columns),
            season_source=cfg["seasons.source"],
            calendar=tuple((e["name"], e["start"], e["end"]) for e in cfg["seasons.calendar"]),
            season_order=tuple(cfg["seasons.order"]),
            leader_word=cfg["site.leader_word"],
            rules=RuleSettings(**{f.name: cfg[f"rules.{f.name}"] for f in fields(RuleSettings)}),
        )

    @classmethod
    def of(cls, settings: LoadSettings | Config) -> LoadSettings:
        """``settings`` itself, or the settings read from a Config."""
        return settings if isinstance(settings, LoadSettings) else cls.from_config(settings)
