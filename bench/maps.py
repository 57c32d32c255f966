"""Benchmark of the partition map: which t-SNE settings keep the map's meaning at least cost.

    python bench/maps.py                       # the demo data, every leader, seasons 1 and 2
    python bench/maps.py --write-results demo  # ... and put the table in docs/method.md
    python bench/maps.py --config bench/out/1m/site-parquet.toml --leaders 2

For each leader it takes the map sample of two consecutive seasons (the same
stratified sample of at most analysis.map_points decks the build draws) and
embeds it with each variant, in this process, one thread, printing CPU
seconds and three measures of meaning, each against something the map did
not make:

- 2-D silhouette of the planted archetypes (truth.csv beside the data;
  scikit-learn's silhouette_score): are the planted archetypes apart?
- trustworthiness, k=10 (scikit-learn's sklearn.manifold.trustworthiness,
  against the SVD rows): are a deck's map neighbours its real neighbours?
- season-to-season drift: Procrustes disparity (scipy.spatial.procrustes) of
  the planted archetypes' centres in the two seasons' maps, over the
  archetypes both seasons hold. 0 means the second map shows them where the
  first did (after rotation and scaling); near 1, unrelated places.

The "warm" variants start the second season's map from the first season's:
each deck starts at the median position of its 10 nearest first-season decks
(cosine, on card presence over both seasons' cards), with no early
exaggeration. The build draws a leader's first map as "exact kNN, 125 + 150"
and every later one as "warm start, 0 + 100" (see the contributor guide).
A benchmark, not a test: nothing here asserts.
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def _cpu() -> float:
    return time.process_time()


def _maps_input(cfg_path: Path, n_leaders: int):
    from threadpoolctl import threadpool_limits

    from sitegen import config as config_mod
    from sitegen.analysis import embed, features
    from sitegen.analysis.params import AnalysisParams
    from sitegen.check import check_rules
    from sitegen.load import load_data
    from sitegen.partitions import split

    threadpool_limits(1)
    cfg = config_mod.load(cfg_path)
    data = check_rules(load_data(cfg), cfg)
    params = AnalysisParams.from_config(cfg)
    truth_file = Path(cfg.path("data.decks")).parent / "truth.csv"
    truth = pd.read_csv(truth_file, dtype=str).set_index("deck_id")["archetype"]
    parts = {(p.season, p.leader): p for p in split(data, bool(cfg["analysis.by_leader"]))}
    first, second = data.seasons[0], data.seasons[1]
    leaders = sorted({leader for s, leader in parts if s == first} & {leader for s, leader in parts if s == second})
    out = []
    for leader in leaders[:n_leaders]:
        pair = []
        for season in (first, second):
            p = parts[(season, leader)]
            ids = sorted(p.decks["deck_id"].tolist())
            counts, cards = features.build_matrix(p.cards, ids)
            rows = features.reduce(features.tfidf(counts), params.svd_dims, params.seed, params.fit_sample)
            labels = truth.reindex(ids).fillna("?").to_numpy()
            drawn = embed.stratified_sample(labels, params.map_points, params.seed)
            pair.append({"season": season, "ids": [ids[i] for i in drawn], "rows": rows[drawn],
                         "labels": labels[drawn], "presence": features.presence(counts)[drawn], "cards": cards})
        out.append((leader, pair))
    return out, params


def _tsne(rows, seed, *, exaggeration, iterations, neighbors, init="pca"):
    from openTSNE import TSNE

    perplexity = float(min(30.0, (rows.shape[0] - 1) / 3.0))
    model = TSNE(n_components=2, perplexity=perplexity, n_iter=iterations, early_exaggeration_iter=exaggeration,
                 initialization=init, negative_gradient_method="bh", theta=0.8, n_jobs=1, random_state=seed,
                 neighbors=neighbors, verbose=False)
    return np.asarray(model.fit(np.ascontiguousarray(rows, dtype=np.float64)))


def _shared_presence(a, b):
    """Both seasons' card presence over the union of their cards (so decks of two seasons compare)."""
    import scipy.sparse as sp

    cards = sorted(set(a["cards"]) | set(b["cards"]))
    col = {c: i for i, c in enumerate(cards)}

    def remap(x):
        m = x["presence"].tocoo()
        return sp.csr_matrix((m.data, (m.row, [col[x["cards"][j]] for j in m.col])), shape=(m.shape[0], len(cards)))

    return remap(a), remap(b)


