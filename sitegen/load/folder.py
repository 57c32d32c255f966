"""Reading a season folder one season at a time.

A ``data.parquet_folder`` holds one ``season=NAME/`` folder per season, each
with ``decks.parquet`` and ``deck_cards.parquet``. :func:`open_folder` first
reads what must agree over the whole data and is small: every season's deck
table (one row per deck) and the distinct card names of every long-form
table with their row counts. That settles one spelling per card and leader,
deck ids unique across seasons, and the season order. Then
:meth:`SeasonFolder.seasons` reads, checks and hands over one season's card
rows at a time (each season's deck table is read again then: it is small);
the caller analyses them while it reads the next, and waits for a season's
analyses before it reads the season after, so no more than two seasons'
card rows, which are nearly all of the data (a deck has dozens), are held.

The result is the same as reading the folder whole: the same decks, the
same spellings, the same findings in the same order.
"""
from __future__ import annotations

import hashlib
import json
import re
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from ..check import RULE_KINDS, check_rules
from ..config import Config
from ..errors import DataError, DataErrors
from ..model import CARD_ROW_COLUMNS, DECK_COLUMNS, DeckData, Finding, SeasonRecord
from . import normalise
from .tables import PARQUET_SUFFIXES, Table, count_values, read_table

if TYPE_CHECKING:
    from ..cache import Cache

#: Bumped when what a season record holds, or how its key is made, changes.
RECORD_FORMAT = 1
#: The finding a build makes when two spellings of one card sat in one deck (its count first).
_ADDED_UP = re.compile(r"^(\d+) card row\(s\) named a card a deck already listed under another spelling")


@dataclass(frozen=True)
class SeasonFiles:
    """One ``season=NAME`` folder."""

    season: str
    decks: Path
    cards: Path


def season_files(folder: Path) -> list[SeasonFiles]:
    """The season folders of ``folder`` in name order; a DataError when there are none."""
    if not folder.is_dir():
        raise DataError(folder, "folder not found" if not folder.exists() else "is a file, not a folder",
                        fix="check the path given in setting 'data.parquet_folder' (relative to the config file)")
    parts = sorted(p for p in folder.iterdir() if p.is_dir() and p.name.startswith("season="))
    if not parts:
        raise DataError(folder, "no season=NAME sub-folders",
                        fix="put each season's decks.parquet and deck_cards.parquet in a folder named season=NAME")
    return [SeasonFiles(p.name.split("=", 1)[1], _one_file(p, "decks"), _one_file(p, "deck_cards")) for p in parts]


def _one_file(part: Path, stem: str) -> Path:
    for suffix in PARQUET_SUFFIXES:
        candidate = part / f"{stem}{suffix}"
        if candidate.exists():
            return candidate
    return part / f"{stem}.parquet"


def with_season(table: Table, season: str) -> Table:
    """A deck table with the season column taken from its folder's name."""
    frame = table.frame.copy()
    frame["season"] = pd.Series([season] * len(frame), dtype="str")
    return Table(table.file, frame, table.origin, {**table.names, "season": "season (folder name)"}, table.column_origins)


def _collect(errors: list[DataError], read):
    try:
        return read()
    except DataErrors as exc:
        errors.extend(exc.errors)
    except DataError as exc:
        errors.append(exc)
    return None


def _raise(errors: list[DataError]) -> None:
    if errors:
        order = sorted(range(len(errors)), key=lambda i: (errors[i].file, errors[i].row or 0, i))
        ordered = [errors[i] for i in order]
        raise ordered[0] if len(ordered) == 1 else DataErrors(ordered)


