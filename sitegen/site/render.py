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
import dataclasses
import hashlib
import json
import math
import re
import unicodedata
from collections import defaultdict
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any, Sequence

import jinja2
import numpy as np

from ..analysis.embed import stratified_sample
from ..analysis.stats import wilson
from ..check import RULE_KINDS
from ..config import Config
from ..errors import RenderError
from ..model import ALL_LEADERS, OTHER_KEY, TIERS, Archetype, DeckData, Finding, History, PartitionResult
from ..model import Link as SeasonLink
from ..slugs import SlugSet
from . import assets, exports
from . import charts as ch
from . import pages as P
from .memo import PageMemo
from .notes import Note, Notes, orphan_findings, stale_cards
from . import story as st
from .search import RANKS, SearchEntry, search_files
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
#: Most map points drawn on one season page, shared among its leaders by their
#: number of points: each point is ~200 bytes of inline chart data, and this
#: keeps a season page well under 1 MB however many leaders it has.
SEASON_MAP_POINTS = 4000
#: Fewest points a leader's map keeps when the season's budget is shared out.
MIN_MAP_POINTS = 300


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


# -- template environment ---------------------------------------------------

def _pct(value: float | None, digits: int = 1) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return f"{value * 100:.{digits}f}%"


#: A site template reaches the packaged template of the same name as ``sitegen:NAME``
#: (``{% extends "sitegen:base.html" %}``), so it can extend it and change one block.
PACKAGED_PREFIX = "sitegen"


#: Bidirectional classes (Unicode UAX #9) that can turn the text around them: right-to-left
#: letters and digits, embeddings, overrides and isolates.
_BIDI_TURNING = frozenset({"R", "AL", "AN", "RLE", "RLO", "LRE", "LRO", "PDF", "RLI", "LRI", "FSI", "PDI"})


def isolate(text: object) -> str:
    """Text wrapped in FIRST STRONG ISOLATE ... POP DIRECTIONAL ISOLATE (U+2068, U+2069) when it
    holds right-to-left letters or direction controls, so that it cannot reorder the text around
    it (a page's <title>, where no markup can isolate); other text is left as it is."""
    text = str(text)
    if any(unicodedata.bidirectional(c) in _BIDI_TURNING for c in text):
        return f"\u2068{text}\u2069"
    return text


def firmness_words(stability: float | None) -> str:
    """A reader's words for an archetype's stability (see sitegen.analysis.stability)."""
    from ..analysis.stability import words
    return words(stability)


def make_environment(templates_dirs: Sequence[Path]) -> jinja2.Environment:
    """A strict, autoescaping environment over the template folders, first wins.

    The packaged templates are also reachable under :data:`PACKAGED_PREFIX`
    (``sitegen:base.html``), whatever the site's own folder holds.
    """
    from ..resources import default_templates_dir

    packaged = jinja2.PrefixLoader({PACKAGED_PREFIX: jinja2.FileSystemLoader(str(default_templates_dir()))},
                                   delimiter=":")
    loader = jinja2.ChoiceLoader([jinja2.FileSystemLoader(str(d)) for d in templates_dirs] + [packaged])
    # auto_reload off: one environment serves one build, so templates need not be checked for changes per page.
    env = jinja2.Environment(loader=loader, autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True, auto_reload=False)
    env.filters["pct"] = _pct
    env.filters["fixed"] = exports.fixed
    env.filters["isolate"] = isolate
    return env


def _template_place(exc: jinja2.TemplateError, template: str) -> tuple[str, int | None]:
    """File and line of a template error: from a syntax error, else from the traceback.

    Jinja rewrites tracebacks so template frames carry the template's file
    name and line; the innermost such frame is where the mistake is.
    """
    if isinstance(exc, jinja2.TemplateSyntaxError):
        return exc.filename or exc.name or template, exc.lineno
    where, line = template, None
    tb = exc.__traceback__
    while tb is not None:
        name = tb.tb_frame.f_code.co_filename
        if name.endswith((".html", ".xml", ".txt")):
            where, line = name, tb.tb_lineno
        tb = tb.tb_next
    return where, line


def _context(page: Any) -> dict[str, Any]:
    # Shallow on purpose: nested dataclasses stay objects for the template.
    return {f.name: getattr(page, f.name) for f in fields(page)}


# -- small pieces -----------------------------------------------------------

