"""The site stage's settings slice (site/settings.py): read once from the config, field by field."""
from __future__ import annotations

import dataclasses
import pickle

import pytest

from sitegen import config
from sitegen.site.settings import METHOD_KEYS, SiteSettings


def test_every_field_comes_from_its_setting(tmp_path):
    # Planted: a value unlike its default for each setting the site reads.
    raw = {"site": {"title": "Harbour Guide", "description": "Tides and decks", "base_url": "https://example.org/g/",
                    "publish_players": True, "leader_word": "captain", "leader_word_plural": "captains",
                    "content": "notes"},
           "cache": {"folder": "kept"},
           "analysis": {"seed": 11, "inclusion_min_share": 0.2, "by_leader": False},
           "trends": {"min_games": 7}, "matchups": {"min_games": 9}}
    cfg = config.from_dict(raw, root=tmp_path)
    s = SiteSettings.from_config(cfg)
    assert (s.title, s.description, s.base_url, s.publish_players) == (
        "Harbour Guide", "Tides and decks", "https://example.org/g/", True)
    assert (s.leader_word, s.leader_word_plural) == ("captain", "captains")
    # A relative path setting is taken against the config's folder (pathlib, stdlib).
    assert s.content == tmp_path / "notes" and s.cache_folder == tmp_path / "kept"
    assert (s.seed, s.inclusion_min_share, s.min_games, s.matchup_min_games) == (11, 0.2, 7, 9)
    assert [k for k, _ in s.method_settings] == list(METHOD_KEYS)
    shown = dict(s.method_settings)
    assert shown["analysis.by_leader"] == "false" and shown["analysis.seed"] == "11"
    assert shown["trends.min_games"] == "7"


def test_the_slice_is_frozen_and_picklable(tmp_path):
    s = SiteSettings.from_config(config.from_dict({}, root=tmp_path))
    with pytest.raises(dataclasses.FrozenInstanceError):
        s.title = "changed"  # type: ignore[misc]
    assert pickle.loads(pickle.dumps(s)) == s
