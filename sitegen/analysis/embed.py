"""The partition map: a 2-D t-SNE of a stratified sample of decks.

Decks are sampled per archetype (proportional, with a few from even the
smallest group, so every archetype shows up), then embedded from their SVD
rows. One seed, one thread and PCA initialisation make the map the same
bytes on every run.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np
import scipy.sparse as sp

from ..model import MapLayout, PartitionResult

#: Least decks drawn from each group (or all of it when smaller).
MIN_PER_GROUP = 5


def stratified_sample(groups: Sequence[str], n_points: int, seed: int, min_per: int = MIN_PER_GROUP) -> np.ndarray:
    """Sorted row indices: at most ``n_points`` rows, shared among groups by size.

    Each group gets floor(n_points * size / n) rows, at least
    min(size, ``min_per``); seats left over go to the largest remainders
    (ties by group name), and if the minimums overshoot, the largest groups
    give rows back. Within a group rows are drawn without replacement from
    one fixed-seed generator, groups in name order.
    """
    groups = np.asarray(groups, dtype=object)
    n = len(groups)
    if n <= n_points:
        return np.arange(n)
    names = sorted(set(groups.tolist()))
    members = {g: np.flatnonzero(groups == g) for g in names}
    sizes = np.array([len(members[g]) for g in names])
    exact = n_points * sizes / n
    quota = np.maximum(np.floor(exact).astype(int), np.minimum(sizes, min_per))
    while quota.sum() > n_points:
        quota[np.argmax(quota)] -= 1
    spare = n_points - quota.sum()
    if spare > 0:
        remainder = exact - np.floor(exact)
        for i in np.lexsort((np.arange(len(names)), -remainder))[:spare]:
            if quota[i] < sizes[i]:
                quota[i] += 1
    rng = np.random.default_rng(seed)
    picked = [rng.choice(members[g], size=int(q), replace=False) for g, q in zip(names, quota)]
    return np.sort(np.concatenate(picked))


#: Early-exaggeration steps before the ``iterations`` of a map.
EXAGGERATION_STEPS = 125
#: Barnes-Hut accuracy: 0.8 is about twice as fast as 0.5 with maps as well separated (method notes).
THETA = 0.8
#: Up to this many decks the neighbours are found exactly (cheaper than an approximate index there).
EXACT_NEIGHBOURS = 10_000
#: Decks of the previous map whose median position starts a deck of a warm-started map.
WARM_NEIGHBOURS = 10
#: Spread of a map's start: openTSNE's own PCA start is scaled to this standard deviation.
START_SPREAD = 1e-4


#: Why a partition has no map (see :func:`can_map`), as its season page says it.
NO_MAP = ("No map is drawn: its decks differ along one direction at most (all of them hold one "
          "single card between them), which leaves nothing to spread on a plane")


def can_map(rows: np.ndarray) -> bool:
    """Whether a map of these feature rows can be drawn: t-SNE's PCA start needs rows of two
    dimensions or more (a partition whose decks hold one single card between them has one)."""
    return rows.ndim == 2 and rows.shape[1] >= 2


def warm_steps(iterations: int) -> int:
    """Steps for a map started from the previous season's: two thirds of a fresh map's (it starts
    near its final layout; measured in the method notes), at least 50."""
    return max(50, iterations * 2 // 3)


def tsne(rows: np.ndarray, seed: int, iterations: int = 250, init: np.ndarray | None = None) -> np.ndarray:
    """2-D t-SNE coordinates of ``rows`` (openTSNE, Barnes-Hut, one thread), float64.

    From ``init`` (one start per row, see :func:`warm_start`) the map is
    only refined: ``iterations`` steps, no early exaggeration. Without it
    the start is PCA and :data:`EXAGGERATION_STEPS` of early exaggeration
    come first. Perplexity is 30, or less for tiny samples (it must stay
    below a third of the rows). Fewer than 4 rows are laid on a line.
    """
    from openTSNE import TSNE

    n = rows.shape[0]
    if rows.ndim == 2 and rows.shape[1] < 2:  # see can_map: a second, empty dimension keeps PCA working
        rows = np.column_stack([rows, np.zeros(n)])
    if n < 4:
        return np.column_stack([np.arange(n, dtype=float), np.zeros(n)])
    perplexity = float(min(30.0, (n - 1) / 3.0))
    model = TSNE(n_components=2, perplexity=perplexity, n_iter=iterations,
                 early_exaggeration_iter=EXAGGERATION_STEPS if init is None else 0,
                 initialization="pca" if init is None else np.ascontiguousarray(init, dtype=np.float64),
                 negative_gradient_method="bh", theta=THETA, n_jobs=1,
                 neighbors="exact" if n <= EXACT_NEIGHBOURS else "auto", random_state=seed, verbose=False)
    return np.asarray(model.fit(np.ascontiguousarray(rows, dtype=np.float64)), dtype=np.float64)


def warm_start(presence: sp.csr_matrix, cards: Sequence[str], prev_presence: sp.csr_matrix,
               prev_cards: Sequence[str], prev_coords: np.ndarray) -> np.ndarray | None:
    """A start for a new map from the previous season's map of the same leader.

    Each deck starts at the median position of its :data:`WARM_NEIGHBOURS`
    nearest decks of the previous map (cosine distance on card presence,
    over both seasons' cards), so an archetype that carries on starts where
    it was; the start is centred and scaled to :data:`START_SPREAD`, as
    openTSNE scales its own. None when the previous map is too small or
    shares no card.
    """
    if prev_coords.shape[0] < 4 or presence.shape[0] < 4 or not np.isfinite(prev_coords).all():
        return None
    union = sorted(set(cards) | set(prev_cards))
    column = {c: i for i, c in enumerate(union)}
    new = _on_columns(presence, [column[c] for c in cards], len(union))
    old = _on_columns(prev_presence, [column[c] for c in prev_cards], len(union))
    if new.multiply(new).sum() == 0 or old.multiply(old).sum() == 0:
        return None
    k = min(WARM_NEIGHBOURS, old.shape[0])
    # Cosine similarity of unit rows; ties broken by position (argsort is stable), so the start is repeatable.
    similarity = (_unit(new) @ _unit(old).T).toarray()
    if not similarity.any():
        return None
    nearest = np.argsort(-similarity, axis=1, kind="stable")[:, :k]
    start = np.median(prev_coords[nearest], axis=1)
    start = start - start.mean(axis=0)
    spread = start[:, 0].std()
    if not np.isfinite(spread) or spread == 0:
        return None
    return start / spread * START_SPREAD


def _on_columns(matrix: sp.csr_matrix, columns: Sequence[int], width: int) -> sp.csr_matrix:
    m = matrix.tocoo()
    return sp.csr_matrix((np.ones_like(m.data, dtype=np.float64), (m.row, np.asarray(columns, dtype=np.int64)[m.col])),
                         shape=(m.shape[0], width))


def _unit(matrix: sp.csr_matrix) -> sp.csr_matrix:
    norms = np.sqrt(np.asarray(matrix.multiply(matrix).sum(axis=1)).ravel())
    norms[norms == 0] = 1.0
    return sp.diags(1.0 / norms) @ matrix


def place_map(result: PartitionResult, layout: MapLayout) -> PartitionResult:
    """``result`` with its drawn decks' map coordinates filled in."""
    sample = result.map_sample
    assert sample is not None and layout.coords.shape == (len(sample.drawn), 2)
    assignments = result.assignments.copy()
    for axis, column in enumerate(("x", "y")):
        values = assignments[column].to_numpy(dtype=float, copy=True)
        values[sample.drawn] = layout.coords[:, axis]
        assignments[column] = values
    points = result.map_points.copy()
    points["x"] = layout.coords[:, 0]
    points["y"] = layout.coords[:, 1]
    return replace(result, assignments=assignments, map_points=points)
