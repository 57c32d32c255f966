"""Analysts' notes: Markdown files with a small front matter block.

Layout of a site's content folder (``site.content``)::

    index.md                 shown on the front page
    method.md                shown on the method page
    archetypes/<slug>.md     shown on every page of that archetype

A note may start with front matter: a block between two ``---`` lines, one
``key: value`` per line (``#`` lines and blank lines are skipped, a value may
be wrapped in matching quotes). No YAML: only this subset is read. Keys:

``title``       name to show for the archetype instead of the one made from
                its signature cards (``rename`` means the same and wins
                when both are given)
``summary``     one plain sentence shown under the name and in tables
``signature``   the analyst's signature cards, ``a; b; c``, shown instead of
                the computed ones
``merge_into``  slug of an archetype this one is better read as part of
``hide``        ``true``: do not publish this archetype
``author``      who wrote the note, shown under it
``season``      the season the note was written for: on the archetype's
                pages of other seasons it is shown under "Written for
                <season>". A note without it is read as written for every
                season and gets no such label.

``rename``, ``merge_into``, ``hide`` and ``signature`` change the archetypes
themselves; :mod:`sitegen.analysis.overrides` applies them (from
:meth:`Notes.front_matter_by_slug`) before the pages are made, so every page,
chart and export agrees. The pages also honour ``title``/``rename`` and
``signature`` directly, so a note shows correctly even without that step.
Any other key is reported as a ``note-key`` finding. Whatever its
``season``, a note that names a card (its body, summary or ``signature``)
the archetype played in an earlier season but no longer plays in its latest
one is reported as a ``note-stale`` finding (:func:`stale_cards`), and the
pages of seasons without the card list it beside the note. The body is rendered by
the ``markdown`` package (extensions ``tables`` and ``fenced_code``). Notes
may come from anyone, so raw HTML is never passed through: the two Markdown
stages that copy raw HTML into the output (block HTML and inline HTML) are
switched off, which leaves any tag as escaped text, and link or image
addresses with a scheme other than http, https or mailto (``javascript:``,
``data:``...) are dropped.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from urllib.parse import urlsplit
from xml.etree.ElementTree import Element

import markdown
from markdown.treeprocessors import Treeprocessor
from markupsafe import Markup

from ..errors import DataError
from ..model import Finding

#: Front matter keys a note may set; anything else is reported.
KNOWN_KEYS = ("title", "rename", "summary", "signature", "merge_into", "hide", "author", "season")
#: Markdown extensions every note is rendered with.
EXTENSIONS = ("tables", "fenced_code")

_SAFE_SCHEMES = {"", "http", "https", "mailto"}
_KEY_LINE = re.compile(r"^([A-Za-z_][A-Za-z0-9_-]*)\s*:\s*(.*)$")
_TRUE = {"true", "yes", "on", "1"}
_FALSE = {"false", "no", "off", "0", ""}


@dataclass(frozen=True)
class Note:
    """One analyst's note: where it came from, its front matter and its HTML."""

    path: Path
    meta: dict[str, str]
    body: str
    html: Markup
    slug: str | None = None
    findings: tuple[Finding, ...] = ()

    @property
    def title(self) -> str:
        return self.meta.get("rename") or self.meta.get("title", "")

    @property
    def summary(self) -> str:
        return self.meta.get("summary", "")

    @property
    def author(self) -> str:
        return self.meta.get("author", "")

    @property
    def season(self) -> str:
        """The season the note was written for, or empty (written for every season)."""
        return self.meta.get("season", "").strip()

    @property
    def merge_into(self) -> str:
        return self.meta.get("merge_into", "")

    @property
    def hidden(self) -> bool:
        return self.meta.get("hide", "").strip().lower() in _TRUE

    @property
    def signature(self) -> tuple[str, ...]:
        raw = self.meta.get("signature", "")
        return tuple(part.strip() for part in raw.split(";") if part.strip())


@dataclass(frozen=True)
class Notes:
    """Every note of a site: archetype notes by slug, the front and method notes."""

    archetypes: dict[str, Note] = field(default_factory=dict)
    front: Note | None = None
    method: Note | None = None

    @property
    def findings(self) -> tuple[Finding, ...]:
        """Warnings found while reading the notes (unknown keys, bad values)."""
        out: list[Finding] = []
        for note in (self.front, self.method, *[self.archetypes[s] for s in sorted(self.archetypes)]):
            if note is not None:
                out.extend(note.findings)
        return tuple(out)

    def front_matter_by_slug(self) -> dict[str, tuple[str, dict[str, str]]]:
        """slug -> (note file, front matter) of every archetype note, for the overrides step."""
        return {slug: (str(note.path), dict(note.meta)) for slug, note in sorted(self.archetypes.items())}

    def for_slug(self, slug: str) -> Note | None:
        """The published note of an archetype, or None (no note, or hidden)."""
        note = self.archetypes.get(slug)
        return None if note is None or note.hidden else note


class _SafeLinks(Treeprocessor):
    """Drops link and image addresses whose scheme could run code."""

    def run(self, root: Element) -> None:
        for el in root.iter():
            for attr in ("href", "src"):
                value = el.get(attr)
                if value is not None and not _safe_url(value):
                    del el.attrib[attr]


