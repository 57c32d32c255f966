"""The search index: archetype, leader and card names with their page paths.

Search runs in the browser with no server. ``fetch()`` is refused for
``file://`` pages, so the index is also written as ``search-index.js``, a
script that assigns the JSON to one global (``SITEGEN_SEARCH``) and is loaded
by a ``<script src>`` before site.js. ``<``, ``>`` and ``&`` are written as
``\\u`` escapes so no name can close a script element or start markup.
"""
from __future__ import annotations

import json
from dataclasses import dataclass

GLOBAL_NAME = "SITEGEN_SEARCH"


@dataclass(frozen=True)
class SearchEntry:
    """One searchable name: what it is (``kind``), extra words, and its path from the site root."""

    name: str
    kind: str
    path: str
    detail: str = ""


def _json(entries: list[SearchEntry]) -> str:
    items = sorted({(e.name, e.kind, e.path, e.detail) for e in entries}, key=lambda t: (t[0].casefold(), t))
    doc = {"entries": [{"n": n, "k": k, "p": p, "d": d} for n, k, p, d in items]}
    text = json.dumps(doc, ensure_ascii=True, sort_keys=True, separators=(",", ":"))
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def search_files(entries: list[SearchEntry]) -> dict[str, bytes]:
    """search-index.json and search-index.js (the same JSON assigned to a global)."""
    text = _json(entries)
    return {
        "search-index.json": (text + "\n").encode("utf-8"),
        "search-index.js": f"window.{GLOBAL_NAME} = {text};\n".encode("utf-8"),
    }
