"""Pages of the last build reused where their context has not changed.

A page is a pure function of its template and its context (the page
dataclass of :mod:`sitegen.site.pages`): the same template files, the same
sitegen code and an equal context give the same bytes. So each page's
context is digested (its pickle, with the template's name), and the digests
of the last build are kept beside its stamp. A rebuild after one season
changed finds most contexts equal, and takes those pages' bytes from the
output folder instead of rendering them again, provided the file is as the
last build left it (same size and time of last change).

``salt`` covers what is not in a context: every template file and every
sitegen source file, by content. A context that pickles differently but
renders alike (a set in another order, say) only costs a render; nothing
here can make a page differ from a fresh render.
"""
from __future__ import annotations

import hashlib
import pickle
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from .. import __version__
from .keys import key_bytes

#: Bumped when how a page's key is made changes.
MEMO_FORMAT = 1


def render_salt(template_dirs: Iterable[Path]) -> str:
    """A digest of every template file and of sitegen's own code: what renders a context."""
    h = hashlib.sha256(f"pages\0{MEMO_FORMAT}\0{__version__}\0".encode())
    package = Path(__file__).resolve().parent.parent
    for root in [*template_dirs, package]:
        root = Path(root)
        h.update(f"\0{root}\0".encode())
        for path in sorted(p for p in root.rglob("*") if p.is_file() and p.suffix != ".pyc"):
            h.update(path.relative_to(root).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    return h.hexdigest()


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
        h = hashlib.sha256(self.salt.encode())
        h.update(template.encode("utf-8") + b"\0")
        h.update(body)
        key = h.hexdigest()
        self.keys[path] = key
        return key

    def reuse(self, path: str, key: str | None) -> bytes | None:
        """The last build's bytes of ``path`` when its key was ``key`` and its file is as that
        build left it; None otherwise (render it)."""
        if key is None or self.folder is None or self.previous.get(path) != key or path not in self.listing:
            return None
        file = self.folder / path
        try:
            st = file.stat()
            if (st.st_size, st.st_mtime_ns) != self.listing[path]:
                return None
            body = file.read_bytes()
        except OSError:
            return None
        if len(body) != st.st_size:
            return None
        self.reused += 1
        return body