@dataclass
class SeasonFolder:
    """A season folder being read season by season (see the module notes)."""

    cfg: Config
    files: list[SeasonFiles]
    deck_columns: tuple[dict[str, str], dict[str, str]]
    card_columns: dict[str, str]
    card_table: Table | None
    spellings: normalise.Spellings
    name_findings: list[Finding]
    first_dates: dict[str, pd.Timestamp]
    _decks: list[pd.DataFrame] = field(default_factory=list)
    _findings: list[Finding] = field(default_factory=list)
    _excluded: set[str] = field(default_factory=set)
    _added_up: int = 0
    _card_info: pd.DataFrame | None = None

    def _read_decks(self, files: SeasonFiles) -> Table:
        required, optional = self.deck_columns
        table = read_table(files.decks, setting="data.parquet_folder", required=required, optional=optional,
                           numeric=frozenset({"wins", "losses"}))
        return with_season(table, files.season)

    def seasons(self, memo: SeasonMemo | None = None) -> Iterator[DeckData | SeasonRecord]:
        """Each season's decks and card rows, checked (rules included), in folder order.

        A season that ``memo`` remembers (its files and everything else its
        reading depends on are unchanged, and the runner holds its results)
        is not read: its record is handed over instead. A season with bad rows
        is not handed over; its errors, and those of every later season, are
        raised together after the last season.
        """
        errors: list[DataError] = []
        for files in self.files:
            key = memo.key_of(files, self.spellings) if memo is not None else None
            record = memo.take(key) if key is not None and not errors else None
            if record is not None:
                self._keep(record)
                yield record
                continue
            decks = _collect(errors, lambda: self._read_decks(files))
            cards = _collect(errors, lambda: read_table(
                files.cards, setting="data.parquet_folder", required=self.card_columns,
                numeric=frozenset({"quantity"}), categorical=frozenset({"deck_id", "card"}),
                deck_ids=decks.frame["deck_id"] if decks is not None else None))
            if decks is None or cards is None:
                continue
            data = _collect(errors, partial(normalise.build, decks, cards, self.card_table, self.cfg, self.spellings))
            decks = cards = None  # this season's rows now live in data only
            if data is None or errors:
                continue  # after the first error, only look for more errors
            data = check_rules(data, self.cfg)
            self._keep(data)
            yield data
        _raise(errors)

    def _keep(self, data: DeckData | SeasonRecord) -> None:
        self._decks.append(data.decks)
        self._excluded.update(data.excluded)
        if self._card_info is None and isinstance(data, DeckData):
            self._card_info = data.card_info
        for f in data.findings:
            added = _ADDED_UP.match(f.message) if f.kind == "name-variants" else None
            if added:
                self._added_up += int(added.group(1))
            else:
                self._findings.append(f)

    def whole(self) -> DeckData:
        """Every season's decks (no card rows: they were handed over season by season),
        findings, rule breakers and the season order, as a whole-folder read gives them."""
        if self._card_info is None and self.card_table is not None:  # every season was remembered, none read
            problems = normalise._Problems()
            self._card_info, _ = normalise._card_info(self.card_table, self.cfg, problems)
        decks = pd.concat(self._decks, ignore_index=True) if self._decks else pd.DataFrame(columns=list(DECK_COLUMNS))
        decks = decks.iloc[np.argsort(normalise._rank(decks["deck_id"].tolist()), kind="stable")].reset_index(drop=True)
        findings = list(self.name_findings)
        if self._added_up:
            findings.append(normalise.added_up_finding(self._added_up))
        rules = sorted((f for f in self._findings if f.kind in RULE_KINDS),
                       key=lambda f: (f.deck_id or "", RULE_KINDS.index(f.kind)))
        findings += [f for f in self._findings if f.kind not in RULE_KINDS] + rules
        present = set(decks["season"].tolist())
        seasons = normalise._season_order(present, self.cfg, None, self.first_dates)
        empty = pd.DataFrame({"deck_id": pd.Categorical([], categories=pd.Index([], dtype="str")),
                              "card": pd.Categorical([], categories=pd.Index([], dtype="str")),
                              "quantity": np.zeros(0, dtype=np.int64)})[list(CARD_ROW_COLUMNS)]
        return DeckData(decks=decks, cards=empty, card_info=self._card_info, seasons=seasons,
                        findings=tuple(findings), excluded=frozenset(self._excluded))


@dataclass
class SeasonMemo:
    """Season records (:class:`~sitegen.model.SeasonRecord`) kept in the cache between builds.

    A record is filed under a digest of the season's two files (path, size,
    time of last change), of the spellings decided over the whole folder,
    and of ``salt``: the caller's digest of the settings, the card table and
    sitegen's own code. ``take`` hands a record's partitions to the runner,
    which takes their results from the cache or declines (one is missing):
    only then is the season read again. ``put`` files the record of the
    season :meth:`SeasonFolder.seasons` handed over last.
    """

    cache: Cache
    salt: str
    take_results: Callable[[Sequence[tuple[str, str, str]]], bool]
    #: Seasons handed over as records, in folder order.
    unread: list[str] = field(default_factory=list)
    #: Every key asked for, so the build keeps those entries when it prunes the cache.
    keys: set[str] = field(default_factory=set)
    _last_key: str = ""

    def key_of(self, files: SeasonFiles, spellings: normalise.Spellings) -> str:
        h = hashlib.sha256(f"season-record\0{RECORD_FORMAT}\0{self.salt}\0".encode())
        for path in (files.decks, files.cards):
            try:
                st = path.stat()
                h.update(f"{path}|{st.st_size}|{st.st_mtime_ns}\n".encode())
            except OSError:
                h.update(f"{path}|missing\n".encode())
        h.update(json.dumps([sorted(spellings.cards.items()), sorted(spellings.leaders.items())]).encode())
        key = h.hexdigest()
        self.keys.add(key)
        self._last_key = key
        return key

    def take(self, key: str) -> SeasonRecord | None:
        record = self.cache.get(key, SeasonRecord)
        if record is None or not self.take_results(record.partitions):
            return None
        self.unread.append(str(record.decks["season"].iloc[0]) if len(record.decks) else "")
        return record

    def put(self, data: DeckData, partitions: Sequence[tuple[str, str, str]]) -> None:
        self.cache.put(self._last_key, SeasonRecord(decks=data.decks, findings=tuple(data.findings),
                                                    excluded=frozenset(data.excluded), partitions=tuple(partitions)))


def _first_rows(codes: np.ndarray, count: int) -> np.ndarray:
    """The first position of each of the codes 0 .. count-1 (each one occurs)."""
    used, first = np.unique(codes, return_index=True)
    out = np.zeros(count, dtype=np.int64)
    out[used] = first
    return out


