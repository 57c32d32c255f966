"""Template contexts: one frozen dataclass per page kind, every field documented.

A template sees the fields of its page's dataclass as top-level names (the
environment is strict, so a misspelt name fails the build). Links are stored
relative to the site root (``seasons/s1/index.html``); templates put the
page's ``root`` (``../../``) in front, so every link works from any folder
and from ``file://``. Every field carries ``metadata={"help": ...}``, so a
site that overrides a template can read here what it may use; a test fails
if one is missing.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from markupsafe import Markup


def _f(help: str, **kw: Any) -> Any:
    return field(metadata={"help": help}, **kw)


# -- pieces shared by several pages

@dataclass(frozen=True, kw_only=True)
class Link:
    """A link: its text and its path from the site root."""

    text: str = _f("Text of the link.")
    href: str = _f("Path of the target from the site root; write {{ root }}{{ href }}.")


@dataclass(frozen=True, kw_only=True)
class WinRate:
    """A win rate with its 95% Wilson interval and a small-sample flag."""

    wins: int = _f("Games won.")
    games: int = _f("Games played (wins plus losses).")
    rate: float = _f("Wins divided by games.")
    low: float = _f("Lower end of the 95% Wilson score interval.")
    high: float = _f("Upper end of the 95% Wilson score interval.")
    small: bool = _f("True when games are fewer than trends.min_games: shown with a warning and never ranked.")


@dataclass(frozen=True, kw_only=True)
class ArchetypeRow:
    """One row of an archetype table (an archetype or the other-decks group)."""

    name: str = _f("Name shown (the analyst's title if a note gives one).")
    href: str = _f("Path of its page from the site root; empty for the other-decks group.")
    decks: int = _f("Decks in it.")
    share: float = _f("Its share of its partition's decks (0 to 1).")
    win: WinRate | None = _f("Its win rate, or None when the data holds no results.")
    signature: tuple[Link, ...] = _f("Signature cards, linked to their card pages.")
    summary: str = _f("The analyst's one-line summary, or empty.")
    is_other: bool = _f("True for the group of decks that fit no archetype.")
    stability: float | None = _f("How firmly it holds together: mean Jaccard index with its best match when the "
                                 "archetype rule is rerun on random halves of the partition (None: not measured).",
                                 default=None)
    firmness: str = _f("That in a reader's words: clear, loose or weak group (empty when not measured).", default="")


@dataclass(frozen=True, kw_only=True)
class LeaderBlock:
    """One leader's part of a season: its archetypes, charts and data-quality notes."""

    name: str = _f("The leader's name.")
    href: str = _f("Path of the leader's page from the site root.")
    anchor: str = _f("Id of the leader's section on the season page.")
    decks: int = _f("Decks of this leader in the season.")
    clustered: bool = _f("False when the partition was too small to cluster.")
    reason: str = _f("Why it was not clustered (empty when it was).")
    rows: tuple[ArchetypeRow, ...] = _f("Archetypes by share, largest first, then the other-decks group.")
    chosen_k: int | None = _f("Number of archetypes chosen, or None.")
    k_reason: str = _f("How that number was chosen, in plain words.")
    map_chart: Any = _f("Chart object of the deck map, or None.")
    share_chart: Any = _f("Chart of this leader's archetype shares across seasons (front page), or None.")
    notes: tuple[str, ...] = _f("Data-quality notes for this leader and season (plain text).")
    map_data: str = _f("Path from the site root of the script holding the map's points (loaded when the map is "
                       "drawn), or empty.", default="")
    other_reason: str = _f("What the other-decks group is in this partition, in numbers (from k_reason), or empty.",
                           default="")


@dataclass(frozen=True, kw_only=True)
class CardRow:
    """One row of a card-inclusion table."""

    card: Link = _f("The card, linked to its page.")
    card_type: str = _f("Card type, empty when no card table was given.")
    share: float = _f("Share of the archetype's decks that play it.")
    mean_copies: float = _f("Mean copies among the decks that play it.")
    at_1: float = _f("Share of decks playing exactly 1 copy.")
    at_2: float = _f("Share of decks playing exactly 2 copies.")
    at_3_plus: float = _f("Share of decks playing 3 or more copies.")
    tier: str = _f("Inclusion tier: mainstay, regular or occasional.")


