"""A small hand-made site for the page tests: two seasons, two leaders.

Everything here is invented and planted: the numbers on the pages are
whatever we wrote below, so tests can compare pages with these values. The
``hostile`` variant puts markup, script-closing text, quotes, RTL marks and a
spreadsheet formula into names, ids and notes.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from sitegen import config
from sitegen.model import (OTHER_KEY, Archetype, CardLine, DeckData, DeckLine, Finding, History, Link,
                           PartitionResult, SignatureCard)
from sitegen.resources import default_templates_dir
from sitegen.site.notes import Notes, load_notes
from sitegen.site.render import SiteInput

PLAYER = "Quillon Marbury-Test"
XSS_IMG = "<img src=x onerror=alert(1)>"
XSS_SCRIPT = "</script><script>alert(1)</script>"
QUOTES = "\"double\" & 'single'"
RTL = "\u202eevil\u202c name"
FORMULA = "=HYPERLINK(\"http://x\")"


def _arch(season: str, leader: str, key: str, slug: str, name: str, cards: list[str], n: int, total: int,
          wins: int = 0, losses: int = 0, is_other: bool = False, medoid: str = "d1") -> Archetype:
    inclusion = tuple(
        CardLine(card=c, card_type="Unit" if i % 2 == 0 else "Spell", share=round(1.0 - 0.15 * i, 4),
                 mean_copies=round(3.0 - 0.25 * i, 2), at_1=round(0.05 * i, 4), at_2=0.25, at_3_plus=round(0.7 - 0.05 * i, 4),
                 tier="mainstay" if i == 0 else "regular")
        for i, c in enumerate(cards))
    medoid_lines = tuple(DeckLine(card_type="Unit" if i % 2 == 0 else "Spell", card=c, quantity=3 - (i % 2))
                         for i, c in enumerate(cards))
    return Archetype(
        key=key, slug=slug, name=name, season=season, leader=leader, n_decks=n, share=n / total,
        signature=tuple(SignatureCard(card=c, score=1.0, rate_in=0.9, rate_out=0.1) for c in cards[:2]),
        medoid_deck_id=medoid, medoid=medoid_lines, medoid_total=sum(x.quantity for x in medoid_lines),
        inclusion=inclusion, profile={c: 1.0 - 0.1 * i for i, c in enumerate(cards)}, wins=wins, losses=losses,
        is_other=is_other)


def _result(season: str, leader: str, archetypes: list[Archetype], other: Archetype | None, deck_ids: list[str],
            total: int) -> PartitionResult:
    keys = [a.key for a in archetypes] + ([OTHER_KEY] if other else [])
    rng = np.random.default_rng(0)
    assign = pd.DataFrame({
        "deck_id": deck_ids,
        "archetype": [keys[i % len(keys)] for i in range(len(deck_ids))],
        "distance": rng.random(len(deck_ids)).round(3),
        "x": rng.normal(size=len(deck_ids)).round(3),
        "y": rng.normal(size=len(deck_ids)).round(3),
    })
    points = assign[["deck_id", "archetype", "x", "y"]].assign(cards="some cards")
    return PartitionResult(season=season, leader=leader, n_decks=total, status="clustered", reason="",
                           chosen_k=len(archetypes), silhouette=((2, 0.41), (3, 0.38)),
                           k_reason="k = 2 had the highest mean silhouette.", archetypes=tuple(archetypes),
                           other=other, assignments=assign, map_points=points, inclusion=())


def small_site(tmp: Path, *, hostile: bool = False, base_url: str = "", publish_players: bool = False,
               templates: Path | None = None, content: Path | None = None,
               history: bool = True) -> SiteInput:
    """Two seasons (S1, S2); leader Vessa clustered in both, leader Orrin too small in S2."""
    weird = f"{XSS_IMG} {XSS_SCRIPT} {QUOTES} {RTL}" if hostile else ""
    card_a = f"Ember Wyrm{(' ' + XSS_IMG) if hostile else ''}"
    card_b = FORMULA if hostile else "Tide Caller"
    leader = f"Vessa{(' ' + XSS_SCRIPT) if hostile else ''}"
    name1 = f"Wyrm Burn{(' ' + weird) if hostile else ''}"
    cards1 = [card_a, card_b, "Ash Drake", "Cinder Vow"]
    cards2 = ["Glass Tortoise", "Moss Shield", "Ash Drake", card_b]
    medoid = f"{'-cmd|calc' if hostile else 'd1'}"
    deck_ids = [medoid] + [f"d{i}" for i in range(2, 21)]
    s1 = _result("S1", leader, [
        _arch("S1", leader, "a1", "wyrm-burn", name1, cards1, 9, 20, wins=30, losses=20, medoid=medoid),
        _arch("S1", leader, "a2", "tortoise-wall", "Tortoise Wall", cards2, 8, 20, wins=300, losses=250, medoid="d2")],
        _arch("S1", leader, OTHER_KEY, OTHER_KEY, "Other decks", ["Moss Shield"], 3, 20, is_other=True, medoid="d3"),
        deck_ids, 20)
    s2_ids = [f"e{i}" for i in range(1, 21)]
    s2 = _result("S2", leader, [
        _arch("S2", leader, "a1", "wyrm-burn", name1, cards1[:3], 12, 20, wins=10, losses=5, medoid="e1"),
        _arch("S2", leader, "a2", "tortoise-wall", "Tortoise Wall", cards2, 8, 20, medoid="e2")], None, s2_ids, 20)
    orrin = PartitionResult(season="S2", leader="Orrin", n_decks=4, status="too-small",
                            reason="4 decks, fewer than analysis.min_decks (30)", chosen_k=None, silhouette=(),
                            k_reason="", archetypes=(), other=None,
                            assignments=pd.DataFrame(columns=["deck_id", "archetype", "distance", "x", "y"]),
                            map_points=pd.DataFrame(columns=["deck_id", "archetype", "x", "y", "cards"]), inclusion=())
    orrin_ids = ["o1", "o2", "o3", "o4"]
    rows = ([(d, "S1", leader) for d in deck_ids] + [(d, "S2", leader) for d in s2_ids]
            + [(d, "S2", "Orrin") for d in orrin_ids] + [("x1", "S2", leader)])
    decks = pd.DataFrame(rows, columns=["deck_id", "season", "leader"])
    decks["wins"] = pd.array([1] * len(decks), dtype="Int64")
    decks["losses"] = pd.array([1] * len(decks), dtype="Int64")
    decks["event"] = "Harbour Cup" if not hostile else f"Cup {XSS_IMG}"
    decks["player"] = PLAYER
    decks["title"] = ""
    decks = decks.sort_values("deck_id").reset_index(drop=True)
    cards = pd.DataFrame({"deck_id": [medoid], "card": [card_a], "quantity": [3]})
    data = DeckData(decks=decks, cards=cards, card_info=None, seasons=("S1", "S2"),
                    findings=(Finding("copies-over-limit", "4 copies of Ash Drake; the limit is 3", "d5", "S1", leader),),
                    excluded=frozenset({"x1"}))
    hist = None
    if history:
        hist = History(
            links=(Link("S1", leader, "wyrm-burn", "new"), Link("S1", leader, "tortoise-wall", "new"),
                   Link("S2", leader, "wyrm-burn", "continues", ("wyrm-burn",), 0.9),
                   Link("S2", leader, "tortoise-wall", "continues", ("tortoise-wall",), 0.95)),
            last_seen={"wyrm-burn": "S2", "tortoise-wall": "S2"},
            seasons_of={"wyrm-burn": ("S1", "S2"), "tortoise-wall": ("S1", "S2")})
    raw: dict = {"site": {"publish_players": publish_players}, "trends": {"min_games": 100}}
    if base_url:
        raw["site"]["base_url"] = base_url
    if hostile:
        raw["site"]["title"] = f"Guide {XSS_SCRIPT}"
    cfg = config.from_dict(raw, root=tmp)
    notes = load_notes(content) if content is not None else Notes()
    dirs = tuple(d for d in (templates, default_templates_dir()) if d is not None)
    return SiteInput(cfg=cfg, data=data, results=(s2, orrin, s1), history=hist, notes=notes,
                     findings=(Finding("deck-too-small", "38 cards, fewer than 40", "o2", "S2", "Orrin"),),
                     templates_dirs=dirs)


def write_notes(folder: Path, *, hostile: bool = False) -> Path:
    """A content folder: front note, method note, a note for wyrm-burn and an orphan."""
    (folder / "archetypes").mkdir(parents=True, exist_ok=True)
    (folder / "index.md").write_text("Welcome to the **guide**.\n", encoding="utf-8")
    (folder / "method.md").write_text("Numbers are recomputed each build.\n", encoding="utf-8")
    body = "A fast deck.\n\n| a | b |\n|---|---|\n| 1 | 2 |\n"
    if hostile:
        body += f"\n{XSS_IMG}\n\n<script>alert(1)</script>\n\n[click](javascript:alert(1))\n"
    (folder / "archetypes" / "wyrm-burn.md").write_text(
        "---\ntitle: Wyrm Rush\nsummary: Burns fast.\nauthor: Ada\n---\n" + body, encoding="utf-8")
    (folder / "archetypes" / "no-such-deck.md").write_text("Nothing.\n", encoding="utf-8")
    return folder
