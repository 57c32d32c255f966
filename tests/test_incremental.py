"""Incremental rebuilds: only changed partitions are analysed, and the output
equals a clean build of the same inputs byte for byte (planted by our own
edits to the scaffold's sample data)."""
from __future__ import annotations

import os
from pathlib import Path

import pytest

from sitegen.build import build

from _sites import change_one_deck, copy_project, drop_season, interleave_seasons, make_project, tree


def _clean(project_cfg, tmp_path, name):
    """A clean build of the same inputs: fresh copy, empty cache, new output."""
    cfg = copy_project(project_cfg.parent, tmp_path / name)
    build(cfg, quiet=True)
    return tree(cfg.parent / "site")


@pytest.fixture()
def project(tmp_path):
    return make_project(tmp_path / "guide")


def test_two_clean_builds_are_identical(project, tmp_path):
    first = _clean(project, tmp_path, "a")
    assert first == _clean(project, tmp_path, "b")
    assert first, "the build wrote files"


def test_rebuild_with_nothing_changed_analyses_nothing(project):
    report = build(project, quiet=True)
    before = tree(project.parent / "site")
    stamps = {p: p.stat().st_mtime_ns for p in (project.parent / "site").rglob("*") if p.is_file()}
    again = build(project, quiet=True)
    assert again.run.analysed == () and len(again.run.cached) == report.partitions
    assert tree(project.parent / "site") == before
    assert again.written.changed == 0
    # unchanged files keep their times, so a sync uploads nothing
    assert all(p.stat().st_mtime_ns == t for p, t in stamps.items())


def test_adding_a_season_analyses_only_that_season(project, tmp_path):
    drop_season(project.parent, "Second Tide")
    build(project, quiet=True)
    copy_full = make_project(tmp_path / "full")  # the same sample with both seasons
    (project.parent / "data").joinpath("decks.csv").write_bytes((copy_full.parent / "data" / "decks.csv").read_bytes())
    (project.parent / "data").joinpath("deck_cards.csv").write_bytes(
        (copy_full.parent / "data" / "deck_cards.csv").read_bytes())
    report = build(project, quiet=True)
    assert {season for season, _ in report.run.analysed} == {"Second Tide"}
    assert {season for season, _ in report.run.cached} == {"First Tide"}
    # Only the new season's maps are drawn; they start from the first season's, which stay as they were.
    assert report.run.mapped and {season for season, _ in report.run.mapped} == {"Second Tide"}
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")


def test_changing_one_deck_reanalyses_only_its_partition(project, tmp_path):
    build(project, quiet=True)
    where = change_one_deck(project.parent)
    report = build(project, quiet=True)
    assert report.run.analysed == (where,)
    # The other season's rows are as last time: it is not split again, its partitions come from the cache.
    assert report.run.seasons_known == tuple(s for s in ("First Tide", "Second Tide") if s != where[0])
    # The other season's rows of the assignments files are copied from the last build's files.
    assert report.copied_blocks == 1
    # Its map is redrawn, and so are the later maps of its leader (each starts from the one before).
    assert where in report.run.mapped and all(leader == where[1] for _, leader in report.run.mapped)
    # Pages whose context did not change are taken from the last build, and the site is still a clean build's.
    assert 0 < report.reused_pages < report.written.files
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")


def test_seasons_that_are_not_slices_of_the_tables_are_all_split_again(project, tmp_path):
    # Planted: the seasons' decks alternate in the tables, so no season is known by its rows;
    # the changed partition is still the only one analysed, and the site is a clean build's.
    interleave_seasons(project.parent)
    build(project, quiet=True)
    where = change_one_deck(project.parent)
    report = build(project, quiet=True)
    assert report.run.seasons_known == () and report.run.analysed == (where,)
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")


def test_the_same_rows_read_from_elsewhere_are_known_and_a_new_setting_is_not(project, tmp_path):
    # Planted: the tables copied to another folder (as a data refresh does) keep both seasons known
    # by their rows; another analysis setting makes every partition new, so no season is known.
    import shutil

    build(project, quiet=True)
    shutil.copytree(project.parent / "data", project.parent / "refreshed")
    text = project.read_text(encoding="utf-8").replace('"data/', '"refreshed/')
    project.write_text(text, encoding="utf-8")
    report = build(project, quiet=True)
    assert report.run.seasons_known == ("First Tide", "Second Tide") and report.run.analysed == ()

    project.write_text(text.replace("# seed = 0", "seed = 1"), encoding="utf-8")
    report = build(project, quiet=True)
    assert report.run.seasons_known == () and report.run.cached == ()
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")


