"""A season folder read one season at a time: the same data as a whole read, never the
whole history's card rows at once, and errors that span seasons.

Every table here is hand-made (invented names); the truth is planted by hand.
"""
from __future__ import annotations

import gc
import weakref

import pandas as pd
import pytest

import sitegen.load.folder as folder_mod
from sitegen.build import build
from sitegen.check import check_rules
from sitegen.errors import DataError, DataErrors
from sitegen.load import load_data, open_season_folder
from sitegen.load.names import added_up_rows

from _load_helpers import config


def _season(root, season, decks, cards):
    d = root / "pq" / f"season={season}"
    d.mkdir(parents=True)
    pd.DataFrame(decks, columns=["deck_id", "leader", "date"]).to_parquet(d / "decks.parquet", index=False)
    pd.DataFrame(cards, columns=["deck_id", "card", "quantity"]).to_parquet(d / "deck_cards.parquet", index=False)


def _three_seasons(root):
    # 'Ember Fox' is written 'ember  fox' in Season 2 only; the whole data's most used spelling must win there too.
    # 'Orm' is written 'orm' once, in Season 3; a deck of Season 3 plays 'Ember Fox' under both spellings.
    _season(root, "Season 1", [("a1", "Orm", "2026-01-02"), ("a2", "Vessa", "2026-01-03")],
            [("a1", "Ember Fox", 3), ("a1", "Tide Call", 2), ("a2", "Ember Fox", 1), ("a2", "Stone Wall", 4)])
    _season(root, "Season 2", [("b1", "Orm", "2026-02-02")],
            [("b1", "ember  fox", 2), ("b1", "Tide Call", 1)])
    _season(root, "Season 3", [("c1", "orm", "2026-03-02"), ("c2", "Vessa", "2026-03-05")],
            [("c1", "Ember Fox", 1), ("c1", "ember  fox", 1), ("c2", "Stone Wall", 2)])
    return config(root, data={"parquet_folder": "pq"})


def _streamed(cfg):
    """Every season the reader hands over, and the whole it reports at the end."""
    opened = open_season_folder(cfg)
    seasons = list(opened.seasons())
    return seasons, opened.whole()


def test_season_by_season_equals_the_whole_folder_read(tmp_path):
    cfg = _three_seasons(tmp_path)
    whole = check_rules(load_data(cfg), cfg)
    seasons, streamed = _streamed(cfg)
    assert [s.seasons for s in seasons] == [("Season 1",), ("Season 2",), ("Season 3",)]
    pd.testing.assert_frame_equal(streamed.decks, whole.decks)
    assert streamed.seasons == whole.seasons == ("Season 1", "Season 2", "Season 3")
    assert streamed.findings == whole.findings
    assert streamed.excluded == whole.excluded
    # The planted variants: one spelling per card and leader over all seasons, and copies added up.
    kinds = [f.message for f in streamed.findings]
    assert any("'Ember Fox'" in m and "'ember  fox'" in m for m in kinds)
    assert any("added up" in m for m in kinds)
    assert set(streamed.decks["leader"]) == {"Orm", "Vessa"}
    as_text = {"deck_id": str, "card": str}
    rows = pd.concat([s.cards.astype(as_text) for s in seasons], ignore_index=True)
    pd.testing.assert_frame_equal(rows, whole.cards.astype(as_text))
    assert ("c1", "Ember Fox", 2) in set(map(tuple, rows.values.tolist()))
    assert set(rows["card"]) == {"Ember Fox", "Tide Call", "Stone Wall"}


def test_copies_added_up_in_several_seasons_are_counted_once_over_the_folder(tmp_path):
    # Planted: one deck in each of two seasons lists a card under two spellings, so 2 card rows
    # in all are added to another row (counted by hand); the folder reports one finding for both.
    _season(tmp_path, "Season 1", [("a1", "Orm", "2026-01-02")],
            [("a1", "Ember Fox", 2), ("a1", "ember  fox", 1), ("a1", "Tide Call", 2)])
    _season(tmp_path, "Season 2", [("b1", "Orm", "2026-02-02")],
            [("b1", "Ember Fox", 1), ("b1", "EMBER FOX", 1), ("b1", "Tide Call", 3)])
    cfg = config(tmp_path, data={"parquet_folder": "pq"})
    seasons, streamed = _streamed(cfg)
    per_season = [added_up_rows(f) for s in seasons for f in s.findings if added_up_rows(f) is not None]
    assert per_season == [1, 1]
    added = [f for f in streamed.findings if added_up_rows(f) is not None]
    assert [added_up_rows(f) for f in added] == [2]
    assert added[0].message.startswith("2 card row(s) named a card a deck already listed under another spelling")
    assert streamed.findings == check_rules(load_data(cfg), cfg).findings


