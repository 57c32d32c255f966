"""The built demo site as a whole: valid HTML on every page (W3C Nu HTML checker), every
internal link resolves, nothing is fetched from another host, exports cover every deck."""
from __future__ import annotations

import csv
import json
import re
from urllib.parse import unquote, urlsplit

import pytest

from _nu_checker import nu_errors


@pytest.mark.slow
def test_every_demo_page_passes_the_nu_html_checker(demo_site, tmp_path):
    # Standard: the W3C Nu HTML Checker; the run must also flag a planted bad page (see _nu_checker).
    pages = sorted(str(p) for p in demo_site.rglob("*.html"))
    assert len(pages) > 100
    errors = nu_errors(pages, tmp_path, timeout=900)
    assert [(url[-60:], line, message) for url, line, message in errors] == []


_REF = re.compile(rb'(?:href|src)="([^"]*)"')


@pytest.mark.slow
def test_every_internal_link_resolves_and_nothing_leaves_the_site(demo_site):
    missing, external = [], []
    for page in demo_site.rglob("*.html"):
        for raw in _REF.findall(page.read_bytes()):
            ref = raw.decode()
            parts = urlsplit(ref)
            if parts.scheme == "data" and ref.startswith("data:image/"):
                continue  # carried inside the page (RFC 2397), nothing is fetched; base.html's CSP allows data: images
            if parts.scheme or ref.startswith("//"):
                external.append((page.name, ref))
                continue
            if not parts.path or ref.startswith("#"):
                continue
            if page.name == "404.html" and ref.startswith("/"):
                target = demo_site / unquote(parts.path).lstrip("/")  # 404 may be served at any depth
            else:
                target = (page.parent / unquote(parts.path)).resolve()
            if not target.is_file():
                missing.append((page.relative_to(demo_site).as_posix(), ref))
    assert external == [] and missing[:10] == []


@pytest.mark.slow
def test_season_pages_stay_small(demo_site):
    sizes = {p.parent.name: p.stat().st_size for p in demo_site.glob("seasons/*/index.html")}
    assert sizes and max(sizes.values()) < 1_000_000, sizes


@pytest.mark.slow
def test_exports_cover_every_deck(demo_site, repo_root):
    with open(repo_root / "demo_data" / "decks.csv", newline="", encoding="utf-8") as fh:
        decks = {row["deck_id"] for row in csv.DictReader(fh)}
    with open(demo_site / "data" / "assignments.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert {r["deck_id"] for r in rows} == decks and len(rows) == len(decks)
    assert json.loads((demo_site / "data" / "assignments.json").read_text())  # parses
    summary = json.loads((demo_site / "data" / "archetypes.json").read_text())
    assert summary


@pytest.mark.slow
def test_demo_notes_belong_to_archetypes_that_exist(demo_site, repo_root):
    notes = sorted((repo_root / "content" / "archetypes").glob("*.md"))
    assert notes
    for note in notes:
        page = demo_site / "archetypes" / note.stem / "index.html"
        assert page.is_file(), f"{note.name} names no archetype of the demo build"
        title = note.read_text(encoding="utf-8").split("title:", 1)[1].split("\n", 1)[0].strip()
        assert title in page.read_text(encoding="utf-8")
