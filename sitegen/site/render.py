"""Render the whole site: every page, download, export and index as bytes.

:func:`render_site` takes a :class:`SiteInput` (settings, decks, every
partition's analysis, season links, notes, findings) and returns the output
files (path from the site root -> bytes) plus warnings. It writes nothing:
writing the folder is the caller's job. Page contexts are the dataclasses of
:mod:`sitegen.site.pages`; templates come from the site's own folder first,
then the packaged one, so a site can override any template file by file.
"""
from __future__ import annotations

import base64
import hashlib
import math
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import jinja2
import numpy as np

from ..analysis.trends import trend_rows
from ..config import Config
from ..errors import RenderError
from ..model import ALL_LEADERS, Archetype, DeckData, Finding, History, PartitionResult
from ..model import Link as SeasonLink
from . import assets, exports
from . import charts as ch
from . import pages as P
from .memo import PageMemo
from .notes import Notes, orphan_findings
# cosine and win_rate are also read from here (tests, the page parts mixed into Renderer)
from .lookup import SiteLookup, _data_url, _rel_root, cosine, win_rate  # noqa: F401
from .render_identity import IdentityPages
# tier_words is also read from here (the page parts mixed into Renderer)
from .templating import _context, _template_place, firmness_words, make_environment, tier_words
from .render_questions import QuestionPages
from .render_season import SeasonPages
from .search import RANKS, SearchEntry, search_files
from .settings import SiteSettings
from .sitemap import sitemap_files

#: Closest archetypes listed on an archetype page.
SIMILAR_SHOWN = 3
#: Best and worst matchups listed on an archetype page.
MATCHUPS_SHOWN = 3
#: Cards listed in each direction on a comparison page, and the least gap in share (points) to list one.
COMPARE_SHOWN = 15
COMPARE_GAP = 0.1


def _key_rank(a: Archetype) -> tuple[int, str]:
    """Order of archetypes within a partition (a1, a2, ... a10), for one page per pair."""
    digits = a.key[1:]
    return (int(digits), a.key) if digits.isdigit() else (1 << 30, a.key)


@dataclass(frozen=True)
class SiteInput:
    """Everything the pages are made from.

    ``results`` may come in any order (pages follow ``data.seasons``);
    ``history`` is None until seasons are linked, and then each slug stands
    alone; ``templates_dirs`` lists the site's own templates folder first (if
    it exists), then the packaged default.
    """

    cfg: Config
    data: DeckData
    results: tuple[PartitionResult, ...]
    history: History | None
    notes: Notes
    findings: tuple[Finding, ...]
    templates_dirs: tuple[Path, ...]
    #: The trend rows of analysis.trends.trend_rows (by leader); None: the renderer makes them.
    trends: dict | None = None
    #: The last build's assignments files by season, to copy unchanged seasons from (see exports.ExportBlocks).
    export_blocks: exports.ExportBlocks | None = None
    #: The last build's page keys, to reuse pages whose context is unchanged (see memo.PageMemo).
    page_memo: PageMemo | None = None
    #: Per (season, leader), the archetype key each placement key's decks end up under after the notes'
    #: overrides (see classify.relabelling); partitions not named keep their keys.
    relabelled: dict | None = None
    #: Each season's head-to-head results (analysis.matchups.SeasonMatchups by season), or None without matches.
    matchups: dict | None = None
    #: The build's chart checks (what passed, where checks run); None: the renderer makes its own.
    chart_checks: ch.ChartChecks | None = None


# -- template environment ---------------------------------------------------

