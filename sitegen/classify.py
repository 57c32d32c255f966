"""``sitegen classify``: place decklists from outside the data by the last build's stored rule.

The models are the files the build wrote into the site (``classify/index.json``
and one ``classify/<season>/<leader>.json`` per partition; see
:mod:`sitegen.site.classify`), so nothing is analysed again: a deck's known
cards and their copies go to the archetype under whose card rates they are
likeliest, or to the other decks when the other decks' rates fit best
(:func:`sitegen.analysis.card_rates.place`), and the deck is reported under
the group the site shows that archetype's decks in. Its distance is one less
the cosine similarity of its TF-IDF row (the known cards' idf weights, unit
length) to that archetype's centre.
"""
from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Sequence

import numpy as np
import scipy.sparse as sp

from .errors import ConfigError, DataError, DataErrors, SitegenError
from .model import ALL_LEADERS, OTHER_KEY
from .site.classify import INDEX_PATH, MODEL_FORMAT

if TYPE_CHECKING:
    from .build_settings import BuildSettings


class ClassifyError(SitegenError):
    """No models to classify with, or a list that names a leader or season without one."""


@dataclass
class Deck:
    """One list to place: its name (file or deck id), leader and season as given ('' when not), card copies."""

    name: str
    leader: str
    season: str
    cards: dict[str, int] = field(default_factory=dict)


@dataclass
class Placed:
    deck: str
    season: str
    leader: str
    archetype: str
    name: str
    distance: float | None
    next_archetype: str
    next_name: str
    next_distance: float | None
    unknown: list[str]


def _fmt(x: float | None) -> str:
    return "" if x is None else f"{x:.4f}"


