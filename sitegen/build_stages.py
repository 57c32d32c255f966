"""The stages of a build that hand data between the loader, the rules, the splitter and the
runner, one function each (wired by :mod:`sitegen.build`): plain data in, plain data out."""
from __future__ import annotations

from dataclasses import replace

from .build_settings import BuildSettings
from .load.settings import LoadSettings
from .progress import Progress


def read_matches(loading: LoadSettings, settings: BuildSettings, data, progress: Progress):
    """The checked matches table (data.matches), or None; a bad table stops the build before anything is written."""
    if settings.matches is None:
        return None
    from .load.matches import read_matches as read

    with progress.stage("reading matches"):
        matches = read(loading, data.decks["deck_id"])
        progress.say(f"  {len(matches):,} matches")
    return matches


def matchups(matches, data, linked):
    """Each season's head-to-head results (analysis/matchups.py), or None without a matches table."""
    if matches is None:
        return None
    from .analysis.matchups import matchups as head_to_head

    return head_to_head(matches, data.decks, linked, data.seasons)


def analyse_tables(data, loading: LoadSettings, settings: BuildSettings, runs, progress: Progress):
    """Check, split and analyse data read whole; the checked data, results (maps not drawn) and
    run report. Seasons whose rows are as at a build the cache remembers are not cut again."""
    from .check import check_rules
    from .partitions import split

    with progress.stage("checking deck-building rules"):
        data = check_rules(data, loading)
    season_keys, known = runs.known_seasons(data, settings.by_leader)
    parts = split(data, settings.by_leader, skip=known)
    total = len(parts) + sum(len(p) for p in known.values())
    with progress.stage(f"analysing {total} partition(s)"):
        runs.plan_maps(data.seasons)  # a map starts as soon as its partition is analysed
        if known:
            progress.say(f"  {len(known)} season(s) with the same rows as last time: not split again")
        runs.add(parts)
        runs.remember_splits(season_keys, known, parts)
        del parts
        results, run = runs.finish()
    rank = {s: i for i, s in enumerate(data.seasons)}
    results.sort(key=lambda r: (rank[r.season], r.leader))  # the seasons known came first
    return data, results, replace(run, seasons_known=tuple(s for s in data.seasons if s in known))


def analyse_folder(folder, settings: BuildSettings, runs, progress: Progress):
    """Read, check, split and analyse a season folder one season at a time (see load/folder.py).
    A season whose files did not change since the last build is not read: the cache holds
    its record and its partitions' results."""
    from .model import SeasonRecord
    from .partitions import split

    memo = runs.season_memo(settings.values_json, settings.card_table)
    order = folder.season_order()
    if order is not None:
        runs.plan_maps(order)  # a map starts as soon as its partition is analysed
    with progress.stage("reading, checking and analysing season by season"):
        for season in folder.seasons(memo):
            if isinstance(season, SeasonRecord):
                progress.say(f"  {memo.unread[-1]}: files unchanged, not read again")
                continue
            progress.say(f"  {season.seasons[0]}: {len(season.decks):,} decks, {len(season.cards):,} card rows")
            parts = split(season, settings.by_leader)
            started = runs.add(parts)
            if memo is not None:
                memo.put(season, runs.added(parts))
            del season, parts
            # The next season is read while this one is analysed; earlier ones must be done,
            # so no more than two seasons' card rows are held at once.
            runs.wait_below(started)
        results, run = runs.finish()
    runs.keep_keys(folder.summary_keys)
    if memo is not None:
        runs.keep_keys(memo.keys)
        run = replace(run, seasons_unread=tuple(memo.unread))
    data = folder.whole()
    # Folder order is name order; pages and season links go in publication order.
    rank = {s: i for i, s in enumerate(data.seasons)}
    results.sort(key=lambda r: (rank[r.season], r.leader))
    return data, results, run
