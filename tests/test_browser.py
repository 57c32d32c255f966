"""Charts drawn by a real browser under the site's CSP, offline, over http and file://.

The test page is made here from templates/_chart.html, the assets of
sitegen.site.assets.static_assets and the Content-Security-Policy of every
site page; headless Chromium must draw every chart with no page error,
console error, failed or off-site request, or CSP violation.
"""
from __future__ import annotations

from pathlib import Path

import pytest

from _browser_helpers import browser, check_page, pages_to_check, serve_folder  # noqa: F401  (browser is a fixture)
from _charts_helpers import all_charts, render_page
from sitegen.resources import default_templates_dir
from sitegen.site.assets import asset_urls, static_assets

pytestmark = pytest.mark.browser


def write_page(folder: Path, charts, cache_dir: Path, extra: str = "", name: str = "index.html") -> Path:
    """Write a page of ``charts`` and the assets it needs into ``folder``."""
    assets = static_assets([default_templates_dir()], cache_dir=cache_dir)
    for rel, data in assets.items():
        out = folder / rel
        out.parent.mkdir(parents=True, exist_ok=True)
        out.write_bytes(data)
    html = render_page(charts, asset_urls(assets), extra=extra)
    page = folder / name
    page.write_text(html, encoding="utf-8")
    return page


@pytest.fixture(scope="module")
def bundle_cache(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("bundle-cache")


@pytest.fixture(scope="module")
def site(tmp_path_factory, bundle_cache) -> Path:
    folder = tmp_path_factory.mktemp("chartpage")
    write_page(folder, all_charts(), bundle_cache)
    return folder


@pytest.fixture
def page(browser):
    context = browser.new_context()
    page = context.new_page()
    yield page
    context.close()


def test_every_chart_draws_over_http(site, page):
    # Standard: the CSP of the site's pages (W3C CSP Level 3); the browser reports violations.
    with serve_folder(site) as base:
        assert check_page(page, base + "index.html") == []
    assert page.locator(".chart-view svg").count() == len(all_charts())


def test_every_chart_draws_over_file_url(site, page):
    # file:// has no server: the page must still draw everything offline.
    assert check_page(page, (site / "index.html").as_uri()) == []
    assert page.locator(".chart-view svg").count() == len(all_charts())


def test_map_tooltip_shows_deck(site, page):
    # The tooltip handler from the bundle works with its injected style turned off.
    with serve_folder(site) as base:
        assert check_page(page, base + "index.html") == []
        point = page.locator("#map .mark-symbol path").first
        point.hover(force=True)
        tip = page.locator("#vg-tooltip-element.visible")
        tip.wait_for(state="visible", timeout=5000)
        assert "Deck" in tip.inner_text()


def test_escaped_names_stay_text(site, page):
    # A name with markup is shown as text in the table, never parsed as HTML.
    check_page(page, (site / "index.html").as_uri())
    assert page.locator("#map table b").count() == 0
    assert page.locator("#map table", has_text="<b>Bold</b> & co").count() == 1


def test_check_page_reports_problems(tmp_path, page, bundle_cache):
    # check_page must fail on what it claims to catch: an inline style (a CSP
    # violation), a chart whose spec is missing (console error, no drawing).
    extra = ('<p style="color: red">styled</p>'
             '<div class="chart-view" data-chart-spec="no-such-spec"></div>')
    write_page(tmp_path, [], bundle_cache, extra=extra)
    text = "\n".join(check_page(page, (tmp_path / "index.html").as_uri(), timeout_ms=5000))
    assert "CSP violation: style-src-attr" in text
    assert "chart no-such-spec not drawn" in text
    assert "console error: chart: no spec element with id no-such-spec" in text


def test_check_page_blocks_off_site_requests(tmp_path, page):
    # Without a CSP to stop it first, an off-site image reaches the router,
    # which refuses it and reports it.
    (tmp_path / "open.html").write_text(
        '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>t</title></head>'
        '<body><img src="http://example.invalid/pixel.png" alt=""></body></html>', encoding="utf-8")
    text = "\n".join(check_page(page, (tmp_path / "open.html").as_uri(), timeout_ms=2000))
    assert "request leaves the machine: http://example.invalid/pixel.png" in text


@pytest.mark.slow
def test_demo_site_pages_clean(demo_site, page):
    # The built demo site (conftest's demo_site): its pages, over http and file://,
    # under their own CSP, draw every chart with no error.
    picked = pages_to_check(demo_site)
    assert len(picked) >= 3  # front, a season, an archetype at least
    with serve_folder(demo_site) as base:
        for path in picked:
            rel = path.relative_to(demo_site).as_posix()
            assert check_page(page, base + rel) == [], rel
    for path in picked:
        if path.name == "404.html":
            continue  # only ever served by a host: its search scripts are at the host's root ('/'), not on file://
        assert check_page(page, path.as_uri()) == [], path.name