class Models:
    """The last build's models in a site folder, loaded as asked for."""

    def __init__(self, site: Path) -> None:
        self.site = site
        index = site / INDEX_PATH
        try:
            doc = json.loads(index.read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise ClassifyError(f"{index}: no classification models: the site has not been built yet (or was built by "
                                "an older sitegen); run 'sitegen build' first") from None
        except (OSError, ValueError) as exc:
            raise ClassifyError(f"{index}: cannot be read ({exc}); run 'sitegen build' again") from None
        if not isinstance(doc, dict) or doc.get("format") != MODEL_FORMAT:
            raise ClassifyError(f"{index}: models of another format (format {doc.get('format') if isinstance(doc, dict) else '?'}, "
                                f"this sitegen reads {MODEL_FORMAT}); run 'sitegen build' again")
        self.seasons: list[str] = list(doc["seasons"])
        self.paths: dict[str, dict[str, str]] = doc["models"]
        self.pooled = bool(doc.get("pooled"))
        self._loaded: dict[str, Any] = {}

    def season(self, wanted: str | None) -> str:
        if not wanted:
            if not self.seasons:
                raise ClassifyError(f"{self.site / INDEX_PATH}: the last build has no seasons with decks")
            return self.seasons[-1]
        from .load.names import clean_name

        name = clean_name(wanted)
        if name not in self.paths:
            raise ClassifyError(f"season {name!r} is unknown to the last build; its seasons are "
                                f"{', '.join(repr(s) for s in self.seasons)}")
        return name

    def leader(self, season: str, wanted: str, deck: str) -> str:
        from .load.names import clean_name, variant_key

        by = self.paths[season]
        if self.pooled and ALL_LEADERS in by:
            return ALL_LEADERS
        if not wanted:
            raise ClassifyError(f"{deck}: no leader: add a 'Leader: NAME' line (or give --leader); "
                                f"the leaders of season {season!r} are {', '.join(repr(x) for x in sorted(by))}")
        name = clean_name(wanted)
        if name in by:
            return name
        hits = [x for x in by if variant_key(x) == variant_key(name)]
        if len(hits) == 1:
            return hits[0]
        raise ClassifyError(f"{deck}: leader {name!r} has no decks in season {season!r} of the last build; "
                            f"its leaders are {', '.join(repr(x) for x in sorted(by))}")

    def model(self, season: str, leader: str) -> dict[str, Any]:
        path = self.paths[season][leader]
        if path not in self._loaded:
            try:
                doc = json.loads((self.site / path).read_text(encoding="utf-8"))
            except (OSError, ValueError) as exc:
                raise ClassifyError(f"{self.site / path}: cannot be read ({exc}); run 'sitegen build' again") from None
            self._loaded[path] = _Prepared(doc)
        return self._loaded[path]


class _Prepared:
    """A model document with its centres as arrays and its card lookups."""

    def __init__(self, doc: dict[str, Any]) -> None:
        from .load.names import variant_key

        self.doc = doc
        self.cards: list[str] = doc["cards"]
        self.idf = np.asarray(doc["idf"], dtype=np.float64)
        m = len(self.cards)
        self.index = {c: i for i, c in enumerate(self.cards)}
        loose: dict[str, int] = {}
        for i, c in enumerate(self.cards):
            k = variant_key(c)
            loose[k] = -1 if k in loose else i
        self.loose = loose
        self.centres = np.zeros((len(doc["centres"]), m))
        for row, c in enumerate(doc["centres"]):
            self.centres[row, c["i"]] = c["w"]
        rates = [c["rates"] for c in doc["centres"]] + (list(doc["other_rates"]) if doc["centres"] else [])
        self.log_odds = np.zeros((len(rates), m))
        for row, r in enumerate(rates):
            self.log_odds[row] = r["floor"]
            self.log_odds[row, r["i"]] = r["w"]
        self.constants = np.asarray([r["b"] for r in rates], dtype=np.float64)
        length = doc.get("length") or {}
        self.full = float(length.get("full", 0.0))
        self.levels: np.ndarray | None = None
        if rates:  # each row's copy-level log-shares: the model's base, with the row's own where they differ
            mix = np.full(doc["levels"]["count"] * m, float(doc["levels"]["floor"]))
            mix[doc["levels"]["i"]] = doc["levels"]["w"]
            self.levels = np.tile(mix, (len(rates), 1))
            for row, r in enumerate(rates):
                self.levels[row, r["levels"]["i"]] = r["levels"]["w"]
        self.to = [int(c["to"]) for c in doc["centres"]]
        self.mean = None
        if doc.get("mean"):
            self.mean = np.zeros(m)
            self.mean[doc["mean"]["i"]] = doc["mean"]["w"]

    def column(self, card: str) -> int | None:
        from .load.names import clean_name, variant_key

        name = clean_name(card)
        if name in self.index:
            return self.index[name]
        hit = self.loose.get(variant_key(name))
        return hit if hit is not None and hit >= 0 else None


def _rows(model: _Prepared, decks: Sequence[Deck]) -> tuple[sp.csr_matrix, list[list[str]], sp.csr_matrix]:
    """Unit TF-IDF rows (presence x idf) of the decks over the model's cards, as the build makes
    them (sitegen.analysis.features.tfidf), each deck's unknown cards, and its copies of each card."""
    indptr, indices, unknown, copies = [0], [], [], []
    for d in decks:
        cols: dict[int, int] = {}
        missing = []
        for card, qty in d.cards.items():
            c = model.column(card)
            if c is None:
                missing.append(card)
            else:
                cols[c] = cols.get(c, 0) + int(qty)
        indices.extend(sorted(cols))
        copies.extend(cols[c] for c in sorted(cols))
        indptr.append(len(indices))
        unknown.append(missing)
    indices_a = np.asarray(indices, dtype=np.int32)
    indptr_a = np.asarray(indptr, dtype=np.int64)
    data = model.idf[indices_a] if len(indices_a) else np.zeros(0)
    norms = np.ones(len(decks))
    filled = np.flatnonzero(np.diff(indptr_a))
    if filled.size:
        squares = np.sqrt(np.add.reduceat(data * data, indptr_a[filled]))
        norms[filled] = np.where(squares == 0, 1.0, squares)
    data = data / np.repeat(norms, np.diff(indptr_a))
    shape = (len(decks), len(model.cards))
    held = sp.csr_matrix((np.asarray(copies, dtype=np.float64), indices_a, indptr_a), shape=shape)
    return sp.csr_matrix((data, indices_a, indptr_a), shape=shape), unknown, held


def place_decks(models: Models, decks: Sequence[Deck], season_opt: str | None) -> list[Placed]:
    """Every deck placed, in the order given."""
    from .analysis.card_rates import CardRates, place

    out: list[Placed | None] = [None] * len(decks)
    groups: dict[tuple[str, str], list[int]] = {}
    for i, d in enumerate(decks):
        season = models.season(season_opt or d.season or None)
        leader = models.leader(season, d.leader, d.name)
        groups.setdefault((season, leader), []).append(i)
    for (season, leader), members in groups.items():
        model = models.model(season, leader)
        doc = model.doc
        rows, unknown, held = _rows(model, [decks[i] for i in members])
        names = [(g["slug"], g["name"]) for g in doc["groups"]]
        if len(model.to):
            sizes = np.asarray([sum(int(q) for q in decks[i].cards.values()) for i in members], dtype=np.float64)
            rule = CardRates(model.log_odds, model.constants, len(model.to), model.levels, model.full)
            labels = place(held, rule, sizes)
            sims = np.asarray(rows @ model.centres.T)
            sim = np.where(labels >= 0, sims[np.arange(len(labels)), np.maximum(labels, 0)], sims.max(axis=1))
        else:
            labels = np.full(len(members), -1)
            sim = np.asarray(rows @ model.mean).ravel() if model.mean is not None else None
            sims = np.zeros((len(members), 0))
        for j, i in enumerate(members):
            group = model.to[labels[j]] if labels[j] >= 0 else -1
            slug, name = names[group] if group >= 0 else (OTHER_KEY, "Other decks")
            dist = None if sim is None else float(np.round(np.clip(1.0 - sim[j], 0.0, 2.0), 4))
            best: dict[int, float] = {}
            for c in range(sims.shape[1]):
                to = model.to[c]
                if to < 0 or to == group:
                    continue
                if to not in best or sims[j, c] > best[to]:
                    best[to] = float(sims[j, c])
            nxt = min(best, key=lambda g: (-best[g], g)) if best else None
            out[i] = Placed(
                deck=decks[i].name, season=season, leader=doc["leader"], archetype=slug, name=name, distance=dist,
                next_archetype=names[nxt][0] if nxt is not None else "", next_name=names[nxt][1] if nxt is not None else "",
                next_distance=float(np.round(np.clip(1.0 - best[nxt], 0.0, 2.0), 4)) if nxt is not None else None,
                unknown=unknown[j])
    return [p for p in out if p is not None]


# -- reading lists

def read_lists(paths: Sequence[Path]) -> list[Deck]:
    """Text decklists (the README's format, sitegen.load.decklists), each file one deck; a folder
    stands for its *.txt files. Every file's problems are reported together."""
    from .load.decklists import _parse_file
    from .load.names import clean_name

    files: list[Path] = []
    for p in paths:
        if p.is_dir():
            found = sorted(x for x in p.iterdir() if x.suffix.lower() == ".txt" and x.is_file())
            if not found:
                raise DataError(p, "no decklists (no *.txt files) in the folder", fix="give decklist files or a folder of them")
            files.extend(found)
        elif not p.exists():
            raise DataError(p, "file not found", fix="check the path")
        else:
            files.append(p)
    errors: list[DataError] = []
    decks: list[Deck] = []
    for path in files:
        parsed = _parse_file(path, errors)
        if parsed is None:
            continue
        cards: dict[str, int] = {}
        for number, qty, name in parsed.cards:
            cards[clean_name(name)] = cards.get(clean_name(name), 0) + int(qty)
        decks.append(Deck(str(path), parsed.header.get("leader", ""), parsed.header.get("season", ""), cards))
    if errors:
        raise DataErrors(errors)
    return decks


def read_tables(settings: BuildSettings, decks_path: Path, cards_path: Path) -> list[Deck]:
    """A deck table (deck id, leader, season when it has that column) and a long-form table (deck id,
    card, quantity), with the column names of the config's columns.* settings (``settings.columns``)."""
    from .load.tables import read_table

    col = dict(settings.columns)
    dt = read_table(decks_path, setting="--decks", required={"deck_id": col["deck_id"], "leader": col["leader"]},
                    optional={"season": col["season"]}).frame
    ct = read_table(cards_path, setting="--cards", required={"deck_id": col["deck_id"], "card": col["card"],
                                                              "quantity": col["quantity"]}).frame
    decks: dict[str, Deck] = {}
    for row in dt.itertuples(index=False):
        d = row._asdict()
        deck_id = str(d["deck_id"]).strip()
        decks[deck_id] = Deck(deck_id, str(d.get("leader") or ""), str(d.get("season") or "")
                              if d.get("season") is not None else "")
    ids = ct["deck_id"].astype(str).str.strip().to_numpy()
    names = ct["card"].astype(str).to_numpy()
    qty = ct["quantity"].astype(str).str.strip().to_numpy()
    errors: list[DataError] = []
    for n, (deck_id, card, q) in enumerate(zip(ids, names, qty)):
        if not q.isdigit():
            errors.append(DataError(cards_path, "quantity is not a whole number", row=n + 2, column=col["quantity"],
                                    value=q, fix="give copies as a whole number such as 3"))
            if len(errors) >= 20:
                break
            continue
        deck = decks.get(deck_id)
        if deck is None:
            errors.append(DataError(cards_path, "deck id not in the deck table", row=n + 2, column=col["deck_id"],
                                    value=deck_id, fix=f"add the deck to {decks_path} or remove its rows"))
            if len(errors) >= 20:
                break
            continue
        from .load.names import clean_name

        name = clean_name(card)
        deck.cards[name] = deck.cards.get(name, 0) + int(q)
    if errors:
        raise DataErrors(errors)
    return [d for d in decks.values() if d.cards]


# -- output

HEADER = ("list", "season", "leader", "archetype", "name", "distance", "next_archetype", "next_name", "next_distance",
          "unknown_cards")


def render(placed: Sequence[Placed], fmt: str) -> str:
    if fmt == "json":
        return json.dumps([{"list": p.deck, "season": p.season, "leader": p.leader, "archetype": p.archetype,
                            "name": p.name, "distance": p.distance, "next_archetype": p.next_archetype or None,
                            "next_name": p.next_name or None, "next_distance": p.next_distance,
                            "unknown_cards": p.unknown} for p in placed], indent=1, ensure_ascii=False) + "\n"
    if fmt == "csv":
        from .site.exports import safe_cell

        buf = io.StringIO(newline="")
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(HEADER)
        for p in placed:
            w.writerow([safe_cell(p.deck), safe_cell(p.season), safe_cell(p.leader), safe_cell(p.archetype),
                        safe_cell(p.name), _fmt(p.distance), safe_cell(p.next_archetype), safe_cell(p.next_name),
                        _fmt(p.next_distance), safe_cell("; ".join(p.unknown))])
        return buf.getvalue()
    lines = []
    for p in placed:
        text = f"{p.deck}: {p.name} [{p.archetype}]"
        if p.distance is not None:
            text += f", distance {p.distance:.4f}"
        if p.next_archetype:
            text += f"; next: {p.next_name} [{p.next_archetype}] at {p.next_distance:.4f}"
        if p.unknown:
            text += f"; {len(p.unknown)} unknown card(s): {', '.join(p.unknown[:5])}{' …' if len(p.unknown) > 5 else ''}"
        lines.append(text + f" ({p.leader}, {p.season})")
    return "\n".join(lines) + ("\n" if lines else "")


def classify(config: Path | str, lists: Sequence[Path], *, decks: Path | None = None, cards: Path | None = None,
             season: str | None = None, leader: str | None = None, fmt: str = "text") -> str:
    """The output of ``sitegen classify`` (see the module notes)."""
    from . import config as config_mod
    from .build_settings import BuildSettings

    settings = BuildSettings.from_config(config_mod.load(config))
    if (decks is None) != (cards is None):
        raise ConfigError("command line", "--decks/--cards", "give both tables (the deck table and the long-form table) or neither")
    if not lists and decks is None:
        raise ConfigError("command line", "LIST", "no decklists given", "give decklist files or folders, or --decks and --cards")
    models = Models(settings.output_dir())
    found = read_lists([Path(p) for p in lists]) if lists else []
    if decks is not None:
        found += read_tables(settings, Path(decks), Path(cards))
    if leader:
        for d in found:
            d.leader = leader
    return render(place_decks(models, found, season), fmt)
