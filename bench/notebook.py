"""The common notebook method, written plainly as the baseline to beat.

Per season x leader (the same partitions sitegen uses): pivot the long table
to a dense deck x card matrix with pandas, weight it with scikit-learn's
TfidfTransformer, run KMeans with a fixed k and n_init=10, and embed every
deck with scikit-learn's TSNE. This is what analysts do by hand today; it is
kept deliberately unoptimised, because that is the point of comparison.
"""
from __future__ import annotations

import time

import pandas as pd
from sklearn.cluster import KMeans
from sklearn.feature_extraction.text import TfidfTransformer
from sklearn.manifold import TSNE


def notebook_partition(cards: pd.DataFrame, k: int, seed: int = 0, tsne: bool = True) -> tuple[pd.Series, dict]:
    """Cluster one partition the notebook way; returns labels by deck id and stage times."""
    times: dict[str, float] = {}
    t = time.perf_counter()
    matrix = cards.pivot_table(index="deck_id", columns="card", values="quantity", aggfunc="sum", fill_value=0)
    times["pivot"] = time.perf_counter() - t

    t = time.perf_counter()
    weighted = TfidfTransformer().fit_transform(matrix.to_numpy())
    times["tfidf"] = time.perf_counter() - t

    t = time.perf_counter()
    labels = KMeans(n_clusters=k, n_init=10, random_state=seed).fit_predict(weighted)
    times["kmeans"] = time.perf_counter() - t

    if tsne:
        t = time.perf_counter()
        TSNE(n_components=2, random_state=seed, init="pca").fit_transform(weighted.toarray())
        times["tsne"] = time.perf_counter() - t
    return pd.Series(labels, index=matrix.index, name="label"), times


def notebook_method(cards: pd.DataFrame, decks: pd.DataFrame, k_of: dict[tuple[str, str], int],
                    seed: int = 0, tsne: bool = True, max_partitions: int | None = None) -> tuple[pd.Series, dict]:
    """The notebook method over every season x leader partition.

    ``k_of`` gives the fixed k per partition (an analyst's pick by eye; the
    benchmark hands it the planted count, which favours the notebook).
    """
    merged = cards.merge(decks[["deck_id", "season", "leader"]], on="deck_id")
    labels: list[pd.Series] = []
    totals: dict[str, float] = {}
    for n, ((season, leader), part) in enumerate(merged.groupby(["season", "leader"], sort=True)):
        if max_partitions is not None and n >= max_partitions:
            break
        k = k_of.get((season, leader), 4)
        lab, times = notebook_partition(part[["deck_id", "card", "quantity"]], k, seed, tsne)
        labels.append(f"{season}|{leader}|" + lab.astype(str))
        for stage, took in times.items():
            totals[stage] = totals.get(stage, 0.0) + took
    return (pd.concat(labels) if labels else pd.Series(dtype=str)), totals
