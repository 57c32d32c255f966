"""The plain data that flows between stages.

Loading produces a :class:`DeckData`; checking adds :class:`Finding`s; the
analysis of one season x leader partition produces a :class:`PartitionResult`
holding its :class:`Archetype`s; season linking produces a :class:`History`.
All are frozen dataclasses or dataframes, so they pickle (for worker processes
and the cache) and never reach back into the stage that made them.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import scipy.sparse as sp

#: The ``leader`` value of a partition that pools every leader of a season
#: (``analysis.by_leader = false``).
ALL_LEADERS = "*"

#: The key of the group of decks that belong to no archetype.
OTHER_KEY = "other"

#: Column layout of :attr:`DeckData.decks`.
DECK_COLUMNS = ("deck_id", "season", "leader", "wins", "losses", "event", "player", "title")
#: Column layout of :attr:`DeckData.cards`.
CARD_ROW_COLUMNS = ("deck_id", "card", "quantity")


@dataclass(frozen=True)
class Finding:
    """A data-quality note: a warning for the build report and the season page.

    ``kind`` is a short code such as ``copies-over-limit``, ``deck-too-small``,
    ``deck-too-large``, ``name-variants``, ``note-orphan``.
    """

    kind: str
    message: str
    deck_id: str | None = None
    season: str | None = None
    leader: str | None = None
    #: The number the message states, for a finding that is added up over the seasons of a
    #: folder read one at a time (see :func:`sitegen.load.names.added_up_rows`); None otherwise.
    count: int | None = field(default=None, compare=False)


@dataclass(frozen=True)
class DeckData:
    """Every deck, validated and normalised.

    ``decks``: one row per deck, columns :data:`DECK_COLUMNS` (strings; wins
    and losses nullable Int64; event, player, title may be missing), sorted by
    deck_id. ``cards``: one row per deck and card, columns
    :data:`CARD_ROW_COLUMNS`, sorted by deck_id then card; deck_id and card
    are categoricals whose categories are sorted (deck_id's are the deck
    table's ids, so a code is a row of ``decks``), quantity is the narrowest
    signed integer type that holds the largest count (int8 as a rule: see
    :func:`sitegen.load.numbers.narrow_counts`).
    ``card_info``: the card table, ``card`` and ``type`` first, then any
    further columns, or None when no card table was given. ``seasons``:
    season names in publication order.
    """

    decks: pd.DataFrame
    cards: pd.DataFrame
    card_info: pd.DataFrame | None
    seasons: tuple[str, ...]
    findings: tuple[Finding, ...] = ()
    excluded: frozenset[str] = frozenset()


def in_row_order(rows: np.ndarray, columns: np.ndarray, column_rank: np.ndarray | None = None) -> bool:
    """True when rows never decrease and, within a row, columns strictly increase: long-form
    rows in :class:`DeckData` order (by deck, then card), no pair twice. With ``column_rank``
    the columns compared are ``column_rank[columns]``, looked up a block at a time."""
    # In blocks of a million rows (each block overlaps the next by one), so the temporary
    # arrays stay small and in cache; comparisons, not differences, so any integer dtype works.
    step = 1 << 20
    for start in range(0, rows.size - 1, step):
        r, c = rows[start:start + step + 1], columns[start:start + step + 1]
        if column_rank is not None:
            c = column_rank[c]
        later, earlier = r[1:], r[:-1]
        if (later < earlier).any() or not ((later > earlier) | (c[1:] > c[:-1])).all():
            return False
    return True


def narrowest_int(low: int, high: int) -> np.dtype | None:
    """The narrowest signed integer type holding every whole number from ``low`` to ``high``
    (int8 to int64), or None beyond int64: so stored or hashed numbers follow from their values,
    not from the type they came in."""
    for kind in (np.int8, np.int16, np.int32, np.int64):
        limits = np.iinfo(kind)
        if limits.min <= low and high <= limits.max:
            return np.dtype(kind)
    return None


def coded(codes: np.ndarray, categories: pd.Index) -> pd.Categorical:
    """A categorical from codes and categories already known to be distinct.

    pandas checks that categories are unique by hashing every one of them;
    for a million deck ids, built from a hash table already, that is wasted.
    """
    try:
        dtype = pd.CategoricalDtype._from_fastpath(categories, False)  # skips only the uniqueness check
    except (AttributeError, TypeError):  # a pandas without it
        dtype = pd.CategoricalDtype(categories)
    return pd.Categorical.from_codes(codes, dtype=dtype, validate=False)


@dataclass(frozen=True)
class PartitionInput:
    """The decks of one season and leader, ready to analyse.

    ``cards`` holds the long-form rows of these decks only; ``fingerprint``
    is a digest of those rows and of the settings that affect the analysis.
    """

    season: str
    leader: str
    decks: pd.DataFrame
    cards: pd.DataFrame
    card_types: dict[str, str] = field(default_factory=dict)
    fingerprint: str = ""


@dataclass(frozen=True)
class CardLine:
    """One row of a card-inclusion table.

    ``share``: share of the decks that play the card; ``mean_copies``: mean
    copies among those decks; ``at_1``, ``at_2``, ``at_3_plus``: share of the
    decks playing it at 1, 2, 3 or more copies; ``tier``: one of
    :data:`TIERS`.
    """

    card: str
    card_type: str
    share: float
    mean_copies: float
    at_1: float
    at_2: float
    at_3_plus: float
    tier: str


#: Inclusion tiers, most played first: (name, least share).
TIERS: tuple[tuple[str, float], ...] = (("mainstay", 0.9), ("regular", 0.5), ("occasional", 0.0))


@dataclass(frozen=True)
class SignatureCard:
    """A card that marks an archetype: played far more inside it than around it."""

    card: str
    score: float
    rate_in: float
    rate_out: float


@dataclass(frozen=True)
class CardResult:
    """How the games of an archetype's decks that play a card went against those that do not
    (:mod:`sitegen.analysis.results`).

    ``copies``: ``any`` (decks playing it at all), ``1``, ``2`` or ``3+``; the
    ``with`` side is the decks playing it so, the ``without`` side the decks
    not playing it. ``diff``: win rate with minus without, with its 95%
    Newcombe interval ``low``..``high``; ``p_value``: Fisher's exact test, None
    for a small sample; ``survives``: kept by the Benjamini-Hochberg rule over
    the archetype's tested comparisons; ``small``: too few games or decks to test.
    """

    card: str
    copies: str
    decks_with: int
    wins_with: int
    games_with: int
    decks_without: int
    wins_without: int
    games_without: int
    diff: float
    low: float
    high: float
    p_value: float | None
    survives: bool
    small: bool


@dataclass(frozen=True)
class DeckLine:
    """One card of a decklist, with its type (empty when no card table)."""

    card_type: str
    card: str
    quantity: int


@dataclass(frozen=True)
class Archetype:
    """One archetype (or the other-decks group) of one partition.

    ``key`` is stable within its partition (``a1``, ``a2``... by size, or
    :data:`OTHER_KEY`); ``slug`` is file-name safe and, after season
    linking, stable across seasons. ``profile`` maps each card to the share
    of member decks playing it (used to name, compare and link archetypes).
    ``centre_distance`` is the mean cosine distance of members to the centre.
    """

    key: str
    slug: str
    name: str
    season: str
    leader: str
    n_decks: int
    share: float
    signature: tuple[SignatureCard, ...]
    medoid_deck_id: str
    medoid: tuple[DeckLine, ...]
    medoid_total: int
    inclusion: tuple[CardLine, ...]
    profile: dict[str, float]
    wins: int = 0
    losses: int = 0
    is_other: bool = False
    mean_distance: float = 0.0
    #: True when at least one member deck has a win or loss count (wins and
    #: losses are 0 both when nothing was reported and when all lost nothing).
    has_results: bool = False
    #: Mean Jaccard index of the archetype's decks with its best match when the
    #: rule is run again on random halves of the partition (None: not measured).
    stability: float | None = None
    #: Card results: the decks playing each card against those that do not (empty without results).
    card_results: tuple[CardResult, ...] = ()


@dataclass(frozen=True)
class Placement:
    """The rule a partition's decks were placed by, to place any decklist the same way.

    A deck's card presence x (0 or 1 over ``cards``) scores ``x @ log_odds[i]
    + constants[i]`` for archetype ``keys[i]``, plus ``z @ levels[i]`` for the
    copy level z each played card is at (one column per card and level, see
    :func:`sitegen.analysis.card_rates.as_levels`); the rows after the
    archetypes' (small groups of their own given up, then all other decks)
    stand for the other decks. It goes to the highest (ties: the first).
    ``centres[i]`` is
    archetype i's unit mean direction in TF-IDF space (a deck's row: its
    cards' ``idf`` weights scaled to unit length), which distances are
    measured to.
    """

    cards: tuple[str, ...]
    idf: np.ndarray
    keys: tuple[str, ...]
    centres: np.ndarray
    log_odds: np.ndarray
    constants: np.ndarray
    #: The unit mean direction of all the partition's decks: what a partition without archetypes
    #: measures its decks' distances to (None when it has no decks).
    mean: np.ndarray | None = None
    #: Log-share of each copy level among each row's decks playing each card (rows x levels*cards);
    #: None: the rule reads presence alone.
    levels: np.ndarray | None = None
    #: A full deck's copies (the partition's median deck), which shorter decks are read against as
    #: partial lists (:func:`sitegen.analysis.card_rates.length_shares`); 0: every deck is read as full.
    full_size: float = 0.0

    def rates(self):
        """The rule as :class:`sitegen.analysis.card_rates.CardRates`, to place decks by."""
        from .analysis.card_rates import CardRates

        return CardRates(self.log_odds, self.constants, len(self.keys), self.levels, self.full_size)


@dataclass(frozen=True)
class MapSample:
    """What a partition's map is drawn from: the drawn decks (``drawn``, rows of the
    partition's assignments), their SVD rows, and their copies of each card over ``cards``
    (so the next season's decks can find their nearest decks of this map, and the next
    season's rule can place them)."""

    drawn: np.ndarray
    rows: np.ndarray
    copies: sp.csr_matrix
    cards: tuple[str, ...]


@dataclass(frozen=True)
class MapLayout:
    """A drawn map: one (x, y) per drawn deck, and whether it started from the previous season's map."""

    coords: np.ndarray
    warm: bool


@dataclass(frozen=True)
class PartitionResult:
    """Everything the analysis found in one season x leader partition.

    ``status`` is ``"clustered"`` or ``"too-small"`` (then ``reason`` says
    why and ``archetypes`` is empty). ``silhouette`` is empty: k is no
    longer picked from a silhouette curve (the field stays so that
    data/archetypes.json keeps its keys); ``k_reason`` says how the
    archetypes came about in plain words (dense groups joined, split or
    given up, or k pinned).
    ``assignments``: one row per deck, columns deck_id, archetype (key),
    distance (cosine distance to its archetype's centre), x, y (map
    coordinates, NaN where the deck was not drawn). ``map_points``: the
    drawn decks, columns deck_id, archetype, x, y, cards (a short text of
    its top cards for a tooltip). The analysis leaves x and y NaN and
    ``map_sample`` set; the map stage draws the map (started from the
    leader's previous map) and fills them in. ``rows_key`` names what the
    ``assignments`` and ``map_points`` rows follow from: the partition's
    fingerprint, the points of the map placed into them and any relabelling
    by notes (the assignments files and the season pages' maps are keyed by
    it); empty when not known.
    """

    season: str
    leader: str
    n_decks: int
    status: str
    reason: str
    chosen_k: int | None
    silhouette: tuple[tuple[int, float], ...]
    k_reason: str
    archetypes: tuple[Archetype, ...]
    other: Archetype | None
    assignments: pd.DataFrame
    map_points: pd.DataFrame
    inclusion: tuple[CardLine, ...]
    fingerprint: str = ""
    map_sample: MapSample | None = None
    rows_key: str = ""
    placement: Placement | None = None

    @property
    def groups(self) -> tuple[Archetype, ...]:
        """Archetypes then, if any, the other-decks group."""
        return self.archetypes + ((self.other,) if self.other is not None else ())


@dataclass(frozen=True)
class Link:
    """How an archetype of one season relates to the previous season's.

    ``kind``: ``continues`` (same slug), ``new``, ``split`` (one of several
    that came from one earlier archetype), ``merge`` (one that took in
    several earlier archetypes). ``sources``: slugs of the earlier
    archetypes it came from; ``similarity``: best profile similarity.
    """

    season: str
    leader: str
    slug: str
    kind: str
    sources: tuple[str, ...] = ()
    similarity: float = 0.0


@dataclass(frozen=True)
class History:
    """Archetype identity across seasons.

    ``links``: one :class:`Link` per archetype and season; ``last_seen``:
    slug -> last season it appears in; ``seasons_of``: slug -> seasons it
    appears in, in publication order.
    """

    links: tuple[Link, ...]
    last_seen: dict[str, str]
    seasons_of: dict[str, tuple[str, ...]]


@dataclass(frozen=True)
class SeasonSplit:
    """The partitions one season of flat tables was cut into, as (season, leader, fingerprint),
    kept in the cache under the key of the season's rows (:func:`sitegen.partitions.season_keys`):
    while a later build finds the same rows, it takes their results without cutting them again."""

    partitions: tuple[tuple[str, str, str], ...]


@dataclass(frozen=True)
class SeasonRecord:
    """What one season of a season folder gave a build, kept so that the next build, while
    the season's files are unchanged, need not read its card rows again.

    ``decks``, ``findings`` and ``excluded`` are the season's checked decks,
    findings and rule breakers; ``partitions`` is (season, leader,
    fingerprint) of each partition it was split into, whose results are in
    the cache under those fingerprints.
    """

    decks: pd.DataFrame
    findings: tuple[Finding, ...]
    excluded: frozenset[str]
    partitions: tuple[tuple[str, str, str], ...]


@dataclass(frozen=True)
class SeasonSummary:
    """What the first pass over a season folder took from one season's two files, kept so
    that the next build's first pass need not open them while they are unchanged.

    ``leader_counts`` and ``card_counts`` are the season's cleaned leader and
    card names with their row counts, in the order the files gave them;
    ``first_date`` is its earliest deck date (None when it has none);
    ``id_hashes`` are the sorted 64-bit hashes of its distinct non-empty deck
    ids, so that only seasons whose hashes meet need their deck ids compared.
    """

    leader_counts: dict[str, int]
    card_counts: dict[str, int]
    first_date: pd.Timestamp | None
    id_hashes: np.ndarray


@dataclass(frozen=True)
class RunReport:
    """Which partitions (season, leader) were analysed afresh and which came from the cache,
    and whose maps were drawn afresh (a map is redrawn when its partition or the map it
    starts from, the leader's previous one, changed)."""

    analysed: tuple[tuple[str, str], ...]
    cached: tuple[tuple[str, str], ...]
    mapped: tuple[tuple[str, str], ...] = ()
    #: Seasons of a season folder whose card rows were not read: their files had not changed.
    seasons_unread: tuple[str, ...] = ()
    #: Seasons of flat tables whose rows were as at an earlier build: not split into partitions again.
    seasons_known: tuple[str, ...] = ()
