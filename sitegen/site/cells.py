"""Cells and files every download is written with: spreadsheet-safe text, fixed-point numbers,
RFC 4180 CSV and repeatable JSON.

CSV cells that hold data text (names, ids) and start with ``=``, ``+``,
``-``, ``@``, a tab or a carriage return get a leading single quote, so a
spreadsheet shows them as text instead of running them as formulas (the
OWASP "CSV Injection" advice). Numbers we format ourselves are left alone.
"""
from __future__ import annotations

import csv
import io
import json
import math
from typing import Any, Iterable, Sequence

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def safe_cell(text: object) -> str:
    """A data text cell made harmless for spreadsheets (OWASP CSV injection)."""
    s = "" if text is None else str(text)
    return "'" + s if s.startswith(_FORMULA_START) else s


def fixed(x: float | None, digits: int = 4) -> str:
    """A float in fixed notation, empty for missing or NaN (stable across runs)."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    text = f"{float(x):.{digits}f}"
    return "0." + "0" * digits if text == "-0." + "0" * digits else text


def csv_bytes(header: Sequence[str], rows: Iterable[Sequence[str]]) -> bytes:
    """UTF-8 CSV (RFC 4180 quoting, CRLF line ends) of already-made-safe string cells."""
    buf = io.StringIO(newline="")
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(header)
    for row in rows:
        w.writerow(row)
    return buf.getvalue().encode("utf-8")


def json_bytes(obj: Any) -> bytes:
    """Sorted, indented UTF-8 JSON with a final newline."""
    return (json.dumps(obj, sort_keys=True, indent=1, ensure_ascii=False, allow_nan=False) + "\n").encode("utf-8")


def lines_json(doc: dict[str, list]) -> bytes:
    """UTF-8 JSON of a document of lists, one list item per line (keys sorted).

    Each item is written by the json module's C encoder, which indented
    output cannot use: at a million decks the archetypes document took 0.9 s
    indented and takes a tenth of that so. A diff of two builds' files still
    shows which archetypes and partitions changed, line by line.
    """
    def dumps(value: Any) -> str:
        return json.dumps(value, sort_keys=True, ensure_ascii=False, allow_nan=False)

    parts = []
    for key in sorted(doc):
        items = ",\n".join(dumps(item) for item in doc[key])
        parts.append(f"{dumps(key)}: [\n{items}\n]" if items else f"{dumps(key)}: []")
    return ("{\n" + ",\n".join(parts) + "\n}\n").encode("utf-8")


def rounded(x: float | None, digits: int = 6) -> float | None:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return None
    return round(float(x), digits)


#: Characters for which csv.writer (QUOTE_MINIMAL) may quote or refuse a cell; cells without one are written as they are.
_CSV_SPECIAL = ',"\r\n\x00'


def _csv_cell(text: str) -> str:
    """One cell exactly as :func:`csv_bytes` writes it inside a row."""
    buf = io.StringIO(newline="")
    csv.writer(buf, lineterminator="\r\n").writerow((text, ""))
    return buf.getvalue()[:-3]  # drop the empty second cell and the line end


def csv_cells(texts: list[str]) -> list[str]:
    """Each text as a CSV cell; texts with nothing to quote (looked for in all of them at once) stay as they are."""
    joined = "\t".join(texts)
    if any(ch in joined for ch in _CSV_SPECIAL):
        return [_csv_cell(t) if any(ch in t for ch in _CSV_SPECIAL) else t for t in texts]
    return texts


def safe_csv_cells(texts: list[str]) -> list[str]:
    """:func:`safe_cell` then CSV quoting of each data text."""
    joined = "\n" + "\n".join(texts)  # a text starting with a formula character has it after a newline here
    if any("\n" + ch in joined for ch in _FORMULA_START):
        texts = [safe_cell(t) for t in texts]
    return csv_cells(texts)
