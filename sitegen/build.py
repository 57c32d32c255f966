"""The pipeline, top to bottom, in the order of the job:

config -> load -> check rules -> split by season and leader -> analyse
(cached) -> link seasons -> analysts' overrides -> trends -> render -> write.

Each stage is a module of its own; this is the one place they are wired.
"""
from __future__ import annotations

import hashlib
import json
import os
import time
from dataclasses import asdict, dataclass, field, replace
from pathlib import Path
from typing import TextIO

from . import __version__
from . import config as config_mod
from .config import Config
from .model import Finding, RunReport
from .progress import Progress
from .resources import default_templates_dir
from .errors import ConfigError
from .writing import WriteReport, build_lock, check_output, write_site

# The stages (and the numeric libraries under them) are imported inside
# build(), after the up-to-date check, so a rebuild with nothing changed
# answers in well under a second instead of paying for the imports.
_STAMP_FILE = "last-build.json"


@dataclass(frozen=True)
class BuildReport:
    """What a build did, for the one-screen summary."""

    output: Path
    decks: int
    seasons: int
    leaders: int
    archetypes: int
    partitions: int
    run: RunReport
    written: WriteReport
    warnings: tuple[Finding, ...] = ()
    seconds: float = 0.0
    timings: dict[str, float] = field(default_factory=dict)
    #: Seasons whose rows of the assignments files were copied from the last build's files.
    copied_blocks: int = 0
    #: Pages whose context was unchanged, taken from the last build's files instead of rendered.
    reused_pages: int = 0

    def summary(self) -> str:
        w = self.written
        lines = [
            f"Read {self.decks:,} decks in {self.seasons} season(s) and {self.leaders} leader(s).",
            f"Found {self.archetypes} archetype(s) in {self.partitions} partition(s): "
            f"{len(self.run.analysed)} analysed, {len(self.run.cached)} from the cache.",
            f"Wrote {w.files} files ({w.changed} new or changed, {w.removed} removed) in {self.seconds:.1f} s.",
        ]
        if self.warnings:
            lines.append(f"{len(self.warnings)} warning(s):")
            by_kind: dict[str, list[Finding]] = {}
            for f in self.warnings:
                by_kind.setdefault(f.kind, []).append(f)
            for kind, items in sorted(by_kind.items()):
                lines.append(f"  {kind}: {len(items)} — e.g. {items[0].message}")
        lines.append(f"The site is in {self.output}")
        return "\n".join(lines)


def output_dir(cfg: Config, override: Path | str | None = None) -> Path:
    """Where the site goes: the command line's folder, else site.output beside the config
    (as spelled: see :func:`checked_output` for the folder a build writes)."""
    if override is not None:
        if not str(override).strip():
            raise ConfigError("command line", "-o", "the output folder is empty (it would mean the current folder)",
                              "give -o a folder of its own, such as -o site")
        return Path(override).absolute()
    path = cfg.path("site.output")
    if path is None:
        raise ConfigError(cfg.source or "<config>", "site.output", "is empty (it would mean the config's own folder)",
                          'set it to a folder of its own, such as output = "site"')
    return path.absolute()


#: The data settings, each a file or folder a build reads.
_DATA_KEYS = ("data.deck_cards", "data.decks", "data.cards", "data.decklists", "data.parquet_folder", "data.matches")


def checked_output(cfg: Config, override: Path | str | None = None) -> tuple[Path, bool]:
    """The real folder a build of ``cfg`` writes (symbolic links followed), after refusing one it
    must not replace (see :func:`sitegen.writing.check_output`); and whether it is a folder an
    earlier sitegen wrote before it marked its folders. Reads no data."""
    out = output_dir(cfg, override)
    where = str(cfg.source) if cfg.source is not None else "the config"
    if override is not None:
        setting, given = "-o", str(override)
        fix = "give -o a folder of its own that sitegen may replace, such as -o site"
    else:
        setting, given = "site.output", str(cfg["site.output"])
        fix = f'set site.output in {where} to a folder of its own that sitegen may replace, such as output = "site"'
    protected: list[tuple[str, Path]] = []
    for key in _DATA_KEYS:
        path = cfg.path(key)
        if path is not None:
            protected.append((f"the data of {key}", path))
    for key, what in (("site.content", "the notes folder"), ("site.templates", "the templates folder"),
                      ("cache.folder", "the cache folder")):
        path = cfg.path(key)
        if path is not None:
            protected.append((f"{what} of {key}", path))
    protected.append(("sitegen's own program files", Path(__file__).resolve().parent))
    record = _last_build(cfg.path("cache.folder"))
    try:
        known = {str(name): (int(size), int(mtime)) for name, size, mtime in record["output"]} if record else None
    except (KeyError, TypeError, ValueError):
        known = None
    return check_output(out, setting=setting, given=given, fix=fix, config_dir=cfg.root,
                        protected=protected, known_files=known)