def win_rate(wins: int, losses: int, min_games: int) -> P.WinRate | None:
    """A :class:`~sitegen.site.pages.WinRate`, or None when no games were recorded."""
    games = int(wins) + int(losses)
    if games <= 0:
        return None
    low, high = wilson(int(wins), games)
    return P.WinRate(wins=int(wins), games=games, rate=wins / games, low=low, high=high, small=games < min_games)


def cosine(a: dict[str, float], b: dict[str, float]) -> float:
    """Cosine similarity of two card profiles (card -> share of decks playing it)."""
    dot = sum(v * b.get(k, 0.0) for k, v in a.items())
    na = math.sqrt(sum(v * v for v in a.values()))
    nb = math.sqrt(sum(v * v for v in b.values()))
    return 0.0 if na == 0 or nb == 0 else dot / (na * nb)


def _rel_root(path: str) -> str:
    return "../" * path.count("/")


def _data_url(files: dict[str, bytes], path: str | None) -> str:
    """An SVG asset as a data: URL (the page's CSP allows data: images), or '' without one."""
    if path is None:
        return ""
    return "data:image/svg+xml;base64," + base64.b64encode(files[path]).decode("ascii")


def _any_value(df: Any, col: str) -> bool:
    return col in df.columns and bool(df[col].notna().any())


