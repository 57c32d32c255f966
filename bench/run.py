"""Benchmark: sitegen against the notebook method, on planted data, in one run.

    python bench/run.py --size demo            # the committed demo data
    python bench/run.py --size 1m              # 10 seasons x 100k decks, 7 leaders
    python bench/run.py --size smoke           # tiny; what CI runs
    python bench/run.py --size demo --write-results   # also rewrite its table in bench/RESULTS.md

For one data set it measures, each in a fresh child process so peak memory
is that of the measured work alone: (a) sitegen's full build from an empty
cache, (b) the notebook method (bench/notebook.py) on the same partitions,
(c) a rebuild with nothing changed, (d) a rebuild after one season's data
changed (the median of three: changed, changed back, changed again); with ``--folder``, (e) a full build of the same data as a season
folder and (f) its rebuild after one season's files changed (also the median of three); plus loading to the weighted matrix (Parquet and CSV) and exact
medoids. It prints per-stage times, peak memory, the adjusted Rand index of
both methods against the planted truth, and the ratios. It is a benchmark,
not a test: nothing here asserts a time.
"""
from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import shutil
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "demo_data"))

SIZES = {
    # name: (decks per season, seasons, leaders)
    "smoke": (600, 2, 2),
    "20k": (4000, 5, 5),
    "200k": (20000, 10, 7),
    "1m": (100000, 10, 7),
    "1m-one-season": (1000000, 1, 7),
}