def templates_dirs(cfg: Config) -> tuple[Path, ...]:
    """The site's own templates folder (if any) first, then the packaged defaults."""
    dirs: list[Path] = []
    own = cfg.path("site.templates")
    default = default_templates_dir().resolve()
    if own is not None and own.is_dir() and own.resolve() != default:
        dirs.append(own)
    dirs.append(default)
    return tuple(dirs)


def retired_settings(cfg) -> tuple[Finding, ...]:
    """A warning for each retired setting the config still gives (they are read no more)."""
    return tuple(Finding("setting-retired",
                         f"setting '{key}' is no longer used: {config_mod.RETIRED[key]}; remove it from the config")
                 for key in cfg.retired)


def build(
    config_path: Path | str | None = None,
    *,
    cfg: Config | None = None,
    output: Path | str | None = None,
    quiet: bool = False,
    stream: TextIO | None = None,
    workers: int | None = None,
    scheduler: str | None = None,
) -> BuildReport:
    """Build the site described by a config file (or an already loaded ``cfg``)."""
    start = time.perf_counter()
    if cfg is None:
        cfg = config_mod.load(config_path or "site.toml")
    if workers is not None:
        cfg = cfg.replace(analysis__workers=workers)
    if scheduler is not None:
        cfg = cfg.replace(analysis__scheduler=scheduler)
    out, adopt = checked_output(cfg, output)  # before anything is read: see check_output
    progress = Progress(stream=stream, quiet=quiet)
    cache_dir = cfg.path("cache.folder")
    with build_lock(out):
        stamp = input_stamp(cfg, out)
        previous = _read_stamp(cache_dir, stamp, out)
        if previous is not None:
            progress.say(f"• nothing changed since the last build: {out} is up to date")
            return replace(previous, seconds=time.perf_counter() - start)

        from .analysis.overrides import apply_overrides
        from .analysis.params import AnalysisParams
        from .analysis.seasons import link_seasons
        from .analysis.trends import trend_rows
        from .cache import Cache
        from .load import load_data, open_season_folder
        from .runner import Analyses
        from .site.charts import ChartChecks
        from .site.classify import relabelling
        from .site.notes import load_notes
        from .site.render import SiteInput, render_site

        params = AnalysisParams.from_config(cfg)
        cache = Cache(cache_dir) if cache_dir is not None else None
        with Analyses(params, cache, workers=cfg["analysis.workers"], scheduler=cfg["analysis.scheduler"],
                      progress=progress) as runs:
            runs.start_workers()  # before the data is loaded: workers are forked from this process
            with progress.stage("reading decks"):
                folder = open_season_folder(cfg, cache)
                data = load_data(cfg) if folder is None else None
                if data is not None:
                    progress.say(f"  {len(data.decks):,} decks, {len(data.cards):,} card rows, {len(data.seasons)} season(s)")
                else:
                    progress.say(f"  {len(folder.files)} season folder(s), read and analysed one season at a time")
            if data is not None:
                matches = _read_matches(cfg, data, progress)  # a bad matches table stops the build early
                data, results, run = _analyse_tables(data, cfg, runs, progress)
            else:
                data, results, run = _analyse_folder(folder, cfg, runs, cache, progress)
            if data.excluded:
                progress.say(f"  {len(data.excluded):,} deck(s) break a rule and are left out")
            if folder is not None:  # tables read whole had their matches read before the analysis
                matches = _read_matches(cfg, data, progress)
            with progress.stage("drawing maps"):
                results = runs.draw_maps(results, data.seasons)
                run = replace(run, mapped=runs.mapped)
            if cache is not None:
                cache.prune(runs.kept_keys)
            with progress.stage("linking seasons"):
                linked, history = link_seasons(results, data.seasons, cfg["analysis.link_threshold"])
            content = cfg.path("site.content")
            notes = load_notes(content) if content is not None else load_notes(cfg.root / "content")
            before_overrides = linked
            linked, override_findings = apply_overrides(linked, notes.front_matter_by_slug())
            trends = trend_rows(linked, data.seasons, cfg["trends.min_games"])
            heads = _matchups(matches, data, linked)
            last = _last_build(cache_dir)
            blocks = _previous_blocks(last, out) if cache_dir is not None else None
            pages = _previous_pages(last, out, templates_dirs(cfg)) if cache_dir is not None else None
            checks = ChartChecks()  # this build's chart checks
            check_salt = _trust_chart_checks(last, pages.salt, checks) if pages is not None else None
            # The workers are idle while pages render: they check the charts meanwhile.
            with progress.stage("rendering pages"), checks.sent_to(runs.idle_pool()):
                files, render_findings = render_site(SiteInput(
                    cfg=cfg, data=data, results=tuple(linked), history=history, notes=notes,
                    findings=data.findings, templates_dirs=templates_dirs(cfg), trends=trends,
                    export_blocks=blocks, page_memo=pages, matchups=heads,
                    relabelled=relabelling(before_overrides, linked), chart_checks=checks,
                ))
                if pages is not None and pages.reused:
                    progress.say(f"  {pages.reused:,} page(s) unchanged, taken from the last build")
        with progress.stage("writing the site"):
            written = write_site(out, files, adopt=adopt)
        warnings = (tuple(data.findings) + tuple(override_findings) + tuple(render_findings)
                    + retired_settings(cfg))
        report = BuildReport(
            output=out,
            decks=len(data.decks),
            seasons=len(data.seasons),
            leaders=int(data.decks["leader"].nunique()),
            archetypes=sum(len(r.archetypes) for r in linked),
            partitions=len(results),
            run=run,
            written=written,
            warnings=warnings,
            seconds=time.perf_counter() - start,
            timings=dict(progress.timings),
            copied_blocks=blocks.reused if blocks is not None else 0,
            reused_pages=pages.reused if pages is not None else 0,
        )
        _write_stamp(cache_dir, stamp, report, blocks.new_index if blocks is not None else [], pages, check_salt,
                     checks)
    return report


