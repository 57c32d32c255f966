"""Beyond one machine: partition analyses on a Dask cluster, and season-partitioned Parquet input.

Reference: dask.distributed's LocalCluster (real scheduler and worker processes on this machine).
"""
from __future__ import annotations

import os
import signal

import pandas as pd
import pytest

from sitegen import config
from sitegen.build import build

from _sites import make_project, tree

distributed = pytest.importorskip("distributed")

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None, host="127.0.0.1") as c:
        yield c


def _demo_cfg(tmp_path, **changes):
    cfg = config.load(os.path.join(ROOT, "site.toml"))
    return cfg.replace(site__output=str(tmp_path / "site"), cache__folder=str(tmp_path / "cache"), **changes)


@pytest.mark.slow
def test_cluster_build_equals_local_build(cluster, demo_site, tmp_path):
    report = build(cfg=_demo_cfg(tmp_path), quiet=True, scheduler=cluster.scheduler_address)
    assert len(report.run.analysed) == report.partitions
    assert tree(tmp_path / "site") == tree(demo_site)


def _kill_first_job(marker: str) -> None:
    """Runs on every worker: the first partition any worker starts kills that worker's process."""
    import sitegen.runner as runner

    real = runner.analyse_partition

    def analyse(part, params):
        try:
            fd = os.open(marker, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
        except FileExistsError:
            return real(part, params)
        os.close(fd)
        os.kill(os.getpid(), signal.SIGKILL)

    runner.analyse_partition = analyse


@pytest.mark.slow
def test_killed_worker_job_is_retried_and_output_is_the_same(cluster, tmp_path):
    project = make_project(tmp_path / "guide")
    local = build(project, quiet=True, output=tmp_path / "local")
    marker = str(tmp_path / "killed-once")
    with distributed.Client(cluster.scheduler_address) as client:
        client.run(_kill_first_job, marker)
    cfg = config.load(project).replace(cache__folder=str(tmp_path / "dask-cache"))
    report = build(cfg=cfg, quiet=True, output=tmp_path / "dask", scheduler=cluster.scheduler_address)
    assert os.path.exists(marker), "a worker was killed during a job"
    assert len(report.run.analysed) == local.partitions
    assert tree(tmp_path / "dask") == tree(tmp_path / "local")


def _write_hive(src_cfg, folder):
    """The demo data as Parquet partitioned by season (season=NAME/ folders)."""
    decks = pd.read_csv(src_cfg.path("data.decks"), dtype=str, keep_default_na=False)
    cards = pd.read_parquet(src_cfg.path("data.deck_cards"))
    for season, part in decks.groupby("season", sort=True):
        d = folder / f"season={season}"
        d.mkdir(parents=True)
        part.drop(columns=["season"]).to_parquet(d / "decks.parquet", index=False)
        cards[cards["deck_id"].isin(part["deck_id"])].to_parquet(d / "deck_cards.parquet", index=False)


@pytest.mark.slow
def test_partitioned_parquet_gives_the_same_site(demo_site, tmp_path):
    cfg = _demo_cfg(tmp_path)
    _write_hive(cfg, tmp_path / "hive")
    hive = cfg.replace(data__decks="", data__deck_cards="", data__parquet_folder=str(tmp_path / "hive"))
    build(cfg=hive, quiet=True)
    assert tree(tmp_path / "site") == tree(demo_site)