def test_a_deck_id_in_two_season_folders_is_an_error_naming_both(tmp_path):
    _season(tmp_path, "Season 1", [("a1", "Orm", "2026-01-02")], [("a1", "Ember Fox", 3)])
    _season(tmp_path, "Season 2", [("a1", "Orm", "2026-02-02")], [("a1", "Ember Fox", 2)])
    with pytest.raises(DataError) as err:
        open_season_folder(config(tmp_path, data={"parquet_folder": "pq"}))
    text = str(err.value)
    assert "season=Season 2" in text and "row 2" in text and "'Season 1'" in text and "a1" in text


def test_errors_of_every_season_are_reported_together(tmp_path):
    _season(tmp_path, "Season 1", [("a1", "Orm", "2026-01-02")], [("a1", "Ember Fox", 0)])
    _season(tmp_path, "Season 2", [("b1", "Orm", "2026-02-02")], [("b1", "Ember Fox", 2), ("zz", "Tide Call", 1)])
    opened = open_season_folder(config(tmp_path, data={"parquet_folder": "pq"}))
    handed = []
    with pytest.raises(DataErrors) as err:
        for season in opened.seasons():
            handed.append(season)
    assert handed == []  # a season with bad rows is never analysed, nor any after the first error
    messages = [str(e) for e in err.value.errors]
    assert any("season=Season 1" in m and "quantity" in m and "(value 0)" in m for m in messages), messages
    assert any("season=Season 2" in m and "'zz'" in m for m in messages), messages


def _five_seasons(root):
    """Five seasons of 40 decks, two leaders, four planted kinds of deck (by their third card)."""
    for n in range(1, 6):
        decks = [(f"s{n}d{i}", "Orm" if i % 2 else "Vessa", f"2026-0{n}-02") for i in range(40)]
        cards = [(d, card, 2) for d, _, _ in decks for card in ("Ember Fox", "Tide Call", f"Card {int(d[3:]) % 4}")]
        _season(root, f"Season {n}", decks, cards)


def test_a_build_holds_no_more_than_two_seasons_of_card_rows(tmp_path, monkeypatch):
    """Weak references to every season's card rows: when a season is read, the card rows of
    the season two before it (and of every partition cut from them) must be gone."""
    _five_seasons(tmp_path)
    cfg = config(tmp_path, data={"parquet_folder": "pq"}, site={"output": "site"}, cache={"folder": "cache"},
                 analysis={"workers": 1, "min_decks": 5})
    alive: list[weakref.ref] = []
    held_at_read: list[int] = []
    real = folder_mod.normalise.build

    def spying_build(*args, **kwargs):
        gc.collect()
        held_at_read.append(sum(r() is not None for r in alive))
        data = real(*args, **kwargs)
        alive.append(weakref.ref(data.cards))
        return data

    monkeypatch.setattr(folder_mod.normalise, "build", spying_build)
    import sitegen.partitions as partitions

    real_local = partitions._local_cards

    def spying_local(*args, **kwargs):
        frame = real_local(*args, **kwargs)
        alive.append(weakref.ref(frame))
        return frame

    monkeypatch.setattr(partitions, "_local_cards", spying_local)
    report = build(cfg=cfg, quiet=True)
    assert report.seasons == 5 and report.partitions == 10
    assert len(held_at_read) == 5
    # At each read, at most the previous season's frame and its two partitions' frames are alive.
    assert max(held_at_read) <= 3, held_at_read