def _read_matches(cfg: Config, data, progress: Progress):
    """The checked matches table (data.matches), or None; a bad table stops the build before anything is written."""
    if cfg.path("data.matches") is None:
        return None
    from .load.matches import read_matches

    with progress.stage("reading matches"):
        matches = read_matches(cfg, data.decks["deck_id"])
        progress.say(f"  {len(matches):,} matches")
    return matches


def _matchups(matches, data, linked):
    """Each season's head-to-head results (analysis/matchups.py), or None without a matches table."""
    if matches is None:
        return None
    from .analysis.matchups import matchups

    return matchups(matches, data.decks, linked, data.seasons)


def _analyse_tables(data, cfg: Config, runs, progress: Progress):
    """Check, split and analyse data read whole; the checked data, results (maps not drawn) and run report."""
    from .check import check_rules
    from .partitions import split

    with progress.stage("checking deck-building rules"):
        data = check_rules(data, cfg)
    keys, known = _known_seasons(data, cfg, runs)
    parts = split(data, cfg, skip=known)
    total = len(parts) + sum(len(p) for p in known.values())
    with progress.stage(f"analysing {total} partition(s)"):
        runs.plan_maps(data.seasons)  # a map starts as soon as its partition is analysed
        if known:
            progress.say(f"  {len(known)} season(s) with the same rows as last time: not split again")
        runs.add(parts)
        if runs.cache is not None:
            from .model import SeasonSplit

            mine: dict[str, list[tuple[str, str, str]]] = {season: [] for season in keys if season not in known}
            for p, fp in zip(parts, runs.fingerprints(len(parts))):
                if p.season in mine:
                    mine[p.season].append((p.season, p.leader, fp))
            for season, partitions in mine.items():
                runs.cache.put(keys[season], SeasonSplit(partitions=tuple(partitions)))
        del parts
        results, run = runs.finish()
    rank = {s: i for i, s in enumerate(data.seasons)}
    results.sort(key=lambda r: (rank[r.season], r.leader))  # the seasons known came first
    return data, results, replace(run, seasons_known=tuple(s for s in data.seasons if s in known))


def _known_seasons(data, cfg: Config, runs) -> tuple[dict[str, str], dict[str, tuple]]:
    """Each season's key (see partitions.season_keys), and the seasons whose rows are as at a
    build the cache remembers, with their partitions, handed to the runner (their results are
    all in the cache). Without a cache, none."""
    from .model import SeasonSplit
    from .partitions import season_keys

    if runs.cache is None:
        return {}, {}
    keys = season_keys(data, _split_salt(cfg, runs))
    runs.other_keys |= set(keys.values())
    known = {}
    for season, key in keys.items():
        found = runs.cache.get(key, SeasonSplit)
        if found is not None and runs.add_known(found.partitions):
            known[season] = found.partitions
    return keys, known


