"""One archetype, one identity: names that hold across seasons, identity on planted seasons,
the story of an archetype card by card, notes that know their season, texts that say the numbers."""
from __future__ import annotations

import csv
import dataclasses
import io
import sys
from html.parser import HTMLParser
from pathlib import Path


from _seasons_helpers import arch, cards, result
from _site_helpers import small_site
from sitegen.analysis.describe import archetype_name
from sitegen.analysis.seasons import link_seasons, name_cards
from sitegen.model import TIERS, SignatureCard
from sitegen.site.notes import load_notes
from sitegen.site.render import render_site, tier_words
from sitegen.site.templating import other_reason

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "bench"))
import stress  # noqa: E402


# -- names -----------------------------------------------------------------------------------

def _named(a, top: list[str]):
    """``a`` with signature ``top`` and the default name made of its first two cards."""
    sig = tuple(SignatureCard(c, 0.8, 0.9, 0.1) for c in top)
    return dataclasses.replace(a, signature=sig, name=archetype_name(a.leader, sig, 2, ""))


def _two_seasons(later_top: list[str], later_profile: dict[str, float] | None = None):
    s1 = result("S1", "Vessa", [
        _named(arch("a1", "alpha", cards("a", 10), season="S1"), [f"a {i}" for i in range(8)]),
        _named(arch("a2", "beta", cards("b", 10), season="S1"), [f"b {i}" for i in range(8)]),
    ])
    s2 = result("S2", "Vessa", [
        _named(arch("a1", "alpha-next", later_profile or cards("a", 10, 0.85), season="S2"), later_top),
        _named(arch("a2", "beta", cards("b", 10), season="S2"), [f"b {i}" for i in range(8)]),
    ])
    return link_seasons([s1, s2], ["S1", "S2"], 0.15)


def test_name_is_kept_while_still_played_by_most_decks_though_out_of_the_top_signature():
    # Neither name card is in the later top 8, but both are still played by 85% of its decks
    # and by no other archetype of the leader.
    out, _ = _two_seasons(["a 5", "a 4", "a 3", "a 2", "x 1", "x 2", "x 3", "x 4"])
    assert out[1].archetypes[0].name == "Vessa · a 0 & a 1"


def test_name_is_kept_while_half_its_cards_stay_in_the_top_signature():
    # The earlier name is "Vessa · a 0 & a 1"; "a 1" is still 8th of the later signature.
    out, _ = _two_seasons(["a 5", "a 4", "a 3", "a 2", "x 1", "x 2", "x 3", "a 1"])
    assert out[1].archetypes[0].slug == "alpha"
    assert out[1].archetypes[0].name == "Vessa · a 0 & a 1"


def test_name_changes_when_its_cards_left_the_signature():
    # "a 0" and "a 1" left the signature and are no longer played by half the decks.
    profile = {f"a {i}": 0.85 for i in range(2, 10)} | cards("x", 4) | {"a 0": 0.3, "a 1": 0.1}
    out, _ = _two_seasons(["a 5", "a 4", "a 3", "a 2", "x 1", "x 2", "x 3", "x 0"], profile)
    later = out[1].archetypes[0]
    assert later.slug == "alpha" and later.name == "Vessa · a 5 & a 4"
    assert name_cards(later) == ("a 5", "a 4")


def test_a_name_never_passes_to_a_second_lineage():
    # A new archetype whose default name another lineage of the leader holds takes one card more.
    s1 = result("S1", "Vessa", [_named(arch("a1", "alpha", cards("a", 10), season="S1"), ["p", "q", "a 0"])])
    s2 = result("S2", "Vessa", [
        _named(arch("a1", "alpha", cards("a", 10), season="S2"), ["p", "q", "a 0"]),
        _named(arch("a2", "gamma", cards("g", 10), season="S2"), ["p", "q", "g 0"]),
    ])
    out, _ = link_seasons([s1, s2], ["S1", "S2"], 0.15)
    names = [a.name for a in out[1].archetypes]
    assert names == ["Vessa · p & q", "Vessa · p, q & g 0"]


# -- identity on planted seasons ---------------------------------------------------------------

def test_identity_on_a_small_planted_set():
    # Planted truth of our own (bench/stress.py planted_seasons: archetype ids stable while an
    # archetype continues, split and merge events recorded); development settings only.
    settings = dataclasses.replace(stress.DEV_GRID[0].settings, sizes=(400,))
    score = stress.run_identity(settings, 3, threshold=0.15)
    assert score.continuing >= 5
    assert score.page_share >= 0.95
    assert score.name_share >= 0.9
    assert score.shared_pages == 0


def test_identity_score_counts_a_lost_page():
    # The metric must see a broken link: linking with a floor no pair reaches gives every
    # continuing archetype a new page.
    settings = dataclasses.replace(stress.DEV_GRID[0].settings, sizes=(300,))
    planted = stress.planted_seasons(settings, 2)
    results, _ = stress.run_seasons(planted)
    broken, _ = link_seasons(results, planted.seasons, 1.01)
    score = stress.identity_score(planted, broken)
    assert score.continuing >= 2 and score.kept_page == 0 and score.page_share == 0.0


# -- pages -------------------------------------------------------------------------------------

