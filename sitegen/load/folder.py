"""Reading a season folder one season at a time.

A ``data.parquet_folder`` holds one ``season=NAME/`` folder per season, each
with ``decks.parquet`` and ``deck_cards.parquet``. :func:`open_folder` first
reads what must agree over the whole data and is small: every season's deck
table (one row per deck) and the distinct card names of every long-form
table with their row counts. That settles one spelling per card and leader,
deck ids unique across seasons, and the season order. With a cache, what
this pass took from each season is kept there (:class:`SummaryMemo`), so a
rebuild after one season changed opens only that season's files here. Then
:meth:`SeasonFolder.seasons` reads, checks and hands over one season's card
rows at a time (each season's deck table is read again then: it is small);
the caller analyses them while it reads the next, and waits for a season's
analyses before it reads the season after, so no more than two seasons'
card rows, which are nearly all of the data (a deck has dozens), are held
(``tests/test_season_folder.py`` checks that with weak references).

The result is the same as reading the folder whole: the same decks, the
same spellings, the same findings in the same order.
"""
from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
import pyarrow as pa

from ..check import RULE_KINDS, check_rules
from ..errors import ConfigError, DataError, DataErrors
from ..model import CARD_ROW_COLUMNS, DECK_COLUMNS, DeckData, Finding, SeasonRecord, SeasonSummary
from ..reuse import keys
from . import normalise
from .card_table import checked_card_table
from .codes import name_rank, text_codes
from .names import Spellings, added_up_finding, added_up_rows, clean_name, clean_text, merge_look_alikes, spellings_of
from .problems import ERRORS_PER_PROBLEM
from .seasons import parse_dates, season_order
from .settings import LoadSettings
from .tables import PARQUET_SUFFIXES, Table, count_values, read_table

if TYPE_CHECKING:
    from ..cache import Cache



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

    settings: LoadSettings
    files: list[SeasonFiles]
    deck_columns: tuple[dict[str, str], dict[str, str]]
    card_columns: dict[str, str]
    card_table: Table | None
    spellings: Spellings
    name_findings: list[Finding]
    first_dates: dict[str, pd.Timestamp]
    #: Every first-pass summary key asked for, so the build keeps those entries when it prunes the cache.
    summary_keys: set[str] = field(default_factory=set)
    _decks: list[pd.DataFrame] = field(default_factory=list)
    _findings: list[Finding] = field(default_factory=list)
    _excluded: set[str] = field(default_factory=set)
    _added_up: int = 0
    _card_info: pd.DataFrame | None = None

    def season_order(self) -> tuple[str, ...] | None:
        """The seasons in publication order as :meth:`whole` gives them, told from the first pass
        alone (so maps can start while seasons are still read); None when the settings do not fit
        the seasons (the error is raised by :meth:`whole`, after the seasons' own)."""
        try:
            return season_order({clean_name(f.season) for f in self.files}, self.settings, None, self.first_dates)
        except ConfigError:
            return None

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
            data = _collect(errors, partial(normalise.build, decks, cards, self.card_table, self.settings, self.spellings))
            decks = cards = None  # this season's rows now live in data only
            if data is None or errors:
                continue  # after the first error, only look for more errors
            data = check_rules(data, self.settings)
            self._keep(data)
            yield data
        _raise(errors)

    def _keep(self, data: DeckData | SeasonRecord) -> None:
        self._decks.append(data.decks)
        self._excluded.update(data.excluded)
        if self._card_info is None and isinstance(data, DeckData):
            self._card_info = data.card_info
        for f in data.findings:
            added = added_up_rows(f)
            if added is not None:
                self._added_up += added
            else:
                self._findings.append(f)

    def whole(self) -> DeckData:
        """Every season's decks (no card rows: they were handed over season by season),
        findings, rule breakers and the season order, as a whole-folder read gives them."""
        if self._card_info is None and self.card_table is not None:  # every season was remembered, none read
            self._card_info, _ = checked_card_table(self.card_table, self.settings)
        decks = pd.concat(self._decks, ignore_index=True) if self._decks else pd.DataFrame(columns=list(DECK_COLUMNS))
        decks = decks.iloc[np.argsort(name_rank(decks["deck_id"].tolist()), kind="stable")].reset_index(drop=True)
        findings = list(self.name_findings)
        if self._added_up:
            findings.append(added_up_finding(self._added_up))
        rules = sorted((f for f in self._findings if f.kind in RULE_KINDS),
                       key=lambda f: (f.deck_id or "", RULE_KINDS.index(f.kind)))
        findings += [f for f in self._findings if f.kind not in RULE_KINDS] + rules
        present = set(decks["season"].tolist())
        seasons = season_order(present, self.settings, None, self.first_dates)
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

    def key_of(self, files: SeasonFiles, spellings: Spellings) -> str:
        key = keys.season_record_key(self.salt, (files.decks, files.cards), (spellings.cards, spellings.leaders))
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