def _own_peak_kb() -> float:
    """This process's peak resident memory in KiB. VmHWM is the high-water mark of the
    process's own address space; ru_maxrss of RUSAGE_SELF is not: after a fork and exec it
    keeps the peak of the parent's copy, so the parent's memory at spawn time (the bench
    itself, say after it wrote a data set) would count as the child's."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return float(line.split()[1])
    except OSError:
        pass
    return float(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)


def _peak_mb() -> dict[str, float]:
    own = _own_peak_kb() / 1024
    kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    return {"peak_mb": round(own, 1), "peak_worker_mb": round(kids, 1)}


# ---------------------------------------------------------------- child jobs
def child_build(config: str, out: str, cache: str, workers: int) -> dict:
    from sitegen import config as config_mod
    from sitegen.build import build

    cfg = config_mod.load(config).replace(site__output=out, cache__folder=cache)
    t = time.perf_counter()
    report = build(cfg=cfg, quiet=True, workers=workers)
    took = time.perf_counter() - t
    return {"seconds": took, "timings": report.timings, "analysed": len(report.run.analysed),
            "unread": len(report.run.seasons_unread),
            "cached": len(report.run.cached), "archetypes": report.archetypes, **_peak_mb()}


def child_notebook(data: str, max_partitions: int | None, tsne: bool) -> dict:

    from notebook import notebook_method

    decks, cards, truth_json = _read_data(Path(data))
    k_of = {(s, l): n for (s, l), n in _planted_counts(truth_json).items()}
    t = time.perf_counter()
    labels, times = notebook_method(cards, decks, k_of, seed=0, tsne=tsne, max_partitions=max_partitions)
    took = time.perf_counter() - t
    labels.to_frame().to_parquet(Path(data) / "_notebook_labels.parquet")
    return {"seconds": took, "timings": times, "partitions_done": int(labels.str.rsplit("|", n=1).str[0].nunique())
            if len(labels) else 0, **_peak_mb()}


def child_load(config: str) -> dict:
    """Loading to the weighted matrix, and exact medoids, for every partition."""
    from concurrent.futures import ThreadPoolExecutor

    import numpy as np

    from sitegen import config as config_mod
    from sitegen.analysis import describe, features
    from sitegen.check import check_rules
    from sitegen.load import load_data
    from sitegen.partitions import split
    from sitegen.resources import usable_cores

    cfg = config_mod.load(config)
    t0 = time.perf_counter()
    data = check_rules(load_data(cfg), cfg)
    t1 = time.perf_counter()
    parts = split(data, bool(cfg["analysis.by_leader"]))

    def weigh(p):
        counts, _ = features.build_matrix(p.cards, p.decks["deck_id"].tolist())
        return features.tfidf(counts)

    # One thread per core, as a build's workers make their partitions' matrices side by side.
    with ThreadPoolExecutor(max_workers=usable_cores()) as pool:
        weighted = list(pool.map(weigh, parts))
    t2 = time.perf_counter()
    for w in weighted:
        describe.medoid(w, np.arange(w.shape[0]))
    t3 = time.perf_counter()
    return {"load": t1 - t0, "matrix": t2 - t1, "load_to_matrix": t2 - t0, "medoids": t3 - t2,
            "decks": len(data.decks), "rows": len(data.cards), **_peak_mb()}


def _read_data(folder: Path):
    import pandas as pd

    decks = pd.read_csv(folder / "decks.csv", dtype=str)
    cards = (pd.read_parquet(folder / "deck_cards.parquet") if (folder / "deck_cards.parquet").exists()
             else pd.read_csv(folder / "deck_cards.csv"))
    truth = json.loads((folder / "truth.json").read_text())
    return decks, cards, truth


def _planted_counts(truth: dict) -> dict[tuple[str, str], int]:
    counts = truth.get("planted_counts") or truth.get("counts") or {}
    out: dict[tuple[str, str], int] = {}
    if isinstance(counts, dict):
        for key, n in counts.items():
            season, leader = key.split("|", 1) if "|" in key else (key, "")
            out[(season, leader)] = int(n)
    elif isinstance(counts, list):
        for row in counts:
            out[(row["season"], row["leader"])] = int(row.get("count", row.get("archetypes", 4)))
    return out


def _run_child(args: list[str]) -> dict:
    env = dict(os.environ, PYTHONHASHSEED="0")
    proc = subprocess.run([sys.executable, str(Path(__file__).resolve()), "--child", *args],
                          capture_output=True, text=True, env=env)
    if proc.returncode != 0:
        raise SystemExit(f"child {args[0]} failed:\n{proc.stderr[-3000:]}")
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _tree_digest(folder: Path) -> str:
    import hashlib

    h = hashlib.sha256()
    for p in sorted(folder.rglob("*")):
        if p.is_file():
            h.update(p.relative_to(folder).as_posix().encode() + b"\0" + p.read_bytes() + b"\0")
    return h.hexdigest()


# ---------------------------------------------------------------- scoring
def _ari_sitegen(site: Path, data: Path) -> tuple[float, float]:
    import pandas as pd
    from sklearn.metrics import adjusted_rand_score

    got = pd.read_csv(site / "data" / "assignments.csv", dtype=str)
    truth = pd.read_csv(data / "truth.csv", dtype=str)
    merged = got.merge(truth, on="deck_id", suffixes=("", "_truth"))
    scores = [adjusted_rand_score(g["archetype_truth"], g["archetype"])
              for _, g in merged.groupby(["season", "leader"])]
    return float(sum(scores) / len(scores)), float(min(scores))


def _ari_notebook(data: Path) -> tuple[float, float]:
    import pandas as pd
    from sklearn.metrics import adjusted_rand_score

    labels = pd.read_parquet(data / "_notebook_labels.parquet")["label"]
    frame = labels.rename("label").reset_index().rename(columns={"index": "deck_id"})
    truth = pd.read_csv(data / "truth.csv", dtype=str)
    merged = frame.merge(truth, on="deck_id")
    scores = [adjusted_rand_score(g["archetype"], g["label"]) for _, g in merged.groupby(["season", "leader"])]
    return (float(sum(scores) / len(scores)), float(min(scores))) if scores else (float("nan"), float("nan"))


# ---------------------------------------------------------------- data sets
def make_data(size: str, folder: Path) -> Path:
    """Write the planted data set of ``size`` into ``folder`` (the demo data is used as it is)."""
    if size == "demo":
        return ROOT / "demo_data"
    from generate import generate

    per, seasons, leaders = SIZES[size]
    marker = folder / f".made-{size}"
    if not marker.exists():
        shutil.rmtree(folder, ignore_errors=True)
        t = time.perf_counter()
        generate(folder, decks_per_season=per, seasons=seasons, leaders=leaders, decklists=0)
        print(f"generated {size} data in {time.perf_counter() - t:.1f} s", flush=True)
        marker.write_text("")
    return folder


def _median_load(cfg: Path) -> dict:
    """The child ``load`` run three times: the run with the median load time, and all three times."""
    runs = sorted((_run_child(["load", str(cfg)]) for _ in range(3)), key=lambda r: r["load_to_matrix"])
    return {**runs[1], "all": [r["load_to_matrix"] for r in runs]}


def write_config(data: Path, work: Path, fmt: str = "parquet") -> Path:
    cards = data / ("deck_cards.parquet" if fmt == "parquet" else "deck_cards.csv")
    cfg = work / f"site-{fmt}.toml"
    cfg.write_text(
        "[site]\ntitle = \"Benchmark\"\n"
        f"[data]\ndecks = {json.dumps(str(data / 'decks.csv'))}\n"
        f"deck_cards = {json.dumps(str(cards))}\ncards = {json.dumps(str(data / 'cards.csv'))}\n",
        encoding="utf-8")
    return cfg


def write_folder(data: Path, work: Path) -> Path:
    """The data as a season folder (season=NAME/decks.parquet, deck_cards.parquet), copied to a
    scratch folder of its own (a later step changes one season there), and its config."""
    import pandas as pd
    import pyarrow.parquet as pq

    folder = data / "season-folder"
    if not (folder / ".complete").exists():
        shutil.rmtree(folder, ignore_errors=True)
        decks = pd.read_csv(data / "decks.csv", dtype=str, keep_default_na=False)
        season_of = dict(zip(decks["deck_id"], decks["season"]))
        cards = pq.read_table(data / "deck_cards.parquet").to_pandas()
        card_season = cards["deck_id"].map(season_of)
        for season, part in decks.groupby("season", sort=True):
            d = folder / f"season={season}"
            d.mkdir(parents=True)
            part.drop(columns=["season"]).to_parquet(d / "decks.parquet", index=False)
            cards[card_season == season].to_parquet(d / "deck_cards.parquet", index=False)
        (folder / ".complete").write_text("")
    run = work / "season-folder"
    shutil.rmtree(run, ignore_errors=True)
    shutil.copytree(folder, run, ignore=shutil.ignore_patterns(".complete"))
    cfg = work / "site-folder.toml"
    cfg.write_text("[site]\ntitle = \"Benchmark\"\n"
                   f"[data]\nparquet_folder = {json.dumps(str(run))}\ncards = {json.dumps(str(data / 'cards.csv'))}\n",
                   encoding="utf-8")
    return cfg


def change_one_folder_season(work: Path, undo: bool = False) -> None:
    """In the scratch season folder, a few decks of the last season play one card fewer (as (d));
    ``undo``: the season's file as it was made (written anew, so it is a changed file again)."""
    import pandas as pd

    path = sorted((work / "season-folder").glob("season=*"))[-1] / "deck_cards.parquet"
    if undo:
        original = work / "data" / "season-folder" / path.parent.name / "deck_cards.parquet"
        path.write_bytes(original.read_bytes())
        return
    cards = pd.read_parquet(path)
    victims = set(pd.unique(cards["deck_id"])[:25])
    first_row = cards[cards["deck_id"].isin(victims)].groupby("deck_id").head(1).index
    cards.loc[first_row, "quantity"] = cards.loc[first_row, "quantity"].clip(lower=2) - 1
    cards.to_parquet(path, index=False)


