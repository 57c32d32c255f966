"""Season and archetype pages agree with their own numbers: how many archetypes, the other decks, firmness."""
from __future__ import annotations

import re

import html5lib


def _parse(path):
    return html5lib.parse(path.read_bytes(), namespaceHTMLElements=False)


def _text(el) -> str:
    return "".join(el.itertext()) if el is not None else ""


def test_how_many_agrees_with_the_table_below(demo_site):
    # Every leader section of every season page: the count stated in words equals the archetype rows shown,
    # and the other decks stated equal the other-decks row.
    pages = sorted((demo_site / "seasons").glob("*/index.html"))
    checked = 0
    for page in pages:
        doc = _parse(page)
        for section in doc.iter("section"):
            if "leader-block" not in (section.get("class") or ""):
                continue
            table = section.find(".//table")
            if table is None:
                continue
            rows = table.findall("./tbody/tr")
            others = [r for r in rows if "other-decks" in (r.get("class") or "")]
            archetypes = len(rows) - len(others)
            words = " ".join(_text(p) for p in section.iter("p"))
            said = re.search(r"(\d+) archetypes?\b", words)
            assert said and int(said.group(1)) == archetypes, (page, said and said.group(0), archetypes)
            fit_none = re.search(r"([\d,]+) decks? of [\d,]+ \((?:\d+%|under 1%)\) fit no archetype", words)
            if others:
                other_decks = int(_text(others[0].findall("td")[1]).strip())
                assert fit_none and int(fit_none.group(1).replace(",", "")) == other_decks, (page, other_decks)
            else:
                assert fit_none is None
            checked += 1
    assert checked >= 20


def test_every_archetype_row_says_how_firmly_it_holds(demo_site):
    # A word and a number for each archetype; the words follow the thresholds stated beside the table
    # (75% and more: clear; above 50%: loose; else weak), as in sitegen.analysis.stability.
    page = sorted((demo_site / "seasons").glob("*/index.html"))[-1]
    doc = _parse(page)
    seen = 0
    for table in doc.iter("table"):
        heads = [_text(th).strip() for th in table.findall("./thead/tr/th")]
        if "Holds together" not in heads:
            continue
        col = heads.index("Holds together")
        for row in table.findall("./tbody/tr"):
            if "other-decks" in (row.get("class") or ""):
                continue
            cell = _text(row.findall("td")[col]).strip()
            m = re.fullmatch(r"(clear|loose|weak) group \((\d+(?:\.\d+)?)%\)", cell)
            assert m, cell
            value = float(m.group(2)) / 100
            word = "clear" if value >= 0.75 else "loose" if value > 0.5 else "weak"
            assert m.group(1) == word, cell
            seen += 1
    assert seen >= 5