@dataclass
class SummaryMemo:
    """First-pass summaries (:class:`~sitegen.model.SeasonSummary`) kept in the cache between builds.

    A summary is filed under a digest of the season's two files (path, size,
    time of last change), of the column names read from them, of the loading
    code and of the libraries that read and hash them (``salt``). Any change
    gives another key, so the season is read again.
    """

    cache: Cache
    salt: str
    #: Every key asked for, so the build keeps those entries when it prunes the cache.
    keys: set[str] = field(default_factory=set)

    @classmethod
    def for_columns(cls, cache: Cache, deck_columns: tuple[dict[str, str], dict[str, str]],
                    card_columns: dict[str, str]) -> SummaryMemo:
        """A memo for a folder read with these column names."""
        # Another pandas or pyarrow may hash ids or read files otherwise: old summaries are not trusted then.
        return cls(cache, keys.summary_salt([deck_columns[0], deck_columns[1], card_columns],
                                            f"{pd.__version__}|{pa.__version__}|{np.__version__}"))

    def key_of(self, files: SeasonFiles) -> str | None:
        """The season's key, or None when a file cannot be looked at (its read will say why)."""
        key = keys.season_summary_key(self.salt, (files.decks, files.cards))
        if key is not None:
            self.keys.add(key)
        return key

    def get(self, key: str) -> SeasonSummary | None:
        return self.cache.get(key, SeasonSummary)

    def put(self, key: str, summary: SeasonSummary) -> None:
        self.cache.put(key, summary)


@dataclass
class _DeckIds:
    """One season's distinct deck ids, the row position of each one's first row, and its
    deck table without rows (to turn positions into file rows)."""

    season: str
    table: Table
    ids: list[str]
    first: np.ndarray


def _deck_ids(decks: Table, season: str) -> _DeckIds:
    codes, ids = text_codes(decks.frame["deck_id"])
    return _DeckIds(season, Table(decks.file, decks.frame.iloc[:0], decks.origin, decks.names), ids,
                    _first_rows(codes, len(ids)))


def _id_hashes(ids: list[str]) -> np.ndarray:
    """Sorted distinct 64-bit hashes of the non-empty ``ids`` (an empty id is never a clash)."""
    values = np.asarray(ids, dtype=object)
    return np.unique(pd.util.hash_array(values[values != ""], categorize=False))


def _summary_of(decks: Table | None, names: dict[str, int] | None, ids: _DeckIds | None,
                hashed: bool) -> SeasonSummary:
    """What the first pass needs of one season (what could be read of it)."""
    card_counts: dict[str, int] = {}
    for name, n in (names or {}).items():
        name = clean_text(name)
        card_counts[name] = card_counts.get(name, 0) + n
    if decks is None:
        return SeasonSummary({}, card_counts, None, np.zeros(0, dtype=np.uint64))
    frame = decks.frame
    codes, leaders = text_codes(frame["leader"])
    leader_counts = dict(zip(leaders, np.bincount(codes, minlength=len(leaders)).tolist()))
    first_date = None
    if "date" in frame:
        dates, _, _ = parse_dates(frame["date"])
        if dates.notna().any():
            first_date = dates.min()
    hashes = _id_hashes(ids.ids) if hashed and ids is not None else np.zeros(0, dtype=np.uint64)
    return SeasonSummary(leader_counts, card_counts, first_date, hashes)


def _sharing_a_hash(hashes: list[np.ndarray]) -> list[int]:
    """Positions of the arrays (each sorted and distinct) that share a value with another one."""
    if len(hashes) < 2:
        return []
    # Sorted runs: a stable sort merges them rather than sorting from scratch.
    merged = np.sort(np.concatenate(hashes), kind="stable")
    shared = np.unique(merged[1:][merged[1:] == merged[:-1]])
    if shared.size == 0:
        return []
    return [i for i, h in enumerate(hashes) if np.isin(h, shared, assume_unique=True).any()]


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
        if shown.get(table, 0) >= ERRORS_PER_PROBLEM:
            continue
        shown[table] = shown.get(table, 0) + 1
        other = int(first[codes[i]])
        other_file, other_row = tables[int(table_of[other])].where(np.array([row_of[other]]), "deck_id")[0]
        file, row = tables[table].where(np.array([row_of[i]]), "deck_id")[0]
        errors.append(DataError(file, f"deck id is also in season {seasons[int(table_of[other])]!r} "
                                f"({other_file} row {other_row})", row=row,
                                column=tables[table].names.get("deck_id", "deck_id"), value=names[i], has_value=True,
                                fix="give each deck one row and its own id, in the folder of its season"))


def _read_deck_table(files: SeasonFiles, deck_columns: tuple[dict[str, str], dict[str, str]]) -> Table:
    required, optional = deck_columns
    return read_table(files.decks, setting="data.parquet_folder", required=required, optional=optional,
                      numeric=frozenset({"wins", "losses"}))