def change_one_season(data: Path, work: Path) -> Path:
    """A copy of the data where a few decks of the last season play one card fewer."""
    import pandas as pd

    changed = work / "changed-data"
    if changed.exists():
        shutil.rmtree(changed)
    shutil.copytree(data, changed, ignore=shutil.ignore_patterns("decklists", "_notebook_labels.parquet", ".made-*",
                                                                 "season-folder", "deck_cards.csv"))
    decks = pd.read_csv(changed / "decks.csv", dtype=str)
    last = decks["season"].iloc[-1]
    victims = set(decks.loc[decks["season"] == last, "deck_id"].head(25))
    path = changed / "deck_cards.parquet"
    cards = pd.read_parquet(path)
    first_row = cards[cards["deck_id"].isin(victims)].groupby("deck_id").head(1).index
    cards.loc[first_row, "quantity"] = cards.loc[first_row, "quantity"].clip(lower=2) - 1
    cards.to_parquet(path, index=False)
    return changed


# ---------------------------------------------------------------- report
def _table(rows: list[tuple[str, str]]) -> str:
    width = max(len(k) for k, _ in rows)
    return "\n".join(f"  {k.ljust(width)}  {v}" for k, v in rows)


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--size", default="demo", choices=["demo", *SIZES])
    p.add_argument("--work", default=str(HERE / "out"), help="scratch folder (data sets are kept between runs)")
    p.add_argument("--workers", type=int, default=0, help="sitegen worker processes (0 = every core)")
    p.add_argument("--notebook-partitions", type=int, default=None,
                   help="run the notebook method on only the first N partitions (it is slow at scale)")
    p.add_argument("--no-notebook", action="store_true", help="skip the notebook method")
    p.add_argument("--csv", action="store_true", help="also time loading from CSV (writes a CSV copy)")
    p.add_argument("--folder", action="store_true",
                   help="also build from the same data as a season folder, from an empty cache (writes a copy)")
    p.add_argument("--write-results", action="store_true", help="rewrite this size's table in bench/RESULTS.md")
    p.add_argument("--publish-last", action="store_true",
                   help="write the last run's figures of --size into bench/RESULTS.md without running again")
    p.add_argument("--child", nargs=argparse.REMAINDER, help=argparse.SUPPRESS)
    args = p.parse_args(argv)
    if args.publish_last:
        last = Path(args.work) / args.size / "last-results.json"
        _write_results(args.size, [tuple(r) for r in json.loads(last.read_text(encoding="utf-8"))])
        return 0

    if args.child:
        kind, *rest = args.child
        if kind == "build":
            out = child_build(rest[0], rest[1], rest[2], int(rest[3]))
        elif kind == "notebook":
            out = child_notebook(rest[0], None if rest[1] == "all" else int(rest[1]), rest[2] == "tsne")
        elif kind == "load":
            out = child_load(rest[0])
        else:
            raise SystemExit(f"unknown child job {kind}")
        print(json.dumps(out))
        return 0

    work = Path(args.work) / args.size
    work.mkdir(parents=True, exist_ok=True)
    data = make_data(args.size, work / "data")
    cfg = write_config(data, work)
    site, cache = work / "site", work / "cache"
    shutil.rmtree(site, ignore_errors=True)
    shutil.rmtree(cache, ignore_errors=True)

    print(f"benchmark {args.size}: data in {data}", flush=True)
    full = _run_child(["build", str(cfg), str(site), str(cache), str(args.workers)])
    print(f"(a) full build {full['seconds']:.1f} s", flush=True)
    site_before_change = work / "site-a"
    shutil.rmtree(site_before_change, ignore_errors=True)
    shutil.copytree(site, site_before_change)
    noop = _run_child(["build", str(cfg), str(site), str(cache), str(args.workers)])
    print(f"(c) no-op rebuild {noop['seconds']:.1f} s", flush=True)
    changed = change_one_season(data, work)
    (work / "changed-cfg").mkdir(exist_ok=True)
    cfg_changed = write_config(changed, work / "changed-cfg")
    # Three rebuilds of one changed season (changed, changed back, changed again): a rebuild is short
    # enough for the host's moods to move it by a fifth, so the median is the figure.
    rebuilds = []
    for step, config in (("changed", cfg_changed), ("changed back", cfg), ("changed again", cfg_changed)):
        rebuilds.append(_run_child(["build", str(config), str(site), str(cache), str(args.workers)]))
        print(f"(d) rebuild after one changed season ({step}) {rebuilds[-1]['seconds']:.1f} s", flush=True)
    one = sorted(rebuilds, key=lambda r: r["seconds"])[1]
    # Loading takes seconds, most of them first touches of fresh memory, whose cost moves with the
    # host from minute to minute: each load figure is the median of three child processes.
    load = _median_load(cfg)
    csv_load = None
    if args.csv:
        import pandas as pd

        csv_path = data / "deck_cards.csv"
        if not csv_path.exists():
            pd.read_parquet(data / "deck_cards.parquet").to_csv(csv_path, index=False)
        csv_load = _median_load(write_config(data, work, "csv"))
    ari_s = _ari_sitegen(site_before_change, data)
    folder_build = None
    if args.folder:
        folder_cfg = write_folder(data, work)
        shutil.rmtree(work / "site-folder", ignore_errors=True)
        shutil.rmtree(work / "cache-folder", ignore_errors=True)
        folder_build = _run_child(["build", str(folder_cfg), str(work / "site-folder"), str(work / "cache-folder"),
                                   str(args.workers)])
        same = _tree_digest(work / "site-folder") == _tree_digest(site_before_change)
        print(f"(e) season-folder full build {folder_build['seconds']:.1f} s", flush=True)
        folder_rebuilds = []
        for step, undo in (("changed", False), ("changed back", True), ("changed again", False)):
            change_one_folder_season(work, undo=undo)
            folder_rebuilds.append(_run_child(["build", str(folder_cfg), str(work / "site-folder"),
                                               str(work / "cache-folder"), str(args.workers)]))
            print(f"(f) season folder, one season changed ({step}) {folder_rebuilds[-1]['seconds']:.1f} s", flush=True)
        folder_one = sorted(folder_rebuilds, key=lambda r: r["seconds"])[1]

    nb = None
    if not args.no_notebook:
        parts = "all" if args.notebook_partitions is None else str(args.notebook_partitions)
        nb = _run_child(["notebook", str(data), parts, "tsne"])
        print(f"(b) notebook method {nb['seconds']:.1f} s", flush=True)
        ari_n = _ari_notebook(data)
        (data / "_notebook_labels.parquet").unlink(missing_ok=True)

    rebuild_times = ", ".join(f"{r['seconds']:.1f}" for r in rebuilds)
    rebuild_counts = "/".join(str(r["analysed"]) for r in rebuilds)
    rows = [
        ("data", f"{load['decks']:,} decks, {load['rows']:,} card rows"),
        ("(a) sitegen full build", f"{full['seconds']:.1f} s, peak {full['peak_mb']:.0f} MB (largest worker {full['peak_worker_mb']:.0f} MB)"),
        ("    stages", ", ".join(f"{k} {v:.1f} s" for k, v in full["timings"].items())),
        ("(c) no-op rebuild", f"{noop['seconds']:.2f} s, {noop['analysed']} partitions analysed"),
        ("(d) one season changed", f"{one['seconds']:.1f} s, {one['analysed']} partitions analysed, "
                                   f"{one['seconds'] / full['seconds']:.1%} of the full build; the median of 3 "
                                   f"rebuilds: {rebuild_times} s (changed, changed back, changed again; "
                                   f"{rebuild_counts} partitions)"),
        ("    stages", ", ".join(f"{k} {v:.1f} s" for k, v in one["timings"].items())),
        ("load to weighted matrix (Parquet)", f"{load['load_to_matrix']:.1f} s (read+check {load['load']:.1f} s); "
                                              f"the median of 3 runs: {', '.join(f'{t:.1f}' for t in load['all'])} s"),
        ("exact medoids, every deck", f"{load['medoids']:.2f} s"),
        ("sitegen ARI vs planted truth", f"mean {ari_s[0]:.3f}, worst partition {ari_s[1]:.3f}"),
    ]
    if csv_load:
        rows.append(("load to weighted matrix (CSV)", f"{csv_load['load_to_matrix']:.1f} s; the median of 3 runs: "
                                                      f"{', '.join(f'{t:.1f}' for t in csv_load['all'])} s"))
    if folder_build:
        rows.append(("(e) same data as a season folder, full build",
                     f"{folder_build['seconds']:.1f} s, peak {folder_build['peak_mb']:.0f} MB "
                     f"(largest worker {folder_build['peak_worker_mb']:.0f} MB); "
                     f"site {'identical to' if same else 'DIFFERENT from'} (a)'s"))
        folder_times = ", ".join(f"{r['seconds']:.1f}" for r in folder_rebuilds)
        rows.append(("(f) same, one season changed", f"{folder_one['seconds']:.1f} s, {folder_one['analysed']} partitions "
                     f"analysed, {folder_one['unread']} seasons not read again, "
                     f"{folder_one['seconds'] / folder_build['seconds']:.1%} of (e); the median of 3 rebuilds: "
                     f"{folder_times} s (changed, changed back, changed again)"))
        rows.append(("    stages", ", ".join(f"{k} {v:.1f} s" for k, v in folder_one["timings"].items())))
    if nb:
        partial = "" if args.notebook_partitions is None else f" (first {nb['partitions_done']} partitions only)"
        rows += [
            ("(b) notebook method", f"{nb['seconds']:.1f} s{partial}, peak {nb['peak_mb']:.0f} MB"),
            ("    stages", ", ".join(f"{k} {v:.1f} s" for k, v in nb["timings"].items())),
            ("notebook ARI vs planted truth", f"mean {ari_n[0]:.3f}, worst partition {ari_n[1]:.3f}"),
        ]
        if args.notebook_partitions is None:
            rows.append(("speed-up (notebook / sitegen full build)", f"{nb['seconds'] / full['seconds']:.1f}x"))
    report = _table(rows)
    print(report)
    (work / "last-results.json").write_text(json.dumps(rows), encoding="utf-8")
    if args.write_results:
        _write_results(args.size, rows)
    return 0


