"""Small site projects for build-level tests (the scaffold's invented sample data)."""
from __future__ import annotations

import csv
import shutil
from pathlib import Path

from sitegen.scaffold import new_site


def tree(root: Path) -> dict[str, bytes]:
    """Every file under ``root`` by relative path, with its bytes."""
    return {p.relative_to(root).as_posix(): p.read_bytes() for p in sorted(root.rglob("*")) if p.is_file()}


def make_project(folder: Path) -> Path:
    """A fresh scaffolded project; returns its site.toml."""
    new_site(folder)
    return folder / "site.toml"


def read_rows(path: Path) -> tuple[list[str], list[list[str]]]:
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    return rows[0], rows[1:]


def write_rows(path: Path, header: list[str], rows: list[list[str]]) -> None:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)


def drop_season(project: Path, season: str) -> None:
    """Remove one season's decks (and their card rows) from a project's data."""
    data = project / "data"
    header, decks = read_rows(data / "decks.csv")
    gone = {r[0] for r in decks if r[1] == season}
    write_rows(data / "decks.csv", header, [r for r in decks if r[0] not in gone])
    header, cards = read_rows(data / "deck_cards.csv")
    write_rows(data / "deck_cards.csv", header, [r for r in cards if r[0] not in gone])


def interleave_seasons(project: Path) -> None:
    """Rename the deck ids so that the two seasons' decks alternate in id order (the loader's)."""
    data = project / "data"
    header, rows = read_rows(data / "decks.csv")
    seasons = sorted({r[1] for r in rows})
    by_season = [[r for r in rows if r[1] == s] for s in seasons]
    new_id = {r[0]: f"x{i:05d}" for i, r in enumerate(r for group in zip(*by_season) for r in group)}
    write_rows(data / "decks.csv", header, [[new_id[r[0]], *r[1:]] for r in rows])
    card_header, card_rows = read_rows(data / "deck_cards.csv")
    write_rows(data / "deck_cards.csv", card_header, [[new_id[r[0]], *r[1:]] for r in card_rows])


def change_one_deck(project: Path) -> tuple[str, str]:
    """Take one copy out of the first card of the first deck; returns that deck's (season, leader)."""
    data = project / "data"
    header, cards = read_rows(data / "deck_cards.csv")
    deck = cards[0][0]
    cards[0][2] = str(max(1, int(cards[0][2]) - 1)) if int(cards[0][2]) > 1 else "2"
    write_rows(data / "deck_cards.csv", header, cards)
    _, decks = read_rows(data / "decks.csv")
    row = next(r for r in decks if r[0] == deck)
    return row[1], row[2]


def copy_project(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst, ignore=shutil.ignore_patterns("site", ".sitegen-cache", ".site.*"))
    return dst / "site.toml"
