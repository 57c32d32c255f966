"""Describing one archetype: signature cards, name, slug, medoid deck, card inclusion.

Inputs are already checked: matrices have one row per deck (sorted by deck
id) and one column per card (sorted by name); ``members`` are ascending row
indices.
"""
from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
import scipy.sparse as sp

from ..model import TIERS, CardLine, DeckLine, SignatureCard



def _rates(present: sp.csr_matrix, members: np.ndarray, against: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Share of member decks playing each card, and of the ``against`` decks (default: all others)."""
    m = present.shape[1]
    inside = np.bincount(present[members].indices, minlength=m).astype(np.float64)
    rate_in = inside / max(len(members), 1)
    if against is not None:
        outside = np.bincount(present[against].indices, minlength=m).astype(np.float64)
        rest = len(against)
    else:
        outside = np.bincount(present.indices, minlength=m).astype(np.float64) - inside
        rest = present.shape[0] - len(members)
    rate_out = outside / rest if rest > 0 else np.zeros(m)
    return rate_in, rate_out


def signature_cards(present: sp.csr_matrix, members: np.ndarray, cards: Sequence[str], top: int = 8) -> tuple[SignatureCard, ...]:
    """The ``top`` cards most typical of the members, ranked by rate_in x (rate_in - rate_out).

    ``rate_in`` is the share of member decks playing the card, ``rate_out``
    the share of the partition's other decks; the card's score (kept with
    it) is the lead ``rate_in - rate_out``. The lead alone ranks a flex card
    half the members play and nobody else does above a core card nearly all
    play that a close variant shares; weighing the lead by ``rate_in`` puts
    the cards nearly every member plays first. Staples every archetype plays
    lead by about 0. Only cards with a positive lead are kept; ties go to the
    higher rate_in, then by card name.
    """
    rate_in, rate_out = _rates(present, members)
    score = rate_in - rate_out
    order = np.lexsort((np.arange(len(cards)), -rate_in, -(rate_in * score)))
    out = []
    for i in order:
        if len(out) == top or score[i] <= 0:
            break
        out.append(SignatureCard(cards[i], round(float(score[i]), 6), round(float(rate_in[i]), 6), round(float(rate_out[i]), 6)))
    return tuple(out)


def best_score(present: sp.csr_matrix, members: np.ndarray, against: np.ndarray | None = None, top: int = 3) -> float:
    """Mean signature score (rate_in - rate_out) of the ``top`` best cards: how much the members stand apart.

    ``rate_out`` is measured on ``against`` (default: every other deck). A
    real archetype has several cards nearly all its decks play and few
    others do (scores near 1); a loose pile of one-off decks, or half of an
    archetype cut in two along one flex card, has not (well below 0.5).
    """
    if len(members) == 0:
        return 0.0
    rate_in, rate_out = _rates(present, members, against)
    # Negative leads (cards others play more) count as 0: a small card pool must not drag the mean down.
    diff = np.clip(np.sort(rate_in - rate_out)[::-1][:top], 0.0, None)
    return float(diff.mean()) if len(diff) else 0.0


def archetype_name(leader: str, signature: Sequence[SignatureCard], n_cards: int, fallback: str) -> str:
    """Default name: leader, a middle dot, then the top signature cards ("A & B", "A, B & C")."""
    names = [s.card for s in signature[:n_cards]]
    if not names:
        return f"{leader} · {fallback}"
    text = names[0] if len(names) == 1 else ", ".join(names[:-1]) + " & " + names[-1]
    return f"{leader} · {text}"


def medoid(vectors, members: np.ndarray | None = None) -> int:
    """Row (from ``members``, default all) with the least total cosine distance to the others.

    Rows must have unit length (dense array or sparse). For unit rows
    sum_j (1 - x_i.x_j) = n - x_i.(sum_j x_j), so one product with the
    column sums gives every total exactly, in one pass. Ties (within
    1e-9 of the least total, i.e. rounding) go to the first row, which is
    the smallest deck id.
    """
    idx = np.arange(vectors.shape[0]) if members is None else np.asarray(members)
    sub = vectors[idx]
    total = np.asarray(sub.sum(axis=0)).ravel()
    dots = np.asarray(sub @ total).ravel()
    scores = len(idx) - dots
    best = np.flatnonzero(scores <= scores.min() + 1e-9)[0]
    return int(idx[best])


def decklist(counts: sp.csr_matrix, row: int, cards: Sequence[str], card_types: dict[str, str]) -> tuple[tuple[DeckLine, ...], int]:
    """One deck's cards as DeckLines sorted by card type then card, and its card total."""
    lo, hi = counts.indptr[row], counts.indptr[row + 1]
    lines = [DeckLine(card_types.get(cards[c], "") or "", cards[c], int(q))
             for c, q in zip(counts.indices[lo:hi], counts.data[lo:hi])]
    lines.sort(key=lambda d: (d.card_type, d.card))
    return tuple(lines), sum(d.quantity for d in lines)


def tier_of(share: float) -> str:
    """Name of the first tier in :data:`TIERS` whose least share the card reaches."""
    for name, least in TIERS:
        if share >= least:
            return name
    return TIERS[-1][0]


def inclusion_table(counts: sp.csr_matrix, members: np.ndarray, cards: Sequence[str], card_types: dict[str, str],
                    min_share: float) -> tuple[CardLine, ...]:
    """Every card played by at least ``min_share`` of the member decks, most played first.

    Per card: share of members playing it, mean copies among those, shares of
    members at exactly 1, exactly 2, and 3 or more copies, and its tier.
    Sorted by share (descending) then card name.
    """
    n = len(members)
    if n == 0:
        return ()
    sub = counts[members]
    m = counts.shape[1]
    idx, q = sub.indices, sub.data
    played = np.bincount(idx, minlength=m).astype(np.float64)
    copies = np.bincount(idx, weights=q, minlength=m)
    at1 = np.bincount(idx[q == 1], minlength=m)
    at2 = np.bincount(idx[q == 2], minlength=m)
    at3 = np.bincount(idx[q >= 3], minlength=m)
    share = played / n
    keep = np.flatnonzero((played > 0) & (share >= min_share - 1e-12))
    keep = keep[np.lexsort((keep, -share[keep]))]
    return tuple(
        CardLine(
            card=cards[c],
            card_type=card_types.get(cards[c], "") or "",
            share=round(float(share[c]), 6),
            mean_copies=round(float(copies[c] / played[c]), 6),
            at_1=round(float(at1[c] / n), 6),
            at_2=round(float(at2[c] / n), 6),
            at_3_plus=round(float(at3[c] / n), 6),
            tier=tier_of(float(share[c])),
        )
        for c in keep
    )


def profile(present: sp.csr_matrix, members: np.ndarray, cards: Sequence[str], least: float = 0.02) -> dict[str, float]:
    """Card -> share of member decks playing it, for cards at ``least`` share or more (by card name)."""
    if len(members) == 0:
        return {}
    rate = np.bincount(present[members].indices, minlength=present.shape[1]) / len(members)
    return {cards[c]: round(float(rate[c]), 6) for c in np.flatnonzero(rate >= least)}


def results(wins: pd.Series, losses: pd.Series) -> tuple[int, int, bool]:
    """Summed wins and losses (missing counts as 0) and whether any result was given."""
    w = pd.to_numeric(wins, errors="coerce")
    l_ = pd.to_numeric(losses, errors="coerce")
    known = bool(w.notna().any() or l_.notna().any())
    return int(w.fillna(0).sum()), int(l_.fillna(0).sum()), known
