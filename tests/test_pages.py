"""The published pages: documented contexts, figures that match the exports, hostile data."""
from __future__ import annotations

import base64
import csv
import dataclasses
import hashlib
import io
import json
import re

import html5lib
import numpy as np
import pandas as pd
import pytest

from _site_helpers import FORMULA, PLAYER, QUOTES, RTL, XSS_IMG, XSS_SCRIPT, small_site, write_notes
from sitegen.errors import RenderError
from sitegen.model import Archetype
from sitegen.site import pages
from sitegen.site.exports import fixed, safe_cell
from sitegen.site.render import cosine, render_site
from sitegen.site.render_season import SEASON_MAP_POINTS


def _doc(body: bytes):
    return html5lib.parse(body, namespaceHTMLElements=False)


def _text(el) -> str:
    return "".join(el.itertext())


@pytest.fixture(scope="module")
def plain(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("plain")
    site = small_site(tmp, content=write_notes(tmp / "content"))
    out, warnings = render_site(site)
    return site, out, warnings


@pytest.fixture(scope="module")
def hostile(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("hostile")
    site = small_site(tmp, hostile=True, content=write_notes(tmp / "content", hostile=True))
    out, warnings = render_site(site)
    return site, out, warnings


def _archetypes(site) -> list[Archetype]:
    return [a for r in site.results for a in r.archetypes]


def test_every_context_field_is_documented():
    # Each page kind's template context, and every piece it holds, explains each field.
    classes = [obj for obj in vars(pages).values() if dataclasses.is_dataclass(obj) and obj.__module__ == pages.__name__]
    assert set(pages.PAGE_KINDS) <= set(classes)
    missing = [f"{cls.__name__}.{f.name}" for cls in classes for f in dataclasses.fields(cls)
               if not str(f.metadata.get("help", "")).strip()]
    assert missing == []


def test_card_table_on_the_page_equals_the_exports(plain):
    # Every figure of the card-inclusion table matches the CardLine values,
    # the CSV download and data/archetypes.json.
    site, out, _ = plain
    doc = json.loads(out["data/archetypes.json"])
    for a in _archetypes(site):
        slug = a.slug
        season = a.season.lower()
        page = _doc(out[f"archetypes/{slug}/{season}.html"])
        table = page.find(".//table[@class='sortable cards']")
        rows = [[(td.get("data-sort"), _text(td).strip()) for td in tr.findall("td")] for tr in table.find("tbody")]
        assert [r[0][1] for r in rows] == [c.card for c in a.inclusion]
        exported = next(x for x in doc["archetypes"] if x["slug"] == slug and x["season"] == a.season)
        with_csv = list(csv.DictReader(io.StringIO(out[f"archetypes/{slug}/{season}-cards.csv"].decode("utf-8"))))
        for row, line, ex, cr in zip(rows, a.inclusion, exported["cards"], with_csv, strict=True):
            shown = [float(row[i][0]) for i in (2, 3, 4, 5, 6)]
            truth = [line.share, line.mean_copies, line.at_1, line.at_2, line.at_3_plus]
            assert shown == pytest.approx(truth, abs=5e-5)
            assert shown == pytest.approx([ex["share"], ex["mean_copies"], ex["at_1"], ex["at_2"], ex["at_3_plus"]], abs=5e-5)
            assert [row[i][0] for i in (2, 4, 5, 6)] == [cr["share"], cr["at_1"], cr["at_2"], cr["at_3_plus"]]
            assert row[2][1] == f"{line.share * 100:.1f}%"
            assert row[7][1] == line.tier == cr["tier"]


def test_decklist_shows_medoid_with_total_and_id(plain):
    site, out, _ = plain
    a = _archetypes(site)[0]
    page = _doc(out[f"archetypes/{a.slug}/{a.season.lower()}.html"])
    lines = [(_text(li).split(" ", 1)) for li in page.iterfind(".//div[@class='decklist']//li")]
    assert sorted((c, int(q)) for q, c in lines) == sorted((x.card, x.quantity) for x in a.medoid)
    body = _text(page.find(".//main"))
    assert f"Deck {a.medoid_deck_id}, {a.medoid_total} cards" in body


def test_other_decks_shown_as_no_archetype(plain):
    site, out, _ = plain
    page = _doc(out["seasons/s1/index.html"])
    other = page.find(".//tr[@class='other-decks']")
    assert _text(other.find("td")).strip() == "Other decks"
    assert other.find(".//a") is None  # no page: it is not an archetype
    assert "decks that fit no archetype" in _text(page.find(".//main"))
    assert not any(p.startswith("archetypes/other/") for p in out)


def test_small_samples_flagged_and_too_small_partition_said(plain):
    site, out, _ = plain
    page = _doc(out["seasons/s1/index.html"])
    cells = {tr.find("td").get("data-sort"): tr.findall("td")[3] for tr in page.find(".//table[@class='sortable archetypes']/tbody")}
    # Wyrm Rush: 50 games < trends.min_games = 100 -> flagged and not ranked (no sort value).
    assert "small sample" in _text(cells["Wyrm Rush"]) and cells["Wyrm Rush"].get("data-sort") == ""
    # Tortoise Wall: 550 games -> a plain win rate with its interval.
    assert "small sample" not in _text(cells["Tortoise Wall"])
    assert cells["Tortoise Wall"].get("data-sort") == fixed(300 / 550)
    s2 = _text(_doc(out["seasons/s2/index.html"]).find(".//main"))
    assert "too small to cluster" in s2 and "fewer than analysis.min_decks (30)" in s2
    assert "1 deck left out of the analysis" in s2


def test_wilson_interval_on_archetype_page(plain):
    # Reference: statsmodels' Wilson interval for the planted 30 wins of 50 games.
    from statsmodels.stats.proportion import proportion_confint

    low, high = proportion_confint(30, 50, alpha=0.05, method="wilson")
    _, out, _ = plain
    text = _text(_doc(out["archetypes/wyrm-burn/s1.html"]).find(".//main"))
    assert f"60.0% of 50 games won (95% interval {low * 100:.1f}% to {high * 100:.1f}%)" in text


def test_closest_archetypes_use_cosine_similarity():
    # Reference: scipy's cosine distance on the same profiles laid out as vectors.
    from scipy.spatial.distance import cosine as scipy_cosine

    a = {"x": 1.0, "y": 0.5, "z": 0.0}
    b = {"y": 0.25, "z": 0.9, "w": 0.3}
    keys = sorted(set(a) | set(b))
    expected = 1 - scipy_cosine([a.get(k, 0.0) for k in keys], [b.get(k, 0.0) for k in keys])
    assert cosine(a, b) == pytest.approx(expected, rel=1e-12)
    assert cosine(a, {}) == 0.0


def test_note_shown_and_orphan_warned(plain):
    site, out, warnings = plain
    page = _doc(out["archetypes/wyrm-burn/s1.html"])
    assert _text(page.find(".//h1")) == "Wyrm Rush"  # the note's title renames it
    assert page.find(".//section[@class='note']//table") is not None
    orphans = [w for w in warnings if w.kind == "note-orphan"]
    assert len(orphans) == 1 and "no-such-deck.md" in orphans[0].message


def test_history_links_and_first_last_seen(plain):
    _, out, _ = plain
    page = _doc(out["archetypes/wyrm-burn/s2.html"])
    hrefs = {a.get("href") for a in page.iter("a")}
    assert "../../archetypes/wyrm-burn/s1.html" in hrefs
    assert "first in S1, last in S2" in _text(page.find(".//main"))


def test_every_link_is_relative(plain):
    _, out, _ = plain
    for path, body in out.items():
        if path.endswith(".html") and path != "404.html":
            for el in _doc(body).iter():
                for attr in ("href", "src"):
                    v = el.get(attr)
                    if v is not None and not v.startswith(("https://", "http://", "#")):
                        assert not v.startswith("/"), (path, v)


def test_same_input_same_bytes(tmp_path):
    a, _ = render_site(small_site(tmp_path))
    b, _ = render_site(small_site(tmp_path))
    assert a == b


def _site_js(out: dict) -> str:
    return next(p for p in out if p.startswith("assets/site.") and p.endswith(".js"))


def test_404_links_work_at_any_depth(tmp_path):
    out, _ = render_site(small_site(tmp_path, base_url="https://example.org/guide"))
    page = _doc(out["404.html"])
    assert page.find(".//a[@class='home-link']").get("href") == "https://example.org/guide/index.html"
    assert all(s.get("src").startswith("https://example.org/guide/") for s in page.iter("script"))
    # Without a base URL the host's root stands in, so the page still works at any depth.
    out2, _ = render_site(small_site(tmp_path))
    page2 = _doc(out2["404.html"])
    assert page2.find(".//a[@class='home-link']").get("href") == "/index.html"
    # Its look travels inside it: one <style> allowed by its SHA-256 in the CSP
    # (CSP Level 2 hash-source: base64 of the SHA-256 of the element's text).
    style = page2.find(".//style")
    digest = base64.b64encode(hashlib.sha256(style.text.encode("utf-8")).digest()).decode("ascii")
    csp = page2.find(".//meta[@http-equiv='Content-Security-Policy']").get("content")
    assert f"style-src 'self' 'sha256-{digest}';" in csp
    assert page2.find(".//link[@rel='stylesheet']") is None
    # It has the search box; its scripts come from the host's root too.
    assert page2.find(".//input[@id='site-search-box']") is not None
    assert [sc.get("src") for sc in page2.iter("script")] == ["/search-index.js", "/" + _site_js(out2)]
    # Every other page keeps the plain policy: no inline style allowed.
    assert "sha256" not in _doc(out2["index.html"]).find(".//meta[@http-equiv='Content-Security-Policy']").get("content")


def _data_rows(body: bytes) -> list:
    """The rows a chart data script (charts.data_script) registers."""
    text = body.decode("utf-8")
    assert "<" not in text and text.startswith("(window.SITEGEN_CHART_DATA = ")
    return json.loads(text.split("] = ", 1)[1].rstrip().rstrip(";"))


def test_hostile_names_are_text_everywhere(hostile):
    site, out, _ = hostile
    leader = site.results[0].leader
    a = next(x for x in _archetypes(site) if x.slug == "wyrm-burn" and x.season == "S1")
    page = _doc(out["archetypes/wyrm-burn/s1.html"])
    # No element or attribute was made from data: only our own scripts exist.
    for p, body in out.items():
        if p.endswith(".html"):
            d = _doc(body)
            assert all(s.get("src") or s.get("type") == "application/json" for s in d.iter("script")), p
            assert not any(k.lower().startswith("on") for el in d.iter() for k in el.attrib), p
            assert not [img for img in d.iter("img")], p
    # Element text: the names read back exactly.
    assert _text(page.find(".//dl[@class='facts']/dd")) == leader
    assert a.name in _text(page.find(".//p[@class='hint']"))
    assert a.name.startswith("Wyrm Burn") and XSS_IMG in a.name and RTL in a.name and QUOTES in a.name
    assert _text(page.find(".//title")).startswith("Wyrm Rush, S1 · Guide " + XSS_SCRIPT)
    # Attributes: data-sort holds the raw card name.
    sort_values = [td.get("data-sort") for td in page.iterfind(".//table[@class='sortable cards']/tbody/tr/td[1]")]
    assert sort_values == [c.card for c in a.inclusion]
    # JSON blocks (chart specs) parse back to the same strings.
    # The map's points live in data scripts: JSON assigned to one entry of a global, with no '<'.
    season = _doc(out["seasons/s1/index.html"])
    specs = [json.loads(s.text) for s in season.iter("script") if s.get("type") == "application/json"]
    assert specs
    names = {v["archetype"] for path in out if path.startswith("seasons/s1/map-") for v in _data_rows(out[path])}
    assert "Wyrm Rush" in names
    raw = out["seasons/s1/index.html"].decode("utf-8")
    assert XSS_SCRIPT not in raw and XSS_IMG not in raw
    # The search index is JSON assigned to one global; it parses back too.
    js = out["search-index.js"].decode("utf-8")
    assert "<" not in js
    index = json.loads(re.fullmatch(r"window\.SITEGEN_SEARCH = (.*);\n", js, re.S).group(1))
    assert leader in {e["n"] for e in index["entries"]}
    assert json.loads(out["search-index.json"]) == index


def test_hostile_csv_cells_are_neutralised(hostile):
    # OWASP "CSV Injection": cells starting with = + - @ tab CR get a leading quote.
    site, out, _ = hostile
    a = next(x for x in _archetypes(site) if x.slug == "wyrm-burn" and x.season == "S1")
    cards = list(csv.reader(io.StringIO(out["archetypes/wyrm-burn/s1-cards.csv"].decode("utf-8"))))
    assert cards[2][0] == "'" + FORMULA
    assert cards[1][0] == a.inclusion[0].card  # markup is fine in CSV: it is data, not a page
    deck = list(csv.reader(io.StringIO(out["archetypes/wyrm-burn/s1-decklist.csv"].decode("utf-8"))))
    assert {row[0] for row in deck[1:]} == {"'-cmd|calc"}
    rows = list(csv.DictReader(io.StringIO(out["data/assignments.csv"].decode("utf-8"))))
    assert "'-cmd|calc" in {r["deck_id"] for r in rows}
    for text in ("=1+2", "+1", "-1", "@SUM(A1)", "\tx", "\rx"):
        assert safe_cell(text) == "'" + text
    assert safe_cell("plain") == "plain"


def test_exports_cover_every_deck(plain):
    site, out, _ = plain
    rows = json.loads(out["data/assignments.json"])
    assert sorted(r["deck_id"] for r in rows) == sorted(site.data.decks["deck_id"])
    by_id = {r["deck_id"]: r for r in rows}
    assert by_id["x1"]["archetype"] == ""      # left out by a rule
    assert by_id["o1"]["archetype"] == ""      # partition too small
    assert by_id["d12"]["archetype"] == "other"
    parts = json.loads(out["data/archetypes.json"])["partitions"]
    assert {(p["season"], p["leader"], p["chosen_k"]) for p in parts} == {("S1", "Vessa", 2), ("S2", "Vessa", 2), ("S2", "Orrin", None)}
    assert parts[0]["silhouette"] == [[2, 0.41], [3, 0.38]]


def test_player_names_only_when_opted_in(tmp_path):
    out, _ = render_site(small_site(tmp_path))
    assert not any(PLAYER.encode() in body for body in out.values())
    out, _ = render_site(small_site(tmp_path, publish_players=True))
    page = _doc(out["archetypes/wyrm-burn/s1.html"])
    assert PLAYER in _text(page.find(".//main"))


def test_site_templates_override_packaged_ones(tmp_path):
    own = tmp_path / "templates"
    own.mkdir()
    (own / "method.html").write_text('{% extends "base.html" %}{% block content %}<p id="own">Our own method page</p>{% endblock %}',
                                     encoding="utf-8")
    out, _ = render_site(small_site(tmp_path, templates=own))
    assert _text(_doc(out["method.html"]).find(".//p[@id='own']")) == "Our own method page"
    # Other pages still come from the packaged templates.
    assert b"Cards played" in out["archetypes/wyrm-burn/s1.html"]


def test_without_history_each_slug_stands_alone(tmp_path):
    out, _ = render_site(small_site(tmp_path, history=False))
    text = _text(_doc(out["archetypes/wyrm-burn/s2.html"]).find(".//main"))
    assert "first in S1, last in S2" in text


def test_season_page_stays_under_1_mb_with_many_large_maps(tmp_path):
    # Three leaders with 3000 drawn decks each (the default analysis.map_points):
    # the page shares one point budget among them and stays under 1 MB.
    site = small_site(tmp_path, history=False)
    base = next(r for r in site.results if r.season == "S1")
    n = 3000
    keys = [a.key for a in base.groups]
    points = pd.DataFrame({
        "deck_id": [f"deck-{i:05d}" for i in range(n)],
        "archetype": [keys[i % len(keys)] for i in range(n)],
        "x": np.linspace(-30, 30, n).round(3), "y": np.cos(np.arange(n)).round(3),
        "cards": ["Ember Wyrm, Tide Caller, Ash Drake, Cinder Vow"] * n,
    })
    results = []
    for leader in ("Aa", "Bb", "Cc"):
        arch = tuple(dataclasses.replace(a, leader=leader, slug=f"{a.slug}-{leader.lower()}") for a in base.archetypes)
        other = dataclasses.replace(base.other, leader=leader)
        results.append(dataclasses.replace(base, leader=leader, n_decks=n, archetypes=arch, other=other,
                                           map_points=points))
    out, _ = render_site(dataclasses.replace(site, results=tuple(results)))
    page = out["seasons/s1/index.html"]
    assert len(page) < 1_000_000
    srcs = [v.get("data-chart-data") for v in _doc(page).iter("div") if v.get("data-chart-data")]
    assert len(srcs) == 3 and all(src.startswith("../../seasons/s1/map-") for src in srcs)  # each map's data file
    drawn = sum(len(_data_rows(out[src.removeprefix("../../")])) for src in srcs)
    assert 0 < drawn <= SEASON_MAP_POINTS


def test_template_mistake_is_a_render_error_naming_the_file(tmp_path):
    # StrictUndefined: a misspelt name in a site's own template stops the build with its file and line.
    own = tmp_path / "templates"
    own.mkdir()
    (own / "method.html").write_text('{% extends "base.html" %}\n{% block content %}{{ no_such_name }}{% endblock %}',
                                     encoding="utf-8")
    with pytest.raises(RenderError, match=r"template .*method\.html, line 2: 'no_such_name' is undefined"):
        render_site(small_site(tmp_path, templates=own))
