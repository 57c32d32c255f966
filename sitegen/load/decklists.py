"""Reading a folder of plain-text decklists, one deck per ``*.txt`` file.

The deck id is the file name without ``.txt``. A file holds, in order:
optional ``#`` comment lines, header lines ``Key: value`` (keys
:data:`HEADER_KEYS`, any case), then card lines ``<quantity> <name>`` or
``<quantity>x <name>``. Blank lines and comments may appear anywhere. Files
are streamed line by line with a cap on line length and on card lines, so a
huge or runaway file costs bounded memory and ends in a clear error.
"""
from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import DataError, DataErrors
from .origin import ListOrigin
from .tables import Table

#: Header keys a decklist may give, lower case -> logical deck column.
HEADER_KEYS: dict[str, str] = {
    "leader": "leader", "season": "season", "date": "date", "title": "title",
    "event": "event", "player": "player", "wins": "wins", "losses": "losses",
}
#: Longest line read, in bytes; longer lines are an error rather than a memory spike.
MAX_LINE_BYTES = 4096
#: Most card lines one decklist may hold.
MAX_CARD_LINES = 2000

_CARD_LINE = re.compile(r"([0-9]+)[xX]?[ \t]+(.*\S)[ \t]*")
_HEADER_LINE = re.compile(r"([A-Za-z][A-Za-z _-]*?)[ \t]*:[ \t]*(.*)")
_FIX_CARD = "write card lines as '<quantity> <name>' (for example '3 Ember Fox' or '3x Ember Fox')"


def _parse_file(path: Path, errors: list[DataError]):
    """One decklist: (header values, header lines, card rows as (line, qty, name)), or None on error."""
    header: dict[str, str] = {}
    header_line: dict[str, int] = {}
    cards: list[tuple[int, str, str]] = []
    failed = False
    try:
        f = open(path, "rb")
    except OSError as exc:
        errors.append(DataError(path, f"cannot be read: {exc.strerror}", fix="check the file's permissions"))
        return None
    with f:
        number = 0
        while True:
            raw = f.readline(MAX_LINE_BYTES + 1)
            if not raw:
                break
            number += 1
            if len(raw) > MAX_LINE_BYTES and not raw.endswith(b"\n"):
                errors.append(DataError(path, f"line longer than {MAX_LINE_BYTES} bytes", row=number,
                                        fix="a decklist holds one card per line; check this is a decklist"))
                return None
            if b"\x00" in raw:
                errors.append(DataError(path, "binary data, not text (a NUL byte)", row=number,
                                        fix="give decklists as UTF-8 text files"))
                return None
            try:
                line = raw.decode("utf-8")
            except UnicodeDecodeError as exc:
                errors.append(DataError(path, f"not valid UTF-8 text (bad byte 0x{raw[exc.start]:02x} at byte {exc.start + 1} of the line)",
                                        row=number, fix="save the file as UTF-8"))
                return None
            if number == 1:
                line = line.lstrip("\ufeff")
            text = line.strip()
            if not text or text.startswith("#"):
                continue
            m = _CARD_LINE.fullmatch(text)
            if m:
                if len(cards) >= MAX_CARD_LINES:
                    errors.append(DataError(path, f"more than {MAX_CARD_LINES} card lines", row=number,
                                            fix="one file holds one deck; split it or check it is a decklist"))
                    return None
                cards.append((number, m.group(1), m.group(2)))
                continue
            h = _HEADER_LINE.fullmatch(text)
            if h:
                key = " ".join(h.group(1).split()).lower()
                if cards:
                    errors.append(DataError(path, f"header line '{h.group(1)}:' after the first card line", row=number,
                                            value=text, fix="move header lines (Leader:, Season:...) above the cards"))
                    failed = True
                elif key not in HEADER_KEYS:
                    known = ", ".join(k.capitalize() for k in HEADER_KEYS)
                    errors.append(DataError(path, f"unknown header '{h.group(1)}'", row=number, value=text,
                                            fix=f"use one of {known}, or start a comment line with '#'"))
                    failed = True
                elif HEADER_KEYS[key] in header:
                    errors.append(DataError(path, f"header '{h.group(1)}' given twice (first on line {header_line[HEADER_KEYS[key]]})",
                                            row=number, value=text, fix="keep one of the two lines"))
                    failed = True
                else:
                    header[HEADER_KEYS[key]] = h.group(2).strip()
                    header_line[HEADER_KEYS[key]] = number
                continue
            errors.append(DataError(path, "not a header line nor a card line", row=number, value=text,
                                    fix=f"{_FIX_CARD}; header lines look like 'Leader: NAME'"))
            failed = True
    if not cards and not failed:
        errors.append(DataError(path, "no card lines (the decklist is empty)", row=max(number, 1), fix=_FIX_CARD))
        return None
    return None if failed else (header, header_line, cards)