class Renderer(SeasonPages, IdentityPages, QuestionPages):
    """Builds every page of one site; see :func:`render_site`."""

    def __init__(self, site: SiteInput) -> None:
        self.site = site
        #: The settings every page part reads, made once from site.cfg.
        self.settings = SiteSettings.from_config(site.cfg)
        self.s = SiteLookup(site, self.settings)
        #: Every chart of this build is checked by this object (see charts.ChartChecks).
        self.checks = site.chart_checks if site.chart_checks is not None else ch.ChartChecks()
        #: Each leader's share and win-rate rows over seasons, as the analysis made them.
        self.trends = site.trends if site.trends is not None else trend_rows(
            site.results, site.data.seasons, self.settings.min_games)
        self.env = make_environment(site.templates_dirs)
        self.out: dict[str, bytes] = {}
        self.warnings: list[Finding] = []
        self.assets, self.urls = self._assets()
        self._medoid_rows: dict[str, int] | None = None
        self._excluded_decks: Any = None
        self._share_charts: dict[tuple[str, str], Any] = {}
        self._links: dict[tuple[str, str, str], SeasonLink] | None = None
        self._flows: dict[tuple[str, str, str], dict[str, dict[str, float]]] = {}

    def _assets(self) -> tuple[dict[str, bytes], dict[str, str]]:
        """The shared static files (content-hashed) and their paths by logical name."""
        files = assets.static_assets(list(self.site.templates_dirs), self.settings.cache_folder)
        return files, assets.asset_urls(files)

    def _base(self, path: str, title: str, description: str, *, charts: bool = False,
              root: str | None = None) -> dict[str, Any]:
        s = self.s
        urls = self.urls
        styles = [urls[k] for k in ("charts_css", "site_css") if k in urls and (charts or k == "site_css")]
        scripts = ["search-index.js", urls["site_js"]]
        library = ""
        if charts and "vega" in urls and "charts_js" in urls:
            # charts.js loads the Vega bundle itself when a chart comes into view: the page's
            # own scripts (search, sorting) never wait on it
            scripts.append(urls["charts_js"])
            library = urls["vega"]
        nav = [P.Link(text="Overview", href="index.html")]
        analysed = [x for x in s.seasons if x not in s.emptied]
        if analysed:
            nav.append(P.Link(text="Latest season", href=s.season_href(analysed[-1])))
        nav.append(P.Link(text="How it works", href="method.html"))
        nav.append(P.Link(text="Place a decklist", href="classify.html"))
        nav.append(P.Link(text="Data", href="data.html"))
        root = _rel_root(path) if root is None else root
        # An icon of the site's own, so browsers do not ask the host for a missing /favicon.ico.
        icon = root + urls["icon_svg"] if "icon_svg" in urls else ""
        return dict(site_title=self.settings.title, title=title, description=description, icon=icon,
                    root=root, path=path, stylesheets=tuple(styles),
                    scripts=tuple(scripts), nav=tuple(nav), leader_word=s.word, leader_word_plural=s.words,
                    absolute=False, inline_style="", style_hash="", chart_library=library)

    def _emit(self, template: str, page: Any) -> None:
        context = _context(page)
        memo = self.site.page_memo
        if memo is not None:
            body = memo.reuse(page.path, memo.key(page.path, template, context))
            if body is not None:
                self.out[page.path] = body
                return
        try:
            html = self.env.get_template(template).render(**context)
        except jinja2.TemplateError as exc:
            where, line = _template_place(exc, template)
            raise RenderError(f"template {where}{f', line {line}' if line else ''}: {exc} (page {page.path})") from exc
        self.out[page.path] = html.encode("utf-8")

    def _emit_data(self, path: str, chart: Any) -> None:
        """The data file of a chart whose rows live outside its page (charts.data_script); taken
        from the last build, like a page, when the chart's key is unchanged."""
        memo = self.site.page_memo
        if memo is not None:
            body = memo.reuse(path, memo.key(path, "chart-data", {"chart": chart}))
            if body is not None:
                self.out[path] = body
                return
        self.out[path] = ch.data_script(chart.id, chart.values or [])

    # -- data-quality notes
    def _notes_for(self, season: str, leader: str | None) -> tuple[str, ...]:
        seen: list[str] = []
        for f in (*self.site.data.findings, *self.site.findings):
            if f.season != season or (leader is not None and f.leader != leader) or (leader is None and f.leader):
                continue
            text = f"deck {f.deck_id}: {f.message}" if f.deck_id and f.deck_id not in f.message else f.message
            if text not in seen:
                seen.append(text)
        return tuple(seen)

    def _excluded(self, season: str, leader: str) -> str:
        data = self.site.data
        if not data.excluded:
            return ""
        if self._excluded_decks is None:  # the left-out decks, picked out of all decks once
            d = data.decks
            self._excluded_decks = d.loc[d["deck_id"].isin(data.excluded), ["deck_id", "season", "leader"]]
        d = self._excluded_decks
        mask = d["season"] == season
        if leader != ALL_LEADERS:
            mask &= d["leader"] == leader
        ids = sorted(str(x) for x in d.loc[mask, "deck_id"])
        if not ids:
            return ""
        shown = ", ".join(ids[:20]) + (f" and {len(ids) - 20} more" if len(ids) > 20 else "")
        return (f"{len(ids)} deck{'s' if len(ids) != 1 else ''} left out of the analysis because "
                f"{'they break' if len(ids) != 1 else 'it breaks'} a deck-building rule: {shown}.")

    def _share_rows(self, leader: str) -> list[dict[str, Any]]:
        """share_chart rows of one leader; each slug is one line under its latest name."""
        s = self.s
        rows = []
        for r in s.results:
            if r.leader != leader:
                continue
            for a in r.groups:
                if a.n_decks == 0:
                    continue
                label = s.name_of(a) if a.is_other else self._latest_name(s.slug_of(a))
                rows.append({"season": a.season, "archetype": label, "share": a.share, "decks": a.n_decks,
                             "is_other": a.is_other})
        return rows

    def _share_chart(self, leader: str, chart_id: str) -> Any:
        # The front page and the leader's page show the same chart: made once.
        key = (leader, chart_id)
        if key not in self._share_charts:
            rows = self._share_rows(leader)
            self._share_charts[key] = (None if len({x["season"] for x in rows}) < 2  # one season: the table says it all
                                       else ch.share_chart(rows, chart_id, f"{self.s.leader_name(leader)}: archetype shares by season",
                                                           looks=self._looks_by_name(leader), checks=self.checks))
        return self._share_charts[key]

    def _looks_by_name(self, leader: str) -> dict[str, ch.Look]:
        """Each archetype's look under its latest name, the name the trend charts use."""
        return {self._latest_name(slug): look for slug, look in self.s.looks.get(leader, {}).items()}

    # -- pages
    def front(self) -> None:
        s = self.s
        latest = next((x for x in reversed(s.seasons) if x not in s.emptied), None)
        blocks = tuple(self._block(r, with_charts=False, with_shares=True) for r in s.results if r.season == latest)
        blocks = tuple(sorted(blocks, key=lambda b: (-b.decks, b.name)))
        seasons = tuple(P.SeasonRow(season=s.season_link(x), archetype=None, leader=None, decks=s.decks_in_season[x],
                                    share=1.0, win=None, detail="", current=x == latest) for x in reversed(s.seasons))
        base = self._base("index.html", self.settings.title,
                          self.settings.description or "Archetypes of each season at a glance.",
                          charts=any(b.share_chart for b in blocks))
        self._emit("index.html", P.FrontPage(
            **base, season=s.season_link(latest) if latest else None,
            season_decks=s.decks_in_season.get(latest, 0) if latest else 0, leaders=blocks,
            seasons=seasons, note=s.note_view(self.site.notes.front), has_results=s.has_results,
            min_games=s.min_games, site_description=self.settings.description))

    def _link_text(self, a: Archetype) -> str:
        h = self.site.history
        if h is None:
            return ""
        slug = self.s.slug_of(a)
        for link in h.links:
            if link.season == a.season and link.leader == a.leader and link.slug in (a.slug, slug):
                src = ", ".join(self._name_for_slug(x) for x in link.sources)
                return {"continues": "Continues from the season before.",
                        "new": "New this season.",
                        "split": f"Split from {src} of the season before." if src else "Split from an earlier archetype.",
                        "merge": f"Took in {src} of the season before." if src else "Took in earlier archetypes.",
                        }.get(link.kind, link.kind)
        return ""

    def _latest_name(self, slug: str) -> str:
        return self.s.name_of(self._seasons_of(slug)[-1])

    def _name_for_slug(self, slug: str) -> str:
        found = self.s.by_slug.get(slug)
        return self.s.name_of(found[0]) if found else slug

    def _seasons_of(self, slug: str) -> list[Archetype]:
        rank = {x: i for i, x in enumerate(self.s.seasons)}
        return sorted(self.s.by_slug[slug], key=lambda a: (rank[a.season], a.leader))

    def _season_rows(self, slug: str, current: str | None) -> tuple[P.SeasonRow, ...]:
        s = self.s
        return tuple(P.SeasonRow(season=s.season_link(a.season), archetype=s.arch_link(a), leader=s.leader_link(a.leader),
                                 decks=int(a.n_decks), share=float(a.share),
                                 win=win_rate(a.wins, a.losses, s.min_games), detail=self._link_text(a),
                                 current=a.season == current) for a in self._seasons_of(slug))

    def _first_last(self, slug: str) -> tuple[str, str]:
        h = self.site.history
        seasons = list(h.seasons_of.get(slug, ())) if h is not None else []
        if not seasons:
            seasons = [a.season for a in self._seasons_of(slug)]
        return seasons[0], seasons[-1]

    def _deck_rows(self) -> dict[str, int]:
        """Row of the first deck with each representative deck's id, found in one pass over the decks."""
        if self._medoid_rows is None:
            ids = {a.medoid_deck_id for r in self.s.results for a in r.archetypes}
            d = self.site.data.decks
            hits = np.flatnonzero(d["deck_id"].isin(ids).to_numpy(dtype=bool))
            rows: dict[str, int] = {}
            for pos, deck_id in zip(hits.tolist(), d["deck_id"].iloc[hits].tolist()):
                rows.setdefault(deck_id, pos)
            self._medoid_rows = rows
        return self._medoid_rows

    def _deck_facts(self, deck_id: str) -> tuple[tuple[str, str], ...]:
        d = self.site.data.decks
        pos = self._deck_rows().get(deck_id)
        if pos is None:
            return ()
        row = d.iloc[pos]
        cols = ["event", "title"] + (["player"] if self.settings.publish_players else [])
        out = []
        for col in cols:
            if col in d.columns:
                value = row[col]
                if value is not None and not (isinstance(value, float) and math.isnan(value)) and str(value) not in ("", "<NA>", "nan"):
                    out.append((col.capitalize(), str(value)))
        return tuple(out)

    def archetype(self, r: PartitionResult, a: Archetype) -> None:
        s = self.s
        slug = s.slug_of(a)
        path = s.arch_href(a)
        note = s.note_of(a)
        similar = sorted(((cosine(a.profile, b.profile), b) for b in r.archetypes if b.key != a.key),
                         key=lambda t: (-t[0], t[1].key))[:SIMILAR_SHOWN]
        groups: dict[str, list[tuple[int, P.Link]]] = {}
        counts: dict[str, int] = defaultdict(int)
        for line in a.medoid:
            kind = line.card_type or "Cards"
            groups.setdefault(kind, []).append((int(line.quantity), s.card_link(line.card)))
            counts[kind] += int(line.quantity)
        decklist = tuple(P.DeckGroup(card_type=k, count=counts[k], lines=tuple(sorted(v, key=lambda t: t[1].text)))
                         for k, v in groups.items())
        first, last = self._first_last(slug)
        sslug = s.season_slug[a.season]
        name = s.name_of(a)
        own = [x for x in self._seasons_of(slug) if x.season != a.season]
        rank = {x: i for i, x in enumerate(s.seasons)}
        before = [x for x in own if rank[x.season] < rank[a.season]]
        after = [x for x in own if rank[x.season] > rank[a.season]]
        asked = self._questions(r, a, similar)
        base = self._base(path, f"{name}, {a.season}",
                          f"The {name} archetype of {s.leader_name(a.leader)} in season {a.season}: cards and a sample deck.")
        self._emit("archetype.html", P.ArchetypePage(
            **base, name=name, computed_name=a.name, summary=note.summary if note else "",
            season=s.season_link(a.season), leader=s.leader_link(a.leader),
            history=P.Link(text=f"{name} across seasons", href=f"archetypes/{slug}/index.html"),
            decks=int(a.n_decks), partition_decks=int(r.n_decks), share=float(a.share),
            win=win_rate(a.wins, a.losses, s.min_games), signature=s.signature_links(a), note=self._season_note(a, note),
            stability=a.stability, firmness=firmness_words(a.stability),
            cards=tuple(P.CardRow(card=s.card_link(c.card), card_type=c.card_type, share=c.share,
                                  mean_copies=c.mean_copies, at_1=c.at_1, at_2=c.at_2, at_3_plus=c.at_3_plus,
                                  tier=c.tier) for c in a.inclusion),
            decklist=decklist, deck_id=a.medoid_deck_id, deck_total=int(a.medoid_total),
            deck_facts=self._deck_facts(a.medoid_deck_id),
            similar=tuple(P.SimilarRow(archetype=s.arch_link(b), similarity=sim) for sim, b in similar),
            seasons=self._season_rows(slug, a.season), first_seen=first, last_seen=last,
            link_text=self._link_text(a),
            downloads=(P.Link(text="Card table (CSV)", href=f"archetypes/{slug}/{sslug}-cards.csv"),
                       P.Link(text="Representative deck (CSV)", href=f"archetypes/{slug}/{sslug}-decklist.csv"))
            + asked.pop("downloads"), **asked,
            min_games=s.min_games,
            previous=P.Link(text=before[-1].season, href=s.arch_href(before[-1])) if before else None,
            next=P.Link(text=after[0].season, href=s.arch_href(after[0])) if after else None,
            **self._identity_fields(r, a, before)))
        self.out[f"archetypes/{slug}/{sslug}-cards.csv"] = exports.card_table_csv(a)
        self.out[f"archetypes/{slug}/{sslug}-decklist.csv"] = exports.decklist_csv(a)

    def history_page(self, slug: str) -> None:
        s = self.s
        arches = self._seasons_of(slug)
        latest = arches[-1]
        first, last = self._first_last(slug)
        name = s.name_of(latest)
        path = f"archetypes/{slug}/index.html"
        base = self._base(path, f"{name} across seasons", f"The {name} archetype season by season.")
        self._emit("archetype_history.html", P.ArchetypeHistoryPage(
            **base, name=name, leader=s.leader_link(latest.leader), seasons=self._season_rows(slug, None),
            first_seen=first, last_seen=last, note=s.note_view(s.site.notes.for_slug(slug)), min_games=s.min_games))

    def card(self, card: str, rows: list[P.SeasonRow], seasons: list[str]) -> None:
        s = self.s
        path = s.card_link(card).href
        base = self._base(path, card, f"Which archetypes play {card}, and how many copies.")
        self._emit("card.html", P.CardPage(**base, card=card, card_type=s.card_type.get(card, ""), rows=tuple(rows),
                                           seasons=tuple(seasons)))

    def cards(self) -> None:
        s = self.s
        rows: dict[str, list[P.SeasonRow]] = defaultdict(list)
        seasons: dict[str, list[str]] = defaultdict(list)
        for r in s.results:
            for a in r.archetypes:
                for c in a.inclusion:
                    rows[c.card].append(P.SeasonRow(
                        season=s.season_link(a.season), archetype=s.arch_link(a), leader=s.leader_link(a.leader),
                        decks=int(round(c.share * a.n_decks)), share=c.share, win=None,
                        detail=f"{c.mean_copies:.1f}", current=False))
                    if a.season not in seasons[c.card]:
                        seasons[c.card].append(a.season)
        for card in sorted(s.card_slug):
            self.card(card, rows.get(card, []), seasons.get(card, []))

    def leader(self, leader: str) -> None:
        s = self.s
        mine = [r for r in s.results if r.leader == leader]
        rows = []
        for r in mine:
            for a in sorted(r.groups, key=lambda a: (a.is_other, -a.n_decks, a.key)):
                if a.n_decks == 0:
                    continue
                w = win_rate(a.wins, a.losses, s.min_games)
                rows.append(P.SeasonRow(season=s.season_link(a.season), archetype=None if a.is_other else s.arch_link(a),
                                        leader=None, decks=int(a.n_decks), share=float(a.share), win=w,
                                        detail="" if not a.is_other else "decks that fit no archetype", current=False))
        lslug = s.leader_slug[leader]
        share_c = self._share_chart(leader, f"shares-{lslug}")
        # The trend rows (after overrides); lines are named by each slug's latest name, as on the share chart.
        trend_rows = [{**row, "archetype": self._latest_name(row["slug"]) if row.get("slug") in s.by_slug
                       else row["archetype"]} for row in (self.trends.get(leader) or {}).get("winrates") or ()]
        trend_c = (ch.winrate_chart(trend_rows, f"winrate-{lslug}", looks=self._looks_by_name(leader),
                                    order=ch.latest_share_order(self._share_rows(leader), s.seasons), checks=self.checks)
                   if trend_rows else None)
        path = s.leader_link(leader).href
        name = s.leader_name(leader)
        base = self._base(path, name, f"Archetypes of {name}, season by season.",
                          charts=share_c is not None or trend_c is not None)
        self._emit("leader.html", P.LeaderPage(**base, name=name, seasons=tuple(rows), share_chart=share_c,
                                               trend_chart=trend_c, min_games=s.min_games,
                                               flows=self._flow_tables(leader), tiers=tier_words()))

    def method(self) -> None:
        base = self._base("method.html", "How it works", "How the archetypes, maps and tables are made, in plain words.")
        self._emit("method.html", P.MethodPage(**base, note=self.s.note_view(self.site.notes.method),
                                               settings=self.settings.method_settings, min_games=self.s.min_games, tiers=tier_words()))

    def not_found(self) -> None:
        """404.html. Hosts serve it at the missing page's own depth, so links
        relative to the page would point nowhere: with site.base_url every
        link and asset is absolute; without it links start at the host's root
        ('/') and the stylesheet is written into the page (allowed by its hash
        in the CSP), so it looks right at any depth and from file:// too. It
        has the search box: its scripts come from the root as well."""
        base_url = self.settings.base_url.strip()
        root = base_url.rstrip("/") + "/" if base_url else "/"
        base = self._base("404.html", "Page not found", "There is no page at this address.", root=root)
        base["absolute"] = True
        if not base_url:
            css = self.assets[self.urls["site_css"]].decode("utf-8")
            if "</" in css:  # it would end the <style> element early
                raise RenderError(f"{self.urls['site_css']}: contains '</', which cannot be written inside a <style> element")
            base.update(inline_style=css, style_hash=base64.b64encode(hashlib.sha256(css.encode("utf-8")).digest()).decode("ascii"),
                        stylesheets=(), icon=_data_url(self.assets, self.urls.get("icon_svg")))
        self._emit("404.html", P.NotFoundPage(**base, home=root + "index.html"))

    def search(self) -> None:
        s = self.s
        entries = []
        for slug in sorted(s.by_slug):
            arches = self._seasons_of(slug)
            latest = arches[-1]
            former = tuple(dict.fromkeys(n for n in (s.name_of(a) for a in arches[:-1]) if n != s.name_of(latest)))
            entries.append(SearchEntry(s.name_of(latest), "archetype", f"archetypes/{slug}/index.html",
                                       s.leader_name(latest.leader), rank=RANKS["archetype"], aliases=former))
        for leader, slug in s.leader_slug.items():
            entries.append(SearchEntry(s.leader_name(leader), s.word, f"leaders/{slug}.html", rank=RANKS["leader"]))
        for season in s.seasons:
            entries.append(SearchEntry(season, "season", s.season_href(season),
                                       f"{s.decks_in_season[season]} decks", rank=RANKS["season"]))
        for card, slug in s.card_slug.items():
            entries.append(SearchEntry(card, "card", f"cards/{slug}.html", s.card_type.get(card, ""),
                                       rank=RANKS["card"]))
        self.out.update(search_files(entries))

    def classify(self) -> None:
        """classify.html and the models it places decklists by (see classify.py)."""
        from .classify import files_and_page

        self.out.update(files_and_page(self))

    def run(self) -> tuple[dict[str, bytes], list[Finding]]:
        s = self.s
        self.warnings.extend(self.site.notes.findings)
        self.warnings.extend(orphan_findings(self.site.notes, set(s.by_slug)))
        self.warnings.extend(self._stale_note_findings())
        self.front()
        for i, season in enumerate(s.seasons):
            self.season(season, i)
        for r in s.results:
            for a in r.archetypes:
                self.archetype(r, a)
        for slug in sorted(s.by_slug):
            self.history_page(slug)
        self.cards()
        for leader in s.leader_slug:
            self.leader(leader)
        self.method()
        self.not_found()
        self.search()
        self.classify()
        self.out.update(exports.export_files(self.site.data, s.results, s.page_slug, self.site.export_blocks))
        self.data_page()
        pages = sorted(p for p in self.out if p.endswith(".html") and p != "404.html")
        files, warns = sitemap_files(self.settings.base_url, pages)
        self.out.update(files)
        self.warnings.extend(warns)
        for path, body in self.assets.items():
            self.out.setdefault(path, body)
        return dict(sorted(self.out.items())), self.warnings


def render_site(site: SiteInput) -> tuple[dict[str, bytes], list[Finding]]:
    """Every output file of the site (path from the root -> bytes) and the warnings found."""
    return Renderer(site).run()