class _Tables(HTMLParser):
    """Every table's caption and rows (cell texts), and every element's text by class."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: dict[str, list[list[str]]] = {}
        self.by_class: dict[str, list[str]] = {}
        self._caption = None
        self._rows: list[list[str]] | None = None
        self._cell: list[str] | None = None
        self._in_caption = False
        self._classes: list[tuple[str, str, list[str]]] = []

    def handle_starttag(self, tag, attrs):
        cls = dict(attrs).get("class") or ""
        self._classes.append((tag, cls, []))
        if tag == "table":
            self._rows, self._caption = [], ""
        elif tag == "caption":
            self._in_caption = True
        elif tag == "tr" and self._rows is not None:
            self._rows.append([])
        elif tag in ("td", "th") and self._rows is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag == "caption":
            self._in_caption = False
        elif tag in ("td", "th") and self._cell is not None:
            self._rows[-1].append(" ".join("".join(self._cell).split()))
            self._cell = None
        elif tag == "table" and self._rows is not None:
            self.tables[self._caption.strip()] = self._rows
            self._rows = None
        while self._classes:
            t, cls, text = self._classes.pop()
            for c in cls.split():
                self.by_class.setdefault(c, []).append(" ".join("".join(text).split()))
            if self._classes:
                self._classes[-1][2].extend(text)
            if t == tag:
                break

    def handle_data(self, data):
        if self._in_caption:
            self._caption += data
        if self._cell is not None:
            self._cell.append(data)
        if self._classes:
            self._classes[-1][2].append(data)


def _parse(body: bytes) -> _Tables:
    p = _Tables()
    p.feed(body.decode("utf-8"))
    return p


def _pct(x: float) -> str:
    return f"{x * 100:.1f}%"


def test_card_changes_equal_the_difference_of_the_exported_card_tables(tmp_path):
    files, _ = render_site(small_site(tmp_path))
    tables = {}
    for season in ("s1", "s2"):
        rows = list(csv.DictReader(io.StringIO(files[f"archetypes/wyrm-burn/{season}-cards.csv"].decode("utf-8"))))
        assert rows, "the export lists the card table"
        tables[season] = {r[next(k for k in r if k.lower() == "card")]: r for r in rows}
    page = _parse(files["archetypes/wyrm-burn/s2.html"])
    came = [r[0] for r in page.tables.get("Came in, S1 to S2", [])[1:]]
    went = page.tables.get("Went out, S1 to S2", [])[1:]
    # The set difference of the two exported tables (computed here, with Python's set operations).
    assert sorted(came) == sorted(set(tables["s2"]) - set(tables["s1"]))
    assert sorted(r[0] for r in went) == sorted(set(tables["s1"]) - set(tables["s2"])) == ["Cinder Vow"]
    share_col = next(k for k in tables["s1"]["Cinder Vow"] if "share" in k.lower())
    assert went[0][1] == _pct(float(tables["s1"]["Cinder Vow"][share_col]))
    assert went[0][2] == _pct(0.0)


def test_stale_note_gets_its_warning_and_written_for_label(tmp_path):
    content = tmp_path / "content"
    (content / "archetypes").mkdir(parents=True)
    (content / "archetypes" / "wyrm-burn.md").write_text(
        "---\nseason: S1\n---\nPlay Cinder Vow early and keep Ember Wyrm for the end.\n", encoding="utf-8")
    files, warnings = render_site(small_site(tmp_path, content=content))
    stale = [w for w in warnings if w.kind == "note-stale"]
    assert len(stale) == 1 and "Cinder Vow" in stale[0].message and "Ember Wyrm" not in stale[0].message
    later = _parse(files["archetypes/wyrm-burn/s2.html"]).by_class
    assert later.get("note-season") == ["Written for S1: it may not hold for this season."]
    assert "Cinder Vow" in later.get("note-stale", [""])[0]
    earlier = _parse(files["archetypes/wyrm-burn/s1.html"]).by_class
    assert "note-season" not in earlier and "note-stale" not in earlier


def test_note_without_season_has_no_label(tmp_path):
    content = tmp_path / "content"
    (content / "archetypes").mkdir(parents=True)
    (content / "archetypes" / "wyrm-burn.md").write_text("Keep Ember Wyrm for the end.\n", encoding="utf-8")
    files, warnings = render_site(small_site(tmp_path, content=content))
    assert not [w for w in warnings if w.kind == "note-stale"]
    assert "note-season" not in _parse(files["archetypes/wyrm-burn/s2.html"]).by_class
    assert load_notes(content).archetypes["wyrm-burn"].season == ""


def test_match_strength_is_shown_in_words_and_number(tmp_path):
    files, _ = render_site(small_site(tmp_path))
    text = _parse(files["archetypes/wyrm-burn/s2.html"]).by_class["match"][0]
    # small_site links wyrm-burn S1 -> S2 with similarity 0.9.
    assert text.startswith("close match: card-profile similarity 0.90")


def test_tier_words_say_the_thresholds_of_TIERS(tmp_path):
    words = dict(tier_words())
    assert list(words) == [name for name, _ in TIERS]
    assert words["mainstay"] == "played by 90% of the decks or more"
    assert words["regular"] == "played by 50% or more and under 90%"
    files, _ = render_site(small_site(tmp_path))
    for page in ("archetypes/wyrm-burn/s1.html", "method.html"):
        body = files[page].decode("utf-8")
        assert "played by 50% or more and under 90%" in body, page


def test_other_reason_keeps_the_numbers_of_k_reason():
    k_reason = ("3 archetypes: dense groups of decks, each with cards of its own; 1 group with fewer than 6 decks "
                "(2% of the partition, setting analysis.min_share) was given up. 40 decks of 300 (13%) fit no "
                "archetype: each is no closer to its nearest archetype than 49 in 50 random decks of this "
                "partition would be, among them decks of the groups given up.")
    text = other_reason(k_reason)
    assert "1 group with fewer than 6 decks" in text and "40 decks of 300 (13%) fit no archetype" in text
    assert "dense groups" not in text
    assert other_reason("2 archetypes: dense groups of decks, each with cards of its own.") == ""