def read_decklists(folder: Path, *, setting: str = "data.decklists") -> tuple[Table, Table]:
    """Read every ``*.txt`` in ``folder``: (deck table, long-form card table).

    Both tables hold text only; the deck table has every logical deck column
    (empty where a header was not given). Raises DataErrors listing every
    file's problems, in file and line order.
    """
    if not folder.exists():
        raise DataError(folder, "folder not found", fix=f"check the path given in setting '{setting}' (relative to the config file)")
    if not folder.is_dir():
        raise DataError(folder, "is a file, not a folder", fix=f"give a folder of *.txt decklists in setting '{setting}'")
    paths = sorted(p for p in folder.iterdir() if p.suffix.lower() == ".txt" and p.is_file())
    if not paths:
        raise DataError(folder, "no decklists (no *.txt files) in the folder",
                        fix="put one deck per .txt file in the folder, or set data.decks and data.deck_cards instead")
    errors: list[DataError] = []
    files: list[str] = []
    deck_rows: dict[str, list[str]] = {c: [] for c in ("deck_id", *HEADER_KEYS.values())}
    deck_lines: dict[str, list[int]] = {c: [] for c in deck_rows}
    card_file: list[int] = []
    card_line: list[int] = []
    card_deck: list[str] = []
    card_qty: list[str] = []
    card_name: list[str] = []
    for path in paths:
        deck_id = path.stem
        parsed = _parse_file(path, errors)
        if parsed is None:
            continue
        header, header_line, cards = parsed
        index = len(files)
        files.append(str(path))
        deck_rows["deck_id"].append(deck_id)
        deck_lines["deck_id"].append(1)
        first_card = cards[0][0]
        for column in HEADER_KEYS.values():
            deck_rows[column].append(header.get(column, ""))
            deck_lines[column].append(header_line.get(column, first_card))
        for number, qty, name in cards:
            card_file.append(index)
            card_line.append(number)
            card_deck.append(deck_id)
            card_qty.append(qty)
            card_name.append(name)
    if errors:
        raise DataErrors(errors)
    n = len(files)
    file_index = np.arange(n)
    decks = Table(
        str(folder),
        pd.DataFrame({c: pd.Series(v, dtype="str") for c, v in deck_rows.items()}),
        ListOrigin(files, file_index, np.asarray(deck_lines["deck_id"])),
        {"deck_id": "file name", **{c: c.capitalize() for c in HEADER_KEYS.values()}},
        {c: ListOrigin(files, file_index, np.asarray(deck_lines[c])) for c in HEADER_KEYS.values()},
    )
    cards = Table(
        str(folder),
        pd.DataFrame({"deck_id": pd.Series(card_deck, dtype="str"), "card": pd.Series(card_name, dtype="str"),
                      "quantity": pd.Series(card_qty, dtype="str")}),
        ListOrigin(files, np.asarray(card_file), np.asarray(card_line)),
        {"deck_id": "file name", "card": "card name", "quantity": "quantity"},
    )
    return decks, cards
