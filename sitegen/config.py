"""Site settings: declared once here (name, default, help), read from TOML.

Every setting is a :class:`Setting` in :data:`SETTINGS`. The README's settings
table is generated from this list (``python -m sitegen.config``) and a test
checks the two agree. A config file is a TOML document whose tables are the
part before the dot (``[analysis]`` holds ``analysis.k_max``).
"""
from __future__ import annotations

import difflib
import tomllib
import unicodedata
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import ConfigError


@dataclass(frozen=True)
class Setting:
    """One setting: its dotted key, default, expected type and a help line."""

    key: str
    default: Any
    kind: type
    help: str
    choices: tuple[Any, ...] | None = None
    minimum: float | None = None
    maximum: float | None = None

    @property
    def section(self) -> str:
        return self.key.split(".", 1)[0]

    @property
    def name(self) -> str:
        return self.key.split(".", 1)[1]


_S = Setting

SETTINGS: tuple[Setting, ...] = (
    # -- the site as readers see it
    _S("site.title", "Archetype guide", str, "Title shown on every page."),
    _S("site.description", "", str, "One line under the title on the front page."),
    _S("site.base_url", "", str, "Absolute URL the site is published at; needed for sitemap.xml (left out when empty)."),
    _S("site.output", "site", str, "Folder the built site is written to, relative to the config file."),
    _S("site.content", "content", str, "Folder of the analysts' Markdown notes, relative to the config file."),
    _S("site.templates", "templates", str, "Folder of templates that override the packaged ones file by file, relative to the config file."),
    _S("site.leader_word", "leader", str, "What the site calls the card or persona every deck declares."),
    _S("site.leader_word_plural", "leaders", str, "Plural of site.leader_word."),
    _S("site.publish_players", False, bool, "Publish player names. Off by default: names of real people stay out of the site."),
    # -- input files
    _S("data.deck_cards", "", str, "Long-form table (CSV or Parquet): one row per deck and card with its quantity."),
    _S("data.decks", "", str, "Deck table (CSV or Parquet): deck id, season or date, leader, optional results."),
    _S("data.cards", "", str, "Optional card table (CSV or Parquet): card name, card type, further columns."),
    _S("data.decklists", "", str, "Folder of plain-text decklists, instead of data.deck_cards and data.decks."),
    _S("data.parquet_folder", "", str, "Folder of Parquet files partitioned by season: season=NAME/ folders each holding decks.parquet and deck_cards.parquet; instead of data.deck_cards and data.decks."),
    _S("data.matches", "", str, "Optional matches table (CSV or Parquet): one row per match or game, with the two deck ids and the result for the first deck: win, loss or draw."),
    # -- which column means what
    _S("columns.deck_id", "deck_id", str, "Deck id column, in both the deck table and the long-form table."),
    _S("columns.card", "card", str, "Card name column of the long-form table."),
    _S("columns.quantity", "quantity", str, "Copies column of the long-form table."),
    _S("columns.season", "season", str, "Season column of the deck table (when seasons.source is 'column')."),
    _S("columns.date", "date", str, "Date column of the deck table (when seasons.source is 'calendar')."),
    _S("columns.leader", "leader", str, "Leader column of the deck table."),
    _S("columns.wins", "wins", str, "Optional wins column of the deck table."),
    _S("columns.losses", "losses", str, "Optional losses column of the deck table."),
    _S("columns.event", "event", str, "Optional event column of the deck table."),
    _S("columns.player", "player", str, "Optional player column of the deck table."),
    _S("columns.title", "title", str, "Optional deck title column of the deck table."),
    _S("columns.card_name", "card", str, "Card name column of the card table."),
    _S("columns.card_type", "type", str, "Card type column of the card table."),
    _S("columns.card_extra", [], list, "Further card-table columns to show in tables; empty shows all of them."),
    _S("columns.match_deck", "deck_id", str, "Matches table: the first deck's id column (the result is this deck's)."),
    _S("columns.match_opponent", "opponent_id", str, "Matches table: the opposing deck's id column."),
    _S("columns.match_result", "result", str, "Matches table: the first deck's result column, one of win, loss, draw (any case)."),
    # -- seasons
    _S("seasons.source", "column", str, "Where a deck's season comes from: 'column' or 'calendar'.", choices=("column", "calendar")),
    _S("seasons.calendar", [], list, "Named date ranges, each {name, start, end} (dates inclusive), applied to columns.date."),
    _S("seasons.order", [], list, "Season names in publication order; empty sorts by calendar, or by first date, or by name."),
    # -- deck-building rules (warnings, not errors)
    _S("rules.max_copies", 3, int, "Most copies of one card a deck may hold.", minimum=1),
    _S("rules.min_cards", 40, int, "Fewest cards a deck may hold.", minimum=0),
    _S("rules.max_cards", 0, int, "Most cards a deck may hold; 0 means no limit.", minimum=0),
    _S("rules.exclude_breakers", False, bool, "Leave decks that break a rule out of the analysis (they are always listed)."),
    # -- analysis
    _S("analysis.by_leader", True, bool, "Analyse each season and leader apart; false pools all leaders of a season."),
    _S("analysis.k_max", 12, int, "Most archetypes per partition; beyond it the most alike are joined.", minimum=1),
    _S("analysis.pinned_k", [], list, "Fixed archetype counts, each {season, leader, k}."),
    _S("analysis.min_decks", 30, int, "Partitions with fewer decks are not clustered.", minimum=2),
    _S("analysis.min_share", 0.02, float, "Groups below this share of their partition are not archetypes; their decks go to the archetype they fit best, or to the other decks (those that fit it best when the group has cards of its own and at least 5 decks).", minimum=0, maximum=1),
    _S("analysis.seed", 0, int, "Random seed for sampling, random decks, k-means and maps, from 0 to 2147483647.", minimum=0, maximum=2**31 - 1),
    _S("analysis.inclusion_min_share", 0.05, float, "Cards played by fewer of an archetype's decks are left out of its card table.", minimum=0, maximum=1),
    _S("analysis.name_cards", 2, int, "Signature cards used in an archetype's default name.", minimum=1, maximum=5),
    _S("analysis.map_points", 1500, int, "Most decks drawn per map (sampled per archetype); the map is the costliest step of the analysis.", minimum=10),
    _S("analysis.map_iterations", 150, int, "t-SNE steps per map: a leader's first map gets 125 of early exaggeration before them; later maps start from the previous season's and get two thirds of them; more gives a tidier map, slower.", minimum=50),
    _S("analysis.svd_dims", 32, int, "Dimensions the deck features are reduced to (truncated SVD) before clustering.", minimum=2),
    _S("analysis.kmeans_starts", 4, int, "k-means starts when a k is pinned or a group is tried cut in two; the best (least inertia) is kept.", minimum=1),
    _S("analysis.fit_sample", 20000, int, "Most decks the SVD and a pinned k's k-means are fitted on per partition; every deck is then projected or assigned.", minimum=100),
    _S("analysis.link_threshold", 0.15, float, "Least similarity of distinctive card profiles (shares above the leader's mean) for an archetype to continue from one season to the next.", minimum=0, maximum=1),
    _S("analysis.workers", 0, int, "Worker processes for partition analyses; 0 uses every core.", minimum=0),
    _S("analysis.scheduler", "", str, "Address of a Dask scheduler to send partition analyses to; empty runs them here."),
    # -- trends
    _S("trends.min_games", 100, int, "Win rates from fewer games are flagged as small samples and not ranked.", minimum=0),
    # -- head-to-head results
    _S("matchups.min_games", 30, int, "Matchups from fewer won or lost games are greyed as small samples and not ranked.", minimum=1),
    # -- cache
    _S("cache.folder", ".sitegen-cache", str, "Folder of stored partition analyses, relative to the config file."),
)

