"""Write the demo deck data of Lanternfall, an invented card game, with planted archetypes.

Every name here (game, leaders, factions, card types, cards, seasons, events,
players) is made up for sitegen. The decks are drawn so that their true
archetype is known: each archetype has core cards that nearly every member
plays, each leader has staples that all its decks play, each flex card is
played at its own rate, and about 3% of decks are random one-off brews. Across
seasons archetypes drift, appear, retire, split and merge, and all of it is
written to ``truth.csv`` and ``truth.json`` so tests can score the analysis
against what was planted. The build never reads those two files.

Decks are generated one season x leader block at a time as a dense
deck x card matrix of copies (numpy, no per-deck loops), so a million decks
take seconds. Same seed and arguments, same bytes in every file.

Run ``python demo_data/generate.py --help`` for the options, or import
:func:`generate`.
"""
from __future__ import annotations

import argparse
import json
import sys
from datetime import date, timedelta
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

GAME = "Lanternfall"
DEFAULT_SEED = 20260101
DEFAULTS = {
    "seed": DEFAULT_SEED,
    "decks_per_season": 4000,
    "seasons": 5,
    "leaders": 5,
    "cards_per_leader": 300,
    "neutral_cards": 150,
    "decklists": 300,
    "fmt": "parquet",
}

LEADERS = ("Auren Halk", "Brisa Coldmere", "Corvan Thule", "Dessa Wrenfield",
           "Eskel Morrow", "Fenna Quillon", "Garrow Vint")
FACTIONS = ("Ashen Court", "Tidewardens", "Bramblekin", "Glasswrights", "Hollow Choir")
NEUTRAL_FACTION = "Unsworn"
CARD_TYPES = ("Vassal", "Ritual", "Relic", "Omen", "Terrain", "Gambit")
CARD_TYPE_SHARES = (0.42, 0.18, 0.14, 0.1, 0.08, 0.08)
SEASON_WORDS = ("Kindle", "Blaze", "Ember", "Cinder")
ADJECTIVES = (
    "Ashen", "Brackish", "Cindered", "Dusky", "Ebbing", "Fallow", "Gilded", "Hollow", "Inked",
    "Jagged", "Knotted", "Lantern-lit", "Mossy", "Nettled", "Oaken", "Pale", "Quiet", "Rusted",
    "Sallow", "Tallow", "Umber", "Veiled", "Wicker", "Yawning", "Zealous", "Amber", "Barbed",
    "Copper", "Drowned", "Ember", "Feral", "Gloaming", "Hushed", "Iron", "Jade", "Kindled",
    "Lost", "Mirthful", "Nightbound", "Ochre", "Pilgrim", "Quilled", "Restless", "Salted",
    "Thorned", "Unbound", "Vesper", "Wandering", "Woven", "Frayed", "Glass", "Hearth",
    "Lichen", "Marrow", "Smoldering", "Tidal", "Waning", "Brindled", "Crooked", "Sunken",
)
NOUNS = (
    "Acolyte", "Bellringer", "Cairn", "Drover", "Effigy", "Ferryman", "Gannet", "Herald",
    "Idol", "Jackdaw", "Kiln", "Lamplighter", "Mire", "Nightjar", "Oracle", "Palisade",
    "Quarry", "Reliquary", "Sentinel", "Tinker", "Undertow", "Vigil", "Warden", "Yoke",
    "Almanac", "Bastion", "Censer", "Dirge", "Ember", "Fable", "Gallows", "Hound", "Ingot",
    "Juggler", "Kestrel", "Lantern", "Mummer", "Nomad", "Orchard", "Pyre", "Quill", "Rampart",
    "Spindle", "Thresher", "Urn", "Vane", "Wick", "Cobbler", "Drum", "Emissary", "Forge",
    "Grotto", "Hermit", "Loom", "Moth", "Peddler", "Rook", "Shroud", "Tithe", "Wayfarer",
)
PLACES = ("Harrowgate", "Tallow Lane", "Brinkmoor", "Cresthollow", "Duskwater", "Fenhallow",
          "Gullreach", "Larkspire", "Millbrook Cross", "Oakenshaw", "Pellwick", "Saltmere")
EVENT_KINDS = ("Open", "Lantern Cup", "Weekly Skirmish", "Night Market", "Invitational", "Moot")
SYLLABLES = ("ka", "mir", "vo", "len", "tha", "ro", "sel", "dun", "ix", "bra", "qui", "fen",
             "ost", "lu", "gar", "wen", "zo", "pim", "har", "ne", "tor", "vy", "ash", "ku",
             "mel", "drin", "so", "bel", "cav", "ith", "ju", "rak", "em", "yl", "pra", "gos")
