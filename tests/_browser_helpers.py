"""Real-browser checks: headless Debian Chromium driven by playwright, fully offline.

:func:`check_page` loads one page and returns every problem it saw: requests
leaving the machine (blocked and reported), failed or erroring requests,
uncaught page errors, console errors, Content-Security-Policy violations, and
chart views left without a drawing. The same function checks the test page
of tests/test_browser.py and the pages of a built site.
"""
from __future__ import annotations

import http.server
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from functools import partial
from pathlib import Path
from urllib.parse import urlsplit

import pytest

CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]

# Runs before any page script (playwright injects it through the DevTools
# protocol, not as inline page script, so the page's CSP does not apply to it).
# It records every violation the page reports, so a refused eval, inline
# style or off-site load shows up as a test failure.
_CSP_RECORDER = """
if (!window.__cspViolations) {
  window.__cspViolations = [];
  document.addEventListener('securitypolicyviolation', function (e) {
    window.__cspViolations.push(e.violatedDirective + ' blocked ' + (e.blockedURI || '(inline)') +
      (e.sourceFile ? ' at ' + e.sourceFile + ':' + e.lineNumber : ''));
  });
}
"""

# True once every chart view holds a drawing or has given up with a message.
_CHARTS_SETTLED = """
() => Array.from(document.querySelectorAll('.chart-view')).every(
  v => v.querySelector('svg, canvas') || v.classList.contains('chart-failed'))
"""

_CHART_REPORT = """
() => Array.from(document.querySelectorAll('.chart-view')).map(v => ({
  spec: v.getAttribute('data-chart-spec'),
  drawn: !!v.querySelector('svg, canvas'),
  marks: v.querySelectorAll('.role-mark').length + v.querySelectorAll('canvas').length,
  failed: v.classList.contains('chart-failed'),
}))
"""


def bring_charts_into_view(page) -> None:
    """Scroll each chart view into view in turn: charts.js draws a chart only when it is seen."""
    views = page.locator(".chart-view")
    for i in range(views.count()):
        views.nth(i).scroll_into_view_if_needed()
        page.wait_for_timeout(50)


def is_local(url: str) -> bool:
    """True for file://, data:, about: and http(s) on 127.0.0.1 or localhost."""
    parts = urlsplit(url)
    if parts.scheme in ("file", "data", "about", "blob"):
        return True
    return parts.scheme in ("http", "https") and parts.hostname in ("127.0.0.1", "localhost")


def check_page(page, url: str, *, timeout_ms: int = 20000) -> list[str]:
    """Load ``url`` in ``page`` and return the problems seen (empty when clean).

    Every request that is not local is aborted and reported; so are failed
    requests, HTTP errors, page errors, console errors and warnings, CSP violations, and
    chart views (``.chart-view``) without an ``<svg>`` or ``<canvas>``.
    """
    problems: list[str] = []

    def route(r) -> None:
        if is_local(r.request.url):
            r.continue_()
        else:
            problems.append(f"request leaves the machine: {r.request.url}")
            r.abort()

    def on_console(msg) -> None:
        # warnings count too: Vega reports dropped encodings and bad data as warnings
        if msg.type in ("error", "warning"):
            problems.append(f"console {msg.type}: {msg.text}")

    def on_response(resp) -> None:
        if resp.status >= 400:
            problems.append(f"HTTP {resp.status}: {resp.url}")

    handlers = {
        "pageerror": lambda err: problems.append(f"page error: {err}"),
        "console": on_console,
        "requestfailed": lambda req: problems.append(f"request failed: {req.url} ({req.failure})"),
        "response": on_response,
    }
    page.route("**/*", route)
    page.add_init_script(_CSP_RECORDER)
    for event, handler in handlers.items():
        page.on(event, handler)
    try:
        page.goto(url, wait_until="load")
        bring_charts_into_view(page)
        try:
            page.wait_for_function(_CHARTS_SETTLED, timeout=timeout_ms)
        except Exception:  # playwright TimeoutError; the report below names the charts
            problems.append(f"charts still not drawn after {timeout_ms} ms")
        for chart in page.evaluate(_CHART_REPORT):
            if chart["failed"] or not chart["drawn"]:
                problems.append(f"chart {chart['spec']} not drawn")
            elif not chart["marks"]:
                problems.append(f"chart {chart['spec']} drawn without marks")
        violations = page.evaluate("() => window.__cspViolations || null")
        if violations is None:
            problems.append("CSP recorder did not run")
        else:
            problems += [f"CSP violation: {v}" for v in violations]
    finally:
        for event, handler in handlers.items():
            page.remove_listener(event, handler)
        page.unroute("**/*", route)
    return problems


def pages_to_check(site: Path) -> list[Path]:
    """A built site's front page and the first page of each kind that draws charts or runs scripts.

    Front, season, archetype history, archetype season, leader, card,
    method and 404 pages, where they exist (first in name order, so the pick
    is stable).
    """
    picks = [site / "index.html"]
    for pattern in ("seasons/*/index.html", "archetypes/*/index.html", "archetypes/*/*.html",
                    "leaders/*.html", "cards/*.html", "method.html", "404.html"):
        found = sorted(p for p in site.glob(pattern) if p not in picks)
        if found:
            picks.append(found[0])
    return [p for p in picks if p.is_file()]


@pytest.fixture(scope="module")
def browser():
    """A headless Debian Chromium; tests skip when /usr/bin/chromium is missing."""
    if not CHROMIUM.exists():
        pytest.skip(f"{CHROMIUM} is not installed (apt-get install chromium)")
    sync_api = pytest.importorskip("playwright.sync_api")
    with sync_api.sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS)
        try:
            yield browser
        finally:
            browser.close()


@contextmanager
def serve_folder(folder: Path) -> Iterator[str]:
    """Serve ``folder`` over http on 127.0.0.1 (a free port) for the block; yields the base URL."""

    class Quiet(http.server.SimpleHTTPRequestHandler):
        def log_message(self, *args) -> None:  # keep test output clean
            pass

    server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), partial(Quiet, directory=str(folder)))
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_address[1]}/"
    finally:
        server.shutdown()
        server.server_close()
        thread.join()