@dataclass(frozen=True, kw_only=True)
class CardResultRow:
    """One row of an archetype's card results: its decks playing a card against those that do not."""

    card: Link = _f("The card, linked to its page when it has one.")
    copies: str = _f("Which decks count as playing it: 'any', '1', '2' or '3+' copies.")
    decks_with: int = _f("Decks playing it so (with results).")
    games_with: int = _f("Their games.")
    rate_with: float = _f("Their win rate (wins / games).")
    decks_without: int = _f("Decks not playing it (with results).")
    games_without: int = _f("Their games.")
    rate_without: float = _f("Their win rate.")
    diff: float = _f("rate_with minus rate_without.")
    low: float = _f("Lower end of the 95% Newcombe interval of the difference.")
    high: float = _f("Upper end of that interval.")
    p_value: float | None = _f("Two-sided Fisher exact test p-value, or None for a small sample.")
    verdict: str = _f("'holds up' (kept by the Benjamini-Hochberg rule), 'could be chance' or 'small sample'.")
    small: bool = _f("True when either side has too few games or decks: flagged, never ranked.")


@dataclass(frozen=True, kw_only=True)
class MatchupRow:
    """One matchup: an archetype's games against one opponent archetype in one season."""

    archetype: Link = _f("The archetype whose win rate this is (its leader in the text).")
    opponent: Link = _f("The opposing archetype (its leader in the text).")
    wins: int = _f("Games the archetype won.")
    losses: int = _f("Games it lost.")
    draws: int = _f("Drawn games: shown, not counted in the win rate.")
    games: int = _f("Won plus lost games.")
    rate: float = _f("wins / games; 0.5 by construction for a mirror.")
    low: float = _f("Lower end of the 95% Wilson interval (equal to rate for a mirror).")
    high: float = _f("Upper end of the 95% Wilson interval (equal to rate for a mirror).")
    small: bool = _f("True when games are fewer than matchups.min_games: greyed, never ranked.")
    mirror: bool = _f("True when the two sides are the same archetype.")


@dataclass(frozen=True, kw_only=True)
class MatchupView:
    """A season's head-to-head results: heat map and table."""

    chart: Any = _f("Chart object of the heat map, or None.")
    rows: tuple[MatchupRow, ...] = _f("Every matchup with games, by archetype then opponent.")
    games: int = _f("Matches counted in the season.")
    draws: int = _f("Of which drawn.")
    skipped: int = _f("Matches of the season left out: a deck in no archetype's partition.")
    min_games: int = _f("Games below which a matchup is greyed (matchups.min_games).")
    download: Link | None = _f("CSV download of the season's matchups, or None.", default=None)
    data: str = _f("Path from the site root of the script holding the heat map's cells (loaded when it is "
                   "drawn), or empty.", default="")


@dataclass(frozen=True, kw_only=True)
class DeckGroup:
    """The cards of one type in a decklist."""

    card_type: str = _f("Card type heading ('Cards' when types are unknown).")
    count: int = _f("Copies of this type in the deck.")
    lines: tuple[tuple[int, Link], ...] = _f("(copies, card link) pairs, by card name.")


@dataclass(frozen=True, kw_only=True)
class SimilarRow:
    """An archetype of the same partition and how alike its card profile is."""

    archetype: Link = _f("The other archetype.")
    similarity: float = _f("Cosine similarity of the two card profiles (0 to 1).")


@dataclass(frozen=True, kw_only=True)
class SeasonRow:
    """One season of an archetype, leader or card history."""

    season: Link = _f("The season, linked to its page.")
    archetype: Link | None = _f("The archetype's page in that season, when there is one.")
    leader: Link | None = _f("The leader, linked to its page, when the row names one.")
    decks: int = _f("Decks counted in the row.")
    share: float = _f("Share of the partition's decks (0 to 1).")
    win: WinRate | None = _f("Win rate, or None without results.")
    detail: str = _f("A few plain words: link kind, copies played and so on.")
    current: bool = _f("True for the row of the page being viewed.")


@dataclass(frozen=True, kw_only=True)
class NoteView:
    """An analyst's note ready to show."""

    html: Markup = _f("The note body as safe HTML (raw HTML in the note is shown as text).")
    author: str = _f("Who wrote it, or empty.")
    source: str = _f("File it came from, relative to the content folder.")
    written_for: str = _f("The season the note was written for, when that is not the page's season; else empty.",
                          default="")
    stale_cards: tuple[str, ...] = _f("Cards the note names that the archetype no longer plays in the page's season.",
                                      default=())


@dataclass(frozen=True)
class MatchView:
    """How an archetype was linked to the season before, and how sure that link is."""

    kind: str = _f("continues, merge, split or new.")
    similarity: float = _f("Card-profile similarity with the archetype it came from (0 to 1).")
    words: str = _f("That similarity in words: close, fair or loose.")
    season: str = _f("The season it was linked to.")


