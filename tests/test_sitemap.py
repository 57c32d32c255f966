"""sitemap.xml against the sitemaps.org protocol (https://www.sitemaps.org/protocol.html)."""
from __future__ import annotations

import xml.etree.ElementTree as ET

from _site_helpers import small_site
from sitegen.site.render import render_site
from sitegen.site.sitemap import MAX_URLS, NAMESPACE, sitemap_files

NS = {"sm": "http://www.sitemaps.org/schemas/sitemap/0.9"}


def test_namespace_is_the_protocols():
    # sitemaps.org: the urlset must declare this exact namespace.
    assert NAMESPACE == "http://www.sitemaps.org/schemas/sitemap/0.9"


def test_rendered_sitemap_follows_the_protocol(tmp_path):
    base = "https://example.org/guide&more/"
    out, warnings = render_site(small_site(tmp_path, base_url=base))
    root = ET.fromstring(out["sitemap.xml"])
    # sitemaps.org: root <urlset> in the namespace, one <url><loc> per page.
    assert root.tag == "{http://www.sitemaps.org/schemas/sitemap/0.9}urlset"
    locs = [el.text for el in root.findall("sm:url/sm:loc", NS)]
    assert locs and len(locs) <= 50_000
    # Absolute URLs, and the '&' came back from its XML escape.
    assert all(loc.startswith("https://example.org/guide&more/") for loc in locs)
    assert b"guide&amp;more" in out["sitemap.xml"]
    pages = {p for p in out if p.endswith(".html")}
    assert {loc.removeprefix("https://example.org/guide&more/") for loc in locs} == pages - {"404.html"}
    assert not any(w.kind == "sitemap-skipped" for w in warnings)
    assert b"Sitemap: https://example.org/guide&more/sitemap.xml" in out["robots.txt"]


def test_no_base_url_skips_with_a_warning(tmp_path):
    out, warnings = render_site(small_site(tmp_path))
    assert "sitemap.xml" not in out
    skipped = [w for w in warnings if w.kind == "sitemap-skipped"]
    assert len(skipped) == 1 and "site.base_url" in skipped[0].message


def test_more_than_50000_urls_become_an_index():
    # sitemaps.org: at most 50,000 URLs per file; more need a sitemap index.
    pages = [f"cards/c{i:06d}.html" for i in range(MAX_URLS + 1)]
    files, warnings = sitemap_files("https://example.org", pages)
    assert warnings == []
    index = ET.fromstring(files["sitemap.xml"])
    assert index.tag == "{http://www.sitemaps.org/schemas/sitemap/0.9}sitemapindex"
    parts = [el.text for el in index.findall("sm:sitemap/sm:loc", NS)]
    assert parts == ["https://example.org/sitemap-1.xml", "https://example.org/sitemap-2.xml"]
    counts = [len(ET.fromstring(files[f"sitemap-{i}.xml"]).findall("sm:url", NS)) for i in (1, 2)]
    assert counts == [MAX_URLS, 1]


def test_odd_characters_in_paths_are_percent_encoded():
    files, _ = sitemap_files("https://example.org/", ["a b/<x>.html"])
    loc = ET.fromstring(files["sitemap.xml"]).find("sm:url/sm:loc", NS).text
    assert loc == "https://example.org/a%20b/%3Cx%3E.html"