#: Where the published figures live, one block per size between its bench:SIZE markers.
RESULTS = HERE / "RESULTS.md"


def _write_results(size: str, rows: list[tuple[str, str]]) -> None:
    """Rewrite this size's block of the results tables in bench/RESULTS.md (:data:`RESULTS`)."""
    guide = RESULTS
    text = guide.read_text(encoding="utf-8")
    start, end = f"<!-- bench:{size}:start -->", f"<!-- bench:{size}:end -->"
    stamp = time.strftime("%Y-%m-%d", time.gmtime())
    machine = f"{platform.machine()}, {os.cpu_count()} cores, {os.sysconf('SC_PAGE_SIZE') * os.sysconf('SC_PHYS_PAGES') / 2**30:.0f} GiB"
    block = [start, f"**{size}** — {stamp}, {machine}, Python {platform.python_version()}", "",
             "| measure | result |", "| --- | --- |"]
    block += [f"| {k.strip()} | {v} |" for k, v in rows]
    block.append(end)
    new = "\n".join(block)
    if start in text:
        before, rest = text.split(start, 1)
        after = rest.split(end, 1)[1]
        text = before + new + after
    else:
        marker = "<!-- bench:results -->"
        text = text.replace(marker, marker + "\n\n" + new) if marker in text else text + "\n" + new + "\n"
    guide.write_text(text, encoding="utf-8")


if __name__ == "__main__":
    sys.exit(main())
