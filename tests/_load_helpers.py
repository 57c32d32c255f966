"""Small hand-made deck tables for the loading and rule tests (invented names; truth planted by hand)."""
from __future__ import annotations

from pathlib import Path

from sitegen.config import Config, from_dict

DECKS_CSV = (
    "deck_id,season,leader,wins,losses,event,player,title\n"
    "d2,Season 10,Vessa,1,2,Cup,Ann,Fox rush\n"
    "d1,Season 2,Orm,3,0,,Bo,\n"
    "d3,Season 2,Vessa,,,,,\n"
)
CARDS_CSV = (
    "deck_id,card,quantity\n"
    "d1,Tide Call,2\n"
    "d1,Ember Fox,3\n"
    "d2,Ember Fox,1\n"
    "d3,Stone Wall,4\n"
)


def write(folder: Path, name: str, content: str | bytes) -> Path:
    """Write a text (UTF-8) or bytes file and return its path."""
    path = folder / name
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_bytes(content.encode("utf-8"))
    return path


def config(root: Path, **sections) -> Config:
    """A config rooted at ``root``; keyword arguments are TOML sections (data={...})."""
    return from_dict(dict(sections), root=root)


def tables(root: Path, decks: str | bytes = DECKS_CSV, cards: str | bytes = CARDS_CSV, *,
           decks_name: str = "decks.csv", cards_name: str = "deck_cards.csv", **sections) -> Config:
    """Write a deck table and a long-form table and return a config naming them."""
    write(root, decks_name, decks)
    write(root, cards_name, cards)
    data = {"decks": decks_name, "deck_cards": cards_name, **sections.pop("data", {})}
    return config(root, data=data, **sections)