def _entries_holding(folder: Path, kinds: tuple[type, ...]) -> list[Path]:
    import pickle

    out = []
    for path in sorted(folder.rglob("*.entry")):
        payload = path.read_bytes().split(b"\n", 1)[1]
        if isinstance(pickle.loads(payload), kinds):
            out.append(path)
    return out


@pytest.mark.parametrize("damage", ["truncate", "edit", "garbage"])
def test_damaged_cache_entry_is_recomputed(project, tmp_path, damage):
    from sitegen.model import MapLayout, PartitionResult

    build(project, quiet=True)
    good = tree(project.parent / "site")
    entries = _entries_holding(project.parent / ".sitegen-cache", (PartitionResult, MapLayout))
    assert entries, "the build stored its analyses"
    victim = entries[0]
    data = victim.read_bytes()
    if damage == "truncate":
        victim.write_bytes(data[: len(data) // 2])
    elif damage == "edit":
        i = len(data) - 10
        victim.write_bytes(data[:i] + bytes([data[i] ^ 0xFF]) + data[i + 1:])
    else:
        victim.write_bytes(os.urandom(200))
    os.utime(project.parent / "data" / "decks.csv")  # same bytes, new time: the build must look again
    report = build(project, quiet=True)
    # The entry is a partition's analysis or a map: that one is made again, nothing else.
    assert len(report.run.analysed) + len(report.run.mapped) == 1
    assert tree(project.parent / "site") == good


def test_a_damaged_season_entry_splits_that_season_again(project):
    # The entry that lists a season's partitions (model.SeasonSplit): without it the season is cut and
    # fingerprinted again, finds every result in the cache, and the site is the same.
    from sitegen.model import SeasonSplit

    build(project, quiet=True)
    good = tree(project.parent / "site")
    entries = _entries_holding(project.parent / ".sitegen-cache", (SeasonSplit,))
    assert len(entries) == 2, "one entry per season"
    entries[0].write_bytes(entries[0].read_bytes()[:-5])
    os.utime(project.parent / "data" / "decks.csv")
    report = build(project, quiet=True)
    assert len(report.run.seasons_known) == 1 and report.run.analysed == () and report.run.mapped == ()
    assert tree(project.parent / "site") == good


def test_up_to_date_check_notices_a_damaged_output(project):
    # The shortcut for "nothing changed" also compares the output: a deleted or edited page is rebuilt.
    build(project, quiet=True)
    good = tree(project.parent / "site")
    (project.parent / "site" / "index.html").unlink()
    (project.parent / "site" / "method.html").write_text("defaced")
    build(project, quiet=True)
    assert tree(project.parent / "site") == good


def test_up_to_date_check_notices_a_new_note(project):
    build(project, quiet=True)
    (project.parent / "content" / "index.md").write_text("---\ntitle: Welcome\n---\nA brand new line.\n")
    report = build(project, quiet=True)
    assert report.run.analysed == ()  # notes do not touch the analyses...
    assert "A brand new line." in (project.parent / "site" / "index.html").read_text()  # ...but do the pages


def test_overrides_survive_a_rebuild_that_adds_a_season(project, tmp_path):
    # Planted by our own edits: notes rename one archetype, hide another and merge a third into the first.
    import json

    from _sites import make_project as fresh

    full = fresh(tmp_path / "full")
    drop_season(project.parent, "Second Tide")
    build(project, quiet=True)
    doc = json.loads((project.parent / "site" / "data" / "archetypes.json").read_text())
    wren = sorted((a for a in doc["archetypes"] if a["leader"] == "Wren of the Salt Road"), key=lambda a: -a["decks"])
    keep, hide, merge = (a["slug"] for a in wren[:3])
    notes = project.parent / "content" / "archetypes"
    (notes / f"{keep}.md").write_text("---\nrename: The Salt Road Engine\n---\nOur words.\n")
    (notes / f"{hide}.md").write_text("---\nhide: true\n---\n")
    (notes / f"{merge}.md").write_text(f"---\nmerge_into: {keep}\n---\n")
    for name in ("decks.csv", "deck_cards.csv"):  # next season's data arrives
        (project.parent / "data" / name).write_bytes((full.parent / "data" / name).read_bytes())
    report = build(project, quiet=True)
    assert {s for s, _ in report.run.analysed} == {"Second Tide"}
    doc = json.loads((project.parent / "site" / "data" / "archetypes.json").read_text())
    by_slug = {}
    for a in doc["archetypes"]:
        by_slug.setdefault(a["slug"], []).append(a)
    assert {a["season"] for a in by_slug[keep]} == {"First Tide", "Second Tide"}
    assert all(a["name"] == "The Salt Road Engine" for a in by_slug[keep])
    assert hide not in by_slug and merge not in by_slug
    first = next(a for a in by_slug[keep] if a["season"] == "First Tide")
    assert first["decks"] == wren[0]["decks"] + wren[2]["decks"]  # the merged archetype's decks joined it


def test_a_page_edited_in_the_output_is_rendered_again(project, tmp_path):
    # A page whose file is not as the last build left it is never reused, though its context is unchanged.
    build(project, quiet=True)
    page = next(p for p in sorted((project.parent / "site" / "cards").glob("*.html")))
    page.write_bytes(page.read_bytes().replace(b"</main>", b"<p>edited by hand</p></main>"))
    change_one_deck(project.parent)
    report = build(project, quiet=True)
    assert report.reused_pages > 0
    assert b"edited by hand" not in page.read_bytes()
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")


def test_a_changed_template_renders_every_page_again(project, tmp_path):
    # The memo's keys cover the templates: after an override of the base layout no page is reused.
    build(project, quiet=True)
    own = project.parent / "templates"
    own.mkdir(exist_ok=True)
    base = (Path(__file__).resolve().parent.parent / "templates" / "base.html").read_text(encoding="utf-8")
    (own / "base.html").write_text(base.replace("</main>", "<p>Printed in the harbour.</p></main>"), encoding="utf-8")
    report = build(project, quiet=True)
    assert report.reused_pages == 0
    assert "Printed in the harbour." in (project.parent / "site" / "index.html").read_text(encoding="utf-8")
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")


def test_a_rebuild_checks_only_the_charts_the_last_build_did_not(project, tmp_path, monkeypatch):
    # Charts are checked against the Vega-Lite schema and compiled in every build (test_charts.py);
    # what passed is kept beside the last build's stamp, under a salt of the code, the schema file
    # and the compiler's release. Each build below starts with nothing known, as a new process does.
    import json

    from sitegen.site import charts

    made = []
    real = charts.ChartChecks
    monkeypatch.setattr(charts, "ChartChecks", lambda: made.append(real()) or made[-1])

    def checks_in_a_new_process():
        made.clear()
        build(project, quiet=True)
        return sum(c.started for c in made)

    first = checks_in_a_new_process()
    assert first > 0
    change_one_deck(project.parent)
    assert checks_in_a_new_process() < first  # only charts whose spec skeleton is new
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")

    # Kept under another salt (another vl-convert, another schema, other code): nothing is trusted,
    # and with every page rendered anew (no page keys kept) every chart is checked again.
    stamp = project.parent / ".sitegen-cache" / "last-build.json"
    record = json.loads(stamp.read_text(encoding="utf-8"))
    record["charts"]["salt"] = "0" * 64
    record["pages"] = None
    stamp.write_text(json.dumps(record), encoding="utf-8")
    change_one_deck(project.parent)
    assert checks_in_a_new_process() == first


def test_only_digests_are_trusted_from_a_kept_record():
    from sitegen.site import charts

    checks = charts.ChartChecks()
    good = "a" * 64
    checks.trust([good, "A" * 64, "not a digest", 7, None, good[:-1]])
    assert checks.passed() == [good]
    checks.trust({"passed": [good]})  # not a list: ignored
    assert checks.passed() == [good]


def test_maps_of_pages_taken_from_the_last_build_are_not_made(project, tmp_path, monkeypatch):
    # A season page whose context is unchanged is reused; its map charts (thousands of points at
    # scale) are not even made. Planted: one deck changed, so one season's page is rendered again.
    from sitegen.site import charts

    made = []
    real = charts.map_chart
    monkeypatch.setattr(charts, "map_chart", lambda result, *a, **k: made.append(result.season) or real(result, *a, **k))
    build(project, quiet=True)
    assert sorted(set(made)) == ["First Tide", "Second Tide"]
    made.clear()
    where = change_one_deck(project.parent)
    build(project, quiet=True)
    assert made and set(made) == {where[0]}
    assert tree(project.parent / "site") == _clean(project, tmp_path, "clean")
