"""The keys and salts a build files its reusable work under, made here or (as the table says) beside the work.

A *key* names one piece of reusable work (a partition's analysis, a map, a
season's split, record or summary, a page, an export block); a *salt* is
what a kind of key depends on besides its own inputs: settings, and the
code that makes the work. Each code salt names the modules it depends on by
import (:data:`CODE_ROOTS`), and the files hashed are found from the import
graph (:func:`sitegen.reuse.digest.code_digest`): code moved to another
module, or a module renamed, changes the salt and never leaves a stale
entry in use.

Kinds of key, and where they are filed:

============== ==================================== ======================================
kind           digest of                            kept in
============== ==================================== ======================================
partition      rows, card types, settings, code     the cache (:func:`.partition_key.fingerprint`)
map            partition key, previous map's key    the cache (:func:`map_key`)
season split   a season's rows (partitions.py)      the cache (salt: :func:`split_salt`)
season record  a season's files (stamps), spellings the cache (:func:`season_record_key`)
season summary a season's files (stamps), columns   the cache (:func:`season_summary_key`)
page           template name and page context       last-build.json (:func:`page_key`)
export block   a season's assignments rows          last-build.json (site/exports.py)
chart checks   schema, compiler, render salt        last-build.json (site/charts.py)
no-op stamp    names, sizes, times of every input   last-build.json (:func:`input_stamp`)
============== ==================================== ======================================

What each kind keeps, and when it is trusted:

*No-op rebuild* (:mod:`.last_build`, :func:`input_stamp`). Before any stage
runs, a stamp of the inputs (settings; the names, sizes and times of the
data, note and template files and of sitegen's own code) and the output
folder's listing are compared with the last build's (``last-build.json``);
when both match, the build stops there, before any data is read or any
worker started. (Importing :mod:`sitegen.build` already brings in numpy,
pandas, pyarrow and scipy, through :mod:`sitegen.model` and this package:
the early stop saves the other stages' imports, not those.)

*Season folder, first pass* (:class:`sitegen.load.folder.SummaryMemo`,
:func:`season_summary_key`). What the first pass took from each season (its
leader and card names with their row counts, its first date, and sorted
64-bit hashes of its deck ids) is kept as a
:class:`~sitegen.model.SeasonSummary` under the season files' stamps, the
column names, the library versions and the loading code: a rebuild's first
pass opens only the changed seasons' files (and the deck tables of seasons
whose id hashes meet another season's, to compare their ids exactly).

*Season folder, one season* (:class:`sitegen.load.folder.SeasonMemo`,
:func:`season_record_key`, :func:`record_salt`). What a season gave a build
(checked decks, findings, rule breakers, its partitions' fingerprints) is
kept as a :class:`~sitegen.model.SeasonRecord` under the season's two files
(path, size, time of change), the spellings decided over the whole folder,
the settings, the card table, the analysis version and the code that reads,
checks and splits; the next build hands the record over instead of reading
the season, when the runner still holds every one of its results
(:meth:`sitegen.runner.Analyses.add_known`).

*Flat tables, season split* (:func:`sitegen.partitions.season_keys`,
:class:`sitegen.model.SeasonSplit`, :func:`split_salt`). With flat tables
every season is read again whenever a table changes, but a season whose rows
did not change need not be cut or fingerprinted again. Its key digests the
season's slices of the tables as they lie (every deck column, the card codes
and copies of its card rows, the rows per deck, which of its decks are left
out, and once for all the card names and the card table), under
:func:`split_salt` (the analysis settings and code and the splitting code;
not the files' names or times, so a copy of the same rows elsewhere is still
known). A later build that finds the key, and every result it names, splits
only the other seasons (``RunReport.seasons_known``). Keys are made only
where the loader's order holds (each season's decks one run of rows, card
rows grouped by deck in deck order) and there are two seasons or more;
otherwise every season is cut (``tests/test_partitions.py`` checks that a key
changes exactly when one of its season's partition fingerprints does).

*Partition analyses* (:func:`.partition_key.fingerprint`, :func:`analysis_version`;
``cache.py``, ``runner.py``). Each result is stored under a fingerprint of
its rows, its card types, its settings, the tool's version and a digest of
the analysis code.

*Maps* (:func:`map_key`, :meth:`sitegen.runner.Analyses.draw_maps`). A map
is cached under a digest of its partition's fingerprint and of the key of the
map it started from: a changed season redraws its own map and the later maps
of the same leader, and re-analyses nothing else. With a season folder a map
also waits until every season before its own has been handed in (the order
comes from the first pass, :meth:`sitegen.load.folder.SeasonFolder.season_order`).

*Assignments files* (:class:`sitegen.site.exports.ExportBlocks`). The files
with one row per deck go by season, made one season's block at a time; a
block whose inputs digest to a key the last build listed in
``last-build.json`` is copied from the last build's files, when those are
still as it left them (``tests/test_exports.py`` checks the bytes against the
whole-file writers, which are checked against ``json`` and ``csv``). The
inputs are not the million rows themselves: each result carries a
``rows_key`` naming where its rows come from (its fingerprint and the points
of the map placed into them, :func:`placed_key`, and the relabelling of any
merge or hide in the notes), and a season's decks are its partitions' decks
and those left out of them; only when a result has no such key, a partition
spans every leader, or the counts do not add up, are the rows digested.

*Pages* (:class:`sitegen.site.memo.PageMemo`, :func:`page_key`,
:func:`render_salt`). A page is a pure function of its template and its
context, so each page's key digests the template's name and the pickled
context (a map chart stands by the text of its inputs, see
``sitegen/site/keys.py``) under a salt of every template file and of the
rendering code; a page whose key the last build listed, and whose file is as
that build left it, is taken from the output folder instead of rendered
(``tests/test_incremental.py`` checks that such a rebuild is byte for byte a
clean build's, that a page edited by hand in the output is rendered again,
and that a changed template reuses nothing).

*Chart checks* (:func:`sitegen.site.charts.check_salt`). The digests of the
spec skeletons that passed are kept in ``last-build.json`` under a salt of
the page salt (templates and rendering code), the schema file and
vl-convert's release, and a rebuild checks only skeletons it has not seen.

*Chart bundle* (``site/assets.py``, not keyed here). The offline Vega bundle
takes a second or two to make, so it is kept in ``cache.folder``, one file
per vl-convert and Vega-Lite version (in its name).
"""
from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from .. import __version__
from .digest import code_digest
from .files import file_stamp, files_under

