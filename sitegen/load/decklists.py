"""Reading a folder of plain-text decklists, one deck per ``*.txt`` file.

The deck id is the file name without ``.txt``. A file holds, in order:
optional ``#`` comment lines, header lines ``Key: value`` (keys
:data:`HEADER_KEYS`, any case), then card lines ``<quantity> <name>`` or
``<quantity>x <name>``, then optionally a sideboard: a ``Sideboard`` line
(``Sideboard:``, ``# Sideboard`` too), or a blank line, then its card lines,
which are read and checked but are no part of the deck. Comments may appear
anywhere, blank lines anywhere before the first card and inside a sideboard. Files
are streamed line by line with a cap on line length and on card lines, so a
huge or runaway file costs bounded memory and ends in a clear error.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import DataError, DataErrors
from ..model import Finding
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


#: A line that starts the sideboard: ``Sideboard``, ``Sideboard:``, ``# Sideboard`` (any case, any number of #).
_SIDEBOARD_LINE = re.compile(r"(?:#+[ \t]*)?sideboard[ \t]*:?", re.IGNORECASE)
_FIX_SIDEBOARD = ("a decklist holds its main cards, then at most one sideboard: a 'Sideboard' line (or one blank "
                  "line) and its cards")


@dataclass
class Parsed:
    """One decklist as read: header values and lines, main card rows as (line, qty, name), the
    sideboard's card lines (read and checked, kept out of the deck), and the line of the blank
    line that started the sideboard when no 'Sideboard' line marked it (0 otherwise)."""

    header: dict[str, str]
    header_line: dict[str, int]
    cards: list[tuple[int, str, str]]
    sideboard: list[tuple[int, str, str]]
    blank_sideboard: int = 0


def _parse_file(path: Path, errors: list[DataError]) -> Parsed | None:
    """One decklist, or None on error (the errors appended to ``errors``).

    After the first card line, a sideboard starts at a ``Sideboard`` line
    (:data:`_SIDEBOARD_LINE`) or at the first card line that follows a blank
    line; its cards are read as card lines and kept out of the deck.
    """
    header: dict[str, str] = {}
    header_line: dict[str, int] = {}
    cards: list[tuple[int, str, str]] = []
    sideboard: list[tuple[int, str, str]] = []
    marked = 0  # line of the 'Sideboard' line
    blank_sideboard = 0  # line of the blank line that started an unmarked sideboard
    blank_after_cards = 0  # line of the last blank line below a card line, 0 after a card line
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
            if not text:
                if cards and not blank_after_cards:
                    blank_after_cards = number
                continue
            if _SIDEBOARD_LINE.fullmatch(text):
                if not cards:
                    errors.append(DataError(path, "sideboard line before any card of the main deck", row=number,
                                            value=text, fix="list the main deck's cards first, then the sideboard"))
                    failed = True
                elif marked or blank_sideboard:
                    first = marked or blank_sideboard
                    errors.append(DataError(path, f"a second sideboard (the first starts on line {first})", row=number,
                                            value=text, fix=_FIX_SIDEBOARD))
                    failed = True
                else:
                    marked = number
                continue
            if text.startswith("#"):
                continue
            m = _CARD_LINE.fullmatch(text)
            if m:
                if len(cards) + len(sideboard) >= MAX_CARD_LINES:
                    errors.append(DataError(path, f"more than {MAX_CARD_LINES} card lines", row=number,
                                            fix="one file holds one deck; split it or check it is a decklist"))
                    return None
                if blank_after_cards and not marked:
                    if blank_sideboard:
                        errors.append(DataError(
                            path, f"card lines after a second blank line below the main cards (the sideboard "
                                  f"starts after the blank line {blank_sideboard})", row=number, value=text,
                            fix="remove blank lines between cards of one part, or mark the sideboard with a 'Sideboard' line"))
                        failed = True
                    else:
                        blank_sideboard = blank_after_cards
                blank_after_cards = 0
                (sideboard if marked or blank_sideboard else cards).append((number, m.group(1), m.group(2)))
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
                                    fix=f"{_FIX_CARD}; header lines look like 'Leader: NAME'; a sideboard starts at a 'Sideboard' line"))
            failed = True
    if not cards and not failed:
        errors.append(DataError(path, "no card lines (the decklist is empty)", row=max(number, 1), fix=_FIX_CARD))
        return None
    return None if failed else Parsed(header, header_line, cards, sideboard, blank_sideboard)


def read_decklists(folder: Path, *, setting: str = "data.decklists",
                   findings: list[Finding] | None = None) -> tuple[Table, Table]:
    """Read every ``*.txt`` in ``folder``: (deck table, long-form card table).

    Both tables hold text only; the deck table has every logical deck column
    (empty where a header was not given). Raises DataErrors listing every
    file's problems, in file and line order. Sideboards are left out of the
    card table; those started by a blank line alone (no 'Sideboard' line)
    are told in a ``sideboard`` finding appended to ``findings``.
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
    unmarked: list[tuple[str, int, int]] = []
    for path in paths:
        deck_id = path.stem
        parsed = _parse_file(path, errors)
        if parsed is None:
            continue
        header, header_line, cards = parsed.header, parsed.header_line, parsed.cards
        if parsed.blank_sideboard:
            unmarked.append((path.name, parsed.blank_sideboard, len(parsed.sideboard)))
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
    if unmarked and findings is not None:
        shown = "; ".join(f"{name} ({lines} card line(s) after the blank line {at})" for name, at, lines in unmarked[:10])
        more = f"; and {len(unmarked) - 10} more" if len(unmarked) > 10 else ""
        findings.append(Finding("sideboard", f"{len(unmarked)} decklist(s) hold card lines after a blank line below "
                                f"their main cards, read as a sideboard and left out of the deck: {shown}{more}. "
                                "Mark a sideboard with a 'Sideboard' line; if those cards belong to the main deck, "
                                "remove the blank line"))
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
