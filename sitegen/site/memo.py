"""Pages of the last build reused where their context has not changed.

A page is a pure function of its template and its context (the page
dataclass of :mod:`sitegen.site.pages`): the same template files, the same
sitegen code and an equal context give the same bytes. So each page's
context is digested (its pickle, with the template's name), and the digests
of the last build are kept beside its stamp. A rebuild after one season
changed finds most contexts equal, and takes those pages' bytes from the
output folder instead of rendering them again, provided the file is as the
last build left it (same size and time of last change).

``salt`` (:func:`sitegen.reuse.keys.render_salt`) covers what is not in a
context: every template file and the code that renders, by content. A context that pickles differently but
renders alike (a set in another order, say) only costs a render; nothing
here can make a page differ from a fresh render.
"""
from __future__ import annotations

import pickle
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..reuse.files import file_stat
from ..reuse.keys import page_key
from .keys import key_bytes


class PageMemo:
    """The last build's page keys, and this build's.

    ``previous`` maps an output path to the key its page had; ``listing``
    maps it to the (size, time of change) the last build left its file at;
    ``folder`` is the output folder. Made empty (:meth:`empty`), it reuses
    nothing and only records this build's keys.
    """

    def __init__(self, salt: str, folder: Path | None = None, previous: Mapping[str, str] | None = None,
                 listing: Mapping[str, tuple[int, int]] | None = None) -> None:
        self.salt = salt
        self.folder = folder
        self.previous = dict(previous or {})
        self.listing = dict(listing or {})
        #: This build's key of every page rendered or reused, by output path.
        self.keys: dict[str, str] = {}
        #: Pages taken from the last build.
        self.reused = 0

    def key(self, path: str, template: str, context: Mapping[str, Any]) -> str | None:
        """The page's key (recorded for the next build), or None when its context cannot be pickled."""
        try:
            body = key_bytes(dict(context))  # a LazyChart stands by its key text (site/keys.py)
        except (pickle.PicklingError, TypeError, AttributeError):
            return None
        key = page_key(self.salt, template, body)
        self.keys[path] = key
        return key

    def reuse(self, path: str, key: str | None) -> bytes | None:
        """The last build's bytes of ``path`` when its key was ``key`` and its file is as that
        build left it; None otherwise (render it)."""
        if key is None or self.folder is None or self.previous.get(path) != key or path not in self.listing:
            return None
        file = self.folder / path
        found = file_stat(file)
        if found is None or found != tuple(self.listing[path]):
            return None
        try:
            body = file.read_bytes()
        except OSError:
            return None
        if len(body) != found[0]:
            return None
        self.reused += 1
        return body
