"""sitemap.xml and robots.txt, following the sitemaps.org protocol.

A sitemap needs absolute URLs, so it is only written when ``site.base_url``
is set; otherwise a warning says why it is missing. One file holds at most
50,000 URLs; beyond that the pages are split over ``sitemap-1.xml``,
``sitemap-2.xml``... and ``sitemap.xml`` becomes a sitemap index pointing at
them. No ``<lastmod>``: the build has no honest date for a page.
"""
from __future__ import annotations

from typing import Sequence
from urllib.parse import quote
from xml.sax.saxutils import escape

from ..model import Finding

NAMESPACE = "http://www.sitemaps.org/schemas/sitemap/0.9"
MAX_URLS = 50_000


def absolute_url(base_url: str, path: str) -> str:
    """``path`` (relative to the site root) under ``base_url``, percent-encoded."""
    return base_url.rstrip("/") + "/" + quote(path, safe="/-._~")


def _urlset(urls: Sequence[str]) -> bytes:
    lines = ['<?xml version="1.0" encoding="UTF-8"?>', f'<urlset xmlns="{NAMESPACE}">']
    lines += [f"  <url><loc>{escape(u)}</loc></url>" for u in urls]
    lines.append("</urlset>")
    return ("\n".join(lines) + "\n").encode("utf-8")


def _index(urls: Sequence[str]) -> bytes:
    lines = ['<?xml version="1.0" encoding="UTF-8"?>', f'<sitemapindex xmlns="{NAMESPACE}">']
    lines += [f"  <sitemap><loc>{escape(u)}</loc></sitemap>" for u in urls]
    lines.append("</sitemapindex>")
    return ("\n".join(lines) + "\n").encode("utf-8")


def sitemap_files(base_url: str, pages: Sequence[str]) -> tuple[dict[str, bytes], list[Finding]]:
    """sitemap.xml (or an index and its parts) and robots.txt for the given page paths."""
    if not base_url.strip():
        return {"robots.txt": b"User-agent: *\nAllow: /\n"}, [Finding(
            "sitemap-skipped", "sitemap.xml was not written: it needs absolute URLs; set site.base_url "
                               "to the address the site is published at")]
    urls = [absolute_url(base_url, p) for p in sorted(set(pages))]
    out: dict[str, bytes] = {}
    if len(urls) <= MAX_URLS:
        out["sitemap.xml"] = _urlset(urls)
    else:
        parts = []
        for i in range(0, len(urls), MAX_URLS):
            name = f"sitemap-{i // MAX_URLS + 1}.xml"
            out[name] = _urlset(urls[i:i + MAX_URLS])
            parts.append(absolute_url(base_url, name))
        out["sitemap.xml"] = _index(parts)
    out["robots.txt"] = f"User-agent: *\nAllow: /\nSitemap: {absolute_url(base_url, 'sitemap.xml')}\n".encode("utf-8")
    return out, []