def _analyse_folder(folder, cfg: Config, runs, cache, progress: Progress):
    """Read, check, split and analyse a season folder one season at a time (see load/folder.py).
    A season whose files did not change since the last build is not read: the cache holds
    its record and its partitions' results."""
    from .load.folder import SeasonMemo
    from .model import SeasonRecord
    from .partitions import split

    memo = SeasonMemo(cache, _record_salt(cfg, runs.version), runs.add_known) if cache is not None else None
    order = folder.season_order()
    if order is not None:
        runs.plan_maps(order)  # a map starts as soon as its partition is analysed
    with progress.stage("reading, checking and analysing season by season"):
        for season in folder.seasons(memo):
            if isinstance(season, SeasonRecord):
                progress.say(f"  {memo.unread[-1]}: files unchanged, not read again")
                continue
            progress.say(f"  {season.seasons[0]}: {len(season.decks):,} decks, {len(season.cards):,} card rows")
            parts = split(season, cfg)
            started = runs.add(parts)
            if memo is not None:
                memo.put(season, [(p.season, p.leader, fp) for p, fp in zip(parts, runs.fingerprints(len(parts)))])
            del season, parts
            # The next season is read while this one is analysed; earlier ones must be done,
            # so no more than two seasons' card rows are held at once.
            runs.wait_below(started)
        results, run = runs.finish()
    runs.other_keys |= folder.summary_keys
    if memo is not None:
        runs.other_keys |= memo.keys
        run = replace(run, seasons_unread=tuple(memo.unread))
    data = folder.whole()
    # Folder order is name order; pages and season links go in publication order.
    rank = {s: i for i, s in enumerate(data.seasons)}
    results.sort(key=lambda r: (rank[r.season], r.leader))
    return data, results, run


def _split_salt(cfg: Config, runs) -> str:
    """What cutting a season into partitions and their fingerprints depend on besides its rows
    (which :func:`sitegen.partitions.season_keys` digests): the analysis settings and code, and
    the splitting code. Not the data's file names or times: a copy of the same rows elsewhere
    is still the same season."""
    h = hashlib.sha256(f"split\0{runs.version}\0{runs.params!r}\0{cfg['analysis.by_leader']}\0".encode())
    h.update((Path(__file__).resolve().parent / "partitions.py").read_bytes())
    return h.hexdigest()


def _record_salt(cfg: Config, analysis_version: str) -> str:
    """What a season record depends on besides its own files: settings, the card table,
    and the code that reads, checks and splits (the analysis code is in ``analysis_version``)."""
    h = hashlib.sha256(analysis_version.encode())
    h.update(json.dumps(cfg.values, sort_keys=True, default=str).encode())
    card_table = cfg.path("data.cards")
    if card_table is not None and card_table.is_file():
        st = card_table.stat()
        h.update(f"{card_table}|{st.st_size}|{st.st_mtime_ns}".encode())
    here = Path(__file__).resolve().parent
    for path in sorted([here / "check.py", here / "partitions.py", *(here / "load").glob("*.py")]):
        h.update(path.name.encode() + b"\0" + path.read_bytes())
    return h.hexdigest()


def _files_of(path: Path) -> list[Path]:
    if path.is_dir():
        return sorted(p for p in path.rglob("*") if p.is_file())
    return [path] if path.is_file() else []


def input_stamp(cfg: Config, out: Path) -> str:
    """A digest of everything a build reads: settings, the names, sizes and times of the
    data, notes and template files, and sitegen's own code. Equal stamps mean the same site."""
    h = hashlib.sha256()
    h.update(__version__.encode())
    h.update(json.dumps(cfg.values, sort_keys=True, default=str).encode())
    h.update(str(out).encode())
    h.update(os.environ.get("SOURCE_DATE_EPOCH", "").encode())
    roots = [cfg.path(k) for k in ("data.deck_cards", "data.decks", "data.cards", "data.decklists",
                                   "data.parquet_folder", "data.matches", "site.content")]
    roots += list(templates_dirs(cfg)) + [Path(__file__).resolve().parent]
    for root in roots:
        if root is None:
            continue
        h.update(f"\0{root}".encode())
        for f in _files_of(root):
            if f.suffix == ".pyc":
                continue
            st = f.stat()
            h.update(f"{f}|{st.st_size}|{st.st_mtime_ns}\n".encode())
    return h.hexdigest()


def _output_listing(out: Path) -> list[list]:
    return [[p.relative_to(out).as_posix(), p.stat().st_size, p.stat().st_mtime_ns] for p in _files_of(out)]


