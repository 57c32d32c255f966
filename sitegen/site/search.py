"""The search index: archetype (with former names), leader, season and card names with their page paths.

Search runs in the browser with no server. ``fetch()`` is refused for
``file://`` pages, so the index is also written as ``search-index.js``, a
script that assigns the JSON to one global (``SITEGEN_SEARCH``) and is loaded
by a ``<script src>`` before site.js. ``<``, ``>`` and ``&`` are written as
``\\u`` escapes so no name can close a script element or start markup.

Each entry carries its name (``n``), what it is (``k``, as shown), its path
from the site root (``p``), a few words more (``d``), its rank (``r``: what
kind of page it is, see :data:`RANKS`; site.js lists lower ranks first) and,
for an archetype, the other names it had in earlier seasons (``a``, left out
when there are none), which find it too.
"""
from __future__ import annotations

import json
from dataclasses import dataclass

GLOBAL_NAME = "SITEGEN_SEARCH"

#: The order results are listed in, by kind of page: archetypes first, then leaders, seasons, cards.
RANKS = {"archetype": 0, "leader": 1, "season": 2, "card": 3}


@dataclass(frozen=True)
class SearchEntry:
    """One searchable name: what it is (``kind``, as shown), extra words, its path from the site root,
    its rank (:data:`RANKS`) and the other names that find it (``aliases``)."""

    name: str
    kind: str
    path: str
    detail: str = ""
    rank: int = 3
    aliases: tuple[str, ...] = ()


def _json(entries: list[SearchEntry]) -> str:
    items = sorted({(e.rank, e.name, e.kind, e.path, e.detail, tuple(sorted(set(e.aliases) - {e.name})))
                    for e in entries}, key=lambda t: (t[0], t[1].casefold(), t))
    rows = []
    for rank, n, k, p, d, aliases in items:
        row = {"n": n, "k": k, "p": p, "d": d, "r": rank}
        if aliases:
            row["a"] = list(aliases)
        rows.append(row)
    text = json.dumps({"entries": rows}, ensure_ascii=True, sort_keys=True, separators=(",", ":"))
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def search_files(entries: list[SearchEntry]) -> dict[str, bytes]:
    """search-index.json and search-index.js (the same JSON assigned to a global)."""
    text = _json(entries)
    return {
        "search-index.json": (text + "\n").encode("utf-8"),
        "search-index.js": f"window.{GLOBAL_NAME} = {text};\n".encode("utf-8"),
    }