#: Each kind of reusable work and the root modules whose code (with every sitegen module they
#: import, at any depth) it depends on. A module moved or renamed changes only these names.
CODE_ROOTS: dict[str, tuple[str, ...]] = {
    # A partition's analysis and its map (runner.analyse_partition/draw_map), and its key (below).
    "analysis": ("sitegen.analysis.partition", "sitegen.reuse.partition_key"),
    # Cutting a season into partitions.
    "split": ("sitegen.partitions",),
    # A season of a season folder: read, checked and cut.
    "season-record": ("sitegen.load", "sitegen.load.folder", "sitegen.check", "sitegen.partitions"),
    # The first pass over a season folder.
    "season-summary": ("sitegen.load.folder",),
    # What turns a page's context into its bytes (the templates are salted beside it).
    "pages": ("sitegen.site.render",),
}

#: Bumped when the way maps are drawn changes in a way the analysis code digest does not see.
MAP_FORMAT = 1
#: Bumped when how a page's key is made changes.
PAGE_FORMAT = 1
#: Bumped when what makes a season record's key changes (or what a record holds).
RECORD_FORMAT = 1
#: Bumped when what makes a season summary's key changes (or what a summary holds).
SUMMARY_FORMAT = 1


def code_salt(kind: str) -> str:
    """The digest of the code ``kind`` of work depends on (see :data:`CODE_ROOTS`)."""
    return code_digest(CODE_ROOTS[kind])


# -- partitions and maps -----------------------------------------------------------------------


def analysis_version() -> str:
    """The tool's version plus a digest of the analysis code, so a cached result made by
    other code (even under the same version number) is never reused."""
    return f"{__version__}+{code_salt('analysis')[:12]}"


def map_key(partition_key: str, previous_map_key: str | None) -> str:
    """A map's key: its partition's key and the key of the map it started from (or none)."""
    h = hashlib.sha256(f"map\0{MAP_FORMAT}\0{partition_key}\0".encode("ascii"))
    h.update(previous_map_key.encode("ascii") if previous_map_key is not None else b"first")
    return h.hexdigest()


def placed_key(partition_key: str, coords: np.ndarray) -> str:
    """The rows key of a result with a map placed into it: its partition key and the map's
    points (a map drawn again from another start may come out the same, and so the same rows)."""
    h = hashlib.sha256(f"placed\0{partition_key}\0".encode("ascii"))
    h.update(np.ascontiguousarray(coords, dtype="<f8"))
    return h.hexdigest()