@dataclass(frozen=True)
class CardChange:
    """One card of an archetype's story: its share and usual copies in two seasons (0 where unplayed)."""

    card: Link = _f("The card, linked to its page.")
    share_before: float = _f("Share of the archetype's decks playing it in the earlier season.")
    share_after: float = _f("Share in this season.")
    copies_before: float = _f("Mean copies among decks playing it, earlier season (0 when not listed).")
    copies_after: float = _f("Mean copies, this season (0 when not listed).")


@dataclass(frozen=True)
class StoryView:
    """What changed in an archetype's cards from one season to the next, from its two card tables."""

    before: Link = _f("Its page in the earlier season (text: that season).")
    came_in: tuple[CardChange, ...] = _f("Cards in this season's table and not in the earlier one, most played first.")
    went_out: tuple[CardChange, ...] = _f("Cards in the earlier table and not in this one, most played first.")
    moved: tuple[CardChange, ...] = _f("Cards in both tables whose share or mean copies moved most.")
    sources: tuple[tuple[Link, float], ...] = _f("Archetypes of the earlier season its decks came from, with the share "
                                                  "of its decks each would hold (placed by that season's rule).")


@dataclass(frozen=True)
class FlowRow:
    """One archetype of a season and where its decks would go by the next season's rule."""

    archetype: Link = _f("The archetype in the earlier season.")
    share: float = _f("Its share of the leader's decks that season.")
    to: tuple[tuple[str, float], ...] = _f("(archetype name of the next season or 'Other decks', share of its decks).")


@dataclass(frozen=True)
class FlowTable:
    """How one season's archetypes pass into the next season's, for a leader page."""

    season: str = _f("The earlier season.")
    next: str = _f("The next season.")
    columns: tuple[str, ...] = _f("Names of the next season's archetypes, then 'Other decks'.")
    rows: tuple[FlowRow, ...] = _f("One row per archetype of the earlier season.")


# -- the pages

@dataclass(frozen=True, kw_only=True)
class Page:
    """Fields every page has (used by base.html)."""

    site_title: str = _f("The site's title (site.title).")
    title: str = _f("This page's title.")
    description: str = _f("One line describing the page (meta description).")
    root: str = _f("Path from this page to the site root, '' or ending in '/' (also on <html data-root>).")
    path: str = _f("This page's path from the site root.")
    stylesheets: tuple[str, ...] = _f("Stylesheet paths from the site root.")
    scripts: tuple[str, ...] = _f("Script paths from the site root, in load order (search index first).")
    nav: tuple[Link, ...] = _f("Links of the top navigation.")
    leader_word: str = _f("What the site calls a leader (site.leader_word).")
    leader_word_plural: str = _f("Plural of leader_word.")
    absolute: bool = _f("True when root is absolute (the 404 page: site.base_url, or '/' without it).")
    inline_style: str = _f("CSS written into the page itself, or empty; only the 404 page without site.base_url, "
                           "which cannot know the way to the stylesheet from the depth it is served at.")
    style_hash: str = _f("Base64 SHA-256 of inline_style, allowed by the page's Content-Security-Policy; empty without it.")
    icon: str = _f("The site icon's address as written in the page (root included, or a data: URL), or empty.",
                   default="")
    chart_library: str = _f("Path from the site root of the Vega bundle, which assets/charts.js loads when a chart "
                            "first comes into view (on <html data-chart-library>); empty on pages without charts.",
                            default="")


@dataclass(frozen=True, kw_only=True)
class FrontPage(Page):
    """index.html: the latest season at a glance."""

    season: Link | None = _f("The latest season, or None when there is no data.")
    season_decks: int = _f("Decks in the latest season.")
    leaders: tuple[LeaderBlock, ...] = _f("Each leader of the latest season with its archetypes.")
    seasons: tuple[SeasonRow, ...] = _f("Every season, newest first, with its deck count.")
    note: NoteView | None = _f("The front page note (content/index.md), or None.")
    has_results: bool = _f("True when any deck has wins or losses.")
    min_games: int = _f("Games below which a win rate is flagged (trends.min_games).")
    site_description: str = _f("The line under the title (site.description).")


