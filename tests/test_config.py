"""Settings: declared once, documented in the README, clear errors for bad values."""
from __future__ import annotations

import re

import pytest

from sitegen import config
from sitegen.errors import ConfigError


def _write(tmp_path, text: str):
    path = tmp_path / "site.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_readme_settings_table_matches_declaration(repo_root):
    # The README's table is generated from SETTINGS; a setting added without regenerating it fails here.
    readme = (repo_root / "README.md").read_text(encoding="utf-8")
    table = re.search(r"<!-- settings:start -->\n(.*?)<!-- settings:end -->", readme, re.S)
    assert table, "README lacks the settings table markers"
    assert table.group(1) == config.settings_markdown()


def test_every_setting_has_help_and_a_default_of_its_type():
    for s in config.SETTINGS:
        assert s.help.strip(), s.key
        assert isinstance(s.default, s.kind) or (s.kind is float and isinstance(s.default, (int, float))), s.key
    assert len({s.key for s in config.SETTINGS}) == len(config.SETTINGS)


def test_unknown_key_names_it_and_suggests_the_nearest(tmp_path):
    path = _write(tmp_path, "[analysis]\nk_maxx = 5\n")
    with pytest.raises(ConfigError, match=r"'analysis\.k_maxx': unknown setting; did you mean 'analysis\.k_max'\?"):
        config.load(path)


def test_unknown_section_suggests_the_nearest(tmp_path):
    path = _write(tmp_path, "[analysys]\nk_max = 5\n")
    with pytest.raises(ConfigError, match=r"'analysys': unknown section; did you mean 'analysis'\?"):
        config.load(path)


def test_wrong_type_names_key_value_and_expectation(tmp_path):
    path = _write(tmp_path, '[rules]\nmax_copies = "three"\n')
    with pytest.raises(ConfigError, match=r"'rules\.max_copies': expected a whole number, got 'three' \(str\)"):
        config.load(path)


def test_bool_is_not_taken_for_a_number(tmp_path):
    path = _write(tmp_path, "[analysis]\nk_max = true\n")
    with pytest.raises(ConfigError, match="expected a whole number, got True"):
        config.load(path)


def test_out_of_range_and_choices(tmp_path):
    with pytest.raises(ConfigError, match="below the least allowed value 1"):
        config.load(_write(tmp_path, "[rules]\nmax_copies = 0\n"))
    with pytest.raises(ConfigError, match="'seasons.source': 'weekly' is not one of 'column', 'calendar'"):
        config.load(_write(tmp_path, '[seasons]\nsource = "weekly"\n'))


def test_retired_settings_still_load_and_are_named(tmp_path):
    # Settings of older versions are accepted (a site.toml keeps working) and named for a warning.
    cfg = config.load(_write(tmp_path, "[analysis]\nk_min = 9\nmin_signature = 0.5\nk_max = 4\n"))
    assert cfg.retired == ("analysis.k_min", "analysis.min_signature") and cfg["analysis.k_max"] == 4
    from sitegen.build_settings import BuildSettings
    retired = BuildSettings.from_config(cfg).retired_findings()
    assert [f.kind for f in retired] == ["setting-retired"] * 2
    assert "analysis.k_min" in retired[0].message


def test_calendar_entries_need_name_start_end(tmp_path):
    path = _write(tmp_path, '[seasons]\nsource = "calendar"\n[[seasons.calendar]]\nname = "A"\nstart = 2026-01-01\n')
    with pytest.raises(ConfigError, match="entry 1 must be a table with name, start and end"):
        config.load(path)


def test_invalid_toml_and_missing_file(tmp_path):
    with pytest.raises(ConfigError, match="not valid TOML"):
        config.load(_write(tmp_path, "[site\n"))
    with pytest.raises(ConfigError, match="config file not found"):
        config.load(tmp_path / "nope.toml")


def test_paths_resolve_beside_the_config(tmp_path):
    cfg = config.load(_write(tmp_path, '[data]\ndecks = "data/decks.csv"\n'))
    assert cfg.path("data.decks") == tmp_path.resolve() / "data" / "decks.csv"
    assert cfg.path("data.cards") is None
    assert cfg.is_set("data.decks") and not cfg.is_set("data.cards")


def test_commented_toml_parses_and_equals_defaults():
    # The scaffold's commented config, uncommented, gives back every default.
    import tomllib

    text = "\n".join(line[2:] if line.startswith("# ") and " = " in line else line
                     for line in config.commented_toml().splitlines())
    cfg = config.from_dict(tomllib.loads(text), root=config.Path("."))
    assert cfg.values == config.defaults().values
