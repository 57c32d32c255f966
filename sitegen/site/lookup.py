"""What every page asks of the built data: names, slugs, links and rows of archetypes, seasons and leaders.

:class:`SiteLookup` is made once per build from the :class:`~sitegen.site.render.SiteInput` and read by every
page method of :class:`~sitegen.site.render.Renderer` (as ``self.s``), with the build's
:class:`~sitegen.site.settings.SiteSettings`; the small pieces beside it are shared
by those methods.
"""
from __future__ import annotations

import base64
import math
from collections import defaultdict
from typing import TYPE_CHECKING, Any

from ..analysis.stats import wilson
from ..model import ALL_LEADERS, Archetype
from ..slugs import SlugSet
from . import charts as ch
from . import pages as P
from .notes import Note
from .templating import firmness_words

if TYPE_CHECKING:
    from .render import SiteInput
    from .settings import SiteSettings


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


class SiteLookup:
    """Lookup tables shared by every page: slugs, names, archetypes by season."""

    def __init__(self, site: SiteInput, settings: SiteSettings) -> None:
        self.site = site
        self.settings = settings
        self.min_games = settings.min_games
        self.word = settings.leader_word
        self.words = settings.leader_word_plural
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
        content = self.settings.content
        try:
            source = str(note.path.relative_to(content)) if content is not None else note.path.name
        except ValueError:
            source = note.path.name
        return P.NoteView(html=note.html, author=note.author, source=source.replace("\\", "/"))