@dataclass(frozen=True, kw_only=True)
class SeasonPage(Page):
    """seasons/<season>/index.html: every leader's archetypes in one season."""

    season: str = _f("The season's name.")
    decks: int = _f("Decks in the season.")
    leaders: tuple[LeaderBlock, ...] = _f("One block per leader, most decks first.")
    previous: Link | None = _f("The season before, or None.")
    next: Link | None = _f("The season after, or None.")
    notes: tuple[str, ...] = _f("Data-quality notes of the season that name no leader.")
    has_results: bool = _f("True when any deck of the season has wins or losses.")
    min_games: int = _f("Games below which a win rate is flagged (trends.min_games).")
    matchups: MatchupView | None = _f("Head-to-head results of the season, or None without a matches table.",
                                      default=None)


@dataclass(frozen=True, kw_only=True)
class ArchetypePage(Page):
    """archetypes/<slug>/<season>.html: one archetype in one season."""

    name: str = _f("The archetype's name.")
    computed_name: str = _f("The name made from its signature cards (differs from name when a note renames it).")
    summary: str = _f("The analyst's one-line summary, or empty.")
    season: Link = _f("The season, linked to its page.")
    leader: Link = _f("The leader, linked to its page.")
    history: Link = _f("The archetype's history page.")
    decks: int = _f("Decks in the archetype.")
    partition_decks: int = _f("Decks of this leader in this season.")
    share: float = _f("Share of the partition's decks.")
    win: WinRate | None = _f("Win rate, or None without results.")
    signature: tuple[Link, ...] = _f("Signature cards shown (the note's list if it gives one).")
    note: NoteView | None = _f("The analyst's note, or None.")
    cards: tuple[CardRow, ...] = _f("The card-inclusion table, most played first.")
    decklist: tuple[DeckGroup, ...] = _f("The representative (medoid) deck, grouped by card type.")
    deck_id: str = _f("Id of the representative deck.")
    deck_total: int = _f("Cards in the representative deck.")
    deck_facts: tuple[tuple[str, str], ...] = _f("(label, value) facts about that deck: event, title, player if published.")
    similar: tuple[SimilarRow, ...] = _f("Closest other archetypes of the same partition, most alike first.")
    seasons: tuple[SeasonRow, ...] = _f("This archetype in every season it appears in.")
    first_seen: str = _f("First season it appears in.")
    last_seen: str = _f("Last season it appears in.")
    link_text: str = _f("How it relates to the season before, in plain words, or empty.")
    downloads: tuple[Link, ...] = _f("CSV downloads of its tables.")
    min_games: int = _f("Games below which a win rate is flagged (trends.min_games).")
    previous: Link | None = _f("This archetype's page in the season before it was last seen (text: that season), or None.",
                               default=None)
    next: Link | None = _f("This archetype's page in the next season it is seen in (text: that season), or None.",
                           default=None)
    stability: float | None = _f("How firmly it holds together (see ArchetypeRow.stability), or None.", default=None)
    firmness: str = _f("That in a reader's words: clear, loose or weak group (empty when not measured).", default="")
    former_names: tuple[str, ...] = _f("Names it had in earlier seasons, oldest first (empty when none).", default=())
    match: MatchView | None = _f("How sure the link to the season before is, or None in its first season.",
                                 default=None)
    story: StoryView | None = _f("What changed in its cards since its season before, or None.", default=None)
    tiers: tuple[tuple[str, str], ...] = _f("(tier word, what it means) for the card table.", default=())
    card_results: tuple[CardResultRow, ...] = _f("Card results: tested rows by difference, then small samples.",
                                                 default=())
    card_results_fdr: float = _f("False discovery rate of the Benjamini-Hochberg rule (0.05).", default=0.05)
    matchups_best: tuple[MatchupRow, ...] = _f("Its best matchups that are not small samples, best first.", default=())
    matchups_worst: tuple[MatchupRow, ...] = _f("Its worst matchups that are not small samples, worst first.",
                                                default=())
    matchups_small: int = _f("Opponents met in too few games to rank.", default=0)
    has_matchups: bool = _f("True when the site has a matches table.", default=False)
    matchups_min_games: int = _f("Games below which a matchup is not ranked (matchups.min_games).", default=0)
    compare: tuple[Link, ...] = _f("Side-by-side comparisons with each closest archetype.", default=())


@dataclass(frozen=True, kw_only=True)
class ArchetypeHistoryPage(Page):
    """archetypes/<slug>/index.html: one archetype across seasons."""

    name: str = _f("The archetype's latest name.")
    leader: Link = _f("Its leader.")
    seasons: tuple[SeasonRow, ...] = _f("One row per season it appears in, in season order.")
    first_seen: str = _f("First season it appears in.")
    last_seen: str = _f("Last season it appears in.")
    note: NoteView | None = _f("The analyst's note, or None.")
    min_games: int = _f("Games below which a win rate is flagged (trends.min_games).")


