"""The pipeline, top to bottom, in the order of the job:

config -> load -> check rules -> split by season and leader -> analyse
(cached) -> link seasons -> analysts' overrides -> trends -> render -> write.

Each stage is a module of its own; this is the one place they are wired. What
a build takes from earlier builds is in :mod:`sitegen.reuse`.
"""
from __future__ import annotations

import time
from dataclasses import replace
from pathlib import Path
from typing import TextIO

from . import config as config_mod
from .build_report import BuildReport
from .build_settings import BuildSettings
from .config import Config
from .progress import Progress
from .reuse.keys import input_stamp
from .reuse.last_build import LastBuild
from .writing import build_lock, write_site

__all__ = ["BuildReport", "build"]

# The stages (the loaders, the site code with jinja, and through the runner the analysis with
# scikit-learn) are imported inside build(), after the up-to-date check, so a rebuild with nothing
# changed does not pay for them. numpy, pandas, pyarrow and scipy come in with model.py already.


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
    settings = BuildSettings.from_config(cfg)
    out, adopt = settings.checked_output(output)  # before anything is read: see check_output
    progress = Progress(stream=stream, quiet=quiet)
    with build_lock(out):
        last = LastBuild(settings.cache_folder)
        stamp = input_stamp(settings.values_json, out, settings.input_roots)
        unchanged = last.unchanged_report(stamp, out)
        previous = BuildReport.from_record(out, unchanged) if unchanged is not None else None
        if previous is not None:
            progress.say(f"• nothing changed since the last build: {out} is up to date")
            return replace(previous, seconds=time.perf_counter() - start)

        from . import build_stages as stages
        from .analysis.overrides import apply_overrides
        from .analysis.params import AnalysisParams
        from .analysis.seasons import link_seasons
        from .analysis.trends import trend_rows
        from .cache import Cache
        from .load import load_data, open_season_folder
        from .load.settings import LoadSettings
        from .runner import Analyses
        from .site.charts import ChartChecks
        from .site.classify import relabelling
        from .site.notes import load_notes
        from .site.render import SiteInput, render_site

        cache = Cache(settings.cache_folder) if settings.cache_folder is not None else None
        with Analyses(AnalysisParams.from_config(cfg), cache, workers=settings.workers,
                      scheduler=settings.scheduler, progress=progress) as runs:
            runs.start_workers()  # before the data is loaded: workers are forked from this process
            with progress.stage("reading decks"):
                loading = LoadSettings.from_config(cfg)  # what the load and check stages read, made once
                folder = open_season_folder(loading, cache)
                data = load_data(loading) if folder is None else None
                if data is not None:
                    progress.say(f"  {len(data.decks):,} decks, {len(data.cards):,} card rows, {len(data.seasons)} season(s)")
                else:
                    progress.say(f"  {len(folder.files)} season folder(s), read and analysed one season at a time")
            if data is not None:
                matches = stages.read_matches(loading, settings, data, progress)  # a bad table stops the build early
                data, results, run = stages.analyse_tables(data, loading, settings, runs, progress)
            else:
                data, results, run = stages.analyse_folder(folder, settings, runs, progress)
            if data.excluded:
                progress.say(f"  {len(data.excluded):,} deck(s) break a rule and are left out")
            if folder is not None:  # tables read whole had their matches read before the analysis
                matches = stages.read_matches(loading, settings, data, progress)
            with progress.stage("drawing maps"):
                results = runs.draw_maps(results, data.seasons)
                run = replace(run, mapped=runs.mapped)
            runs.prune_cache()
            with progress.stage("linking seasons"):
                linked, history = link_seasons(results, data.seasons, settings.link_threshold)
            notes = load_notes(settings.notes_folder)
            before_overrides = linked
            linked, override_findings = apply_overrides(linked, notes.front_matter_by_slug())
            trends = trend_rows(linked, data.seasons, settings.trends_min_games)
            heads = stages.matchups(matches, data, linked)
            blocks = last.export_blocks(out)
            pages = last.page_memo(out, settings.templates_dirs)
            checks = ChartChecks()  # this build's chart checks
            check_salt = last.trust_chart_checks(pages, checks)
            # The workers are idle while pages render: they check the charts meanwhile.
            with progress.stage("rendering pages"), checks.sent_to(runs.idle_pool()):
                files, render_findings = render_site(SiteInput(
                    cfg=cfg, data=data, results=tuple(linked), history=history, notes=notes,
                    findings=data.findings, templates_dirs=settings.templates_dirs, trends=trends,
                    export_blocks=blocks, page_memo=pages, matchups=heads,
                    relabelled=relabelling(before_overrides, linked), chart_checks=checks,
                ))
                if pages is not None and pages.reused:
                    progress.say(f"  {pages.reused:,} page(s) unchanged, taken from the last build")
        with progress.stage("writing the site"):
            written = write_site(out, files, adopt=adopt)
        report = BuildReport(
            output=out, decks=len(data.decks), seasons=len(data.seasons),
            leaders=int(data.decks["leader"].nunique()), archetypes=sum(len(r.archetypes) for r in linked),
            partitions=len(results), run=run, written=written,
            warnings=(tuple(data.findings) + tuple(override_findings) + tuple(render_findings)
                      + settings.retired_findings()),
            seconds=time.perf_counter() - start, timings=dict(progress.timings),
            copied_blocks=blocks.reused if blocks is not None else 0,
            reused_pages=pages.reused if pages is not None else 0,
        )
        last.write(stamp, out, report.to_record(), blocks, pages, check_salt, checks)
    return report
