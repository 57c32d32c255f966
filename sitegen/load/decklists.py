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


class _Stop(Exception):
    """Reading a decklist ends here: the error is in the list already."""


def _parse_file(path: Path, errors: list[DataError]) -> Parsed | None:
    """One decklist, or None on error (the errors appended to ``errors``).

    After the first card line, a sideboard starts at a ``Sideboard`` line
    (:data:`_SIDEBOARD_LINE`) or at the first card line that follows a blank
    line; its cards are read as card lines and kept out of the deck.
    """
    try:
        f = open(path, "rb")
    except OSError as exc:
        errors.append(DataError(path, f"cannot be read: {exc.strerror}", fix="check the file's permissions"))
        return None
    reader = _Reader(path, errors)
    try:
        with f:
            for number, text in _text_lines(f, path, errors):
                reader.read(number, text)
    except _Stop:
        return None
    return reader.parsed()


def _text_lines(f, path: Path, errors: list[DataError]):
    """(line number, text stripped) of each line of an open decklist; a line too long, holding a
    NUL byte or not UTF-8 appends its error and stops the reading (:class:`_Stop`)."""
    number = 0
    while True:
        raw = f.readline(MAX_LINE_BYTES + 1)
        if not raw:
            return
        number += 1
        if len(raw) > MAX_LINE_BYTES and not raw.endswith(b"\n"):
            errors.append(DataError(path, f"line longer than {MAX_LINE_BYTES} bytes", row=number,
                                    fix="a decklist holds one card per line; check this is a decklist"))
            raise _Stop
        if b"\x00" in raw:
            errors.append(DataError(path, "binary data, not text (a NUL byte)", row=number,
                                    fix="give decklists as UTF-8 text files"))
            raise _Stop
        try:
            line = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            errors.append(DataError(path, f"not valid UTF-8 text (bad byte 0x{raw[exc.start]:02x} at byte {exc.start + 1} of the line)",
                                    row=number, fix="save the file as UTF-8"))
            raise _Stop from None
        if number == 1:
            line = line.lstrip("\ufeff")
        yield number, line.strip()


class _Reader:
    """What one decklist's lines have given so far (see :func:`_parse_file`)."""

    def __init__(self, path: Path, errors: list[DataError]) -> None:
        self.path, self.errors = path, errors
        self.header: dict[str, str] = {}
        self.header_line: dict[str, int] = {}
        self.cards: list[tuple[int, str, str]] = []
        self.sideboard: list[tuple[int, str, str]] = []
        self.marked = 0  # line of the 'Sideboard' line
        self.blank_sideboard = 0  # line of the blank line that started an unmarked sideboard
        self.blank_after_cards = 0  # line of the last blank line below a card line, 0 after a card line
        self.failed = False
        self.lines = 0

    def error(self, message: str, number: int, text: str, fix: str) -> None:
        """A problem of one line; the decklist is read on, to find the rest."""
        self.errors.append(DataError(self.path, message, row=number, value=text, fix=fix))
        self.failed = True

    def read(self, number: int, text: str) -> None:
        """One line (stripped): blank, sideboard, comment, card or header line, or a problem."""
        self.lines = number
        if not text:
            if self.cards and not self.blank_after_cards:
                self.blank_after_cards = number
            return
        if _SIDEBOARD_LINE.fullmatch(text):
            self.sideboard_line(number, text)
            return
        if text.startswith("#"):
            return
        m = _CARD_LINE.fullmatch(text)
        if m:
            self.card_line(number, text, m.group(1), m.group(2))
            return
        h = _HEADER_LINE.fullmatch(text)
        if h:
            self.header_entry(number, text, h.group(1), h.group(2))
            return
        self.error("not a header line nor a card line", number, text,
                   f"{_FIX_CARD}; header lines look like 'Leader: NAME'; a sideboard starts at a 'Sideboard' line")

    def sideboard_line(self, number: int, text: str) -> None:
        if not self.cards:
            self.error("sideboard line before any card of the main deck", number, text,
                       "list the main deck's cards first, then the sideboard")
        elif self.marked or self.blank_sideboard:
            first = self.marked or self.blank_sideboard
            self.error(f"a second sideboard (the first starts on line {first})", number, text, _FIX_SIDEBOARD)
        else:
            self.marked = number

    def card_line(self, number: int, text: str, qty: str, name: str) -> None:
        """A card of the main deck or, after a 'Sideboard' line or a blank line below the main
        cards, of the sideboard; more than :data:`MAX_CARD_LINES` stops the reading."""
        if len(self.cards) + len(self.sideboard) >= MAX_CARD_LINES:
            self.errors.append(DataError(self.path, f"more than {MAX_CARD_LINES} card lines", row=number,
                                         fix="one file holds one deck; split it or check it is a decklist"))
            raise _Stop
        if self.blank_after_cards and not self.marked:
            if self.blank_sideboard:
                self.error(f"card lines after a second blank line below the main cards (the sideboard "
                           f"starts after the blank line {self.blank_sideboard})", number, text,
                           "remove blank lines between cards of one part, or mark the sideboard with a 'Sideboard' line")
            else:
                self.blank_sideboard = self.blank_after_cards
        self.blank_after_cards = 0
        (self.sideboard if self.marked or self.blank_sideboard else self.cards).append((number, qty, name))

    def header_entry(self, number: int, text: str, written: str, value: str) -> None:
        key = " ".join(written.split()).lower()
        if self.cards:
            self.error(f"header line '{written}:' after the first card line", number, text,
                       "move header lines (Leader:, Season:...) above the cards")
        elif key not in HEADER_KEYS:
            known = ", ".join(k.capitalize() for k in HEADER_KEYS)
            self.error(f"unknown header '{written}'", number, text,
                       f"use one of {known}, or start a comment line with '#'")
        elif HEADER_KEYS[key] in self.header:
            self.error(f"header '{written}' given twice (first on line {self.header_line[HEADER_KEYS[key]]})",
                       number, text, "keep one of the two lines")
        else:
            self.header[HEADER_KEYS[key]] = value.strip()
            self.header_line[HEADER_KEYS[key]] = number

    def parsed(self) -> Parsed | None:
        """The decklist, or None when a line was wrong or it holds no card line (an error)."""
        if not self.cards and not self.failed:
            self.errors.append(DataError(self.path, "no card lines (the decklist is empty)", row=max(self.lines, 1),
                                         fix=_FIX_CARD))
            return None
        if self.failed:
            return None
        return Parsed(self.header, self.header_line, self.cards, self.sideboard, self.blank_sideboard)


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
