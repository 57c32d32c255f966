"""Analysts' notes: front matter, Markdown rendering, orphans, hostile HTML."""
from __future__ import annotations

from pathlib import Path

import html5lib
import markdown
import pytest

from sitegen.errors import DataError
from sitegen.site.notes import EXTENSIONS, load_notes, orphan_findings, parse_note, render_markdown, split_front_matter


def _parse(html: str):
    return html5lib.parse(html, namespaceHTMLElements=False)


def test_front_matter_keys_quotes_comments_and_lists():
    # Planted: every supported form of line in one block; values as we wrote them.
    text = ("---\n# a comment\ntitle: \"Wyrm Rush\"\nsummary: 'Fast: burns early'\n\nsignature: Ember Wyrm; Ash Drake ; \n"
            "hide: no\nauthor: Ada\n---\nBody line\n")
    meta, body, start = split_front_matter(text, "x.md")
    assert meta == {"title": "Wyrm Rush", "summary": "Fast: burns early", "signature": "Ember Wyrm; Ash Drake ;",
                    "hide": "no", "author": "Ada"}
    assert body == "Body line\n"
    assert start == 10
    note = parse_note(text, Path("x.md"), "wyrm-rush")
    assert note.title == "Wyrm Rush"
    assert note.signature == ("Ember Wyrm", "Ash Drake")
    assert note.hidden is False
    assert note.findings == ()


def test_no_front_matter_means_whole_text_is_body():
    # A note without the opening '---' line has no front matter at all.
    meta, body, start = split_front_matter("Just text\n---\n", "x.md")
    assert meta == {} and body == "Just text\n---\n" and start == 1


def test_bad_front_matter_line_names_file_and_row():
    # Line 3 of the file is not key: value; the error says file and row.
    with pytest.raises(DataError, match=r"bad\.md, row 3: front matter line is not 'key: value'"):
        split_front_matter("---\ntitle: A\nthis is not a pair\n---\n", "bad.md")


def test_unclosed_front_matter_is_an_error():
    with pytest.raises(DataError, match=r"open\.md, row 1: front matter is never closed"):
        split_front_matter("---\ntitle: A\n", "open.md")


def test_unknown_key_and_bad_hide_are_reported():
    note = parse_note("---\ncolour: red\nhide: maybe\n---\nx\n", Path("n.md"))
    kinds = [f.kind for f in note.findings]
    assert kinds == ["note-key", "note-key"]
    assert "unknown front matter key 'colour'" in note.findings[0].message
    assert "n.md" in note.findings[0].message
    assert note.hidden is False


@pytest.mark.parametrize("body", [
    "# Heading\n\nSome *emphasis* and **strong** text, `code` and a [link](https://example.org/a?b=1&c=2).\n",
    "| card | copies |\n|---|---:|\n| Ember Wyrm | 3 |\n| Ash & Drake | 2 |\n",
    "```python\nx = 1 < 2\n```\n\n> a quote\n\n- one\n- two\n",
])
def test_markdown_matches_the_reference_library(body):
    # Reference: Python-Markdown itself, same extensions; for bodies with no raw
    # HTML our safe rendering must be byte-identical.
    assert str(render_markdown(body)) == markdown.markdown(body, extensions=list(EXTENSIONS))


def test_raw_html_in_a_note_stays_text():
    body = ("<img src=x onerror=alert(1)>\n\n<script>alert(1)</script>\n\nInline <b onclick=x>bold</b> here.\n\n"
            "<div>\nblock\n</div>\n\n[bad](javascript:alert(1)) [worse](java\tscript:alert(1)) "
            "![img](data:text/html,hi) [ok](https://example.org/)\n")
    html = str(render_markdown(body))
    doc = _parse(html)
    tags = {el.tag for el in doc.iter()}
    assert not tags & {"script", "b", "div"}
    # The one <img> left is Markdown's own image, its data: address dropped.
    assert [dict(el.attrib) for el in doc.iter("img")] == [{"alt": "img"}]
    assert not any(k.startswith("on") for el in doc.iter() for k in el.attrib)
    text = "".join(doc.itertext())
    assert "<img src=x onerror=alert(1)>" in text
    assert "<script>alert(1)</script>" in text
    hrefs = [a.get("href") for a in doc.iter("a")]
    # Only the https link keeps its address; javascript: (even split by a tab) is dropped.
    assert hrefs == [None, None, "https://example.org/"]


def test_load_notes_and_orphan_warning_names_the_file(tmp_path):
    (tmp_path / "archetypes").mkdir()
    (tmp_path / "index.md").write_text("Front **note**\n", encoding="utf-8")
    (tmp_path / "archetypes" / "wyrm-burn.md").write_text("---\ntitle: Wyrm Rush\n---\nHi\n", encoding="utf-8")
    (tmp_path / "archetypes" / "ghost-deck.md").write_text("Boo\n", encoding="utf-8")
    notes = load_notes(tmp_path)
    assert sorted(notes.archetypes) == ["ghost-deck", "wyrm-burn"]
    assert notes.front is not None and "<strong>note</strong>" in notes.front.html
    assert notes.method is None
    found = orphan_findings(notes, {"wyrm-burn"})
    assert [f.kind for f in found] == ["note-orphan"]
    assert str(tmp_path / "archetypes" / "ghost-deck.md") in found[0].message
    assert orphan_findings(notes, {"wyrm-burn", "ghost-deck"}) == []
    # The overrides step gets every note's file and front matter by slug.
    assert notes.front_matter_by_slug()["wyrm-burn"] == (str(tmp_path / "archetypes" / "wyrm-burn.md"), {"title": "Wyrm Rush"})


def test_merged_or_hidden_notes_are_not_orphans(tmp_path):
    # Their archetype is gone on purpose (the overrides step removed it).
    (tmp_path / "archetypes").mkdir()
    (tmp_path / "archetypes" / "a.md").write_text("---\nmerge_into: b\n---\n", encoding="utf-8")
    (tmp_path / "archetypes" / "c.md").write_text("---\nhide: yes\n---\n", encoding="utf-8")
    assert orphan_findings(load_notes(tmp_path), {"b"}) == []


def test_rename_wins_over_title():
    note = parse_note("---\ntitle: A\nrename: B\n---\n", Path("n.md"))
    assert note.title == "B"


def test_hidden_note_is_not_published(tmp_path):
    (tmp_path / "archetypes").mkdir()
    (tmp_path / "archetypes" / "a.md").write_text("---\nhide: true\n---\nDraft\n", encoding="utf-8")
    notes = load_notes(tmp_path)
    assert notes.archetypes["a"].hidden
    assert notes.for_slug("a") is None


def test_missing_folder_means_no_notes(tmp_path):
    notes = load_notes(tmp_path / "nope")
    assert notes.archetypes == {} and notes.front is None and notes.method is None


def test_note_not_utf8_names_file(tmp_path):
    (tmp_path / "index.md").write_bytes(b"caf\xe9\n")
    with pytest.raises(DataError, match=r"index\.md: not UTF-8 text \(byte 3\)"):
        load_notes(tmp_path)