TITLE_WORDS = ("Tempo", "Control", "Midrange", "Value", "Rush", "Combo", "Ramp", "Pile",
               "Toolbox", "Aggro", "Fortress", "Engine")

DECK_MIN, DECK_MAX, MAX_COPIES = 40, 50, 3  # common practice, no source
CORE_MIN, CORE_MAX = 12, 14
STAPLE_MIN, STAPLE_MAX = 8, 10
FLEX_POOL = 12  # of which FLEX_NEUTRAL are neutral cards
FLEX_NEUTRAL = 3
FILLER_RATE = 0.005  # chance of any other card of the leader or neutral in an archetype deck
SHARE_MIN, SHARE_MAX = 0.08, 0.40
BREW_SHARE = 0.03
MAX_GAMES = 12
SPLIT_EVERY = 3  # a split in seasons 2, 5, 8, ...; a merge in seasons 3, 6, 9, ...
# Head-to-head results: drawn from a random stream of their own, so the other files stay as they were.
MATCH_STREAM = 19  # the matches' generator is seeded with (seed, MATCH_STREAM)
MATCH_SEASONS = 2  # matches are written for the last seasons only
MATCHES_PER_SEASON = 10000
DRAW_SHARE = 0.03
#: Planted matchups among each season's four largest archetypes (by rank): (first, second, chance the first wins).
PLANTED_EDGES = ((0, 1, 0.72), (2, 3, 0.28), (0, 2, 0.70), (1, 3, 0.5))
OTHER_EDGE = 0.08  # every other pair of archetypes: the first wins with a chance drawn from 0.5 +- this


# ---------------------------------------------------------------- names

def _card_names(n: int, rng: np.random.Generator) -> list[str]:
    """``n`` unique invented card names: adjective + noun, then 'of <place>' when more are needed."""
    pairs = [f"{a} {b}" for a in ADJECTIVES for b in NOUNS if a != b]
    names = [pairs[i] for i in rng.permutation(len(pairs))]
    if n > len(names):
        extra = [f"{p} of {place}" for place in PLACES for p in pairs]
        names += [extra[i] for i in rng.permutation(len(extra))]
    if n > len(names):
        raise ValueError(f"at most {len(names)} card names can be made, {n} were asked for")
    return names[:n]


def _leader_names(n: int, rng: np.random.Generator) -> list[str]:
    """The named leaders, then invented two-part names for any beyond them."""
    names = list(LEADERS[:n])
    while len(names) < n:
        parts = rng.choice(len(SYLLABLES), size=5)
        first = "".join(SYLLABLES[i] for i in parts[:2]).capitalize()
        last = "".join(SYLLABLES[i] for i in parts[2:]).capitalize()
        if f"{first} {last}" not in names:
            names.append(f"{first} {last}")
    return names


def _seasons(n: int) -> list[tuple[str, date, date]]:
    """Season names with their first and last day: four 13-week seasons a year from 2025."""
    out = []
    start = date(2025, 1, 6)
    for s in range(n):
        first = start + timedelta(weeks=13 * s)
        name = f"{SEASON_WORDS[s % 4]} {2025 + s // 4}"
        out.append((name, first, first + timedelta(days=13 * 7 - 1)))
    return out


