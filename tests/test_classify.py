"""Placing decklists from outside the data: ``sitegen classify`` and classify.html.

The reference every check is held to is the build's own assignments export
(data/assignments.csv), read back with Python's csv module: a deck of the data
must get the archetype the build gave it, and the same distance to 4 decimals.
"""
from __future__ import annotations

import csv
import json
import random
import shutil
from pathlib import Path

import numpy as np
import pytest

from sitegen.build import build
from sitegen.cli import main

from _browser_helpers import browser, check_page, serve_folder  # noqa: F401 (browser is a fixture)

REPO = Path(__file__).resolve().parent.parent


def _copy_demo(dst: Path) -> Path:
    dst.mkdir(parents=True, exist_ok=True)
    shutil.copy(REPO / "site.toml", dst / "site.toml")
    shutil.copytree(REPO / "demo_data", dst / "demo_data", ignore=shutil.ignore_patterns("decklists"))
    shutil.copytree(REPO / "content", dst / "content")
    return dst / "site.toml"


def _export(site: Path) -> dict[str, dict[str, str]]:
    # Parsed with Python's stdlib csv module (RFC 4180 quoting).
    with open(site / "data" / "assignments.csv", newline="", encoding="utf-8") as fh:
        return {row["deck_id"]: row for row in csv.DictReader(fh)}


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("classify-demo")
    config = _copy_demo(folder)
    build(config, quiet=True)
    return config, folder / "site", _export(folder / "site")