def test_a_season_folder_and_the_same_tables_share_one_cache(tmp_path):
    # Fingerprints digest a partition's rows, not where they were read from: after a build from the
    # tables, a build of the same decks from a season folder, with the same cache, analyses nothing
    # and draws no map, and writes the same site byte for byte.
    from _sites import tree

    _five_seasons(tmp_path / "folder")
    decks, cards = [], []
    for season in [f"Season {n}" for n in range(1, 6)]:
        d = pd.read_parquet(tmp_path / "folder" / "pq" / f"season={season}" / "decks.parquet")
        decks.append(d.assign(season=season))
        cards.append(pd.read_parquet(tmp_path / "folder" / "pq" / f"season={season}" / "deck_cards.parquet"))
    flat = tmp_path / "flat"
    flat.mkdir()
    pd.concat(decks).to_csv(flat / "decks.csv", index=False)
    pd.concat(cards).to_parquet(flat / "deck_cards.parquet", index=False)
    shared = {"folder": str(tmp_path / "cache")}
    settings = {"analysis": {"workers": 1, "min_decks": 5}}
    first = build(cfg=config(flat, data={"decks": "decks.csv", "deck_cards": "deck_cards.parquet"},
                             site={"output": str(tmp_path / "site-tables")}, cache=shared, **settings), quiet=True)
    assert first.run.analysed and first.run.mapped, "the first build analysed its partitions and drew maps"
    again = build(cfg=config(tmp_path / "folder", data={"parquet_folder": "pq"},
                             site={"output": str(tmp_path / "site-folder")}, cache=shared, **settings), quiet=True)
    assert again.run.analysed == () and again.run.mapped == ()
    assert len(again.run.cached) == len(first.run.analysed)
    assert tree(tmp_path / "site-folder") == tree(tmp_path / "site-tables")


def test_an_unchanged_season_is_not_read_again(tmp_path, monkeypatch):
    # Planted: five seasons; then Season 4's card rows change (one deck plays another card). The rebuild
    # reads the card rows of Season 4 only, analyses only its partitions, and writes the same site,
    # byte for byte, as a build of the changed folder from an empty cache.
    from _sites import tree

    _five_seasons(tmp_path)
    settings = {"analysis": {"workers": 1, "min_decks": 5}, "data": {"parquet_folder": "pq"}}
    cfg = config(tmp_path, site={"output": "site"}, cache={"folder": "cache"}, **settings)
    first = build(cfg=cfg, quiet=True)
    assert first.run.seasons_unread == ()
    changed = tmp_path / "pq" / "season=Season 4" / "deck_cards.parquet"
    rows = pd.read_parquet(changed)
    rows.loc[rows.index[2], "card"] = "Card 3"  # deck s4d0 played Card 0
    rows.to_parquet(changed, index=False)

    read: list[str] = []
    real = folder_mod.read_table

    def spying_read(path, **kwargs):
        if "deck_id" in kwargs.get("categorical", ()):
            read.append(path.parent.name)
        return real(path, **kwargs)

    monkeypatch.setattr(folder_mod, "read_table", spying_read)
    again = build(cfg=cfg, quiet=True)
    assert read == ["season=Season 4"]
    assert again.run.seasons_unread == ("Season 1", "Season 2", "Season 3", "Season 5")
    assert {season for season, _ in again.run.analysed} == {"Season 4"}
    fresh = build(cfg=config(tmp_path, site={"output": "site-fresh"}, cache={"folder": "cache-fresh"}, **settings),
                  quiet=True)
    assert fresh.run.seasons_unread == ()
    assert tree(tmp_path / "site") == tree(tmp_path / "site-fresh")
    assert again.warnings == fresh.warnings


def test_a_season_is_read_again_when_its_results_left_the_cache(tmp_path):
    # Planted: after a build, every partition result is deleted from the cache (season records stay).
    # The rebuild must read every season again rather than trust a record whose results are gone.
    _five_seasons(tmp_path)
    cfg = config(tmp_path, site={"output": "site"}, cache={"folder": "cache"},
                 analysis={"workers": 1, "min_decks": 5}, data={"parquet_folder": "pq"})
    first = build(cfg=cfg, quiet=True)
    from sitegen.cache import Cache
    from sitegen.model import PartitionResult

    cache = Cache(tmp_path / "cache")
    removed = 0
    for entry in (tmp_path / "cache").glob("*.entry"):
        if cache.get(entry.stem, PartitionResult) is not None:
            entry.unlink()
            removed += 1
    assert removed == len(first.run.analysed)
    (tmp_path / "cache" / "last-build.json").unlink()
    again = build(cfg=cfg, quiet=True)
    assert again.run.seasons_unread == ()
    assert len(again.run.analysed) == len(first.run.analysed)


