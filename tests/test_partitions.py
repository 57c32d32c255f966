"""Splitting by season and leader, and the season keys that let a rebuild skip unchanged seasons.

The data is the scaffold's invented sample, loaded as a build loads it; every change below is
planted by the test. The partition fingerprints (sitegen.reuse.partition_key.fingerprint, tested on their own
in test_cache.py) are the check that a season's key follows exactly what its partitions hold.
"""
from __future__ import annotations

import dataclasses

import pytest

from sitegen import config
from sitegen.analysis.params import AnalysisParams
from sitegen.reuse.partition_key import fingerprint
from sitegen.check import check_rules
from sitegen.load import load_data
from sitegen.partitions import season_keys, split

from _sites import interleave_seasons, make_project

FIRST, SECOND = "First Tide", "Second Tide"


@pytest.fixture(scope="module")
def loaded(tmp_path_factory):
    cfg = config.load(make_project(tmp_path_factory.mktemp("split") / "guide"))
    return cfg, check_rules(load_data(cfg), cfg)


def _fingerprints(data, cfg) -> dict[tuple[str, str], str]:
    params = AnalysisParams.from_config(cfg)
    return {(p.season, p.leader): fingerprint(p, params) for p in split(data, cfg["analysis.by_leader"])}


def _changed(before: dict, after: dict) -> set[str]:
    return {key[0] if isinstance(key, tuple) else key for key in before if before[key] != after[key]}


def test_split_leaves_out_the_seasons_asked(loaded):
    cfg, data = loaded
    whole = split(data, cfg["analysis.by_leader"])
    assert {p.season for p in whole} == {FIRST, SECOND}
    rest = split(data, cfg["analysis.by_leader"], skip={FIRST})
    assert [(p.season, p.leader) for p in rest] == [(p.season, p.leader) for p in whole if p.season == SECOND]
    assert all(a.decks.equals(b.decks) and a.cards.equals(b.cards)
               for a, b in zip(rest, [p for p in whole if p.season == SECOND]))


def _with_deck_value(data, season, column, value):
    decks = data.decks.copy()
    row = decks.index[decks["season"] == season][3]
    decks.loc[row, column] = value
    return dataclasses.replace(data, decks=decks)


def _with_one_copy_more(data, season):
    cards = data.cards.copy()
    deck_rows = cards["deck_id"].array.codes
    first_deck = int(data.decks.index[data.decks["season"] == season][0])
    row = int((deck_rows == first_deck).nonzero()[0][0])
    cards.loc[row, "quantity"] = cards.loc[row, "quantity"] % 3 + 1
    return dataclasses.replace(data, cards=cards)


@pytest.mark.parametrize("change, expected", [
    (lambda d: _with_deck_value(d, SECOND, "wins", 9), {SECOND}),
    (lambda d: _with_deck_value(d, FIRST, "event", "Harbour Cup"), {FIRST}),
    (lambda d: _with_one_copy_more(d, FIRST), {FIRST}),
    (lambda d: _with_one_copy_more(d, SECOND), {SECOND}),
    (lambda d: dataclasses.replace(d, excluded=frozenset({str(d.decks["deck_id"].iloc[0])})), {FIRST}),
    (lambda d: dataclasses.replace(d, card_info=d.card_info.assign(type="Ploy")), {FIRST, SECOND}),
])
def test_a_seasons_key_changes_exactly_when_its_partitions_do(loaded, change, expected):
    # Reference: the partitions' own fingerprints, which digest every row of each partition.
    cfg, data = loaded
    keys, prints = season_keys(data, "salt"), _fingerprints(data, cfg)
    assert set(keys) == {FIRST, SECOND}
    assert season_keys(data, "salt") == keys  # the same rows, the same keys
    other = change(data)
    assert _changed(keys, season_keys(other, "salt")) == expected
    assert _changed(prints, _fingerprints(other, cfg)) == expected


def test_another_salt_changes_every_key(loaded):
    _, data = loaded
    keys = season_keys(data, "salt")
    assert _changed(keys, season_keys(data, "other salt")) == {FIRST, SECOND}


def test_no_keys_when_a_seasons_decks_are_not_one_run(tmp_path):
    # Planted: deck ids renamed so that the seasons interleave in id order (the loader's order);
    # seasons are not slices then, so none gets a key and a build cuts every season.
    cfg_path = make_project(tmp_path / "guide")
    interleave_seasons(cfg_path.parent)
    cfg = config.load(cfg_path)
    data = check_rules(load_data(cfg), cfg)
    assert list(data.decks["season"].iloc[:4]) == [FIRST, SECOND, FIRST, SECOND]
    assert season_keys(data, "salt") == {}