SETTINGS_BY_KEY: dict[str, Setting] = {s.key: s for s in SETTINGS}

#: Settings older versions read and this one does not: accepted, with a warning that says why.
RETIRED: dict[str, str] = {
    "analysis.k_min": "archetypes are no longer found by trying each k from k_min to k_max",
    "analysis.silhouette_sample": "the number of archetypes is no longer chosen by silhouette",
    "analysis.split_silhouette": "groups are no longer split by silhouette",
    "analysis.min_signature": "a group is no longer held to a lead of its 3 best cards",
}
SECTIONS: tuple[str, ...] = tuple(dict.fromkeys(s.section for s in SETTINGS))


@dataclass(frozen=True)
class Config:
    """Settings of one site, validated; paths resolve against ``root``."""

    values: dict[str, Any]
    root: Path
    source: Path | None = None
    _set: frozenset[str] = field(default_factory=frozenset)
    #: Retired settings the file still gives (see :data:`RETIRED`).
    retired: tuple[str, ...] = ()

    def __getitem__(self, key: str) -> Any:
        return self.values[key]

    def is_set(self, key: str) -> bool:
        """True where the config file gave the key (not its default)."""
        return key in self._set

    def path(self, key: str) -> Path | None:
        """A path setting resolved against the config file's folder, or None if empty."""
        text = self.values[key]
        if not text:
            return None
        p = Path(text).expanduser()
        return p if p.is_absolute() else (self.root / p)

    def replace(self, **changes: Any) -> "Config":
        """A copy with some settings changed; keys use '__' for '.' (site__output)."""
        values = dict(self.values)
        for k, v in changes.items():
            values[k.replace("__", ".")] = v
        return Config(values, self.root, self.source, self._set | {k.replace("__", ".") for k in changes})