def _check_ids_across_seasons(files: list[SeasonFiles], summaries: list[SeasonSummary],
                              deck_ids: list[_DeckIds | None], remembered: list[bool],
                              deck_columns: tuple[dict[str, str], dict[str, str]], errors: list[DataError]) -> None:
    """An error for each deck id in two seasons (see :func:`_ids_in_two_seasons`).

    When some seasons were not read (their summaries were remembered), only
    the seasons whose id hashes meet another season's can hold such an id:
    those are read and compared exactly, the rest are not opened. A hash
    clash of two different ids costs a read, never a wrong error.
    """
    taking = [i for i in range(len(files)) if remembered[i] or deck_ids[i] is not None]
    if any(remembered):
        taking = [taking[j] for j in _sharing_a_hash([summaries[i].id_hashes for i in taking])]
        for i in taking:
            if deck_ids[i] is None:
                decks = _collect(errors, lambda: _read_deck_table(files[i], deck_columns))
                deck_ids[i] = _deck_ids(decks, files[i].season) if decks is not None else None
    read = [deck_ids[i] for i in taking if deck_ids[i] is not None]
    _ids_in_two_seasons([r.ids for r in read],
                        [(np.full(len(r.ids), n, dtype=np.int64), r.first) for n, r in enumerate(read)],
                        [r.table for r in read], [r.season for r in read], errors)


def open_folder(settings: LoadSettings, folder: Path, deck_columns: tuple[dict[str, str], dict[str, str]],
                card_columns: dict[str, str], card_table: Table | None, cache: Cache | None = None) -> SeasonFolder:
    """Read what must agree across seasons, and check it; DataErrors name every problem found.

    With a ``cache``, what this pass takes from each season is kept there
    (:class:`SummaryMemo`), and a season whose two files have not changed
    since is not opened again, unless its deck ids must be compared with
    another season's. The result is the same either way.
    """
    files = season_files(folder)
    errors: list[DataError] = []
    by_name: dict[str, SeasonFiles] = {}
    for f in files:
        other = by_name.setdefault(clean_name(f.season), f)
        if other is not f:
            errors.append(DataError(f.decks.parent, f"names the same season as {other.decks.parent.name!r} "
                                    "(folder names differ only by spaces or look-alike characters)",
                                    fix="keep one folder per season: move its files into the other folder"))
    memo = SummaryMemo.for_columns(cache, deck_columns, card_columns) if cache is not None else None
    summaries: list[SeasonSummary] = []
    # The deck ids of each deck table read in this pass (None: not read, or unreadable).
    deck_ids: list[_DeckIds | None] = []
    remembered: list[bool] = []
    for f in files:
        key = memo.key_of(f) if memo is not None else None
        summary = memo.get(key) if key is not None else None
        remembered.append(summary is not None)
        ids = None
        if summary is None:
            before = len(errors)
            decks = _collect(errors, lambda: _read_deck_table(f, deck_columns))
            names = _collect(errors, lambda: count_values(f.cards, setting="data.parquet_folder", logical="card",
                                                          column=card_columns["card"]))
            ids = _deck_ids(decks, f.season) if decks is not None else None
            summary = _summary_of(decks, names, ids, hashed=memo is not None)
            if key is not None and len(errors) == before:
                memo.put(key, summary)
        summaries.append(summary)
        deck_ids.append(ids)
    _check_ids_across_seasons(files, summaries, deck_ids, remembered, deck_columns, errors)
    del deck_ids
    _raise(errors)
    # Merged in folder order, so every name keeps the place a read of all seasons gives it.
    leader_counts: dict[str, int] = {}
    card_counts: dict[str, int] = {}
    first_dates: dict[str, pd.Timestamp] = {}
    for f, summary in zip(files, summaries):
        for name, n in summary.card_counts.items():
            card_counts[name] = card_counts.get(name, 0) + n
        for name, n in summary.leader_counts.items():
            leader_counts[name] = leader_counts.get(name, 0) + n
        if summary.first_date is not None:
            first_dates[clean_name(f.season)] = summary.first_date
    known = checked_card_table(card_table, settings)[1] if card_table is not None else None
    card_counts, card_look = merge_look_alikes(card_counts, "card name")
    leader_counts, leader_look = merge_look_alikes(leader_counts, settings.leader_word)
    card_names = list(card_counts)
    card_spelling, card_findings = spellings_of(
        card_names, np.array([card_counts[n] for n in card_names], dtype=np.int64), known, "card name")
    leader_names = list(leader_counts)
    leader_spelling, leader_findings = spellings_of(
        leader_names, np.array([leader_counts[n] for n in leader_names], dtype=np.int64), None, settings.leader_word)
    return SeasonFolder(settings=settings, files=files, deck_columns=deck_columns, card_columns=card_columns,
                        card_table=card_table, spellings=Spellings(card_spelling, leader_spelling),
                        name_findings=card_look + card_findings + leader_look + leader_findings, first_dates=first_dates,
                        summary_keys=memo.keys if memo is not None else set())
