"""A site template extends a packaged one by the name ``sitegen:NAME`` and changes one block.

The site's own ``base.html`` replaces the packaged one for every page; with
``{% extends "sitegen:base.html" %}`` it can take the packaged page frame and
override only its ``footer`` block. Checked against a build without the site
template: every page is the same bytes but for the footer.
"""
from __future__ import annotations

import re

from _site_helpers import small_site
from sitegen.site.render import render_site

OWN_FOOTER = '<footer class="site-foot" id="own-foot">Our own footer</footer>\n'
# The packaged footer, as templates/_footer.html renders it (one <footer> element).
_FOOTER = re.compile(rb'<footer class="site-foot">.*?</footer>\n', re.S)


def test_site_base_extends_packaged_base_and_overrides_one_block(tmp_path):
    plain, _ = render_site(small_site(tmp_path / "plain"))
    own = tmp_path / "own" / "templates"
    own.mkdir(parents=True)
    (own / "base.html").write_text(
        '{% extends "sitegen:base.html" %}{% block footer %}' + OWN_FOOTER + '{% endblock %}', encoding="utf-8")
    changed, _ = render_site(small_site(tmp_path / "own", templates=own))

    pages = [p for p in plain if p.endswith(".html")]
    assert len(pages) > 5 and set(pages) <= set(changed)
    for path in pages:
        before, after = plain[path], changed[path]
        assert len(_FOOTER.findall(before)) == 1, path  # the packaged footer is there to replace
        assert OWN_FOOTER.encode() in after and not _FOOTER.search(after), path
        # Everything else on the page is as the packaged template made it.
        assert after.replace(OWN_FOOTER.encode(), b"") == _FOOTER.sub(b"", before), path


def test_packaged_name_reaches_packaged_template_even_when_site_replaces_it(tmp_path):
    # A site page replacing method.html wholesale can still include the packaged one's parts by name.
    own = tmp_path / "templates"
    own.mkdir()
    (own / "method.html").write_text(
        '{% extends "sitegen:method.html" %}{% block footer %}<p id="own">ours</p>\n{% endblock %}', encoding="utf-8")
    plain, _ = render_site(small_site(tmp_path / "plain"))
    out, _ = render_site(small_site(tmp_path, templates=own))
    assert b'<p id="own">ours</p>' in out["method.html"]
    assert _FOOTER.sub(b"", plain["method.html"]) == out["method.html"].replace(b'<p id="own">ours</p>\n', b"")
    # Pages the site did not replace keep the packaged footer.
    assert out["index.html"] == plain["index.html"]