def _cli(capsys, *args) -> tuple[int, str, str]:
    code = main(["classify", *map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


def _decks_by_id(folder: Path) -> dict[str, tuple[str, str, dict[str, int]]]:
    """deck id -> (season, leader, {card: copies}) of the demo data, read with the stdlib csv module and pyarrow."""
    import pyarrow.parquet as pq

    with open(folder / "demo_data" / "decks.csv", newline="", encoding="utf-8") as fh:
        decks = {r["deck_id"]: (r["season"], r["leader"], {}) for r in csv.DictReader(fh)}
    table = pq.read_table(folder / "demo_data" / "deck_cards.parquet").to_pydict()
    for deck_id, card, qty in zip(table["deck_id"], table["card"], table["quantity"]):
        decks[str(deck_id)][2][str(card)] = int(qty)
    return decks


def test_cli_agrees_with_the_export_on_every_demo_deck(demo, capsys):
    config, site, export = demo
    folder = config.parent
    code, out, err = _cli(capsys, config, "--decks", folder / "demo_data/decks.csv",
                          "--cards", folder / "demo_data/deck_cards.parquet", "--format", "csv")
    assert code == 0, err
    rows = list(csv.DictReader(out.splitlines()))
    assert len(rows) == len(export) == 20000
    for row in rows:
        want = export[row["list"]]
        assert row["archetype"] == want["archetype"], row["list"]
        # the export writes the build's distance (rounded to 4 places) with 6 digits
        assert row["distance"] == f"{float(want['distance']):.4f}", row["list"]
    assert {r["archetype"] for r in rows} != {"other"}  # not an empty-handed agreement
    assert any(r["next_archetype"] for r in rows)


def test_cli_text_lists_and_formats(demo, capsys, tmp_path):
    config, site, export = demo
    decks = _decks_by_id(config.parent)
    picked = random.Random(3).sample(sorted(decks), 40)
    files = []
    for i, deck_id in enumerate(picked):
        season, leader, cards = decks[deck_id]
        lines = ["# pasted from an event", f"Leader: {leader}", f"Season: {season}", ""]
        lines += [(f"{q}x {c}" if i % 2 else f"{q} {c}") for c, q in cards.items()]
        if i % 3 == 0:  # a sideboard is no part of the deck
            lines += ["Sideboard", "2 Glass Heron of Nowhere"]
        path = tmp_path / f"{deck_id}.txt"
        path.write_text("\n".join(lines) + "\n", encoding="utf-8")
        files.append(path)
    code, out, err = _cli(capsys, config, *files, "--format", "json")
    assert code == 0, err
    got = json.loads(out)
    assert len(got) == 40
    for row, deck_id in zip(got, picked):
        assert row["archetype"] == export[deck_id]["archetype"]
        assert row["distance"] == round(float(export[deck_id]["distance"]), 4)
        assert row["unknown_cards"] == []
    code, out, err = _cli(capsys, config, tmp_path, "--format", "text")  # a folder of lists
    assert code == 0 and len(out.splitlines()) == 40
    assert export[picked[0]]["archetype"] in out


@pytest.mark.parametrize("make, args, match", [
    ("nothing", [], "has not been built yet"),
    ("list", ["--season", "Frost 2099"], "season 'Frost 2099' is unknown"),
    ("bad-leader", [], "leader 'Morrow Eskel' has no decks"),
    ("bad-file", [], "not a header line nor a card line"),
    ("no-leader", [], "no leader"),
])
def test_cli_errors(demo, capsys, tmp_path, make, args, match):
    config, site, export = demo
    if make == "nothing":
        config = _copy_demo(tmp_path / "unbuilt")
    text = {"list": "Leader: Eskel Morrow\n3 Sunken Oracle\n", "bad-leader": "Leader: Morrow Eskel\n3 Sunken Oracle\n",
            "bad-file": "Leader: Eskel Morrow\n3 Sunken Oracle\nthis is <b>not</b> a card\n",
            "no-leader": "3 Sunken Oracle\n", "nothing": "Leader: Eskel Morrow\n3 Sunken Oracle\n"}[make]
    path = tmp_path / "list.txt"
    path.write_text(text, encoding="utf-8")
    code, out, err = _cli(capsys, config, path, *args)
    assert code == 1 and out == ""
    assert match in err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_overrides_relabel_placements_as_the_export_does(demo, capsys, tmp_path):
    """merge_into and hide in notes: the command line reports what the export says."""
    config, site, export = demo
    folder = tmp_path / "overridden"
    shutil.copytree(config.parent, folder, ignore=shutil.ignore_patterns("site"))
    model = json.loads((site / "classify" / "kindle-2026" / "eskel-morrow.json").read_text(encoding="utf-8"))
    slugs = [g["slug"] for g in model["groups"]]
    assert len(slugs) >= 3
    notes = folder / "content" / "archetypes"
    (notes / f"{slugs[1]}.md").write_text(f"---\nmerge_into: {slugs[0]}\n---\nJoined.\n", encoding="utf-8")
    (notes / f"{slugs[2]}.md").write_text("---\nhide: true\n---\nNot shown.\n", encoding="utf-8")
    build(folder / "site.toml", quiet=True)
    after = _export(folder / "site")
    code, out, err = _cli(capsys, folder / "site.toml", "--decks", folder / "demo_data/decks.csv",
                          "--cards", folder / "demo_data/deck_cards.parquet", "--format", "csv")
    assert code == 0, err
    rows = {r["list"]: r for r in csv.DictReader(out.splitlines())}
    mine = [d for d, r in after.items() if r["season"] == "Kindle 2026" and r["leader"] == "Eskel Morrow"]
    assert {after[d]["archetype"] for d in mine} >= {slugs[0], "other"}
    assert slugs[1] not in {after[d]["archetype"] for d in mine}
    for deck_id, want in after.items():
        assert rows[deck_id]["archetype"] == want["archetype"], deck_id


# -- the page

_PASTE_ALL = """
async (decks) => {
  const box = document.getElementById('classify-text');
  const go = document.getElementById('classify-go');
  const out = [];
  for (const text of decks) {
    box.value = text;
    go.click();
    const res = document.getElementById('classify-result');
    const a = res.querySelector('h2 a');
    const d = document.getElementById('classify-distance');
    out.push({href: a ? a.getAttribute('href') : null, head: res.querySelector('h2') ? res.querySelector('h2').textContent : '',
              distance: d ? d.textContent : null});
  }
  return out;
}
"""


def _deck_text(leader: str, cards: dict[str, int], i: int) -> str:
    style = i % 3
    lines = ["# my list", f"Leader: {leader}", ""]
    for card, q in cards.items():
        lines.append(f"{q} {card}" if style == 0 else f"{q}x {card}" if style == 1 else f"{card} x{q}")
    return "\n".join(lines)


def _slug_of_href(href: str | None) -> str:
    return "other" if href is None else href.split("archetypes/")[1].split("/")[0]


@pytest.mark.parametrize("over", ["http", "file"])
def test_page_agrees_with_the_export(demo, browser, over):  # noqa: F811
    config, site, export = demo
    decks = _decks_by_id(config.parent)
    seasons = json.loads((site / "classify" / "index.json").read_text(encoding="utf-8"))["seasons"]
    rng = random.Random(11)
    page = browser.new_page()
    errors: list[str] = []
    page.on("pageerror", lambda e: errors.append(str(e)))

    def run(url: str) -> None:
        assert check_page(page, url) == []
        checked = 0
        for leader in sorted({d[1] for d in decks.values()}):
            season = seasons[-1] if leader < "C" else seasons[1]  # the latest season and an earlier one
            # an empty result: choosing a season then places nothing until the button is pressed
            page.evaluate("() => { const r = document.getElementById('classify-result'); r.textContent = '';"
                          " r.removeAttribute('data-done'); }")
            page.select_option("#classify-season", season)
            ids = sorted(d for d, v in decks.items() if v[0] == season and v[1] == leader)
            picked = rng.sample(ids, min(200, len(ids)))
            # the first through the keyboard's way in, which also loads the leader's model
            page.fill("#classify-text", _deck_text(leader, decks[picked[0]][2], 0))
            page.click("#classify-go")
            page.wait_for_selector("#classify-result[data-done]")
            got = page.evaluate(_PASTE_ALL, [_deck_text(leader, decks[d][2], i) for i, d in enumerate(picked)])
            for deck_id, row in zip(picked, got):
                want = export[deck_id]
                assert _slug_of_href(row["href"]) == want["archetype"], (deck_id, row)
                assert row["distance"] == f"{float(want['distance']):.4f}", (deck_id, row)
                checked += 1
        assert checked >= 800
        assert page.evaluate("() => window.__cspViolations") == []

    if over == "http":
        with serve_folder(site) as base:
            run(base + "classify.html")
    else:
        run((site / "classify.html").as_uri())
    assert errors == []
    page.close()


def test_hostile_paste_is_shown_as_text(demo, browser):  # noqa: F811
    config, site, export = demo
    page = browser.new_page()
    errors: list[str] = []
    dialogs: list[str] = []
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    assert check_page(page, (site / "classify.html").as_uri()) == []
    hostile = ("Leader: Eskel Morrow\n3 Sunken Oracle\n2 <img src=x id=planted onerror=alert(1)>\n"
               "1 </script><script>alert(2)</script>\n<b id=bold>not a card</b>\n2 " + "W" * 100000 + "\n")
    page.fill("#classify-text", hostile)
    page.click("#classify-go")
    page.wait_for_selector("#classify-result[data-done]")
    result = page.locator("#classify-result")
    text = result.text_content()
    assert "<img src=x id=planted onerror=alert(1)>" in text
    assert "</script><script>alert(2)</script>" in text
    assert "<b id=bold>not a card</b>" in text
    assert "longer than 4096 characters" in text
    assert page.locator("#planted").count() == 0 and page.locator("#bold").count() == 0
    # 100,000 lines: only the first lines are read, and the page answers afterwards
    page.evaluate("() => document.getElementById('classify-result').removeAttribute('data-done')")
    many = "Leader: Eskel Morrow\n" + "\n".join(f"1 Card {i} <i>" for i in range(100000))
    page.evaluate("(t) => { document.getElementById('classify-text').value = t; }", many)
    page.click("#classify-go")
    page.wait_for_selector("#classify-result[data-done]")
    assert "Only the first 2000 lines were read" in result.text_content()
    assert page.evaluate("() => 1 + 1") == 2
    assert errors == [] and dialogs == []
    assert page.evaluate("() => window.__cspViolations") == []
    page.close()


def test_page_reads_partial_lists_as_the_command_does(demo, browser, monkeypatch):  # noqa: F811
    # Partial lists cut from the demo's decks (whole cards dropped at random down to 22-36 copies,
    # against full decks of 40-50): the page must place each where the command does, which places
    # by the build's own rule (sitegen.analysis.card_rates.place, tested against scipy above).
    from sitegen.analysis import card_rates
    from sitegen.classify import Deck, Models, place_decks

    config, site, export = demo
    decks = _decks_by_id(config.parent)
    season = json.loads((site / "classify" / "index.json").read_text(encoding="utf-8"))["seasons"][-1]
    rng = random.Random(5)
    partial: list[Deck] = []
    for deck_id in rng.sample(sorted(d for d, v in decks.items() if v[0] == season), 160):
        cards = dict(decks[deck_id][2])
        target = rng.randint(22, 36)
        for card in rng.sample(sorted(cards), len(cards)):
            if sum(cards.values()) - cards[card] >= target:
                del cards[card]
        partial.append(Deck(deck_id, decks[deck_id][1], season, cards))
    want = [p.archetype for p in place_decks(Models(site), partial, season)]
    with monkeypatch.context() as m:  # the same lists read as full decks: the lengths must matter somewhere
        m.setattr(card_rates, "length_shares", lambda sizes, full: np.ones(len(sizes)))
        as_full = [p.archetype for p in place_decks(Models(site), partial, season)]
    assert want != as_full and len(set(want) - {"other"}) >= 2
    page = browser.new_page()
    errors: list[str] = []
    page.on("pageerror", lambda e: errors.append(str(e)))
    with serve_folder(site) as base:
        assert check_page(page, base + "classify.html") == []
        page.select_option("#classify-season", season)
        got: dict[int, str] = {}
        for leader in sorted({d.leader for d in partial}):
            mine = [i for i, d in enumerate(partial) if d.leader == leader]
            # the first loads the leader's model (the page waits for it); the rest are placed at once
            page.evaluate("() => document.getElementById('classify-result').removeAttribute('data-done')")
            page.fill("#classify-text", _deck_text(leader, partial[mine[0]].cards, 0))
            page.click("#classify-go")
            page.wait_for_selector("#classify-result[data-done]")
            said = page.locator("#classify-result").text_content()
            total = sum(partial[mine[0]].cards.values())
            assert f"This list holds {total} cards, under 90% of the" in said and "it is read as a partial list" in said
            rows = page.evaluate(_PASTE_ALL, [_deck_text(leader, partial[i].cards, i) for i in mine])
            got.update({i: _slug_of_href(row["href"]) for i, row in zip(mine, rows)})
    assert [got[i] for i in range(len(partial))] == want
    assert errors == []
    page.close()