class _Site:
    """Lookup tables shared by every page: slugs, names, archetypes by season."""

    def __init__(self, site: SiteInput) -> None:
        self.site = site
        cfg = site.cfg
        self.cfg = cfg
        self.min_games = int(cfg["trends.min_games"])
        self.word = cfg["site.leader_word"]
        self.words = cfg["site.leader_word_plural"]
        data = site.data
        present = {r.season for r in site.results}
        # A season whose every deck was left out (rules.exclude_breakers) has no results, yet keeps its
        # page, which says why and lists the decks left out.
        self.emptied: set[str] = set()
        if data.excluded:
            d = data.decks
            self.emptied = set(d.loc[d["deck_id"].isin(data.excluded), "season"].astype(str)) - present
            present = present | self.emptied
        self.seasons: list[str] = [s for s in data.seasons if s in present] + sorted(present - set(data.seasons))
        rank = {s: i for i, s in enumerate(self.seasons)}
        self.results = sorted(site.results, key=lambda r: (rank[r.season], r.leader))
        season_slugs = SlugSet()
        self.season_slug = {s: season_slugs.add(s, fallback="season") for s in self.seasons}
        leader_slugs = SlugSet()
        leaders = sorted({r.leader for r in self.results})
        self.leader_slug = {name: leader_slugs.add(self.leader_name(name), fallback="leader") for name in leaders}

        # Page slug of each archetype: its own slug, unless another archetype
        # of the same season already took it (then the leader is appended).
        self.page_slug: dict[tuple[str, str, str], str] = {}
        taken: dict[str, set[str]] = defaultdict(set)
        self.by_slug: dict[str, list[Archetype]] = defaultdict(list)
        for r in self.results:
            for a in r.archetypes:
                slug = a.slug
                if slug in taken[a.season]:
                    slug = f"{a.slug}-{self.leader_slug[a.leader]}"
                    n = 2
                    while slug in taken[a.season]:
                        slug, n = f"{a.slug}-{self.leader_slug[a.leader]}-{n}", n + 1
                taken[a.season].add(slug)
                self.page_slug[(a.season, a.leader, a.key)] = slug
                self.by_slug[slug].append(a)

        cards: set[str] = set()
        self.card_type: dict[str, str] = {}
        for r in self.results:
            for a in r.groups:
                for c in a.inclusion:
                    cards.add(c.card)
                    self.card_type.setdefault(c.card, c.card_type)
                for line in a.medoid:
                    cards.add(line.card)
                    self.card_type.setdefault(line.card, line.card_type)
                cards.update(s.card for s in a.signature)
        # Only a card some archetype plays often enough to list (its inclusion table) has a page of
        # its own: a page for any other card would say nothing. Others are named without a link.
        listed = {c.card for r in self.results for a in r.archetypes for c in a.inclusion}
        card_slugs = SlugSet()
        self.card_slug = {c: card_slugs.add(c, fallback="card") for c in sorted(cards & listed)}
        # One look (colour and shape) per archetype of each leader, following its page slug
        # through every season (charts.archetype_looks).
        self.looks: dict[str, dict[str, ch.Look]] = {}
        for leader in leaders:
            self.looks[leader] = ch.archetype_looks(
                [[self.page_slug[(a.season, a.leader, a.key)] for r in self.results
                  if r.season == season and r.leader == leader for a in r.archetypes] for season in self.seasons])
        self.has_results = _any_value(data.decks, "wins") or _any_value(data.decks, "losses")
        self.decks_in_season: dict[str, int] = defaultdict(int)
        for r in self.results:
            self.decks_in_season[r.season] += int(r.n_decks)

    # names and links
    def leader_name(self, leader: str) -> str:
        return f"all {self.words}" if leader == ALL_LEADERS else leader

    def season_href(self, season: str) -> str:
        return f"seasons/{self.season_slug[season]}/index.html"

    def season_link(self, season: str) -> P.Link:
        return P.Link(text=season, href=self.season_href(season))

    def leader_link(self, leader: str) -> P.Link:
        return P.Link(text=self.leader_name(leader), href=f"leaders/{self.leader_slug[leader]}.html")

    def card_link(self, card: str) -> P.Link:
        slug = self.card_slug.get(card)
        return P.Link(text=card, href=f"cards/{slug}.html" if slug else "")

    def slug_of(self, a: Archetype) -> str:
        return self.page_slug[(a.season, a.leader, a.key)]

    def look_of(self, a: Archetype) -> ch.Look:
        return ch.OTHER_LOOK if a.is_other else self.looks[a.leader][self.slug_of(a)]

    def arch_href(self, a: Archetype) -> str:
        return f"archetypes/{self.slug_of(a)}/{self.season_slug[a.season]}.html"

    def note_of(self, a: Archetype) -> Note | None:
        return self.site.notes.for_slug(self.slug_of(a))

    def name_of(self, a: Archetype) -> str:
        if a.is_other:
            return "Other decks"
        note = self.note_of(a)
        return (note.title if note is not None and note.title else a.name) or self.slug_of(a)

    def arch_link(self, a: Archetype) -> P.Link:
        return P.Link(text=self.name_of(a), href=self.arch_href(a))

    def signature_links(self, a: Archetype) -> tuple[P.Link, ...]:
        note = self.note_of(a)
        if note is not None and note.signature:
            return tuple(self.card_link(c) for c in note.signature)
        return tuple(self.card_link(s.card) for s in a.signature)

    def row(self, a: Archetype) -> P.ArchetypeRow:
        note = None if a.is_other else self.note_of(a)
        return P.ArchetypeRow(
            name=self.name_of(a), href="" if a.is_other else self.arch_href(a), decks=int(a.n_decks),
            share=float(a.share), win=win_rate(a.wins, a.losses, self.min_games),
            signature=() if a.is_other else self.signature_links(a),
            summary=note.summary if note is not None else "", is_other=a.is_other,
            stability=a.stability, firmness=firmness_words(a.stability))

    def note_view(self, note: Note | None) -> P.NoteView | None:
        if note is None or note.hidden:
            return None
        content = self.cfg.path("site.content")
        try:
            source = str(note.path.relative_to(content)) if content is not None else note.path.name
        except ValueError:
            source = note.path.name
        return P.NoteView(html=note.html, author=note.author, source=source.replace("\\", "/"))


