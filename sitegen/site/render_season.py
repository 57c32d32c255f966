"""The season page: each leader's block (archetype table, map, notes) and the season's maps.

A part of :class:`sitegen.site.render.Renderer` (it mixes this class in), kept apart because it is one concern:
a season's partitions side by side, with their maps drawn from a shared budget of points. The front page
shows the same blocks without maps.
"""
from __future__ import annotations

import dataclasses
from typing import Any

from ..analysis.embed import stratified_sample
from ..check import RULE_KINDS
from ..model import ALL_LEADERS, PartitionResult
from . import charts as ch
from . import pages as P
from .lookup import _rel_root
from .templating import other_reason

#: Most map points drawn on one season page, shared among its leaders by their
#: number of points: each point is ~200 bytes of inline chart data, and this
#: keeps a season page well under 1 MB however many leaders it has.
SEASON_MAP_POINTS = 4000
#: Fewest points a leader's map keeps when the season's budget is shared out.
MIN_MAP_POINTS = 300


class SeasonPages:
    """The Renderer's methods for the season pages and the leader blocks (see the module notes)."""

    def _map_budgets(self, season: str) -> dict[str, int]:
        """Map points each leader of a season may draw (see :data:`SEASON_MAP_POINTS`)."""
        sizes = {r.leader: len(r.map_points) if r.map_points is not None else 0
                 for r in self.s.results if r.season == season}
        total = sum(sizes.values())
        if total <= SEASON_MAP_POINTS:
            return sizes
        return {k: min(n, max(MIN_MAP_POINTS, SEASON_MAP_POINTS * n // total)) for k, n in sizes.items()}

    def _map(self, r: PartitionResult, names: dict[str, str], chart_id: str, budget: int | None,
             looks: dict[str, ch.Look], hrefs: dict[str, str]) -> Any:
        """The partition's map chart; made only if its page is rendered, when the rows it is drawn
        from are named by ``rows_key`` (the chart's key then names all it is made from, see charts.LazyChart)."""
        inputs = dict(result=r, names=names, chart_id=chart_id, looks=looks, hrefs=hrefs, budget=budget,
                      seed=self.settings.seed)
        if not r.rows_key:
            return draw_map(**inputs, checks=self.checks)
        return ch.LazyChart(draw_map, inputs, self.checks)

    def _block(self, r: PartitionResult, *, with_charts: bool, with_shares: bool = False,
               map_budget: int | None = None) -> P.LeaderBlock:
        s = self.s
        rows = tuple(s.row(a) for a in sorted(r.archetypes, key=lambda a: (-a.n_decks, a.key)))
        if r.other is not None and r.other.n_decks > 0:
            rows += (s.row(r.other),)
        notes = list(self._notes_for(r.season, r.leader))
        excluded = self._excluded(r.season, r.leader)
        if excluded:
            notes.append(excluded)
        clustered = r.status == "clustered"
        lslug = s.leader_slug[r.leader]
        map_c = None
        if with_charts and clustered:
            names = {a.key: s.name_of(a) for a in r.groups}
            looks = {a.key: s.look_of(a) for a in r.groups}
            back = _rel_root(s.season_href(r.season))  # the map is drawn on the season page
            hrefs = {a.key: back + s.arch_href(a) for a in r.archetypes}
            if r.map_points is not None and len(r.map_points):
                map_c = self._map(r, names, f"map-{lslug}", map_budget, looks, hrefs)
        k_reason = r.k_reason
        if clustered and r.chosen_k is not None and r.chosen_k != len(r.archetypes):
            # Analysts' notes merged or hid archetypes after the analysis: say so, so the count agrees with the table.
            k_reason += (f" Analysts' notes (merge_into, hide) leave {len(r.archetypes)} of them "
                         f"in the table.")
        return P.LeaderBlock(name=s.leader_name(r.leader), href=s.leader_link(r.leader).href, anchor=f"leader-{lslug}",
                             decks=int(r.n_decks), clustered=clustered, reason=r.reason, rows=rows,
                             chosen_k=len(r.archetypes) if clustered else None, k_reason=k_reason,
                             map_chart=map_c,
                             share_chart=self._share_chart(r.leader, f"shares-{lslug}") if with_shares else None,
                             notes=tuple(notes),
                             map_data=f"seasons/{s.season_slug[r.season]}/map-{lslug}.js" if map_c is not None else "",
                             other_reason=other_reason(r.k_reason))

    def season(self, season: str, i: int) -> None:
        s = self.s
        budgets = self._map_budgets(season)
        blocks = tuple(sorted((self._block(r, with_charts=True, map_budget=budgets[r.leader])
                               for r in s.results if r.season == season),
                              key=lambda b: (-b.decks, b.name)))
        path = s.season_href(season)
        heads = self._matchup_view(season)
        base = self._base(path, f"Season {season}", f"Archetypes of every {s.word} in season {season}.",
                          charts=any(b.map_chart for b in blocks) or bool(heads and heads.chart))
        self._emit("season.html", P.SeasonPage(
            **base, season=season, decks=s.decks_in_season[season], leaders=blocks,
            previous=s.season_link(s.seasons[i - 1]) if i > 0 else None,
            next=s.season_link(s.seasons[i + 1]) if i + 1 < len(s.seasons) else None,
            notes=self._emptied_notes(season) + self._notes_for(season, None), has_results=s.has_results,
            min_games=s.min_games, matchups=heads))
        for b in blocks:
            if b.map_chart is not None:
                self._emit_data(b.map_data, b.map_chart)
        if heads is not None and heads.chart is not None:
            self._emit_data(heads.data, heads.chart)

    def _emptied_notes(self, season: str) -> tuple[str, ...]:
        """Why a season whose every deck was left out has no archetypes, and its rule breakers."""
        if season not in self.s.emptied:
            return ()
        notes = ["Every deck of this season breaks a deck-building rule, and rules.exclude_breakers leaves "
                 "such decks out of the analysis, so the season has no archetypes."]
        left_out = self._excluded(season, ALL_LEADERS)
        if left_out:
            notes.append(left_out)
        broken = [f.message for f in self.site.data.findings if f.season == season and f.kind in RULE_KINDS]
        notes += broken[:50]
        if len(broken) > 50:
            notes.append(f"and {len(broken) - 50} more rules broken (the build report lists every one).")
        return tuple(notes)


def thin_map(r: PartitionResult, budget: int | None, seed: int) -> PartitionResult:
    """The result with at most ``budget`` map points (None: all), sampled per archetype with ``seed``."""
    points = r.map_points
    if budget is None or points is None or len(points) <= budget:
        return r
    keep = stratified_sample(points["archetype"].astype(str).tolist(), budget, seed)
    return dataclasses.replace(r, map_points=points.iloc[keep].reset_index(drop=True))


def draw_map(result: PartitionResult, names: dict[str, str], chart_id: str, looks: dict[str, ch.Look],
             hrefs: dict[str, str], budget: int | None, seed: int, checks: ch.ChartChecks | None = None) -> ch.Chart:
    """A season page's map of a partition (charts.map_chart), its points thinned by :func:`thin_map`."""
    return ch.map_chart(thin_map(result, budget, seed), names, chart_id, looks=looks, hrefs=hrefs, checks=checks)
