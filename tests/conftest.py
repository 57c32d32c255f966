"""Shared fixtures: the demo site, built once per test session."""
from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="session")
def repo_root() -> Path:
    return ROOT


@pytest.fixture(scope="session")
def demo_site(tmp_path_factory) -> Path:
    """The demo config built into a temporary folder (output and cache kept apart from the clone)."""
    from sitegen import config
    from sitegen.build import build

    work = tmp_path_factory.mktemp("demo")
    cfg = config.load(ROOT / "site.toml")
    cfg = cfg.replace(site__output=str(work / "site"), cache__folder=str(work / "cache"))
    build(cfg=cfg, quiet=True)
    return work / "site"