class Renderer:
    """Builds every page of one site; see :func:`render_site`."""

    def __init__(self, site: SiteInput) -> None:
        self.site = site
        self.s = _Site(site)
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
        files = assets.static_assets(list(self.site.templates_dirs), self.site.cfg.path("cache.folder"))
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
        return dict(site_title=self.site.cfg["site.title"], title=title, description=description, icon=icon,
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
                                                           looks=self._looks_by_name(leader)))
        return self._share_charts[key]

    def _looks_by_name(self, leader: str) -> dict[str, ch.Look]:
        """Each archetype's look under its latest name, the name the trend charts use."""
        return {self._latest_name(slug): look for slug, look in self.s.looks.get(leader, {}).items()}

    def _map_budgets(self, season: str) -> dict[str, int]:
        """Map points each leader of a season may draw (see :data:`SEASON_MAP_POINTS`)."""
        sizes = {r.leader: len(r.map_points) if r.map_points is not None else 0
                 for r in self.s.results if r.season == season}
        total = sum(sizes.values())
        if total <= SEASON_MAP_POINTS:
            return sizes
        return {k: min(n, max(MIN_MAP_POINTS, SEASON_MAP_POINTS * n // total)) for k, n in sizes.items()}

    def _thin_map(self, r: PartitionResult, budget: int) -> PartitionResult:
        """The result with at most ``budget`` map points, sampled per archetype with the analysis seed."""
        points = r.map_points
        if points is None or len(points) <= budget:
            return r
        keep = stratified_sample(points["archetype"].astype(str).tolist(), budget, int(self.site.cfg["analysis.seed"]))
        return dataclasses.replace(r, map_points=points.iloc[keep].reset_index(drop=True))

    def _map(self, r: PartitionResult, names: dict[str, str], chart_id: str, budget: int | None,
             looks: dict[str, ch.Look], hrefs: dict[str, str]) -> Any:
        """The partition's map chart; made only if its page is rendered, when the rows it is drawn
        from are named by ``rows_key`` (the chart's key then names all it is made from)."""
        def make() -> ch.Chart:
            return ch.map_chart(self._thin_map(r, budget) if budget is not None else r, names, chart_id,
                                looks=looks, hrefs=hrefs)

        if not r.rows_key:
            return make()
        key = json.dumps([r.rows_key, r.season, r.leader, int(r.n_decks), chart_id, budget,
                          int(self.site.cfg["analysis.seed"]), sorted(names.items()),
                          sorted((k, v.colour, v.shape) for k, v in looks.items()), sorted(hrefs.items()),
                          [(g.key, g.name, bool(g.is_other)) for g in r.groups]], ensure_ascii=True)
        return ch.LazyChart(key, make)

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
        map_c = sil_c = None
        if with_charts and clustered:
            names = {a.key: s.name_of(a) for a in r.groups}
            looks = {a.key: s.look_of(a) for a in r.groups}
            back = _rel_root(s.season_href(r.season))  # the map is drawn on the season page
            hrefs = {a.key: back + s.arch_href(a) for a in r.archetypes}
            if r.map_points is not None and len(r.map_points):
                map_c = self._map(r, names, f"map-{lslug}", map_budget, looks, hrefs)
            if r.silhouette:
                sil_c = ch.silhouette_chart(r, f"silhouette-{lslug}")
        k_reason = r.k_reason
        if clustered and r.chosen_k is not None and r.chosen_k != len(r.archetypes):
            # Analysts' notes merged or hid archetypes after the analysis: say so, so the count agrees with the table.
            k_reason += (f" Analysts' notes (merge_into, hide) leave {len(r.archetypes)} of them "
                         f"in the table.")
        return P.LeaderBlock(name=s.leader_name(r.leader), href=s.leader_link(r.leader).href, anchor=f"leader-{lslug}",
                             decks=int(r.n_decks), clustered=clustered, reason=r.reason, rows=rows,
                             chosen_k=len(r.archetypes) if clustered else None, k_reason=k_reason,
                             map_chart=map_c, silhouette_chart=sil_c,
                             share_chart=self._share_chart(r.leader, f"shares-{lslug}") if with_shares else None,
                             notes=tuple(notes),
                             map_data=f"seasons/{s.season_slug[r.season]}/map-{lslug}.js" if map_c is not None else "",
                             other_reason=other_reason(r.k_reason))

    # -- pages
    def front(self) -> None:
        s = self.s
        latest = next((x for x in reversed(s.seasons) if x not in s.emptied), None)
        blocks = tuple(self._block(r, with_charts=False, with_shares=True) for r in s.results if r.season == latest)
        blocks = tuple(sorted(blocks, key=lambda b: (-b.decks, b.name)))
        seasons = tuple(P.SeasonRow(season=s.season_link(x), archetype=None, leader=None, decks=s.decks_in_season[x],
                                    share=1.0, win=None, detail="", current=x == latest) for x in reversed(s.seasons))
        base = self._base("index.html", self.site.cfg["site.title"],
                          self.site.cfg["site.description"] or "Archetypes of each season at a glance.",
                          charts=any(b.share_chart for b in blocks))
        self._emit("index.html", P.FrontPage(
            **base, season=s.season_link(latest) if latest else None,
            season_decks=s.decks_in_season.get(latest, 0) if latest else 0, leaders=blocks,
            seasons=seasons, note=s.note_view(self.site.notes.front), has_results=s.has_results,
            min_games=s.min_games, site_description=self.site.cfg["site.description"]))

    def season(self, season: str, i: int) -> None:
        s = self.s
        budgets = self._map_budgets(season)
        blocks = tuple(sorted((self._block(r, with_charts=True, map_budget=budgets[r.leader])
                               for r in s.results if r.season == season),
                              key=lambda b: (-b.decks, b.name)))
        path = s.season_href(season)
        heads = self._matchup_view(season)
        base = self._base(path, f"Season {season}", f"Archetypes of every {s.word} in season {season}.",
                          charts=any(b.map_chart or b.silhouette_chart for b in blocks) or bool(heads and heads.chart))
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
        cols = ["event", "title"] + (["player"] if self.site.cfg["site.publish_players"] else [])
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

    # -- identity across seasons: names, how sure each link is, the story card by card, notes' seasons
    def _link_of(self, a: Archetype) -> SeasonLink | None:
        h = self.site.history
        if h is None:
            return None
        if self._links is None:
            self._links = {(l.season, l.leader, l.slug): l for l in h.links}
        return self._links.get((a.season, a.leader, a.slug))

    def _identity_fields(self, r: PartitionResult, a: Archetype, before: list[Archetype]) -> dict[str, Any]:
        """The archetype page's former names, match, story and tier words."""
        s = self.s
        name = s.name_of(a)
        former = tuple(dict.fromkeys(s.name_of(x) for x in before if s.name_of(x) != name))
        link = self._link_of(a)
        match = None
        if link is not None and link.kind != "new" and before:
            match = P.MatchView(kind=link.kind, similarity=float(link.similarity),
                                words=st.match_words(float(link.similarity)), season=before[-1].season)
        story = None
        if before:
            prev = before[-1]
            came, went, moved = st.card_changes(prev, a)

            def view(c: st.Change) -> P.CardChange:
                return P.CardChange(card=s.card_link(c.card), share_before=c.share_before, share_after=c.share_after,
                                    copies_before=c.copies_before, copies_after=c.copies_after)
            story = P.StoryView(before=P.Link(text=prev.season, href=s.arch_href(prev)),
                                came_in=tuple(map(view, came)), went_out=tuple(map(view, went)),
                                moved=tuple(map(view, moved)), sources=self._sources(prev, a))
        return {"former_names": former, "match": match, "story": story, "tiers": tier_words()}

    def _result_of(self, season: str, leader: str) -> PartitionResult | None:
        for r in self.s.results:
            if r.season == season and r.leader == leader:
                return r
        return None

    def _flow(self, before: PartitionResult, after: PartitionResult) -> dict[str, dict[str, float]]:
        key = (before.season, after.season, before.leader)
        if key not in self._flows:
            self._flows[key] = st.flows(before, after, self.site.data.cards)
        return self._flows[key]

    def _sources(self, prev: Archetype, a: Archetype) -> tuple[tuple[P.Link, float], ...]:
        """Earlier archetypes whose decks the later season's rule places in ``a``: each with the
        share of ``a``'s placed decks it gives (placed decks weighed by the earlier shares)."""
        before, after = self._result_of(prev.season, a.leader), self._result_of(a.season, a.leader)
        if before is None or after is None:
            return ()
        flow = self._flow(before, after)
        into = {b.key: b.share * flow.get(b.key, {}).get(a.key, 0.0) for b in before.archetypes}
        total = sum(into.values())
        if total <= 0:
            return ()
        by_key = {b.key: b for b in before.archetypes}
        out = sorted(((k, v / total) for k, v in into.items() if v / total >= 0.01), key=lambda t: (-t[1], t[0]))
        return tuple((self.s.arch_link(by_key[k]), v) for k, v in out)

    def _flow_tables(self, leader: str) -> tuple[P.FlowTable, ...]:
        s = self.s
        mine = [r for r in s.results if r.leader == leader and r.archetypes]
        out = []
        for before, after in zip(mine, mine[1:]):
            flow = self._flow(before, after)
            if not flow:
                continue
            later = list(after.archetypes)
            columns = tuple(s.name_of(b) for b in later) + ("Other decks",)
            rows = tuple(P.FlowRow(archetype=s.arch_link(a), share=float(a.share),
                                   to=tuple((col, flow.get(a.key, {}).get(key, 0.0))
                                            for col, key in zip(columns, [b.key for b in later] + [OTHER_KEY])))
                         for a in before.archetypes if a.key in flow)
            out.append(P.FlowTable(season=before.season, next=after.season, columns=columns, rows=rows))
        return tuple(out)

    def _profiles_of(self, slug: str) -> list[tuple[str, dict[str, float]]]:
        return [(x.season, x.profile) for x in self._seasons_of(slug)]

    def _season_note(self, a: Archetype, note: Note | None) -> P.NoteView | None:
        """The note as shown on ``a``'s page: with the season it was written for, when another,
        and the cards it names that ``a`` no longer plays."""
        view = self.s.note_view(note)
        if view is None or note is None:
            return view
        written = note.season if note.season and note.season != a.season else ""
        stale = stale_cards(note, self._profiles_of(self.s.slug_of(a)), a.season)
        return dataclasses.replace(view, written_for=written, stale_cards=stale)

    def _stale_note_findings(self) -> list[Finding]:
        """A ``note-stale`` warning for each note naming a card its archetype no longer plays in its latest season."""
        out = []
        for slug in sorted(self.s.by_slug):
            note = self.s.note_of(self._seasons_of(slug)[-1])
            if note is None:
                continue
            profiles = self._profiles_of(slug)
            latest = profiles[-1][0]
            gone = stale_cards(note, profiles, latest)
            if gone:
                written = f" (written for {note.season})" if note.season else ""
                out.append(Finding("note-stale", f"{note.path}: the note{written} names {', '.join(gone)}, which "
                                   f"archetype '{slug}' no longer plays in {latest}; update the note or add "
                                   f"'season: <season>' to its front matter", season=latest))
        return out

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
            best = sorted((m for m in tested if m.rate > 0.5), key=lambda m: (-m.rate, m.opponent.text))[:MATCHUPS_SHOWN]
            worst = sorted((m for m in tested if m.rate < 0.5), key=lambda m: (m.rate, m.opponent.text))[:MATCHUPS_SHOWN]
            extra = dict(matchups_best=tuple(best), matchups_worst=tuple(worst),
                         matchups_small=sum(1 for m in mine if m.small), has_matchups=True,
                         matchups_min_games=int(self.site.cfg["matchups.min_games"]))
        else:
            extra = {}
        others = sorted(((cosine(a.profile, b.profile), b) for b in r.archetypes if b.key != a.key),
                        key=lambda t: (-t[0], t[1].key))
        compare = []
        for sim, b in others:
            first, second = (a, b) if _key_rank(a) < _key_rank(b) else (b, a)
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
        more_a = [c for c in sorted(cards, key=lambda c: (-gap[c], c)) if gap[c] >= COMPARE_GAP][:COMPARE_SHOWN]
        more_b = [c for c in sorted(cards, key=lambda c: (gap[c], c)) if -gap[c] >= COMPARE_GAP][:COMPARE_SHOWN]
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
            first, second = (a, b) if _key_rank(a) < _key_rank(b) else (b, a)
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
            min_games = int(self.site.cfg["matchups.min_games"])
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
        min_games = int(self.site.cfg["matchups.min_games"])
        rank = {label: i for i, label in enumerate(order)}
        rows = sorted(rows, key=lambda m: (rank.get(m.archetype.text, len(rank)), rank.get(m.opponent.text, len(rank))))
        chart = ch.matchup_chart(
            [{"archetype": m.archetype.text, "opponent": m.opponent.text, "win_rate": m.rate, "low": m.low,
              "high": m.high, "games": m.games, "draws": m.draws, "small": m.small, "mirror": m.mirror} for m in rows],
            [o for o in order if any(m.archetype.text == o for m in rows)],
            f"matchups-{self.s.season_slug[season]}", min_games) if rows else None
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
            min_games = int(self.site.cfg["matchups.min_games"])
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
        rows, win_rows = [], []
        for r in mine:
            for a in sorted(r.groups, key=lambda a: (a.is_other, -a.n_decks, a.key)):
                if a.n_decks == 0:
                    continue
                w = win_rate(a.wins, a.losses, s.min_games)
                rows.append(P.SeasonRow(season=s.season_link(a.season), archetype=None if a.is_other else s.arch_link(a),
                                        leader=None, decks=int(a.n_decks), share=float(a.share), win=w,
                                        detail="" if not a.is_other else "decks that fit no archetype", current=False))
                if w is not None and not a.is_other:
                    win_rows.append({"season": a.season, "archetype": self._latest_name(s.slug_of(a)), "win_rate": w.rate, "low": w.low,
                                     "high": w.high, "games": w.games, "small": w.small})
        lslug = s.leader_slug[leader]
        share_c = self._share_chart(leader, f"shares-{lslug}")
        # The seasons step's rows (after overrides) when given, else the same rows made here.
        # Lines are named by each slug's latest name, as on the share chart.
        given = (self.site.trends or {}).get(leader) or {}
        trend_rows = win_rows
        if isinstance(given, dict) and given.get("winrates"):
            trend_rows = [{**row, "archetype": self._latest_name(row["slug"]) if row.get("slug") in s.by_slug
                           else row["archetype"]} for row in given["winrates"]]
        trend_c = (ch.winrate_chart(trend_rows, f"winrate-{lslug}", looks=self._looks_by_name(leader),
                                    order=ch.latest_share_order(self._share_rows(leader), s.seasons))
                   if trend_rows else None)
        path = s.leader_link(leader).href
        name = s.leader_name(leader)
        base = self._base(path, name, f"Archetypes of {name}, season by season.",
                          charts=share_c is not None or trend_c is not None)
        self._emit("leader.html", P.LeaderPage(**base, name=name, seasons=tuple(rows), share_chart=share_c,
                                               trend_chart=trend_c, min_games=s.min_games,
                                               flows=self._flow_tables(leader), tiers=tier_words()))

    def method(self) -> None:
        cfg = self.site.cfg
        keys = ("analysis.by_leader", "analysis.k_max", "analysis.min_decks", "analysis.min_share",
                "analysis.inclusion_min_share", "analysis.map_points", "analysis.link_threshold", "trends.min_games",
                "analysis.seed")
        settings = tuple((k, str(cfg[k]).lower() if isinstance(cfg[k], bool) else str(cfg[k])) for k in keys)
        base = self._base("method.html", "How it works", "How the archetypes, maps and tables are made, in plain words.")
        self._emit("method.html", P.MethodPage(**base, note=self.s.note_view(self.site.notes.method),
                                               settings=settings, min_games=self.s.min_games, tiers=tier_words()))

    def not_found(self) -> None:
        """404.html. Hosts serve it at the missing page's own depth, so links
        relative to the page would point nowhere: with site.base_url every
        link and asset is absolute; without it links start at the host's root
        ('/') and the stylesheet is written into the page (allowed by its hash
        in the CSP), so it looks right at any depth and from file:// too. It
        has the search box: its scripts come from the root as well."""
        base_url = self.site.cfg["site.base_url"].strip()
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
        files, warns = sitemap_files(self.site.cfg["site.base_url"], pages)
        self.out.update(files)
        self.warnings.extend(warns)
        for path, body in self.assets.items():
            self.out.setdefault(path, body)
        return dict(sorted(self.out.items())), self.warnings


def other_reason(k_reason: str) -> str:
    """The clauses of a partition's ``k_reason`` that say what its other decks are: how many decks fit
    no archetype, and the groups given up (whose decks are among them)."""
    parts = [p.strip().rstrip(".") for p in re.split(r"(?<=\.)\s+|;\s+", k_reason or "")]
    keep = [p for p in parts if "fit no archetype" in p or "given up" in p]
    return ("; ".join(keep) + ".") if keep else ""


def tier_words() -> tuple[tuple[str, str], ...]:
    """(tier word, what it means) for every tier of :data:`sitegen.model.TIERS`."""
    out = []
    for i, (name, least) in enumerate(TIERS):
        if i == 0:
            out.append((name, f"played by {least:.0%} of the decks or more"))
        else:
            out.append((name, f"played by {least:.0%} or more and under {TIERS[i - 1][1]:.0%}" if least > 0
                        else f"played by under {TIERS[i - 1][1]:.0%} of the decks"))
    return tuple(out)


def render_site(site: SiteInput) -> tuple[dict[str, bytes], list[Finding]]:
    """Every output file of the site (path from the root -> bytes) and the warnings found."""
    return Renderer(site).run()