def _spy_on_the_first_pass(monkeypatch) -> list[list[str]]:
    """For each first pass over the folder (one per build), the files it opened, as 'season=NAME/file'."""
    passes: list[list[str]] = []
    inside = [False]
    real_open, real_read, real_count = folder_mod.open_folder, folder_mod.read_table, folder_mod.count_values

    def opened(path):
        if inside[0]:
            passes[-1].append(f"{path.parent.name}/{path.name}")

    def spying_open(*args, **kwargs):
        passes.append([])
        inside[0] = True
        try:
            return real_open(*args, **kwargs)
        finally:
            inside[0] = False

    def spying_read(path, **kwargs):
        opened(path)
        return real_read(path, **kwargs)

    def spying_count(path, **kwargs):
        opened(path)
        return real_count(path, **kwargs)

    monkeypatch.setattr(folder_mod, "open_folder", spying_open)
    monkeypatch.setattr(folder_mod, "read_table", spying_read)
    monkeypatch.setattr(folder_mod, "count_values", spying_count)
    return passes


def _both_files(*seasons: int) -> list[str]:
    return [f"season=Season {n}/{name}" for n in seasons for name in ("decks.parquet", "deck_cards.parquet")]


def _summaries(cache_folder) -> dict[int, object]:
    """The first-pass summaries in the cache, by the month of their season's first date (Season n: month n)."""
    from sitegen.cache import Cache
    from sitegen.model import SeasonSummary

    cache = Cache(cache_folder)
    found = {}
    for entry in sorted(cache_folder.glob("*.entry")):
        summary = cache.get(entry.stem, SeasonSummary)
        if summary is not None:
            found[summary.first_date.month] = entry
    return found


def test_the_first_pass_opens_only_the_changed_season(tmp_path, monkeypatch):
    # Planted: five seasons; then one quantity in Season 4's card rows changes. The rebuild's first pass over
    # the folder opens Season 4's two files only, and the site is byte for byte a build from an empty cache.
    from _sites import tree

    _five_seasons(tmp_path)
    settings = {"analysis": {"workers": 1, "min_decks": 5}, "data": {"parquet_folder": "pq"}}
    cfg = config(tmp_path, site={"output": "site"}, cache={"folder": "cache"}, **settings)
    passes = _spy_on_the_first_pass(monkeypatch)
    build(cfg=cfg, quiet=True)
    assert passes == [_both_files(1, 2, 3, 4, 5)]
    before = _summaries(tmp_path / "cache")
    assert sorted(before) == [1, 2, 3, 4, 5]
    changed = tmp_path / "pq" / "season=Season 4" / "deck_cards.parquet"
    rows = pd.read_parquet(changed)
    rows.loc[rows.index[2], "quantity"] = 3  # deck s4d0 played 2 of its third card
    rows.to_parquet(changed, index=False)

    again = build(cfg=cfg, quiet=True)
    assert passes[1] == _both_files(4)
    assert {season for season, _ in again.run.analysed} == {"Season 4"}
    after = _summaries(tmp_path / "cache")
    # Pruning kept every season's summary and dropped the changed season's old one.
    assert sorted(after) == [1, 2, 3, 4, 5]
    assert [after[n] for n in (1, 2, 3, 5)] == [before[n] for n in (1, 2, 3, 5)] and after[4] != before[4]
    fresh = build(cfg=config(tmp_path, site={"output": "site-fresh"}, cache={"folder": "cache-fresh"}, **settings),
                  quiet=True)
    assert passes[2] == _both_files(1, 2, 3, 4, 5)
    assert tree(tmp_path / "site") == tree(tmp_path / "site-fresh")
    assert again.warnings == fresh.warnings


def _rename_decks(part, renames: dict[str, str]) -> None:
    for name in ("decks.parquet", "deck_cards.parquet"):
        table = pd.read_parquet(part / name)
        table["deck_id"] = table["deck_id"].replace(renames)
        table.to_parquet(part / name, index=False)