def _handles(n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` unique player handles: two or three syllables and a number."""
    k = len(SYLLABLES)
    codes = rng.permutation(k * k * k * 100)[:n]
    a, rest = np.divmod(codes, k * k * 100)
    b, rest = np.divmod(rest, k * 100)
    c, num = np.divmod(rest, 100)
    out = []
    for i in range(n):
        third = SYLLABLES[c[i]] if c[i] % 3 else ""
        out.append(f"{SYLLABLES[a[i]]}{SYLLABLES[b[i]]}{third}{num[i]}")
    return np.array(out, dtype=object)


# ---------------------------------------------------------------- planting

class _Plan:
    """The archetypes of every season and leader: cores, flex pools, shares, lineage.

    Cards are numbered globally: neutral cards first, then each leader's own
    pool. Within a leader's block, columns are the neutral cards followed by
    that leader's pool, so a block has ``neutral + cards_per_leader`` columns.
    """

    def __init__(self, rng: np.random.Generator, n_seasons: int, n_leaders: int, cpl: int, n_neutral: int):
        self.rng, self.cpl, self.n_neutral = rng, cpl, n_neutral
        self.archetypes: dict[str, dict] = {}
        self.splits: list[dict] = []
        self.merges: list[dict] = []
        # season -> leader -> list of (archetype id, share)
        self.active: list[list[list[tuple[str, float]]]] = []
        self.staples = [np.sort(rng.choice(cpl, size=int(rng.integers(STAPLE_MIN, STAPLE_MAX + 1)), replace=False))
                        for _ in range(n_leaders)]
        self._next = [1] * n_leaders
        self.cores: dict[str, list[np.ndarray]] = {}  # id -> core per season present (block columns)
        self.flex: dict[str, np.ndarray] = {}
        self.flex_p: dict[str, np.ndarray] = {}
        self.win_p: dict[str, float] = {}
        current: list[list[str]] = [[] for _ in range(n_leaders)]
        for s in range(n_seasons):
            self.active.append([])
            for lead in range(n_leaders):
                current[lead] = self._evolve(s, lead, current[lead])
                ids = current[lead]
                shares = self._shares(len(ids))
                self.active[s].append(list(zip(ids, shares)))
                for a in ids:
                    self.archetypes[a]["seasons"].append(s)

    # Column helpers: a leader's own card i sits at block column n_neutral + i.
    def _own(self, idx) -> np.ndarray:
        return np.asarray(idx) + self.n_neutral

    def _used(self, lead: int, ids: list[str]) -> set[int]:
        used = set(self._own(self.staples[lead]).tolist())
        for a in ids:
            used.update(self.cores[a][-1].tolist())
        return used

    def _fresh(self, lead: int, ids: list[str], n: int, avoid=()) -> np.ndarray:
        """``n`` leader-pool columns in no current core, not staples and not in ``avoid``."""
        used = self._used(lead, ids) | {int(x) for x in avoid}
        free = np.array([c for c in self._own(np.arange(self.cpl)) if c not in used])
        if len(free) < n:
            raise ValueError(f"cards_per_leader={self.cpl} is too small for the planted archetypes; use 150 or more")
        return np.sort(self.rng.choice(free, size=n, replace=False))

    def _new(self, s: int, lead: int, ids: list[str], core: np.ndarray, **lineage) -> str:
        a = f"L{lead + 1}-A{self._next[lead]}"
        self._next[lead] += 1
        self.archetypes[a] = {"leader": lead, "seasons": [], "variant_of": None, "split_from": None,
                              "merged_from": None, **lineage}
        self.cores[a] = [np.sort(core)]
        # Flex pool: mostly the leader's own cards outside every current core, some neutral cards.
        used = self._used(lead, ids) | set(core.tolist())
        own = np.array([c for c in self._own(np.arange(self.cpl)) if c not in used])
        n_own = min(len(own), FLEX_POOL - FLEX_NEUTRAL)
        self.flex[a] = np.sort(np.concatenate([
            self.rng.choice(own, size=n_own, replace=False),
            self.rng.choice(self.n_neutral, size=FLEX_NEUTRAL, replace=False)]))
        self.flex_p[a] = self.rng.uniform(0.25, 0.65, size=len(self.flex[a]))
        self.win_p[a] = float(self.rng.uniform(0.42, 0.58))
        return a

    def _fresh_archetype(self, s: int, lead: int, ids: list[str]) -> str:
        """A new archetype: a brand-new core, or (sometimes) a close variant of a current one."""
        size = int(self.rng.integers(CORE_MIN, CORE_MAX + 1))
        if ids and self.rng.random() < 0.4:
            parent = ids[int(self.rng.integers(len(ids)))]
            pcore = self.cores[parent][-1]
            swap = int(self.rng.integers(5, 7))  # differs from its parent by 5-6 core cards
            kept = self.rng.choice(pcore, size=len(pcore) - swap, replace=False)
            core = np.concatenate([kept, self._fresh(lead, ids, swap)])
            return self._new(s, lead, ids, core, variant_of=parent)
        return self._new(s, lead, ids, self._fresh(lead, ids, size))

    def _evolve(self, s: int, lead: int, prev: list[str]) -> list[str]:
        """This season's archetypes of one leader from last season's."""
        rng = self.rng
        if s == 0:
            ids: list[str] = []
            for _ in range(int(rng.integers(3, 6))):
                ids.append(self._fresh_archetype(s, lead, ids))
            return ids
        ids = list(prev)
        born: set[str] = set()
        n_leaders = len(self.staples)
        if s % SPLIT_EVERY == 1 and (s // SPLIT_EVERY) % n_leaders == lead:
            # The largest archetype of last season splits in two; each child keeps ~3/4 of its core.
            shares = dict(self.active[s - 1][lead])
            parent = max(ids, key=lambda a: (shares[a], a))
            ids.remove(parent)
            pcore = self.cores[parent][-1]
            order = rng.permutation(pcore)
            keep = int(round(0.75 * len(pcore)))
            children = []
            for part in (order[:keep], order[-keep:]):
                core = np.concatenate([part, self._fresh(lead, ids + children, len(pcore) - keep, pcore)])
                children.append(self._new(s, lead, ids + children, core, split_from=parent))
            ids += children
            born.update(children)
            self.splits.append({"season": s, "parent": parent, "children": children})
        if s % SPLIT_EVERY == 2 and (s // SPLIT_EVERY + 1) % n_leaders == lead:
            plain = [a for a in ids if self.archetypes[a]["split_from"] is None]
            if len(plain) >= 2:
                # Two archetypes merge: the child takes half of each parent's core.
                pair = sorted(rng.choice(plain, size=2, replace=False).tolist())
                parts = [rng.permutation(self.cores[p][-1])[: (len(self.cores[p][-1]) + 1) // 2] for p in pair]
                for p in pair:
                    ids.remove(p)
                core = np.unique(np.concatenate(parts))
                child = self._new(s, lead, ids, core, merged_from=pair)
                ids.append(child)
                born.add(child)
                self.merges.append({"season": s, "parents": pair, "child": child})
        for a in list(ids):
            if a not in born and len(ids) > 3 and rng.random() < 0.15:
                ids.remove(a)
        if len(ids) < 6 and rng.random() < 0.35:
            a = self._fresh_archetype(s, lead, ids)
            ids.append(a)
            born.add(a)
        while len(ids) < 3:
            a = self._fresh_archetype(s, lead, ids)
            ids.append(a)
            born.add(a)
        while len(ids) > 6:
            old = [a for a in ids if a not in born]
            ids.remove(old[int(rng.integers(len(old)))])
        for a in ids:
            if a not in born:
                # Drift: one or two core cards are replaced by fresh ones.
                core = self.cores[a][-1]
                n = int(rng.integers(1, 3))
                out = rng.choice(len(core), size=n, replace=False)
                core = np.delete(core, out)
                self.cores[a].append(np.sort(np.concatenate([core, self._fresh(lead, ids, n)])))
        return ids

    def _shares(self, k: int) -> np.ndarray:
        """Uneven shares between SHARE_MIN and SHARE_MAX, summing to 1."""
        for _ in range(10000):
            w = self.rng.dirichlet(np.full(k, 1.5))
            if w.min() >= SHARE_MIN and w.max() <= SHARE_MAX:
                return w
        raise RuntimeError(f"could not draw shares for {k} archetypes")

    def core_in(self, a: str, s: int) -> np.ndarray:
        return self.cores[a][self.archetypes[a]["seasons"].index(s)]


def _block(rng: np.random.Generator, plan: _Plan, s: int, lead: int, n: int):
    """Copies matrix (n x block columns, int8) and archetype labels of one season x leader.

    Which cards a deck plays is drawn card by card, independently: core cards
    (~96%), staples (~97%), each flex card at its own rate, now and then any
    other card. Only then is the deck brought to its size by adding or taking
    copies, so the size never makes one card's presence depend on another's
    (a fixed number of flex slots would, and would carve archetypes into
    look-alike halves). Brews are random cards with random copies.
    """
    m = plan.n_neutral + plan.cpl
    arch = plan.active[s][lead]
    ids = [a for a, _ in arch]
    k = len(ids)
    brew = rng.random(n) < BREW_SHARE
    label = rng.choice(k, size=n, p=np.array([w for _, w in arch]))
    label[brew] = k  # row k of every table below means "brew"
    core = np.zeros((k + 1, m), dtype=bool)
    play_p = np.zeros((k + 1, m))
    staples = plan._own(plan.staples[lead])
    for i, a in enumerate(ids):
        core[i, plan.core_in(a, s)] = True
        play_p[i, :] = FILLER_RATE
        play_p[i, plan.flex[a]] = plan.flex_p[a]
        play_p[i, core[i]] = 0.0
        play_p[i, staples] = 0.0
    target = DECK_MIN + rng.binomial(DECK_MAX - DECK_MIN, 0.6, size=n)

    q = np.zeros((n, m), dtype=np.int8)
    u = rng.random((n, m))
    # Core: played by nearly all members at 2-3 copies.
    has = core[label] & (u < 0.96)
    q[has] = np.where(rng.random(int(has.sum())) < 0.12, 3, 2)
    # Flex and the odd other card: one copy for now.
    q[(u < play_p[label]) & ~has] = 1
    # Leader staples: nearly every non-brew deck, mostly one copy.
    st = (rng.random((n, len(staples))) < 0.97) & ~brew[:, None]
    q[:, staples] = np.where(st, np.where(rng.random(st.shape) < 0.05, 2, 1), 0)

    # Brews: random cards in random order, 1-3 copies each, exactly to size.
    b = np.flatnonzero(brew)
    if len(b):
        key = rng.random((len(b), m))
        order = np.argsort(key, axis=1)[:, :DECK_MAX]
        copies = rng.integers(1, MAX_COPIES + 1, size=(len(b), DECK_MAX))
        done = np.cumsum(copies, axis=1)
        need = target[b]
        take = np.where(done <= need[:, None], copies, 0)
        take[np.arange(len(b)), (done > need[:, None]).argmax(axis=1)] += need - take.sum(axis=1)
        q[np.repeat(b, DECK_MAX), order.ravel()] = take.ravel().astype(np.int8)

    # Bring every deck to its size one copy at a time: add copies to cards already played
    # (up to 3), or take copies off cards with 2+ (failing that, drop a non-core card).
    total = q.sum(axis=1, dtype=np.int64)
    for _ in range(4 * DECK_MAX):
        under = np.flatnonzero(total < target)
        over = np.flatnonzero(total > target)
        if len(under) == 0 and len(over) == 0:
            break
        if len(under):
            sub = q[under]
            key = np.where((sub >= 1) & (sub < MAX_COPIES), rng.random(sub.shape), -1.0)
            col = np.argmax(key, axis=1)
            ok = key[np.arange(len(under)), col] >= 0  # a deck of only 3-ofs takes a fresh card instead
            col[~ok] = np.argmax(np.where(sub[~ok] == 0, rng.random((int((~ok).sum()), m)), -1.0), axis=1)
            q[under, col] += 1
            total[under] += 1
        if len(over):
            sub = q[over]
            loose = (sub == 1) & ~core[label[over]]
            col = np.argmax(np.where(sub >= 2, 1.0 + rng.random(sub.shape),
                                     np.where(loose, rng.random(sub.shape), -1.0)), axis=1)
            q[over, col] -= 1
            total[over] -= 1
    if (total != target).any() or q.max(initial=0) > MAX_COPIES:
        raise RuntimeError("internal: a deck could not be brought to its size")
    labels = np.array(ids + ["brew"], dtype=object)[label]
    return q, labels, label


# ---------------------------------------------------------------- writing

def generate(out_dir, *, seed: int = DEFAULT_SEED, decks_per_season: int = 4000, seasons: int = 5,
             leaders: int = 5, cards_per_leader: int = 300, neutral_cards: int = 150, decklists: int = 300,
             fmt: str = "parquet", matches_per_season: int = MATCHES_PER_SEASON) -> dict:
    """Write the demo data files into ``out_dir`` and return a summary (counts and paths).

    Files: decks.csv, deck_cards.parquet (or .csv with ``fmt="csv"``),
    cards.csv, truth.csv, truth.json, ``decklists/`` with ``decklists``
    text decklists of the first season, and matches.csv with
    ``matches_per_season`` games in each of the last :data:`MATCH_SEASONS`
    seasons (none with 0), their planted chances in matches_truth.json.
    """
    if fmt not in ("csv", "parquet"):
        raise ValueError(f"fmt must be 'csv' or 'parquet', got {fmt!r}")
    if seasons < 1 or leaders < 1 or decks_per_season < 1:
        raise ValueError("seasons, leaders and decks_per_season must each be at least 1")
    if cards_per_leader < 150:
        raise ValueError(f"cards_per_leader must be at least 150, got {cards_per_leader}")
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    leader_names = _leader_names(leaders, rng)
    season_info = _seasons(seasons)
    n_cards = neutral_cards + leaders * cards_per_leader
    names = np.array(_card_names(n_cards, rng), dtype=object)
    plan = _Plan(rng, seasons, leaders, cards_per_leader, neutral_cards)

    # Card table: neutral cards, then each leader's pool in its faction.
    ctype = rng.choice(len(CARD_TYPES), size=n_cards, p=CARD_TYPE_SHARES)
    cost = np.clip(rng.poisson(3.0, size=n_cards) + (ctype == 2) - (ctype == 3), 0, 9)
    faction = [NEUTRAL_FACTION] * neutral_cards + [
        FACTIONS[lead % len(FACTIONS)] for lead in range(leaders) for _ in range(cards_per_leader)]
    cards = pd.DataFrame({"card": names, "type": np.array(CARD_TYPES)[ctype], "faction": faction, "cost": cost})
    cards = cards.sort_values("card", kind="stable").reset_index(drop=True)
    rank = np.empty(n_cards, dtype=np.int64)
    rank[np.argsort(names.astype(str), kind="stable")] = np.arange(n_cards)

    n_players = max(50, seasons * decks_per_season // 6)
    players = _handles(n_players, rng)
    width = max(6, len(str(seasons * decks_per_season - 1)))
    deck_frames, truth_frames, row_parts = [], [], []
    base = 0
    for s, (season, first, last) in enumerate(season_info):
        per_leader = rng.multinomial(decks_per_season, rng.dirichlet(np.full(leaders, 8.0)))
        n_events = max(4, decks_per_season // 120)
        days = (last - first).days + 1
        event_day = np.sort(rng.integers(0, days, size=n_events))
        event_name = [f"{PLACES[rng.integers(len(PLACES))]} {EVENT_KINDS[rng.integers(len(EVENT_KINDS))]} "
                      f"#{s * 1000 + e + 1}" for e in range(n_events)]
        blocks, lead_of, label_of, arch_of = [], [], [], []
        for lead in range(leaders):
            q, labels, lab = _block(rng, plan, s, lead, int(per_leader[lead]))
            blocks.append(q)
            lead_of.append(np.full(len(q), lead))
            label_of.append(labels)
            ids = [a for a, _ in plan.active[s][lead]]
            arch_of.append(np.array([plan.win_p[a] for a in ids] + [0.4])[lab])
        lead_of = np.concatenate(lead_of)
        labels = np.concatenate(label_of)
        win_p = np.concatenate(arch_of)
        n = len(lead_of)
        event = rng.integers(0, n_events, size=n)
        # Deck ids run in date order (ties at random), so ids never reveal the leader or archetype.
        pos = np.lexsort((rng.random(n), event_day[event]))
        seq = np.empty(n, dtype=np.int64)
        seq[pos] = np.arange(n) + base
        games = rng.integers(0, MAX_GAMES + 1, size=n)
        wins = rng.binomial(games, win_p)
        titles = np.array([f"{t} {name.split()[0]}" for name in leader_names for t in TITLE_WORDS], dtype=object)
        title = titles[lead_of * len(TITLE_WORDS) + rng.integers(0, len(TITLE_WORDS), size=n)]
        day_str = np.array([(first + timedelta(days=int(x))).isoformat() for x in event_day], dtype=object)
        frame = pd.DataFrame({
            "seq": seq, "season": season,
            "date": day_str[event],
            "leader": np.array(leader_names, dtype=object)[lead_of], "wins": wins, "losses": games - wins,
            "event": np.array(event_name, dtype=object)[event],
            "player": players[rng.integers(0, n_players, size=n)], "title": title, "archetype": labels})
        deck_frames.append(frame.sort_values("seq"))
        # Long rows of this season: (deck number, global card, copies).
        start = 0
        season_rows = []
        for lead, q in enumerate(blocks):
            r, c = np.nonzero(q)
            glob = np.where(c < neutral_cards, c, c - neutral_cards + neutral_cards + lead * cards_per_leader)
            season_rows.append((seq[start + r], glob, q[r, c]))
            start += len(q)
        d = np.concatenate([x[0] for x in season_rows])
        c = np.concatenate([x[1] for x in season_rows])
        k = np.concatenate([x[2] for x in season_rows])
        o = np.lexsort((rank[c], d))
        row_parts.append((d[o], c[o], k[o]))
        base += n

    decks = pd.concat(deck_frames, ignore_index=True)
    deck_ids = np.array([f"d{i:0{width}d}" for i in range(base)], dtype=object)
    decks.insert(0, "deck_id", deck_ids[decks["seq"].to_numpy()])
    d = np.concatenate([x[0] for x in row_parts])
    c = np.concatenate([x[1] for x in row_parts])
    k = np.concatenate([x[2] for x in row_parts]).astype(np.int64)

    paths = {}
    cols = ["deck_id", "season", "date", "leader", "wins", "losses", "event", "player", "title"]
    paths["decks"] = out / "decks.csv"
    decks[cols].to_csv(paths["decks"], index=False, lineterminator="\n")
    paths["cards"] = out / "cards.csv"
    cards.to_csv(paths["cards"], index=False, lineterminator="\n")
    paths["truth"] = out / "truth.csv"
    decks[["deck_id", "season", "leader", "archetype"]].to_csv(paths["truth"], index=False, lineterminator="\n")

    deck_col = pa.DictionaryArray.from_arrays(pa.array(d, pa.int32()), pa.array(deck_ids, pa.string()))
    card_col = pa.DictionaryArray.from_arrays(pa.array(c, pa.int32()), pa.array(names, pa.string()))
    table = pa.table({"deck_id": deck_col.cast(pa.string()), "card": card_col.cast(pa.string()),
                      "quantity": pa.array(k, pa.int64())})
    for stale in ("deck_cards.parquet", "deck_cards.csv"):
        (out / stale).unlink(missing_ok=True)
    if fmt == "parquet":
        paths["deck_cards"] = out / "deck_cards.parquet"
        # Fixed options; pyarrow writes no timestamps, so the same table gives the same bytes.
        pq.write_table(table, paths["deck_cards"], compression="zstd", compression_level=9,
                       row_group_size=1 << 20, use_dictionary=True, write_statistics=True)
    else:
        paths["deck_cards"] = out / "deck_cards.csv"
        table.to_pandas().to_csv(paths["deck_cards"], index=False, lineterminator="\n")

    paths["truth_json"] = out / "truth.json"
    paths["truth_json"].write_text(_truth_json(plan, names, leader_names, season_info, cards_per_leader,
                                               neutral_cards, seed), encoding="utf-8")
    paths["decklists"] = out / "decklists"
    _write_decklists(paths["decklists"], decks, season_info[0][0], decklists, d, c, k, names)
    for stale in ("matches.csv", "matches_truth.json"):
        (out / stale).unlink(missing_ok=True)
    if matches_per_season > 0:
        paths["matches"], paths["matches_truth"] = _write_matches(out, decks, [x[0] for x in season_info],
                                                                  matches_per_season, seed)
    return {"decks": base, "rows": len(d), "cards": n_cards, "archetypes": len(plan.archetypes),
            "splits": len(plan.splits), "merges": len(plan.merges), "paths": {k_: str(p) for k_, p in paths.items()}}


def _truth_json(plan: _Plan, names, leader_names, season_info, cpl: int, n_neutral: int, seed: int) -> str:
    """The planted truth as sorted, indented JSON."""
    def card_names(lead: int, cols) -> list[str]:
        glob = [int(c) if c < n_neutral else int(c) - n_neutral + n_neutral + lead * cpl for c in cols]
        return sorted(str(names[g]) for g in glob)

    season_names = [x[0] for x in season_info]
    archetypes = {}
    for a, info in plan.archetypes.items():
        lead = info["leader"]
        archetypes[a] = {
            "leader": leader_names[lead],
            "seasons": [season_names[s] for s in info["seasons"]],
            "core": {season_names[s]: card_names(lead, plan.cores[a][i]) for i, s in enumerate(info["seasons"])},
            "variant_of": info["variant_of"], "split_from": info["split_from"],
            "merged_from": info["merged_from"], "win_probability": round(plan.win_p[a], 4),
        }
    counts = {season_names[s]: {leader_names[lead]: len(plan.active[s][lead]) for lead in range(len(leader_names))}
              for s in range(len(season_names))}
    shares = {season_names[s]: {leader_names[lead]: {a: round(float(w), 4) for a, w in plan.active[s][lead]}
                                for lead in range(len(leader_names))} for s in range(len(season_names))}
    doc = {
        "game": GAME, "seed": seed,
        "seasons": [{"name": n, "first": f.isoformat(), "last": la.isoformat()} for n, f, la in season_info],
        "leaders": {leader_names[lead]: {"faction": FACTIONS[lead % len(FACTIONS)],
                                          "staples": card_names(lead, plan._own(plan.staples[lead]))}
                    for lead in range(len(leader_names))},
        "archetypes": archetypes,
        "splits": [{"season": season_names[x["season"]], "parent": x["parent"], "children": x["children"]}
                   for x in plan.splits],
        "merges": [{"season": season_names[x["season"]], "parents": x["parents"], "child": x["child"]}
                   for x in plan.merges],
        "archetype_counts": counts,
        "planted_shares": shares,
    }
    return json.dumps(doc, indent=1, ensure_ascii=False) + "\n"


def _write_matches(out: Path, decks: pd.DataFrame, seasons: list[str], per_season: int, seed: int):
    """matches.csv (deck_id, opponent_id, result of the first deck: win, loss or draw) and
    matches_truth.json (each season's planted chance that one archetype beats another).

    Two decks of the season meet at random, whatever their leaders. Among the
    season's four largest archetypes the :data:`PLANTED_EDGES` are planted; any
    other pair of archetypes gets a chance within :data:`OTHER_EDGE` of even, and
    a brew is even against everything. A game is a draw with chance :data:`DRAW_SHARE`.
    """
    rng = np.random.default_rng([seed, MATCH_STREAM])  # a stream of its own: the other files stay as they were
    frames, truth = [], {}
    for season in seasons[-MATCH_SEASONS:]:
        mine = decks[decks["season"] == season]
        ids = mine["deck_id"].to_numpy(dtype=object)
        labels = mine["archetype"].to_numpy(dtype=object)
        sizes = pd.Series(labels[labels != "brew"]).value_counts()
        names = sorted(sizes.index.tolist())
        rank = sorted(names, key=lambda a: (-int(sizes[a]), a))
        chance = {}
        for i, x in enumerate(names):
            for y in names[i + 1:]:
                p = 0.5 + float(rng.uniform(-OTHER_EDGE, OTHER_EDGE))
                chance[(x, y)], chance[(y, x)] = p, 1.0 - p
        planted = []
        for i, j, p in PLANTED_EDGES:
            if max(i, j) < len(rank):
                x, y = rank[i], rank[j]
                chance[(x, y)], chance[(y, x)] = p, 1.0 - p
                planted.append({"archetype": x, "opponent": y, "chance": p})
        n = len(ids)
        if n < 2:
            continue
        first = rng.integers(0, n, size=per_season)
        second = (first + rng.integers(1, n, size=per_season)) % n  # never the same deck
        p_win = np.array([chance.get((a, b), 0.5) for a, b in zip(labels[first], labels[second])])
        u = rng.random(per_season)
        draw = rng.random(per_season) < DRAW_SHARE
        result = np.where(draw, "draw", np.where(u < p_win, "win", "loss"))
        frames.append(pd.DataFrame({"deck_id": ids[first], "opponent_id": ids[second], "result": result}))
        truth[season] = {"planted": planted,
                         "chances": [{"archetype": a, "opponent": b, "chance": round(p, 6)}
                                     for (a, b), p in sorted(chance.items())]}
    path = out / "matches.csv"
    pd.concat(frames, ignore_index=True).to_csv(path, index=False, lineterminator="\n")
    truth_path = out / "matches_truth.json"
    truth_path.write_text(json.dumps(truth, indent=1, sort_keys=True) + "\n", encoding="utf-8")
    return path, truth_path


def _write_decklists(folder: Path, decks: pd.DataFrame, season: str, n: int, d, c, k, names) -> None:
    """``n`` decks of the first season, evenly spaced by deck id, one text file each."""
    folder.mkdir(parents=True, exist_ok=True)
    for old in folder.glob("*.txt"):
        old.unlink()
    first = np.flatnonzero((decks["season"] == season).to_numpy())
    if n <= 0 or len(first) == 0:
        return
    pick = first[np.unique(np.linspace(0, len(first) - 1, num=min(n, len(first))).astype(int))]
    starts = np.searchsorted(d, pick)
    ends = np.searchsorted(d, pick, side="right")
    for i, lo, hi in zip(pick, starts, ends):
        row = decks.iloc[i]
        lines = ["# A Lanternfall decklist (invented demo data).",
                 f"Leader: {row.leader}", f"Season: {row.season}", f"Date: {row.date}", f"Title: {row.title}",
                 f"Event: {row.event}", f"Player: {row.player}", f"Wins: {row.wins}", f"Losses: {row.losses}", ""]
        lines += [f"{int(k[j])} {names[c[j]]}" for j in range(lo, hi)]
        (folder / f"{row.deck_id}.txt").write_text("\n".join(lines) + "\n", encoding="utf-8")


def main(argv=None) -> int:
    """Command line: write the demo data (defaults give the committed files)."""
    p = argparse.ArgumentParser(description=f"Write invented {GAME} deck data with planted archetypes.")
    p.add_argument("--seed", type=int, default=DEFAULTS["seed"])
    p.add_argument("--out", default=str(Path(__file__).resolve().parent), help="output folder (default: demo_data)")
    p.add_argument("--decks-per-season", type=int, default=DEFAULTS["decks_per_season"])
    p.add_argument("--seasons", type=int, default=DEFAULTS["seasons"])
    p.add_argument("--leaders", type=int, default=DEFAULTS["leaders"])
    p.add_argument("--cards-per-leader", type=int, default=DEFAULTS["cards_per_leader"], help="card pool per leader")
    p.add_argument("--neutral-cards", type=int, default=DEFAULTS["neutral_cards"])
    p.add_argument("--decklists", type=int, default=DEFAULTS["decklists"], help="text decklists to write")
    p.add_argument("--format", dest="fmt", choices=("csv", "parquet"), default=DEFAULTS["fmt"],
                   help="file format of deck_cards")
    p.add_argument("--matches-per-season", type=int, default=MATCHES_PER_SEASON,
                   help=f"games written to matches.csv in each of the last {MATCH_SEASONS} seasons (0: none)")
    a = p.parse_args(argv)
    try:
        summary = generate(a.out, seed=a.seed, decks_per_season=a.decks_per_season, seasons=a.seasons,
                           leaders=a.leaders, cards_per_leader=a.cards_per_leader, neutral_cards=a.neutral_cards,
                           decklists=a.decklists, fmt=a.fmt, matches_per_season=a.matches_per_season)
    except ValueError as exc:
        print(f"generate.py: {exc}", file=sys.stderr)
        return 2
    print(f"wrote {summary['decks']} decks, {summary['rows']} card rows, {summary['archetypes']} archetypes "
          f"({summary['splits']} splits, {summary['merges']} merges) to {a.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
