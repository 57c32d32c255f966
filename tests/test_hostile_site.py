"""A site built from hostile names stays inert in a real browser.

Names such as ``<img src=x onerror=alert(1)>`` and
``</script><script>alert(1)</script>`` are planted in card, leader, deck
title, event and player columns; the pages are opened in headless Chromium
under their Content-Security-Policy. Checks: no dialog opens, no page error,
no CSP violation (the securitypolicyviolation event, W3C CSP Level 3), and the
names are shown as text.
"""
from __future__ import annotations

import pytest

from sitegen.build import build

from _browser_helpers import browser, check_page, serve_folder  # noqa: F401 - fixture
from _sites import make_project, read_rows, write_rows

IMG = "<img src=x onerror=alert(1)>"
SCRIPT = "</script><script>alert(1)</script>"
QUOTES = "Quote\"d 'Card' & <b>bold</b> \u202egnirts\u202c"


@pytest.fixture(scope="module")
def hostile_site(tmp_path_factory):
    project = make_project(tmp_path_factory.mktemp("hostile") / "guide")
    data = project.parent / "data"
    rename = {"Quiet Oath": IMG, "Quiet Kettle": SCRIPT, "Quiet Harrow": QUOTES}
    header, cards = read_rows(data / "cards.csv")
    write_rows(data / "cards.csv", header, [[rename.get(r[0], r[0]), *r[1:]] for r in cards])
    header, rows = read_rows(data / "deck_cards.csv")
    write_rows(data / "deck_cards.csv", header, [[r[0], rename.get(r[1], r[1]), r[2]] for r in rows])
    header, decks = read_rows(data / "decks.csv")
    header += ["title", "event", "player"]
    decks = [[*r[:2], SCRIPT if r[2] == "Wren of the Salt Road" else r[2], *r[3:], IMG, SCRIPT, "=HYPERLINK(\"x\")"]
             for r in decks]
    write_rows(data / "decks.csv", header, decks)
    build(project, quiet=True)
    return project.parent / "site"


@pytest.fixture()
def page(browser):  # noqa: F811 - the fixture imported above
    context = browser.new_context()
    pg = context.new_page()
    dialogs: list[str] = []
    pg.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    pg.dialogs = dialogs
    yield pg
    context.close()


def _pages(site):
    picks = [site / "index.html", *sorted(site.glob("seasons/*/index.html"))[:1],
             *sorted(site.glob("leaders/*.html")), *sorted(site.glob("archetypes/*/*.html"))[:6]]
    picks += sorted(p for p in site.glob("cards/*.html") if "img" in p.name or "script" in p.name)
    return picks


@pytest.mark.browser
def test_hostile_names_are_inert_and_shown_as_text(hostile_site, page):
    pages = _pages(hostile_site)
    assert len(pages) >= 8
    seen_text = ""
    with serve_folder(hostile_site) as base:
        for path in pages:
            rel = path.relative_to(hostile_site).as_posix()
            problems = check_page(page, base + rel)
            assert problems == [], (rel, problems)
            seen_text += page.inner_text("body")
    assert page.dialogs == []
    assert IMG in seen_text and SCRIPT in seen_text  # shown as the literal text, not run as markup


def test_hostile_names_never_become_markup(hostile_site):
    # Parsed by html5lib (WHATWG HTML parsing): no element made from data, no event handler attribute.
    import html5lib

    for path in hostile_site.rglob("*.html"):
        doc = html5lib.parse(path.read_bytes(), namespaceHTMLElements=False)
        assert not doc.findall(".//img"), path
        for el in doc.iter():
            assert not any(a.lower().startswith("on") for a in el.attrib), (path, el.tag, el.attrib)
        for script in doc.findall(".//script"):
            assert script.get("src") or script.get("type") == "application/json", (path, script.attrib)


def test_player_names_not_published_by_default(hostile_site):
    # site.publish_players is off: the planted player value appears in no file of the site.
    for path in hostile_site.rglob("*"):
        if path.is_file() and path.suffix in (".html", ".json", ".csv", ".js"):
            assert "HYPERLINK" not in path.read_text(encoding="utf-8", errors="replace"), path