#: The assignments files whose season blocks a build may copy from the last build's (site/exports.py).
_BLOCK_FILES = ("data/assignments.csv", "data/assignments.json")


def _last_build(cache_dir: Path | None) -> dict | None:
    """The last build's record (see :func:`_write_stamp`), or None."""
    if cache_dir is None:
        return None
    try:
        record = json.loads((cache_dir / _STAMP_FILE).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return record if isinstance(record, dict) else None


def _listing(record: dict) -> dict[str, tuple[int, int]]:
    """Each output file of the last build with the (size, time of change) it left it at."""
    return {path: (size, mtime) for path, size, mtime in record["output"]}


def _previous_blocks(record: dict | None, out: Path):
    """The last build's assignments files and the index of their season blocks, when both
    files are still as that build left them (same size and time of change); else none."""
    from .site.exports import ExportBlocks

    try:
        if not record or not record.get("export_blocks"):
            return ExportBlocks()  # nothing to copy: the files need not be read
        listed = _listing(record)
        files = []
        for name in _BLOCK_FILES:
            st = (out / name).stat()
            if listed.get(name) != (st.st_size, st.st_mtime_ns):
                return ExportBlocks()
            files.append((out / name).read_bytes())
        return ExportBlocks.from_files(files[0], files[1], record.get("export_blocks", []))
    except (OSError, ValueError, KeyError, TypeError):
        return ExportBlocks()


def _previous_pages(record: dict | None, out: Path, template_dirs: tuple[Path, ...]):
    """The last build's page keys, for pages whose context is unchanged (site/memo.py);
    none when the templates or sitegen's code changed since."""
    from .site.memo import PageMemo, render_salt

    salt = render_salt(template_dirs)
    try:
        pages = record.get("pages") if record else None
        if not pages or pages.get("salt") != salt:
            return PageMemo(salt)
        return PageMemo(salt, out, {str(k): str(v) for k, v in pages["keys"].items()}, _listing(record))
    except (ValueError, KeyError, TypeError, AttributeError):
        return PageMemo(salt)


def _trust_chart_checks(record: dict | None, code_salt: str, checks) -> str:
    """Count the charts the last build checked as checked, when what a check depends on is
    unchanged (site/charts.py :func:`check_salt`); the salt, to keep with this build's."""
    from .site.charts import check_salt

    salt = check_salt(code_salt)
    kept = record.get("charts") if record else None
    if isinstance(kept, dict) and kept.get("salt") == salt:
        checks.trust(kept.get("passed"))
    return salt


def _write_stamp(cache_dir: Path | None, stamp: str, report: BuildReport, blocks: list, pages=None,
                 check_salt: str | None = None, checks=None) -> None:
    if cache_dir is None:
        return
    record = {"stamp": stamp, "output": _output_listing(report.output), "export_blocks": blocks,
              "pages": {"salt": pages.salt, "keys": pages.keys} if pages is not None else None,
              "charts": {"salt": check_salt, "passed": checks.passed()} if check_salt is not None else None, "report": {
        "decks": report.decks, "seasons": report.seasons, "leaders": report.leaders,
        "archetypes": report.archetypes, "partitions": report.partitions,
        "partition_keys": [list(k) for k in report.run.analysed + report.run.cached],
        "files": report.written.files,
        "warnings": [asdict(w) for w in report.warnings]}}
    try:
        cache_dir.mkdir(parents=True, exist_ok=True)
        tmp = cache_dir / f".{_STAMP_FILE}.{os.getpid()}"
        tmp.write_text(json.dumps(record), encoding="utf-8")
        os.replace(tmp, cache_dir / _STAMP_FILE)
    except OSError:
        pass  # only a missed shortcut next time


def _read_stamp(cache_dir: Path | None, stamp: str, out: Path) -> BuildReport | None:
    """The last build's report when its inputs and its output are exactly as they were."""
    record = _last_build(cache_dir)
    if record is None:
        return None
    try:
        if record.get("stamp") != stamp or record.get("output") != _output_listing(out):
            return None
        r = record["report"]
        return BuildReport(
            output=out, decks=r["decks"], seasons=r["seasons"], leaders=r["leaders"],
            archetypes=r["archetypes"], partitions=r["partitions"],
            run=RunReport(analysed=(), cached=tuple(tuple(k) for k in r["partition_keys"])),
            written=WriteReport(files=r["files"], changed=0, removed=0),
            warnings=tuple(Finding(**w) for w in r["warnings"]),
        )
    except (OSError, ValueError, KeyError, TypeError):
        return None
