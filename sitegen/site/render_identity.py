"""Archetype pages across seasons: names, how sure each season link is, the story card by card, notes' seasons.

A part of :class:`sitegen.site.render.Renderer` (it mixes this class in), kept apart because it is one concern:
what the page says about the archetype's other seasons.
"""
from __future__ import annotations

import dataclasses
from typing import Any

from ..model import OTHER_KEY, Archetype, Finding, PartitionResult
from ..model import Link as SeasonLink
from . import pages as P
from . import render as R
from . import story as st
from .notes import Note, stale_cards


class IdentityPages:
    """The Renderer's methods for an archetype's identity across seasons (see the module notes)."""

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
        return {"former_names": former, "match": match, "story": story, "tiers": R.tier_words()}

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
