"""Win rates compared: card results inside an archetype, and the statistics they need.

Card results answer "do the decks of an archetype that play this card win more
often than those that do not?". For each card played by between
:data:`MIN_CARD_SHARE` and :data:`MAX_CARD_SHARE` of the archetype's decks
with results, the games of the decks that play it (and of those playing it
at 1, 2, or 3 or more copies) are set against the games of the decks that do
not play it:

* win rate = wins / games over those decks (games = wins + losses; a deck
  with several games counts each of them);
* the difference of the two win rates with a 95% interval by Newcombe's
  hybrid score method (method 10 of Newcombe, 1998): a Wilson score interval
  for each win rate, combined;
* a two-sided p-value from Fisher's exact test on the 2 x 2 table of wins
  and losses (scipy), and the Benjamini-Hochberg step-up rule at a false
  discovery rate of :data:`FDR` over every comparison of the archetype that
  is not a small sample: the differences it keeps are marked, the others
  "could be chance".

A comparison with fewer than :data:`MIN_GAMES` games or :data:`MIN_DECKS`
decks on either side is a small sample: flagged, given no p-value, never
ranked. Games of one deck are not independent (the same player, the same
event), so the intervals are if anything too narrow; and a difference is an
association, not an effect of the card: stronger players, events and the
other cards travel with it. The pages say so.
"""
from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import scipy.sparse as sp
from scipy.special import gammaln

from ..model import CardResult
from .stats import Z_95, wilson

#: Cards played by fewer of the archetype's decks with results are not compared: too few decks play them.
MIN_CARD_SHARE = 0.10
#: Cards played by more are not compared: too few decks leave them out.
MAX_CARD_SHARE = 0.90
#: Fewest games on each side of a comparison for it to be tested and ranked.
MIN_GAMES = 50
#: Fewest decks on each side of a comparison for it to be tested and ranked.
MIN_DECKS = 10
#: False discovery rate of the Benjamini-Hochberg rule.
FDR = 0.05
#: The copies groups compared besides "any": (label, least copies, most copies).
COPIES_GROUPS: tuple[tuple[str, int, int], ...] = (("1", 1, 1), ("2", 2, 2), ("3+", 3, 1 << 30))


def newcombe_diff(x1: int, n1: int, x2: int, n2: int, z: float = Z_95) -> tuple[float, float, float]:
    """Difference ``x1/n1 - x2/n2`` with Newcombe's hybrid score interval (method 10): (diff, low, high).

    Each proportion gets its Wilson score interval (l1, u1), (l2, u2); then
    low = d - sqrt((p1 - l1)^2 + (u2 - p2)^2) and
    high = d + sqrt((u1 - p1)^2 + (p2 - l2)^2). Both ``n`` must be positive.
    """
    if n1 <= 0 or n2 <= 0:
        raise ValueError(f"newcombe_diff: both samples need trials, got n1={n1!r}, n2={n2!r}")
    p1, p2 = x1 / n1, x2 / n2
    l1, u1 = wilson(x1, n1, z)
    l2, u2 = wilson(x2, n2, z)
    d = p1 - p2
    low = d - math.sqrt((p1 - l1) ** 2 + (u2 - p2) ** 2)
    high = d + math.sqrt((u1 - p1) ** 2 + (p2 - l2) ** 2)
    return d, max(-1.0, low), min(1.0, high)


def fisher_p(w1: int, n1: int, w2: int, n2: int) -> float:
    """Two-sided p-value of Fisher's exact test on wins and losses of two samples.

    As scipy.stats.fisher_exact defines it (the tables with the same margins whose hypergeometric
    probability is at most the observed one's, times 1 + 1e-7, summed), computed over the whole
    support at once from log-gamma: scipy's own call costs a millisecond a table, and an archetype of
    a large partition asks for hundreds (tested equal to scipy's).
    """
    total, wins = n1 + n2, w1 + w2
    lo, hi = max(0, n1 - (total - wins)), min(n1, wins)
    if hi <= lo:
        return 1.0
    k = np.arange(lo, hi + 1, dtype=np.float64)
    log_pmf = (_log_choose(wins, k) + _log_choose(total - wins, n1 - k)) - _log_choose(total, n1)
    observed = log_pmf[int(w1 - lo)]
    keep = log_pmf <= observed + math.log1p(1e-7)
    return float(min(1.0, np.exp(log_pmf[keep]).sum()))


