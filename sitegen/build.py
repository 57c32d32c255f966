"""The pipeline, top to bottom, in the order of the job:

config -> load -> check rules -> split by season and leader -> analyse
(cached) -> link seasons -> analysts' overrides -> trends -> render -> write.

Each stage is a module of its own; this is the one place they are wired.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import TextIO

from . import config as config_mod
from .analysis.overrides import apply_overrides
from .analysis.params import AnalysisParams
from .analysis.seasons import link_seasons
from .analysis.trends import trend_rows
from .cache import Cache
from .check import check_rules
from .config import Config
from .load import load_data
from .model import Finding
from .partitions import split
from .progress import Progress
from .resources import default_templates_dir
from .runner import RunReport, analyse_all
from .site.notes import load_notes
from .site.render import SiteInput, render_site
from .writing import WriteReport, build_lock, write_site


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
    """Where the site goes: the command line's folder, else site.output beside the config."""
    if override is not None:
        return Path(override).absolute()
    path = cfg.path("site.output")
    assert path is not None
    return path.absolute()


def templates_dirs(cfg: Config) -> tuple[Path, ...]:
    """The site's own templates folder (if any) first, then the packaged defaults."""
    dirs: list[Path] = []
    own = cfg.path("site.templates")
    default = default_templates_dir().resolve()
    if own is not None and own.is_dir() and own.resolve() != default:
        dirs.append(own)
    dirs.append(default)
    return tuple(dirs)


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
    out = output_dir(cfg, output)
    progress = Progress(stream=stream, quiet=quiet)
    with build_lock(out):
        with progress.stage("reading decks"):
            data = load_data(cfg)
            progress.say(f"  {len(data.decks):,} decks, {len(data.cards):,} card rows, {len(data.seasons)} season(s)")
        with progress.stage("checking deck-building rules"):
            data = check_rules(data, cfg)
            if data.excluded:
                progress.say(f"  {len(data.excluded):,} deck(s) break a rule and are left out")
        parts = split(data, cfg)
        params = AnalysisParams.from_config(cfg)
        cache_dir = cfg.path("cache.folder")
        cache = Cache(cache_dir) if cache_dir is not None else None
        with progress.stage(f"analysing {len(parts)} partition(s)"):
            results, run = analyse_all(parts, params, cache, workers=cfg["analysis.workers"],
                                       scheduler=cfg["analysis.scheduler"], progress=progress)
        if cache is not None:
            cache.prune({r.fingerprint for r in results})
        with progress.stage("linking seasons"):
            linked, history = link_seasons(results, data.seasons, cfg["analysis.link_threshold"])
        content = cfg.path("site.content")
        notes = load_notes(content) if content is not None else load_notes(cfg.root / "content")
        linked, override_findings = apply_overrides(linked, notes.front_matter_by_slug())
        trends = trend_rows(linked, data.seasons, cfg["trends.min_games"])
        with progress.stage("rendering pages"):
            files, render_findings = render_site(SiteInput(
                cfg=cfg, data=data, results=tuple(linked), history=history, notes=notes,
                findings=data.findings, templates_dirs=templates_dirs(cfg), trends=trends,
            ))
        with progress.stage("writing the site"):
            written = write_site(out, files)
    warnings = tuple(data.findings) + tuple(override_findings) + tuple(render_findings)
    return BuildReport(
        output=out,
        decks=len(data.decks),
        seasons=len(data.seasons),
        leaders=int(data.decks["leader"].nunique()),
        archetypes=sum(len(r.archetypes) for r in linked),
        partitions=len(parts),
        run=run,
        written=written,
        warnings=warnings,
        seconds=time.perf_counter() - start,
        timings=dict(progress.timings),
    )
