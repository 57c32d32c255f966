"""Every reader, every screen: the demo site on a phone and a desktop, with assistive technology,
before its charts are drawn, and with no link to an empty page.

Checked against outside references: axe-core (the rules engine carried by the
axe-playwright-python package), the WCAG 2.1 definitions of relative luminance
and contrast ratio, the WAI-ARIA 1.2 combobox and listbox roles, the WHATWG
HTML parser (html5lib) and the CSSOM View box model as headless Chromium
reports it.
"""
from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from _browser_helpers import browser, bring_charts_into_view, pages_to_check, serve_folder  # noqa: F401  (browser is a fixture)
from _charts_helpers import all_charts
from sitegen.site import charts

PHONE = {"width": 390, "height": 844}
DESKTOP = {"width": 1280, "height": 900}


# -- WCAG 2.1 contrast, computed from the definitions ------------------------

def relative_luminance(colour: str) -> float:
    """WCAG 2.1, definition "relative luminance": sRGB channels linearised
    (c/12.92 at or below 0.04045, else ((c+0.055)/1.055)^2.4), then
    L = 0.2126 R + 0.7152 G + 0.0722 B."""
    text = colour.lstrip("#")
    if len(text) == 3:
        text = "".join(ch * 2 for ch in text)
    channels = [int(text[i:i + 2], 16) / 255 for i in (0, 2, 4)]
    r, g, b = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast_ratio(a: str, b: str) -> float:
    """WCAG 2.1, definition "contrast ratio": (L1 + 0.05) / (L2 + 0.05), L1 the lighter."""
    la, lb = sorted((relative_luminance(a), relative_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_contrast_formula_matches_known_values():
    # WCAG 2.1: black on white is 21:1; #767676 on white is the familiar 4.54:1 (from memory).
    assert contrast_ratio("#000000", "#ffffff") == pytest.approx(21.0)
    assert contrast_ratio("#767676", "#fff") == pytest.approx(4.54, abs=0.01)
    assert contrast_ratio("#F0E442", "#ffffff") < 3  # Okabe & Ito's yellow: why it is left out


_HEX = re.compile(r"#[0-9A-Fa-f]{6}\Z|#[0-9A-Fa-f]{3}\Z")


def chart_colours(spec) -> list[str]:
    """Every colour a spec draws graphics with: scale ranges of colour channels and mark colours."""
    found: list[str] = []

    def walk(node, key=""):
        if isinstance(node, dict):
            for k, v in node.items():
                if k in ("color", "fill", "stroke") and isinstance(v, dict):
                    rng = (v.get("scale") or {}).get("range")
                    if isinstance(rng, list):
                        found.extend(c for c in rng if isinstance(c, str))
                    if isinstance(v.get("value"), str):
                        found.append(v["value"])
                elif k in ("color", "fill", "stroke") and isinstance(v, str) and key == "mark":
                    found.append(v)
                if k not in ("data", "datasets"):
                    walk(v, k)
        elif isinstance(node, list):
            for item in node:
                walk(item, key)

    walk(spec)
    return found


def background_of(spec) -> str:
    return spec.get("background") or spec.get("config", {}).get("background") or "#ffffff"


def test_every_chart_colour_stands_3_to_1_on_its_background():
    # WCAG 2.1 SC 1.4.11 (non-text contrast): graphics at least 3:1 against adjacent colours.
    colours = [*charts.PALETTE, charts.OTHER_GREY]
    assert all(contrast_ratio(c, charts.BACKGROUND) >= 3 for c in colours), colours
    seen = 0
    for chart in all_charts():
        bg = background_of(chart.spec)
        assert bg == charts.BACKGROUND
        for colour in chart_colours(chart.spec):
            assert _HEX.match(colour), colour
            assert contrast_ratio(colour, bg) >= 3, (chart.id, colour)
            seen += 1
    assert seen > 10  # the walk found the colours


# -- the built demo site -----------------------------------------------------

def _specs(site: Path) -> list[tuple[str, dict]]:
    import html5lib

    out = []
    for page in sorted(site.rglob("*.html")):
        doc = html5lib.parse(page.read_bytes(), namespaceHTMLElements=False)
        for script in doc.iter("script"):
            if script.get("type") == "application/json" and (script.get("id") or "").endswith("-spec"):
                out.append((page.relative_to(site).as_posix(), json.loads(script.text)))
    return out


def _colour_scales(spec):
    """(domain, range) of every colour scale in a spec."""
    if isinstance(spec, dict):
        colour = spec.get("color")
        if isinstance(colour, dict):
            scale = colour.get("scale") or {}
            if isinstance(scale.get("domain"), list) and isinstance(scale.get("range"), list):
                yield scale["domain"], scale["range"]
        for k, v in spec.items():
            if k not in ("data", "datasets"):
                yield from _colour_scales(v)
    elif isinstance(spec, list):
        for item in spec:
            yield from _colour_scales(item)


@pytest.fixture(scope="module")
def demo_specs(demo_site):
    return _specs(demo_site)


@pytest.mark.slow
def test_demo_chart_colours_stand_3_to_1(demo_specs):
    # WCAG 2.1 SC 1.4.11 with the relative-luminance formula above, over every chart of the site.
    checked = 0
    for page, spec in demo_specs:
        for colour in chart_colours(spec):
            assert contrast_ratio(colour, background_of(spec)) >= 3, (page, colour)
            checked += 1
    assert checked > 50


@pytest.mark.slow
def test_each_archetype_name_has_one_colour_in_every_chart(demo_specs):
    # Read from the specs' own scales: a name drawn in two charts wears one colour.
    colours: dict[str, set[str]] = {}
    for _page, spec in demo_specs:
        for domain, rng in _colour_scales(spec):
            assert len(domain) == len(rng)
            for name, colour in zip(domain, rng):
                colours.setdefault(name, set()).add(colour.upper())
    assert len(colours) > 20  # the maps, trend and win-rate charts of five leaders
    assert {n: c for n, c in colours.items() if len(c) != 1} == {}


@pytest.mark.slow
def test_season_pages_under_300_kb_with_map_points_beside_them(demo_site):
    # The maps' points live in data scripts next to the page, loaded when the map is drawn.
    pages = sorted(demo_site.glob("seasons/*/index.html"))
    assert pages
    for page in pages:
        assert page.stat().st_size < 300_000, page
        srcs = re.findall(r'data-chart-data="([^"]+)"', page.read_text(encoding="utf-8"))
        assert srcs and all((page.parent / src).resolve().is_file() for src in srcs), page


def _has_content(path: Path) -> bool:
    """Parsed HTML (html5lib): a heading and at least one table row of data in <main>."""
    import html5lib

    doc = html5lib.parse(path.read_bytes(), namespaceHTMLElements=False)
    main = doc.find(".//main")
    return main is not None and main.find(".//h1") is not None and bool(main.findall(".//table/tbody/tr"))


@pytest.mark.slow
def test_every_search_result_leads_to_a_page_with_content(demo_site):
    index = json.loads((demo_site / "search-index.json").read_text(encoding="utf-8"))["entries"]
    kinds = {e["k"] for e in index}
    assert {"archetype", "leader", "season", "card"} <= kinds
    assert [e["r"] for e in index] == sorted(e["r"] for e in index)  # archetypes, leaders, seasons, cards
    empty = [e["p"] for e in index if not (demo_site / e["p"]).is_file() or not _has_content(demo_site / e["p"])]
    assert empty == []
    # and no card page of the site is empty (a card no archetype lists has none)
    assert [p.name for p in demo_site.glob("cards/*.html") if not _has_content(p)] == []


@pytest.mark.slow
def test_archetype_season_pages_link_previous_and_next_season(demo_site):
    import html5lib

    linked = 0
    for page in sorted(demo_site.glob("archetypes/*/*.html")):
        if page.name == "index.html":
            continue
        doc = html5lib.parse(page.read_bytes(), namespaceHTMLElements=False)
        for a in doc.iter("a"):
            if a.get("rel") in ("prev", "next"):
                target = (page.parent / a.get("href")).resolve()
                assert target.is_file() and target.parent == page.parent.resolve(), (page, a.get("href"))
                linked += 1
    assert linked > 50


# -- in the browser ----------------------------------------------------------

@pytest.fixture
def served(demo_site):
    with serve_folder(demo_site) as base:
        yield base


def _page(browser, viewport):
    context = browser.new_context(viewport=viewport)
    return context, context.new_page()


@pytest.mark.slow
@pytest.mark.browser
@pytest.mark.parametrize("viewport", [DESKTOP, PHONE], ids=["1280px", "390px"])
def test_axe_finds_nothing_on_any_page_kind(demo_site, served, browser, viewport):
    # axe-core (axe-playwright-python bundles it): every rule, colour contrast included, on every
    # page kind with its charts drawn and its data tables opened.
    from axe_playwright_python.sync_playwright import Axe

    axe = Axe()
    context, page = _page(browser, viewport)
    problems = []
    try:
        for path in pages_to_check(demo_site):
            rel = path.relative_to(demo_site).as_posix()
            page.goto(served + rel, wait_until="load")
            bring_charts_into_view(page)
            page.wait_for_timeout(300)
            page.evaluate("() => document.querySelectorAll('details').forEach(d => d.open = true)")
            result = axe.run(page)
            for v in result.response["violations"]:
                problems.append((rel, v["id"], [n["target"] for n in v["nodes"]][:3]))
    finally:
        context.close()
    assert problems == []


_WIDER = "() => document.documentElement.scrollWidth"
# For each table: where its first column is, left and right, before and after its box is
# scrolled all the way to the right (CSSOM View: getBoundingClientRect).
_FIRST_COLUMNS = """
() => Array.from(document.querySelectorAll('main table')).filter(t => t.offsetParent !== null).map(t => {
  const box = t.closest('.table-scroll');
  const cell = t.rows[0].cells[0];
  const before = cell.getBoundingClientRect();
  if (box) box.scrollLeft = box.scrollWidth;
  const after = cell.getBoundingClientRect();
  if (box) box.scrollLeft = 0;
  return {caption: t.caption ? t.caption.textContent : '', scrolls: !!box && box.scrollWidth > box.clientWidth,
          left: Math.min(before.left, after.left), right: Math.max(before.right, after.right), width: after.width};
})
"""


@pytest.mark.slow
@pytest.mark.browser
def test_phone_pages_never_scroll_sideways_and_tables_keep_their_first_column(demo_site, served, browser):
    context, page = _page(browser, PHONE)
    try:
        tables = 0
        for path in pages_to_check(demo_site):
            rel = path.relative_to(demo_site).as_posix()
            page.goto(served + rel, wait_until="load")
            bring_charts_into_view(page)
            page.evaluate("() => document.querySelectorAll('details').forEach(d => d.open = true)")
            assert page.evaluate(_WIDER) <= PHONE["width"], rel
            for t in page.evaluate(_FIRST_COLUMNS):
                assert t["left"] >= 0 and t["right"] <= PHONE["width"] and t["width"] > 0, (rel, t)
                tables += 1
        assert tables > 5
    finally:
        context.close()


@pytest.mark.slow
@pytest.mark.browser
def test_search_and_sorting_work_with_the_chart_scripts_blocked(demo_site, served, browser):
    # The charts' scripts refused (playwright page.route abort): the page's own controls still work.
    context, page = _page(browser, DESKTOP)
    refused = []

    def block(route):
        refused.append(route.request.url)
        route.abort()

    try:
        page.route(re.compile(r".*/assets/(vega-bundle|charts)\.[0-9a-f]+\.js$"), block)
        season = sorted(demo_site.glob("seasons/*/index.html"))[-1].relative_to(demo_site).as_posix()
        page.goto(served + season, wait_until="load")
        assert refused  # charts.js was asked for and refused
        # search: a leader's name finds it; the list is a WAI-ARIA combobox popup
        box = page.locator("#site-search-box")
        leader = page.locator(".leader-block h2 a").first.inner_text()
        box.fill(leader[:6])
        options = page.locator("#site-search-results [role=option]")
        assert options.count() > 0 and box.get_attribute("aria-expanded") == "true"
        box.press("ArrowDown")
        first = options.first.get_attribute("id")
        assert box.get_attribute("aria-activedescendant") == first
        assert options.first.get_attribute("aria-selected") == "true"
        box.press("Escape")
        assert box.get_attribute("aria-expanded") == "false" and not page.locator("#site-search-results").is_visible()
        # sorting: the decks column of the first table, by its heading button
        table = page.locator("table.sortable").first
        decks = lambda: [int(x) for x in table.locator("tbody tr td:nth-child(2)").all_inner_texts()]  # noqa: E731
        table.locator("thead th").nth(1).locator("button").click()
        got = decks()
        assert got == sorted(got, reverse=True) and table.locator("thead th").nth(1).get_attribute("aria-sort") == "descending"
        table.locator("thead th").nth(1).locator("button").click()
        assert decks() == sorted(got)
    finally:
        context.close()


@pytest.mark.slow
@pytest.mark.browser
def test_search_keyboard_and_blur(demo_site, served, browser):
    # WAI-ARIA Authoring Practices, combobox pattern: Enter opens the chosen option; leaving closes.
    context, page = _page(browser, PHONE)
    try:
        page.goto(served + "index.html", wait_until="load")
        box = page.locator("#site-search-box")
        assert box.get_attribute("role") == "combobox"
        assert box.get_attribute("aria-controls") == "site-search-results"
        assert page.locator("#site-search-results").get_attribute("role") == "listbox"
        box.fill("2025")  # seasons are found
        kinds = page.locator("#site-search-results [role=option] .kind").all_inner_texts()
        assert any("season" in k for k in kinds)
        page.locator("a.site-name").focus()  # blur
        assert box.get_attribute("aria-expanded") == "false"
        box.focus()
        box.press("ArrowDown")
        box.press("Enter")
        page.wait_for_load_state("load")
        assert "/seasons/" in page.url or "/archetypes/" in page.url or "/cards/" in page.url
    finally:
        context.close()


@pytest.mark.slow
@pytest.mark.browser
def test_map_point_opens_its_archetype(demo_site, served, browser):
    context, page = _page(browser, DESKTOP)
    try:
        season = sorted(demo_site.glob("seasons/*/index.html"))[-1].relative_to(demo_site).as_posix()
        page.goto(served + season, wait_until="load")
        maps = page.locator(".chart-view[data-chart-data][aria-hidden='true']")  # the maps (the heat map is not hidden)
        page.wait_for_timeout(500)
        assert page.locator(".chart-view[data-chart-data] svg").count() < maps.count()  # maps out of sight wait
        view = maps.last
        assert view.get_attribute("aria-hidden") == "true"
        view.scroll_into_view_if_needed()
        point = view.locator(".mark-symbol path").nth(3)
        point.wait_for(state="attached", timeout=20000)
        point.hover(force=True)
        tip = page.locator("#vg-tooltip-element.visible")
        tip.wait_for(state="visible", timeout=5000)
        assert "Its telling cards" in tip.inner_text()
        point.click(force=True)
        page.wait_for_url(re.compile(r".*/archetypes/[^/]+/[^/]+\.html$"), timeout=5000)
    finally:
        context.close()