def _five_seasons_built(tmp_path, monkeypatch):
    """Five planted seasons built once, with the first pass of every build recorded."""
    _five_seasons(tmp_path)
    cfg = config(tmp_path, site={"output": "site"}, cache={"folder": "cache"},
                 analysis={"workers": 1, "min_decks": 5}, data={"parquet_folder": "pq"})
    passes = _spy_on_the_first_pass(monkeypatch)
    build(cfg=cfg, quiet=True)
    return cfg, passes


def test_a_deck_id_shared_with_a_remembered_season_is_the_same_error(tmp_path, monkeypatch):
    # Planted: after a build of five seasons, Season 3 renames two decks to ids of Season 1 (s1d3, an earlier
    # season) and of Season 5 (s5d6, a later one); both other seasons come from the memo. The errors name the
    # same files and rows as a first pass without a memo, and only the two clashing deck tables are read again.
    cfg, passes = _five_seasons_built(tmp_path, monkeypatch)
    _rename_decks(tmp_path / "pq" / "season=Season 3", {"s3d3": "s1d3", "s3d6": "s5d6"})

    with pytest.raises(DataErrors) as remembered:
        build(cfg=cfg, quiet=True)
    assert passes[1] == _both_files(3) + ["season=Season 1/decks.parquet", "season=Season 5/decks.parquet"]
    with pytest.raises(DataErrors) as unremembered:
        open_season_folder(cfg)
    messages = [str(e) for e in remembered.value.errors]
    assert messages == [str(e) for e in unremembered.value.errors]
    # s1d3 is row 5 of both deck tables; s5d6 is row 8 of both.
    assert len(messages) == 2
    assert "season=Season 3" in messages[0] and "row 5" in messages[0] and "'s1d3'" in messages[0]
    assert "also in season 'Season 1'" in messages[0] and "season=Season 1" in messages[0]
    assert "season=Season 5" in messages[1] and "row 8" in messages[1] and "'s5d6'" in messages[1]
    assert "also in season 'Season 3'" in messages[1]


def test_a_damaged_summary_means_the_season_is_read_again(tmp_path, monkeypatch):
    # Planted: after a build, Season 2's summary is garbled and Season 5's cut short. The rebuild's first pass
    # reads those two seasons again (and stores them afresh), and the site is byte for byte the first one.
    from _sites import tree

    cfg, passes = _five_seasons_built(tmp_path, monkeypatch)
    first_site = tree(tmp_path / "site")
    entries = _summaries(tmp_path / "cache")
    garbled = bytearray(entries[2].read_bytes())
    garbled[-20:-10] = bytes(10)
    entries[2].write_bytes(bytes(garbled))
    entries[5].write_bytes(entries[5].read_bytes()[:-7])
    (tmp_path / "cache" / "last-build.json").unlink()  # or the unchanged inputs end the build before it starts

    build(cfg=cfg, quiet=True)
    assert passes[1] == _both_files(2, 5)
    assert sorted(_summaries(tmp_path / "cache")) == [1, 2, 3, 4, 5]
    assert tree(tmp_path / "site") == first_site


def test_a_hash_shared_by_different_deck_ids_is_no_error(tmp_path, monkeypatch):
    # Planted: every deck id hashes alike (a clash made by hand), so every remembered season seems to share an
    # id with another; their deck tables are read and compared exactly, no error is raised, and the folder
    # opens as it does without a memo.
    import numpy as np

    from sitegen.cache import Cache

    cfg = _three_seasons(tmp_path)
    monkeypatch.setattr(folder_mod, "_id_hashes", lambda ids: np.array([7], dtype=np.uint64))
    cache = Cache(tmp_path / "cache")
    open_season_folder(cfg, cache)
    passes = _spy_on_the_first_pass(monkeypatch)
    remembered = open_season_folder(cfg, cache)
    assert passes == [[f"season=Season {n}/decks.parquet" for n in (1, 2, 3)]]
    plain = open_season_folder(cfg)
    assert remembered.spellings == plain.spellings
    assert remembered.name_findings == plain.name_findings
    assert list(remembered.first_dates.items()) == list(plain.first_dates.items())
