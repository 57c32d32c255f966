"""The analyst's questions on the pages: card results, matchups, close archetypes side by side, the data page.

A part of :class:`sitegen.site.render.Renderer` (it mixes this class in), kept apart because it is one concern:
what decks' results and matches say, with their cautions and downloads.
"""
from __future__ import annotations

import math
from typing import Any

from ..model import OTHER_KEY, Archetype, PartitionResult
from . import charts as ch
from . import exports
from . import pages as P
from . import render as R


class QuestionPages:
    """The Renderer's methods for card results, matchups, comparisons and downloads (see the module notes)."""

    # -- the analyst's questions: card results, matchups, comparisons (fields of ArchetypePage)
    def _questions(self, r: PartitionResult, a: Archetype, similar: list) -> dict[str, Any]:
        """The archetype page's card results, matchups and comparison links, with their files."""
        s = self.s
        slug, sslug = s.slug_of(a), s.season_slug[a.season]
        downloads: tuple[P.Link, ...] = ()
        rows = tuple(P.CardResultRow(
            card=s.card_link(c.card), copies=c.copies, decks_with=c.decks_with, games_with=c.games_with,
            rate_with=c.wins_with / c.games_with, decks_without=c.decks_without, games_without=c.games_without,
            rate_without=c.wins_without / c.games_without, diff=c.diff, low=c.low, high=c.high, p_value=c.p_value,
            verdict=exports.card_result_verdict(c), small=c.small) for c in a.card_results)
        if rows:
            href = f"archetypes/{slug}/{sslug}-card-results.csv"
            self.out[href] = exports.card_results_csv(a)
            downloads += (P.Link(text="Card results (CSV)", href=href),)
        heads = self._season_heads(a.season)
        if heads is not None:
            mine = [m for m in heads if m.archetype.href == s.arch_href(a) and not m.mirror]
            tested = [m for m in mine if not m.small]
            best = sorted((m for m in tested if m.rate > 0.5), key=lambda m: (-m.rate, m.opponent.text))[:R.MATCHUPS_SHOWN]
            worst = sorted((m for m in tested if m.rate < 0.5), key=lambda m: (m.rate, m.opponent.text))[:R.MATCHUPS_SHOWN]
            extra = dict(matchups_best=tuple(best), matchups_worst=tuple(worst),
                         matchups_small=sum(1 for m in mine if m.small), has_matchups=True,
                         matchups_min_games=self.settings.matchup_min_games)
        else:
            extra = {}
        others = sorted(((R.cosine(a.profile, b.profile), b) for b in r.archetypes if b.key != a.key),
                        key=lambda t: (-t[0], t[1].key))
        compare = []
        for sim, b in others:
            first, second = (a, b) if R._key_rank(a) < R._key_rank(b) else (b, a)
            href = f"archetypes/{s.slug_of(first)}/{sslug}-vs-{s.slug_of(second)}.html"
            compare.append(P.Link(text=f"{s.name_of(a)} against {s.name_of(b)} ({sim:.0%} alike)", href=href))
            if first is a:
                self.comparison(r, a, b, sim, href)
        return dict(downloads=downloads, card_results=rows, compare=tuple(compare), **extra)

    def comparison(self, r: PartitionResult, a: Archetype, b: Archetype, similarity: float, path: str) -> None:
        """Two archetypes of one leader and season side by side: the cards whose share differs most."""
        s = self.s
        copies_a = {c.card: c.mean_copies for c in a.inclusion}
        copies_b = {c.card: c.mean_copies for c in b.inclusion}
        deck_a = {line.card: int(line.quantity) for line in a.medoid}
        deck_b = {line.card: int(line.quantity) for line in b.medoid}

        def row(card: str) -> P.ComparisonRow:
            return P.ComparisonRow(card=s.card_link(card), share_a=a.profile.get(card, 0.0),
                                   share_b=b.profile.get(card, 0.0), copies_a=copies_a.get(card, 0.0),
                                   copies_b=copies_b.get(card, 0.0), deck_a=deck_a.get(card, 0),
                                   deck_b=deck_b.get(card, 0))

        cards = sorted(set(a.profile) | set(b.profile))
        gap = {c: a.profile.get(c, 0.0) - b.profile.get(c, 0.0) for c in cards}
        more_a = [c for c in sorted(cards, key=lambda c: (-gap[c], c)) if gap[c] >= R.COMPARE_GAP][:R.COMPARE_SHOWN]
        more_b = [c for c in sorted(cards, key=lambda c: (gap[c], c)) if -gap[c] >= R.COMPARE_GAP][:R.COMPARE_SHOWN]
        differ = sorted((c for c in set(deck_a) | set(deck_b) if deck_a.get(c, 0) != deck_b.get(c, 0)),
                        key=lambda c: (-abs(deck_a.get(c, 0) - deck_b.get(c, 0)), c))
        others = tuple(x for x in self._comparison_links(r, a) if x.href != path)
        title = f"{s.name_of(a)} and {s.name_of(b)}, {a.season}"
        base = self._base(path, title, f"Two close archetypes of {s.leader_name(a.leader)} in {a.season}, side by side.")
        self._emit("comparison.html", P.ComparisonPage(
            **base, a=s.arch_link(a), b=s.arch_link(b), season=s.season_link(a.season), leader=s.leader_link(a.leader),
            decks_a=int(a.n_decks), decks_b=int(b.n_decks), similarity=similarity,
            more_a=tuple(map(row, more_a)), more_b=tuple(map(row, more_b)), deck_diff=tuple(map(row, differ)),
            others=others))

    def _comparison_links(self, r: PartitionResult, a: Archetype) -> list[P.Link]:
        """Links to every comparison page of ``a`` (closest first is not needed here: by name)."""
        s = self.s
        sslug = s.season_slug[a.season]
        out = []
        for b in sorted((b for b in r.archetypes if b.key != a.key), key=s.name_of):
            first, second = (a, b) if R._key_rank(a) < R._key_rank(b) else (b, a)
            out.append(P.Link(text=f"against {s.name_of(b)}",
                              href=f"archetypes/{s.slug_of(first)}/{sslug}-vs-{s.slug_of(second)}.html"))
        return out

    def _group_label(self, season: str, leader: str, key: str) -> P.Link:
        """A group of a season named with its leader, linked to its page (none for other decks)."""
        groups = getattr(self, "_groups_by_key", None)
        if groups is None:
            groups = self._groups_by_key = {(g.season, g.leader, g.key): g for r in self.s.results for g in r.groups}
        g = groups.get((season, leader, key))
        lead = self.s.leader_name(leader)
        if g is None:
            return P.Link(text=f"{lead} · {key}", href="")
        name = self.s.name_of(g)  # a computed name starts with its leader already
        return P.Link(text=name if name.startswith(lead) else f"{lead} · {name}",
                      href="" if g.is_other else self.s.arch_href(g))

    def _season_heads(self, season: str) -> list[P.MatchupRow] | None:
        """Every matchup of a season as page rows (see analysis/matchups.py), or None without matches."""
        given = self.site.matchups
        if given is None:
            return None
        made = getattr(self, "_heads", None)
        if made is None:
            made = self._heads = {}
        if season not in made:
            found = given.get(season)
            min_games = self.settings.matchup_min_games
            rows = []
            for c in (found.cells if found is not None else ()):
                low, high = c.interval
                rows.append(P.MatchupRow(
                    archetype=self._group_label(season, *c.group), opponent=self._group_label(season, *c.opponent),
                    wins=c.wins, losses=c.losses, draws=c.draws, games=c.games, rate=c.rate, low=low, high=high,
                    small=c.games < min_games, mirror=c.mirror))
            made[season] = rows
        return made[season]

    def _matchup_view(self, season: str) -> P.MatchupView | None:
        """The season page's head-to-head heat map and table, or None without matches."""
        rows = self._season_heads(season)
        if rows is None:
            return None
        found = self.site.matchups.get(season)
        order = self._matchup_order(season)
        min_games = self.settings.matchup_min_games
        rank = {label: i for i, label in enumerate(order)}
        rows = sorted(rows, key=lambda m: (rank.get(m.archetype.text, len(rank)), rank.get(m.opponent.text, len(rank))))
        chart = ch.matchup_chart(
            [{"archetype": m.archetype.text, "opponent": m.opponent.text, "win_rate": m.rate, "low": m.low,
              "high": m.high, "games": m.games, "draws": m.draws, "small": m.small, "mirror": m.mirror} for m in rows],
            [o for o in order if any(m.archetype.text == o for m in rows)],
            f"matchups-{self.s.season_slug[season]}", min_games, checks=self.checks) if rows else None
        data = f"seasons/{self.s.season_slug[season]}/matchups.js" if chart is not None else ""
        return P.MatchupView(chart=chart, data=data, rows=tuple(rows), games=found.matches if found else 0,
                             draws=found.draws if found else 0, skipped=found.skipped if found else 0,
                             min_games=min_games, download=P.Link(text="Every season's matchups (CSV)",
                                                                  href="data/matchups.csv"))

    def _matchup_order(self, season: str) -> list[str]:
        """Labels of a season's groups: by leader, then largest first, other decks last."""
        out = []
        for r in sorted((r for r in self.s.results if r.season == season), key=lambda r: self.s.leader_name(r.leader)):
            for g in sorted(r.groups, key=lambda g: (g.is_other, -g.n_decks, g.key)):
                out.append(self._group_label(season, g.leader, g.key).text)
        return out

    def data_page(self) -> None:
        """data.html and the site-wide card-results and matchup files it lists."""
        s = self.s
        rows = [(a.season, a.leader, s.slug_of(a), r) for res in s.results for a in res.archetypes for r in a.card_results]
        header = ("season", "leader", "archetype") + exports.CARD_RESULT_HEADER
        self.out["data/card-results.csv"] = exports.csv_bytes(
            header, [(exports.safe_cell(x), exports.safe_cell(y), exports.safe_cell(z), *exports.card_result_cells(r))
                     for x, y, z, r in rows])
        self.out["data/card-results.json"] = exports.lines_json({"card_results": [
            dict(zip(header, (x, y, z, r.card, r.copies, r.decks_with, r.wins_with, r.games_with,
                              round(r.wins_with / r.games_with, 6), r.decks_without, r.wins_without, r.games_without,
                              round(r.wins_without / r.games_without, 6), r.diff, r.low, r.high, r.p_value,
                              exports.card_result_verdict(r)))) for x, y, z, r in rows]})
        heads = self.site.matchups
        if heads is not None:
            min_games = self.settings.matchup_min_games
            header = exports.MATCHUP_HEADER
            found = []
            for season in s.seasons:
                for c in (heads[season].cells if season in heads else ()):
                    low, high = c.interval
                    mine = s.page_slug.get((season, *c.group), OTHER_KEY)
                    theirs = s.page_slug.get((season, *c.opponent), OTHER_KEY)
                    found.append((season, c.group[0], mine, c.opponent[0], theirs, c.wins, c.losses, c.draws, c.games,
                                  None if math.isnan(c.rate) else round(c.rate, 6), round(low, 6), round(high, 6),
                                  c.games < min_games, c.mirror))
            self.out["data/matchups.csv"] = exports.csv_bytes(header, [
                tuple(exports.safe_cell(v) for v in row[:5]) + tuple(str(v) for v in row[5:9])
                + tuple(exports.fixed(v) for v in row[9:12]) + tuple("yes" if v else "" for v in row[12:])
                for row in found])
            self.out["data/matchups.json"] = exports.lines_json({"matchups": [dict(zip(header, row)) for row in found]})
        base = self._base("data.html", "Data downloads", "Every file of this site to download, with its columns described.")
        self._emit("data.html", P.DataPage(**base, downloads=exports.downloads(heads is not None)))