def _type_name(kind: type) -> str:
    return {str: "text", int: "a whole number", float: "a number", bool: "true or false", list: "a list"}[kind]


def _check_value(setting: Setting, value: Any, file: str) -> Any:
    kind = setting.kind
    ok: bool
    if kind is bool:
        ok = isinstance(value, bool)
    elif kind is int:
        ok = isinstance(value, int) and not isinstance(value, bool)
    elif kind is float:
        ok = isinstance(value, (int, float)) and not isinstance(value, bool)
        if ok:
            value = float(value)
    else:
        ok = isinstance(value, kind)
    if not ok:
        raise ConfigError(
            file, setting.key,
            f"expected {_type_name(kind)}, got {value!r} ({type(value).__name__})",
            f"write it like {setting.key.split('.')[1]} = {_toml_literal(setting.default)}",
        )
    if setting.choices is not None and value not in setting.choices:
        raise ConfigError(file, setting.key, f"{value!r} is not one of {', '.join(map(repr, setting.choices))}",
                          "pick one of those")
    def shown(bound: float) -> str:  # whole-number settings show their bounds in full (not 2.14748e+09)
        return str(int(bound)) if kind is int else f"{bound:g}"

    allowed = (f"; allowed: {shown(setting.minimum)} to {shown(setting.maximum)}"
               if setting.minimum is not None and setting.maximum is not None else "")
    if setting.minimum is not None and value < setting.minimum:
        raise ConfigError(file, setting.key, f"{value!r} is below the least allowed value {shown(setting.minimum)}{allowed}",
                          f"use {shown(setting.minimum)} or more")
    if setting.maximum is not None and value > setting.maximum:
        raise ConfigError(file, setting.key, f"{value!r} is above the largest allowed value {shown(setting.maximum)}{allowed}",
                          f"use {shown(setting.maximum)} or less")
    return value


def _suggest(key: str, candidates: list[str]) -> str:
    near = difflib.get_close_matches(key, candidates, n=1, cutoff=0.5)
    return f"did you mean '{near[0]}'?" if near else "valid keys are listed in the README's settings table"


def _check_structured(values: dict[str, Any], file: str) -> None:
    for i, entry in enumerate(values["seasons.calendar"], start=1):
        if not isinstance(entry, dict) or not {"name", "start", "end"} <= set(entry):
            raise ConfigError(file, "seasons.calendar", f"entry {i} must be a table with name, start and end, got {entry!r}",
                              'write [[seasons.calendar]] name = "Spring" start = 2026-03-01 end = 2026-05-31')
    named: dict[str, int] = {}
    for i, entry in enumerate(values["seasons.calendar"], start=1):
        if not isinstance(entry["name"], str) or not entry["name"].strip():
            raise ConfigError(file, "seasons.calendar", f"entry {i} needs a name as text, got {entry['name']!r}",
                              'write name = "Spring 2026"')
        # Compared as names are (Unicode NFC, spacing and letter case aside), so look-alikes clash too.
        key = unicodedata.normalize("NFC", " ".join(entry["name"].split())).casefold()
        if key in named:
            raise ConfigError(file, "seasons.calendar", f"entries {named[key]} and {i} are both named {entry['name']!r}",
                              "give each entry its own name (one season is one date range)")
        named[key] = i
    for i, entry in enumerate(values["analysis.pinned_k"], start=1):
        if (not isinstance(entry, dict) or not {"season", "k"} <= set(entry)
                or not isinstance(entry.get("k"), int) or entry["k"] < 1):
            raise ConfigError(file, "analysis.pinned_k", f"entry {i} must be a table with season, leader and a whole k >= 1, got {entry!r}",
                              'write [[analysis.pinned_k]] season = "S1" leader = "NAME" k = 4')
    if not values["site.output"].strip():
        raise ConfigError(file, "site.output", "is empty (it would mean the config's own folder, which a build replaces whole)",
                          'set it to a folder of its own, such as output = "site"')
    for key in ("columns.card_extra", "seasons.order"):
        for item in values[key]:
            if not isinstance(item, str):
                raise ConfigError(file, key, f"every entry must be text, got {item!r}", 'write ["a", "b"]')


