"""File-name-safe slugs made from data.

A slug is lowercase ASCII letters, digits and single hyphens, never empty,
never a path part like ``..``, never a name Windows reserves for a device,
and at most :data:`MAX_LEN` characters. Because every slug is lowercase, two
slugs never collide on a host that folds case; :class:`SlugSet` makes them
unique within a site.
"""
from __future__ import annotations

import hashlib
import re
import unicodedata

MAX_LEN = 60

# Device names Windows refuses as file names, with or without an extension.
_RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(10)), *(f"lpt{i}" for i in range(10))}
_NOT_SAFE = re.compile(r"[^a-z0-9]+")


def slugify(text: str, *, fallback: str = "item") -> str:
    """A safe slug for ``text``; a short digest stands in where nothing is left."""
    ascii_text = unicodedata.normalize("NFKD", str(text)).encode("ascii", "ignore").decode("ascii")
    slug = _NOT_SAFE.sub("-", ascii_text.lower()).strip("-")
    if len(slug) > MAX_LEN:
        cut = slug[:MAX_LEN]
        # end on a whole word where one ends in the second half
        slug = (cut.rsplit("-", 1)[0] if "-" in cut[MAX_LEN // 2:] else cut).strip("-")
    if not slug:
        digest = hashlib.sha1(str(text).encode("utf-8", "surrogatepass")).hexdigest()[:8]
        slug = f"{fallback}-{digest}"
    if slug in _RESERVED:  # "con.html" is still a device name on Windows
        slug = f"{slug}-x"
    return slug


class SlugSet:
    """Hands out unique slugs: a taken slug gets ``-2``, ``-3``... appended."""

    def __init__(self, taken: set[str] | None = None) -> None:
        self._taken: set[str] = set(taken or ())

    def add(self, text: str, *, fallback: str = "item") -> str:
        base = slugify(text, fallback=fallback)
        slug, n = base, 2
        while slug in self._taken:
            suffix = f"-{n}"
            slug = base[: MAX_LEN - len(suffix)].rstrip("-") + suffix
            n += 1
        self._taken.add(slug)
        return slug

    def reserve(self, slug: str) -> None:
        """Mark an existing slug (e.g. one carried over from last season) as taken."""
        self._taken.add(slug)

    def __contains__(self, slug: str) -> bool:
        return slug in self._taken