@dataclass(frozen=True, kw_only=True)
class CardPage(Page):
    """cards/<card>.html: which archetypes play a card, how many copies, when."""

    card: str = _f("The card's name.")
    card_type: str = _f("Its type, or empty.")
    rows: tuple[SeasonRow, ...] = _f("Each archetype playing it, by season then share of decks playing it.")
    seasons: tuple[str, ...] = _f("Seasons in which some archetype plays it.")


@dataclass(frozen=True, kw_only=True)
class LeaderPage(Page):
    """leaders/<leader>.html: one leader's archetypes season by season."""

    name: str = _f("The leader's name.")
    seasons: tuple[SeasonRow, ...] = _f("Each season and archetype of this leader, in season order, largest first.")
    share_chart: Any = _f("Chart of this leader's archetype shares across seasons, or None.")
    trend_chart: Any = _f("Chart of win rates across seasons, or None.")
    min_games: int = _f("Games below which a win rate is flagged (trends.min_games).")
    flows: tuple[FlowTable, ...] = _f("Per pair of its seasons: how each archetype's decks pass into the next "
                                      "season's archetypes.", default=())
    tiers: tuple[tuple[str, str], ...] = _f("(tier word, what it means), for tables that show tiers.", default=())


@dataclass(frozen=True, kw_only=True)
class MethodPage(Page):
    """method.html: how the analysis works, in plain words."""

    note: NoteView | None = _f("The method note (content/method.md), or None.")
    settings: tuple[tuple[str, str], ...] = _f("(setting, value) pairs that shape the analysis.")
    min_games: int = _f("Games below which a win rate is flagged (trends.min_games).")
    tiers: tuple[tuple[str, str], ...] = _f("(tier word, what it means) for the card tables.", default=())


@dataclass(frozen=True, kw_only=True)
class NotFoundPage(Page):
    """404.html: shown by hosts for a missing page, at any depth."""

    home: str = _f("Link to the front page: under site.base_url when set, else /index.html (a site at its host's root).")


@dataclass(frozen=True, kw_only=True)
class Download:
    """One downloadable file of the site, with its columns described."""

    title: str = _f("What the file holds.")
    href: str = _f("Path from the site root (a pattern with <slug> and <season> for per-archetype files).")
    linked: bool = _f("True when href is a real file to link to; False for a pattern.")
    description: str = _f("A sentence on the file.")
    columns: tuple[tuple[str, str], ...] = _f("(column, meaning) pairs.")


@dataclass(frozen=True, kw_only=True)
class DataPage(Page):
    """data.html: every download of the site with its columns described."""

    downloads: tuple[Download, ...] = _f("Every download, site-wide files first.")


@dataclass(frozen=True, kw_only=True)
class ComparisonRow:
    """One card of a side-by-side comparison of two archetypes."""

    card: Link = _f("The card.")
    share_a: float = _f("Share of the first archetype's decks playing it.")
    share_b: float = _f("Share of the second archetype's decks playing it.")
    copies_a: float = _f("Mean copies in the first archetype's decks playing it (0 when none do).")
    copies_b: float = _f("Mean copies in the second's.")
    deck_a: int = _f("Copies in the first archetype's representative deck.")
    deck_b: int = _f("Copies in the second's representative deck.")


@dataclass(frozen=True, kw_only=True)
class ComparisonPage(Page):
    """archetypes/<slug>/<season>-vs-<other slug>.html: two archetypes of one leader and season side by side."""

    a: Link = _f("The first archetype.")
    b: Link = _f("The second archetype.")
    season: Link = _f("The season.")
    leader: Link = _f("The leader.")
    decks_a: int = _f("Decks of the first archetype.")
    decks_b: int = _f("Decks of the second.")
    similarity: float = _f("Cosine similarity of their card profiles (0 to 1).")
    more_a: tuple[ComparisonRow, ...] = _f("Cards played more by the first, largest difference first.")
    more_b: tuple[ComparisonRow, ...] = _f("Cards played more by the second, largest difference first.")
    deck_diff: tuple[ComparisonRow, ...] = _f("Cards whose copies differ between the two representative decks.")
    others: tuple[Link, ...] = _f("Comparisons of the first archetype with the other archetypes of its leader and season.")


#: Every page context, for documentation and the field-help test.
PAGE_KINDS: tuple[type, ...] = (FrontPage, SeasonPage, ArchetypePage, ArchetypeHistoryPage, CardPage, LeaderPage,
                                MethodPage, NotFoundPage, DataPage, ComparisonPage)