def from_dict(raw: dict[str, Any], *, root: Path, source: Path | str = "<config>") -> Config:
    """Validate a parsed TOML document against :data:`SETTINGS`."""
    file = str(source)
    values = {s.key: _copy_default(s.default) for s in SETTINGS}
    given: set[str] = set()
    retired: list[str] = []
    for section, table in raw.items():
        if section not in SECTIONS:
            raise ConfigError(file, section, "unknown section", _suggest(section, list(SECTIONS)))
        if not isinstance(table, dict):
            raise ConfigError(file, section, f"expected a table [{section}], got {table!r}", f"write it as [{section}]")
        for name, value in table.items():
            key = f"{section}.{name}"
            setting = SETTINGS_BY_KEY.get(key)
            if key in RETIRED:
                retired.append(key)
                continue
            if setting is None:
                raise ConfigError(file, key, "unknown setting", _suggest(key, list(SETTINGS_BY_KEY)))
            values[key] = _check_value(setting, value, file)
            given.add(key)
    _check_structured(values, file)
    return Config(values, root, Path(source) if source != "<config>" else None, frozenset(given), tuple(retired))


def load(path: Path | str) -> Config:
    """Read and validate a site config file."""
    path = Path(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise ConfigError(path, "-", "config file not found", "give the path of a site.toml, or make one with 'sitegen new DIR'") from None
    except IsADirectoryError:
        raise ConfigError(path, "-", "is a folder, not a config file", "give the path of the site.toml inside it") from None
    try:
        raw = tomllib.loads(data.decode("utf-8"))
    except UnicodeDecodeError as exc:
        raise ConfigError(path, "-", f"not UTF-8 text (byte {exc.start})", "save the file as UTF-8") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(path, "-", f"not valid TOML: {exc}", "fix the line it names") from None
    return from_dict(raw, root=path.resolve().parent, source=path)


def defaults(root: Path | str = ".") -> Config:
    """A config of all defaults (used by tests and the scaffold)."""
    return from_dict({}, root=Path(root))


def _copy_default(value: Any) -> Any:
    return list(value) if isinstance(value, list) else value


def _toml_literal(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[]" if not value else "[" + ", ".join(_toml_literal(v) for v in value) + "]"
    return repr(value)


def settings_markdown() -> str:
    """The README's settings table, generated from :data:`SETTINGS`."""
    lines = ["| setting | default | what it does |", "| --- | --- | --- |"]
    for s in SETTINGS:
        lines.append(f"| `{s.key}` | `{_toml_literal(s.default)}` | {s.help} |")
    return "\n".join(lines) + "\n"


def commented_toml(given: dict[str, Any] | None = None) -> str:
    """Every setting with its help, as a TOML file for ``sitegen new``.

    Keys in ``given`` are written with that value; the rest are commented out
    at their default, so uncommenting a line is how a setting is changed.
    """
    given = given or {}
    out: list[str] = []
    for section in SECTIONS:
        out.append(f"[{section}]")
        for s in SETTINGS:
            if s.section == section:
                out.append(f"# {s.help}")
                if s.key in given:
                    out.append(f"{s.name} = {_toml_literal(given[s.key])}")
                else:
                    out.append(f"# {s.name} = {_toml_literal(s.default)}")
        out.append("")
    return "\n".join(out)


if __name__ == "__main__":  # pragma: no cover
    print(settings_markdown(), end="")