# -- seasons --------------------------------------------------------------------------------


def split_salt(analysis_version: str, params: Any, by_leader: bool) -> str:
    """What cutting a season into partitions and their keys depend on besides its rows
    (which :func:`sitegen.partitions.season_keys` digests): the analysis settings and code, and
    the splitting code. Not the data's file names or times: a copy of the same rows elsewhere
    is still the same season."""
    h = hashlib.sha256(f"split\0{analysis_version}\0{params!r}\0{by_leader}\0".encode())
    h.update(code_salt("split").encode("ascii"))
    return h.hexdigest()


def record_salt(analysis_version: str, settings_json: str, card_table: Path | None) -> str:
    """What a season record depends on besides its own files: settings, the card table,
    and the code that reads, checks and splits (the analysis code is in ``analysis_version``)."""
    h = hashlib.sha256(analysis_version.encode())
    h.update(settings_json.encode())
    if card_table is not None and card_table.is_file():
        h.update((file_stamp(card_table) or str(card_table)).encode())
    h.update(code_salt("season-record").encode("ascii"))
    return h.hexdigest()


def season_record_key(salt: str, files: Sequence[Path], spellings: tuple[dict, dict]) -> str:
    """A season record's key: the season's files (name, size, time of change), the spellings
    decided over the whole folder (cards, leaders) and :func:`record_salt`."""
    h = hashlib.sha256(f"season-record\0{RECORD_FORMAT}\0{salt}\0".encode())
    for path in files:
        h.update(f"{file_stamp(path) or f'{path}|missing'}\n".encode())
    h.update(json.dumps([sorted(spellings[0].items()), sorted(spellings[1].items())]).encode())
    return h.hexdigest()


def summary_salt(columns: Any, library_versions: str) -> str:
    """What a season summary depends on besides its files: the column names read from them,
    the loading code and the libraries that read and hash them."""
    h = hashlib.sha256(f"season-summary\0{SUMMARY_FORMAT}\0".encode())
    h.update(json.dumps(columns, sort_keys=True).encode())
    h.update(f"{library_versions}\n".encode())
    h.update(code_salt("season-summary").encode("ascii"))
    return h.hexdigest()


def season_summary_key(salt: str, files: Sequence[Path]) -> str | None:
    """A season summary's key: its files (name, size, time of change) and :func:`summary_salt`;
    None when a file cannot be looked at."""
    h = hashlib.sha256(salt.encode())
    for path in files:
        stamp = file_stamp(path)
        if stamp is None:
            return None
        h.update(f"{stamp}\n".encode())
    return h.hexdigest()


# -- pages, and the last build --------------------------------------------------------------


def render_salt(template_dirs: Iterable[Path]) -> str:
    """A digest of every template file and of the code that renders a page's context."""
    h = hashlib.sha256(f"pages\0{PAGE_FORMAT}\0{__version__}\0".encode())
    for root in template_dirs:
        root = Path(root)
        h.update(f"\0{root}\0".encode())
        for path in sorted(p for p in root.rglob("*") if p.is_file() and p.suffix != ".pyc"):
            h.update(path.relative_to(root).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    h.update(b"\0code\0" + code_salt("pages").encode("ascii"))
    return h.hexdigest()


def page_key(salt: str, template: str, context_pickle: bytes) -> str:
    """A page's key: the render salt, its template's name and its context (pickled)."""
    h = hashlib.sha256(salt.encode())
    h.update(template.encode("utf-8") + b"\0")
    h.update(context_pickle)
    return h.hexdigest()


def input_stamp(settings_json: str, out: Path, roots: Iterable[Path]) -> str:
    """A digest of everything a build reads: settings, the names, sizes and times of the files
    under ``roots`` (data, notes, templates and sitegen's own program files). Equal stamps mean
    the same site."""
    h = hashlib.sha256()
    h.update(__version__.encode())
    h.update(settings_json.encode())
    h.update(str(out).encode())
    h.update(os.environ.get("SOURCE_DATE_EPOCH", "").encode())
    for root in roots:
        h.update(f"\0{root}".encode())
        for f in files_under(root):
            if f.suffix == ".pyc":
                continue
            h.update(f"{file_stamp(f)}\n".encode())
    return h.hexdigest()