def _ids_in_two_seasons(id_lists: list[list[str]], id_places: list[tuple[np.ndarray, np.ndarray]],
                        tables: list[Table], seasons: list[str], errors: list[DataError]) -> None:
    """An error for each deck id (up to a page per season) found in an earlier season's table too,
    naming both places; one pass over every id of the folder."""
    if not id_lists:
        return
    names = np.concatenate([np.asarray(ids, dtype=object) for ids in id_lists])
    table_of = np.concatenate([t for t, _ in id_places])
    row_of = np.concatenate([r for _, r in id_places])
    codes, distinct = pd.factorize(names)
    first = _first_rows(codes, len(distinct))
    again = np.flatnonzero((first[codes] != np.arange(codes.size)) & (names != ""))
    shown: dict[int, int] = {}
    for i in again.tolist():
        table = int(table_of[i])
        if shown.get(table, 0) >= normalise.ERRORS_PER_PROBLEM:
            continue
        shown[table] = shown.get(table, 0) + 1
        other = int(first[codes[i]])
        other_file, other_row = tables[int(table_of[other])].where(np.array([row_of[other]]), "deck_id")[0]
        file, row = tables[table].where(np.array([row_of[i]]), "deck_id")[0]
        errors.append(DataError(file, f"deck id is also in season {seasons[int(table_of[other])]!r} "
                                f"({other_file} row {other_row})", row=row,
                                column=tables[table].names.get("deck_id", "deck_id"), value=names[i], has_value=True,
                                fix="give each deck one row and its own id, in the folder of its season"))


def open_folder(cfg: Config, folder: Path, deck_columns: tuple[dict[str, str], dict[str, str]],
                card_columns: dict[str, str], card_table: Table | None) -> SeasonFolder:
    """Read what must agree across seasons, and check it; DataErrors name every problem found."""
    files = season_files(folder)
    required, optional = deck_columns
    errors: list[DataError] = []
    by_name: dict[str, SeasonFiles] = {}
    for f in files:
        other = by_name.setdefault(normalise.clean_text(f.season), f)
        if other is not f:
            errors.append(DataError(f.decks.parent, f"names the same season as {other.decks.parent.name!r} "
                                    "(folder names differ only by spaces)",
                                    fix="keep one folder per season: move its files into the other folder"))
    leader_counts: dict[str, int] = {}
    card_counts: dict[str, int] = {}
    first_dates: dict[str, pd.Timestamp] = {}
    # Each season's distinct deck ids, and for each the season's table and the row position of its first row.
    id_lists: list[list[str]] = []
    id_places: list[tuple[np.ndarray, np.ndarray]] = []
    deck_tables: list[Table] = []
    table_seasons: list[str] = []
    for f in files:
        decks = _collect(errors, lambda: read_table(f.decks, setting="data.parquet_folder", required=required,
                                                    optional=optional, numeric=frozenset({"wins", "losses"})))
        names = _collect(errors, lambda: count_values(f.cards, setting="data.parquet_folder", logical="card",
                                                      column=card_columns["card"]))
        for name, n in (names or {}).items():
            name = normalise.clean_text(name)
            card_counts[name] = card_counts.get(name, 0) + n
        if decks is None:
            continue
        frame = decks.frame
        deck_tables.append(Table(decks.file, frame.iloc[:0], decks.origin, decks.names))  # for row numbers only
        table_seasons.append(f.season)
        codes, leaders = normalise._codes(frame["leader"])
        for name, n in zip(leaders, np.bincount(codes, minlength=len(leaders)).tolist()):
            leader_counts[name] = leader_counts.get(name, 0) + n
        if "date" in frame:
            dates, _, _ = normalise._parse_dates(frame["date"])
            if dates.notna().any():
                first_dates[normalise.clean_text(f.season)] = dates.min()
        codes, ids = normalise._codes(frame["deck_id"])
        first = _first_rows(codes, len(ids))
        id_lists.append(ids)
        id_places.append((np.full(len(ids), len(deck_tables) - 1, dtype=np.int64), first))
    _ids_in_two_seasons(id_lists, id_places, deck_tables, table_seasons, errors)
    _raise(errors)
    known = None
    if card_table is not None:
        problems = normalise._Problems()
        _, known = normalise._card_info(card_table, cfg, problems)
        problems.raise_if_any()
    card_names = list(card_counts)
    card_spelling, card_findings = normalise.spellings_of(
        card_names, np.array([card_counts[n] for n in card_names], dtype=np.int64), known, "card name")
    leader_names = list(leader_counts)
    leader_spelling, leader_findings = normalise.spellings_of(
        leader_names, np.array([leader_counts[n] for n in leader_names], dtype=np.int64), None, cfg["site.leader_word"])
    return SeasonFolder(cfg=cfg, files=files, deck_columns=deck_columns, card_columns=card_columns,
                        card_table=card_table, spellings=normalise.Spellings(card_spelling, leader_spelling),
                        name_findings=card_findings + leader_findings, first_dates=first_dates)