def _warm_start(a, b, map_a):
    from sklearn.neighbors import NearestNeighbors

    pa, pb = _shared_presence(a, b)
    nn = NearestNeighbors(n_neighbors=10, metric="cosine", algorithm="brute").fit(pa)
    _, idx = nn.kneighbors(pb)
    init = np.median(map_a[idx], axis=1)
    # openTSNE wants a small-spread start; scale as its own PCA start does (std of the first axis 1e-4).
    init = (init - init.mean(axis=0)) / (init[:, 0].std() or 1.0) * 1e-4
    return init


def _measures(coords, rows, labels):
    from sklearn.manifold import trustworthiness
    from sklearn.metrics import silhouette_score

    known = labels != "?"
    sil = silhouette_score(coords[known], labels[known]) if len(set(labels[known])) > 1 else float("nan")
    return sil, trustworthiness(rows, coords, n_neighbors=10)


def _drift(map_a, labels_a, map_b, labels_b):
    from scipy.spatial import procrustes

    common = sorted((set(labels_a) & set(labels_b)) - {"?"})
    if len(common) < 3:
        return float("nan")
    ca = np.array([map_a[labels_a == g].mean(axis=0) for g in common])
    cb = np.array([map_b[labels_b == g].mean(axis=0) for g in common])
    return procrustes(ca, cb)[2]


VARIANTS = {
    # name: (early exaggeration steps, steps after it, neighbour search)
    "annoy kNN, 125 + 150 (before)": (125, 150, "annoy"),
    "exact kNN, 125 + 150 (build, first map)": (125, 150, "exact"),
    "exact kNN, 100 + 100": (100, 100, "exact"),
    "exact kNN, 60 + 100": (60, 100, "exact"),
}


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--config", default=str(ROOT / "site.toml"))
    p.add_argument("--leaders", type=int, default=5)
    p.add_argument("--write-results", metavar="NAME", default=None,
                   help="also put the table between the maps:NAME markers of docs/method.md")
    args = p.parse_args(argv)
    pairs, params = _maps_input(Path(args.config), args.leaders)
    totals: dict[str, list] = {}
    for leader, (a, b) in pairs:
        print(f"{leader}: {a['season']} {len(a['ids'])} decks, {b['season']} {len(b['ids'])} decks", flush=True)
        for name, (ex, it, nn) in VARIANTS.items():
            t = _cpu()
            map_a = _tsne(a["rows"], params.seed, exaggeration=ex, iterations=it, neighbors=nn)
            map_b = _tsne(b["rows"], params.seed, exaggeration=ex, iterations=it, neighbors=nn)
            took = (_cpu() - t) / 2
            sil, trust = _measures(map_b, b["rows"], b["labels"])
            totals.setdefault(name, []).append((took, sil, trust, _drift(map_a, a["labels"], map_b, b["labels"])))
            if name == "exact kNN, 125 + 150 (build, first map)":
                base_a = map_a
        for steps, note in ((150, ""), (100, " (build)"), (75, "")):
            t = _cpu()
            init = _warm_start(a, b, base_a)
            map_w = _tsne(b["rows"], params.seed, exaggeration=0, iterations=steps, neighbors="exact", init=init)
            took = _cpu() - t
            sil, trust = _measures(map_w, b["rows"], b["labels"])
            totals.setdefault(f"warm start from last season, 0 + {steps}{note}", []).append(
                (took, sil, trust, _drift(base_a, a["labels"], map_w, b["labels"])))
    lines = ["| variant | CPU s per map | 2-D silhouette | trustworthiness | drift between seasons |",
             "| --- | --- | --- | --- | --- |"]
    for name, rows in totals.items():
        m = np.nanmean(np.array(rows, dtype=float), axis=0)
        lines.append(f"| {name} | {m[0]:.2f} | {m[1]:.3f} | {m[2]:.3f} | {m[3]:.3f} |")
    print("\n" + "\n".join(lines))
    print(f"\nmean over {len(pairs)} leader(s); maps of at most {params.map_points} decks")
    if args.write_results:
        guide = ROOT / "docs" / "method.md"
        text = guide.read_text(encoding="utf-8")
        start, end = f"<!-- maps:{args.write_results}:start -->", f"<!-- maps:{args.write_results}:end -->"
        before, rest = text.split(start, 1)
        guide.write_text(before + start + "\n" + "\n".join(lines) + "\n" + end + rest.split(end, 1)[1], encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
