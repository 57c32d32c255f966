"""Card, leader and season names: the one form names are compared in, and one spelling per name.

:func:`clean_name` gives every name one form (trimmed, Unicode NFC, invisible
format characters removed), so look-alike spellings read as one name, with a
``name-variants`` finding (:func:`look_alike_findings`). :func:`variant_key`
goes further (case and spacing aside): :func:`name_variants` picks one
spelling per key, the card table's or the most used one. :class:`Spellings`
holds spellings decided over the whole data for a build that reads one
season at a time.
"""
from __future__ import annotations

import unicodedata
from collections import defaultdict
from dataclasses import dataclass

import numpy as np

from ..errors import visible
from ..model import Finding


# Stripped from both ends of names: whitespace, C0 controls, DEL, byte-order mark.
_EDGE = "".join(chr(c) for c in range(0x20)) + "\x7f\ufeff"


def clean_text(text: str) -> str:
    """A name with whitespace and control characters trimmed from both ends (inner text kept as is)."""
    return text.strip().strip(_EDGE).strip()


def clean_name(text: str) -> str:
    """A name (card, leader, season) in the one form names are compared in: invisible format
    characters (Unicode category Cf: zero-width space, joiners, direction marks and overrides,
    byte-order mark) removed, Unicode NFC (composed accents), trimmed as :func:`clean_text`."""
    text = clean_text(text)
    if text.isascii():
        return text
    text = "".join(c for c in text if unicodedata.category(c) != "Cf")
    return clean_text(unicodedata.normalize("NFC", text))


def variant_key(name: str) -> str:
    """Names equal under this key differ only by case or spacing (or look alike: see :func:`clean_name`)."""
    return unicodedata.normalize("NFC", " ".join(clean_name(name).split()).casefold())


def told_apart(value: str, other: str) -> str:
    """Words telling two names apart at their first differing character, when either character
    there is not ASCII (so a look-alike letter of another script is named); '' otherwise."""
    for i, (a, b) in enumerate(zip(value, other), start=1):
        if a != b:
            if a.isascii() and b.isascii():
                return ""
            return (f"; character {i} differs: U+{ord(a):04X} {unicodedata.name(a, 'unnamed')} here, "
                    f"U+{ord(b):04X} {unicodedata.name(b, 'unnamed')} there")
    return ""


def look_alikes(written: list[str], cleaned: list[str], codes: np.ndarray,
                 merged: list[tuple[str, list[tuple[str, int]]]]) -> None:
    """Append to ``merged`` each name that two or more spellings (trimmed, as written) became."""
    groups: dict[str, dict[str, list[int]]] = defaultdict(lambda: defaultdict(list))
    for i, (w, c) in enumerate(zip(written, cleaned)):
        groups[c][clean_text(w)].append(i)
    rows = None
    for name in sorted(groups):
        spellings = groups[name]
        if len(spellings) < 2:
            continue
        if rows is None:
            rows = np.bincount(np.asarray(codes, dtype=np.int64), minlength=len(written))
        merged.append((name, [(w, int(rows[idx].sum())) for w, idx in sorted(spellings.items())]))


def look_alike_findings(merged: list[tuple[str, list[tuple[str, int]]]], what: str) -> list[Finding]:
    """One ``name-variants`` finding per name that look-alike spellings became, each shown by
    :func:`~sitegen.errors.visible` so that the spellings look different in the message."""
    return [Finding("name-variants", f"{what} written {len(spellings)} ways that look alike: "
                    + ", ".join(f"{visible(w)} ({n} rows)" for w, n in spellings)
                    + f"; all read as {visible(name)} (Unicode NFC, invisible format characters removed)")
            for name, spellings in merged]


def merge_look_alikes(counts: dict[str, int], what: str) -> tuple[dict[str, int], list[Finding]]:
    """Row counts by name (as written) added up by :func:`clean_name`, and the findings of
    :func:`look_alike_findings` for the names that several spellings became."""
    out: dict[str, int] = {}
    spellings: dict[str, dict[str, int]] = defaultdict(dict)
    for name, n in counts.items():
        key = clean_name(name)
        out[key] = out.get(key, 0) + n
        trimmed = clean_text(name)
        spellings[key][trimmed] = spellings[key].get(trimmed, 0) + n
    merged = [(name, sorted(s.items())) for name, s in sorted(spellings.items()) if len(s) > 1]
    return out, look_alike_findings(merged, what)


def name_variants(names: list[str], counts: np.ndarray, known: dict[str, str] | None,
                   what: str) -> tuple[list[str], list[Finding], list[int]]:
    """Canonical spelling per distinct name, findings, and indices of names unknown to ``known``.

    Without ``known`` (the card table's names by variant key) the most used
    spelling wins, ties to the first in sort order.
    """
    groups: dict[str, list[int]] = defaultdict(list)
    for i, name in enumerate(names):
        groups[variant_key(name)].append(i)
    canonical = list(names)
    findings: list[Finding] = []
    unknown: list[int] = []
    for key in sorted(groups):
        members = groups[key]
        if known is not None:
            if key not in known:
                unknown.extend(members)
                continue
            winner = known[key]
        else:
            winner = names[min(members, key=lambda i: (-int(counts[i]), names[i]))]
        spellings = sorted({names[i] for i in members} | {winner})
        for i in members:
            canonical[i] = winner
        if len(spellings) > 1:
            listed = ", ".join(visible(s) + (f" ({int(counts[names.index(s)])} rows)" if s in names else "")
                               for s in spellings)
            findings.append(Finding("name-variants",
                                    f"{what} written {len(spellings)} ways: {listed}; all read as {visible(winner)}"))
    return canonical, findings, unknown


@dataclass(frozen=True)
class Spellings:
    """Spellings decided over the whole data, for a build that reads one season at a time.

    ``cards`` and ``leaders`` map a name's :func:`variant_key` to the
    spelling every season uses; their findings are made once, over the
    whole data, so each season's build makes none of its own.
    """

    cards: dict[str, str]
    leaders: dict[str, str]


def spellings_of(names: list[str], counts: np.ndarray, known: dict[str, str] | None,
                 what: str) -> tuple[dict[str, str], list[Finding]]:
    """The spelling of every variant key among ``names`` (row ``counts`` each), and the findings."""
    canonical, findings, _ = name_variants(names, counts, known, what)
    return {variant_key(n): c for n, c in zip(names, canonical)}, findings


def added_up_finding(rows: int) -> Finding:
    """The finding for card rows whose copies were added to another spelling's row of the same
    deck; it carries ``rows`` as its ``count`` (see :func:`added_up_rows`)."""
    return Finding("name-variants", f"{rows} card row(s) named a card a deck already "
                   "listed under another spelling; their copies were added up", count=rows)


def added_up_rows(finding: Finding) -> int | None:
    """The card rows an :func:`added_up_finding` counts, or None when ``finding`` is another one."""
    return finding.count if finding.kind == "name-variants" and finding.count is not None else None