def _log_choose(n, k):
    """log of n choose k (elementwise), from log-gamma."""
    return gammaln(np.asarray(n, dtype=np.float64) + 1) - gammaln(np.asarray(k, dtype=np.float64) + 1) \
        - gammaln(np.asarray(n, dtype=np.float64) - k + 1)


def bh_reject(p_values: Sequence[float], alpha: float = FDR) -> list[bool]:
    """Benjamini-Hochberg step-up decisions: True for each hypothesis rejected at false discovery rate ``alpha``.

    With the p-values sorted p(1) <= ... <= p(m), every hypothesis up to the
    largest k with p(k) <= k / m * alpha is rejected.
    """
    p = np.asarray(p_values, dtype=np.float64)
    m = len(p)
    if m == 0:
        return []
    order = np.argsort(p, kind="stable")
    below = p[order] <= alpha * np.arange(1, m + 1) / m
    out = np.zeros(m, dtype=bool)
    if below.any():
        k = int(np.flatnonzero(below)[-1])
        out[order[:k + 1]] = True
    return out.tolist()


def card_results(counts: sp.csr_matrix, members: np.ndarray, cards: Sequence[str],
                 wins: np.ndarray, losses: np.ndarray) -> tuple[CardResult, ...]:
    """The card results of one archetype (see the module notes).

    ``counts``: copies, one row per deck of the partition, one column per card
    of ``cards``; ``members``: the archetype's rows; ``wins``, ``losses``:
    each member's counts (NaN when not reported, taken as 0). Rows come tested
    comparisons first, largest difference first, then small samples by card
    and copies.
    """
    w = np.nan_to_num(np.asarray(wins, dtype=np.float64)).astype(np.int64)
    lo = np.nan_to_num(np.asarray(losses, dtype=np.float64)).astype(np.int64)
    g = w + lo
    played = g > 0
    if played.sum() < 2 * MIN_DECKS:
        return ()
    rows = members[played]
    w, g = w[played], g[played]
    sub = sp.csc_matrix(counts[rows])
    n = len(rows)
    total_w, total_g = int(w.sum()), int(g.sum())
    share = np.diff(sub.indptr) / n  # each column's nonzeros are the decks playing it
    found: list[dict] = []
    for j in np.flatnonzero((share >= MIN_CARD_SHARE) & (share <= MAX_CARD_SHARE)).tolist():
        lo_, hi_ = sub.indptr[j], sub.indptr[j + 1]
        who, copies = sub.indices[lo_:hi_], sub.data[lo_:hi_]
        with_w, with_g = int(w[who].sum()), int(g[who].sum())
        out_w, out_g, out_d = total_w - with_w, total_g - with_g, n - len(who)
        groups = [("any", np.ones(len(who), dtype=bool))]
        groups += [(label, (copies >= least) & (copies <= most)) for label, least, most in COPIES_GROUPS]
        for label, mask in groups:
            d_with = int(mask.sum())
            if d_with == 0:
                continue
            gw, gg = int(w[who[mask]].sum()), int(g[who[mask]].sum())
            if gg == 0 or out_g == 0:
                continue
            diff, low, high = newcombe_diff(gw, gg, out_w, out_g)
            small = min(gg, out_g) < MIN_GAMES or min(d_with, out_d) < MIN_DECKS
            found.append(dict(card=cards[j], copies=label, decks_with=d_with, wins_with=gw, games_with=gg,
                              decks_without=out_d, wins_without=out_w, games_without=out_g,
                              diff=diff, low=low, high=high, small=small,
                              p_value=None if small else fisher_p(gw, gg, out_w, out_g)))
    tested = [f for f in found if not f["small"]]
    for f, keep in zip(tested, bh_reject([f["p_value"] for f in tested])):
        f["survives"] = keep
    rank = {label: i for i, label in enumerate(["any"] + [c[0] for c in COPIES_GROUPS])}
    tested.sort(key=lambda f: (-f["diff"], f["card"], rank[f["copies"]]))
    small = sorted((f for f in found if f["small"]), key=lambda f: (f["card"], rank[f["copies"]]))
    return tuple(CardResult(**{**f, "diff": round(f["diff"], 6), "low": round(f["low"], 6),
                               "high": round(f["high"], 6),
                               "p_value": None if f["p_value"] is None else float(f"{f['p_value']:.6g}"),
                               "survives": bool(f.get("survives", False))})
                 for f in tested + small)