def _safe_url(url: str) -> bool:
    # Browsers ignore control characters and spaces inside a scheme
    # ("java\tscript:"), so strip them before looking at it.
    cleaned = re.sub(r"[\x00-\x20\x7f]+", "", url)
    try:
        scheme = urlsplit(cleaned).scheme.lower()
    except ValueError:
        return False
    return scheme in _SAFE_SCHEMES


def render_markdown(body: str) -> Markup:
    """HTML for a note body: Markdown with tables and fenced code, raw HTML left as text."""
    md = markdown.Markdown(extensions=list(EXTENSIONS))
    md.preprocessors.deregister("html_block")
    md.inlinePatterns.deregister("html")
    md.treeprocessors.register(_SafeLinks(md), "sitegen_safe_links", 0)
    return Markup(md.convert(body))


def split_front_matter(text: str, file: Path | str) -> tuple[dict[str, str], str, int]:
    """(front matter, body, line number the body starts on) of a note's text.

    Raises :class:`DataError` naming the file and line for a line that is not
    ``key: value`` or a block that is never closed.
    """
    lines = text.splitlines(keepends=True)
    if not lines or lines[0].strip() != "---":
        return {}, text, 1
    meta: dict[str, str] = {}
    for i, line in enumerate(lines[1:], start=2):
        stripped = line.strip()
        if stripped == "---":
            return meta, "".join(lines[i:]), i + 1
        if not stripped or stripped.startswith("#"):
            continue
        m = _KEY_LINE.match(stripped)
        if m is None:
            raise DataError(file, "front matter line is not 'key: value'", row=i, value=stripped,
                            fix="write one 'key: value' per line between the two '---' lines")
        key, value = m.group(1).lower(), m.group(2).strip()
        if len(value) >= 2 and value[0] == value[-1] and value[0] in "\"'":
            value = value[1:-1]
        meta[key] = value
    raise DataError(file, "front matter is never closed", row=1, value="---",
                    fix="end the front matter with a line holding only '---'")


def parse_note(text: str, path: Path, slug: str | None = None) -> Note:
    """A :class:`Note` from the text of one file (front matter, then Markdown)."""
    meta, body, _ = split_front_matter(text, path)
    findings: list[Finding] = []
    for key in meta:
        if key not in KNOWN_KEYS:
            findings.append(Finding("note-key", f"{path}: unknown front matter key '{key}' (known: {', '.join(KNOWN_KEYS)}); it is ignored"))
    hide = meta.get("hide", "").strip().lower()
    if hide not in _TRUE and hide not in _FALSE:
        findings.append(Finding("note-key", f"{path}: 'hide: {meta['hide']}' is not true or false; the note is shown"))
    return Note(path=path, meta=meta, body=body, html=render_markdown(body), slug=slug, findings=tuple(findings))


def _read(path: Path) -> str:
    try:
        return path.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise DataError(path, f"not UTF-8 text (byte {exc.start})", fix="save the note as UTF-8") from None


def load_notes(content_dir: Path | None) -> Notes:
    """Read every note under ``content_dir``; a missing folder means no notes."""
    if content_dir is None or not Path(content_dir).is_dir():
        return Notes()
    content_dir = Path(content_dir)
    front = content_dir / "index.md"
    method = content_dir / "method.md"
    archetypes: dict[str, Note] = {}
    folder = content_dir / "archetypes"
    if folder.is_dir():
        for path in sorted(folder.glob("*.md")):
            slug = path.stem
            archetypes[slug] = parse_note(_read(path), path, slug)
    return Notes(
        archetypes=archetypes,
        front=parse_note(_read(front), front) if front.is_file() else None,
        method=parse_note(_read(method), method) if method.is_file() else None,
    )


def orphan_findings(notes: Notes, slugs: set[str]) -> list[Finding]:
    """A ``note-orphan`` finding for each archetype note whose slug no archetype has.

    Notes that hide or merge their archetype are left out: their slug is
    gone on purpose, and the overrides step reports those that point at nothing.
    """
    out: list[Finding] = []
    for slug in sorted(notes.archetypes):
        note = notes.archetypes[slug]
        if slug in slugs or note.hidden or note.merge_into:
            continue
        out.append(Finding("note-orphan", f"{note.path}: no archetype has the slug '{slug}', so this note is not shown; "
                                          "rename the file after an archetype's slug (see data/archetypes.json)"))
    return out


def named_cards(note: Note, cards: set[str] | list[str]) -> tuple[str, ...]:
    """The cards of ``cards`` a note names: in its body, summary or signature key, as whole words,
    letter case aside. Sorted by name."""
    text = "\n".join((note.body, note.summary, "; ".join(note.signature))).casefold()
    out = []
    for card in cards:
        c = card.casefold()
        if c and c in text and re.search(r"(?<![\w])" + re.escape(c) + r"(?![\w])", text):
            out.append(card)
    return tuple(sorted(out))


def stale_cards(note: Note, profiles: list[tuple[str, dict[str, float]]], season: str) -> tuple[str, ...]:
    """Cards the note names that its archetype played in a season before ``season`` but not in ``season``.

    ``profiles``: (season, card profile) of the archetype in every season it appears in, in
    publication order. A card counts as played when its profile lists it (2% of the decks or more).
    """
    seasons = [s for s, _ in profiles]
    if season not in seasons:
        return ()
    at = seasons.index(season)
    before: set[str] = set().union(*[set(p) for _, p in profiles[:at]]) if at else set()
    now = set(profiles[at][1])
    return tuple(c for c in named_cards(note, sorted(before | now)) if c in before and c not in now)
