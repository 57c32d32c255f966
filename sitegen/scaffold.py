"""``sitegen new DIR``: a fresh site project that builds as it is.

It holds a commented ``site.toml`` (every setting with its default and help),
a small sample of invented deck data to replace with your own, ``content/``
for notes and ``templates/`` for overrides.
"""
from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

from .config import commented_toml
from .errors import SitegenError

_SITE_TOML = """\
# sitegen site config. Paths are relative to this file.
# Every setting is listed with its help line; those commented out are at
# their default. The README's settings table says more.

"""
_GIVEN = {
    "site.title": "My archetype guide",
    "data.decks": "data/decks.csv",
    "data.deck_cards": "data/deck_cards.csv",
    "data.cards": "data/cards.csv",
}

_NOTE = """\
---
title: Notes on this archetype
summary: One line shown under the archetype's name.
---
Write what the numbers cannot say: how the deck plays, what beats it.
The file name is the archetype's slug, as in its page address.
"""

_TEMPLATES_README = """\
Templates placed here override the packaged ones file by file: copy a file
from sitegen's templates folder (for example base.html or assets/site.css)
and change it. Files not found here come from the packaged defaults.
"""

# A tiny invented game for the sample data: two leaders, three plans each.
_LEADERS = ("Wren of the Salt Road", "Old Mother Cinder")
_WORDS_A = ("Quiet", "Gleaming", "Hollow", "Bitter", "Lantern", "Patient", "Crooked", "Velvet", "Drowned", "Restless")
_WORDS_B = ("Oath", "Kettle", "Harrow", "Thimble", "Vigil", "Ferry", "Almanac", "Cinderling", "Loom", "Tollgate")
_TYPES = ("Ploy", "Follower", "Trinket")


def _sample_tables(seed: int = 11) -> tuple[list[list], list[list], list[list]]:
    rng = np.random.default_rng(seed)
    names = [f"{a} {b}" for a in _WORDS_A for b in _WORDS_B]
    cards = [[n, _TYPES[i % 3], int(1 + i % 6)] for i, n in enumerate(names)]
    decks, rows = [], []
    deck_no = 0
    for season in ("First Tide", "Second Tide"):
        for li, leader in enumerate(_LEADERS):
            pool = names[li * 50:(li + 1) * 50]
            plans = [pool[p * 14:(p * 14) + 14] for p in range(3)]
            flex = pool[42:]
            for plan_i, core in enumerate(plans):
                for _ in range(40 + 10 * plan_i):
                    deck_no += 1
                    deck_id = f"s{deck_no:04d}"
                    chosen = dict.fromkeys(core, 3)
                    for extra in rng.choice(flex, size=2, replace=False):
                        chosen[str(extra)] = 1
                    wins = int(rng.integers(0, 6))
                    decks.append([deck_id, season, leader, wins, int(rng.integers(0, 6))])
                    rows.extend([deck_id, c, q] for c, q in sorted(chosen.items()))
    return decks, rows, cards


def _csv(header: list[str], rows: list[list]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


def new_site(folder: Path) -> Path:
    """Create a site project in ``folder`` (which must not exist, or be empty)."""
    folder = Path(folder)
    if folder.exists() and (not folder.is_dir() or any(folder.iterdir())):
        raise SitegenError(f"'{folder}' already exists and is not an empty folder; choose a new folder name")
    decks, rows, cards = _sample_tables()
    files = {
        "site.toml": _SITE_TOML + commented_toml(_GIVEN),
        "data/decks.csv": _csv(["deck_id", "season", "leader", "wins", "losses"], decks),
        "data/deck_cards.csv": _csv(["deck_id", "card", "quantity"], rows),
        "data/cards.csv": _csv(["card", "type", "cost"], cards),
        "content/index.md": "---\ntitle: Welcome\n---\nA few words for the front page.\n",
        "content/archetypes/example-slug.md.txt": _NOTE,
        "templates/README.txt": _TEMPLATES_README,
    }
    for name, text in files.items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    return folder.resolve()
