"""Rounds of placing every deck by card rates (:mod:`.card_rates`), as :func:`.membership.settle`
runs them once the groups are found: hard rounds, each fitted on the labels the round before left,
then soft rounds, each fitted on every deck's chances of belonging to each group."""
from __future__ import annotations

from dataclasses import replace
from typing import Sequence

import numpy as np

from .card_rates import CardRates, fit_rates, kept_rates, likeliest, place, scores

#: Rounds of placing every deck by card rates, each on the groups the round before left.
RATE_ROUNDS = 2
#: Last rounds of card rates fitted on each deck's chances of belonging to each group (:func:`soft_rounds`).
SOFT_ROUNDS = 3


def compact(labels: np.ndarray) -> np.ndarray:
    """Labels renumbered 0..k-1 in order of their old number; -1 stays -1."""
    labels = np.asarray(labels)
    keys = np.unique(labels[labels >= 0])
    out = np.full(len(labels), -1)
    out[labels >= 0] = np.searchsorted(keys, labels[labels >= 0])
    return out


def place_round(copies, labels, null_copies, least, full_size, own: Sequence[np.ndarray] = ()
                ) -> tuple[np.ndarray, CardRates, int, np.ndarray]:
    """One round: rates fitted on ``labels``, every deck placed by them; groups left under ``least``
    decks given up (fewest first, one at a time) and the round placed again without them. ``full_size``:
    a full deck's copies, which shorter decks are read against. ``own``:
    member sets of small groups of their own, each fitted as a group whose decks are other decks.
    Returns the labels, the rates, the groups given up and each deck's likeliest row of the rates."""
    given_up = 0
    while True:
        k = int(labels.max(initial=-1)) + 1
        fit = labels.copy()
        for j, members in enumerate(own):
            fit[members] = k + j
        rates = fit_rates(copies, fit, k + len(own), null_copies, float(least), full_size, pooled=k)
        rates = replace(rates, archetypes=k)
        row = likeliest(copies, rates)
        placed = place(copies, rates, row=row)
        sizes = np.bincount(placed[placed >= 0], minlength=k)
        if k == 0 or sizes.min() >= least:  # every archetype row kept (sizes > 0), so ``row`` holds
            return compact(placed), kept_rates(rates, sizes > 0), given_up, row
        worst = int(np.argmin(sizes))
        labels = compact(np.where(labels == worst, -1, labels))
        given_up += 1


def soft_rounds(copies, labels, rates: CardRates, row, null_copies, least, full_size
                ) -> tuple[np.ndarray, CardRates, np.ndarray]:
    """:data:`SOFT_ROUNDS` rounds of refitting every row of ``rates`` (archetypes, small groups of
    their own, other decks) on each deck's chance of belonging to it under the rates before, rather
    than on the row it is likeliest in, then placing every deck again. Fitted on hard labels, a
    variant's rates of its own cards are too high, for its decks that lack them went to its parent;
    its parent's too low; so still more of them go there. A round that would leave an archetype
    under ``least`` decks is not taken, and the rounds stop. Returns the labels, rates and rows."""
    k = rates.n_archetypes
    for _ in range(SOFT_ROUNDS):
        score = scores(copies, rates)
        chance = np.exp(score - score.max(axis=1, keepdims=True))
        chance /= chance.sum(axis=1, keepdims=True)
        soft = replace(fit_rates(copies, None, chance.shape[1] - 1, null_copies, float(least), full_size,
                                 weights=chance, pooled=k), archetypes=k)
        now = likeliest(copies, soft)
        placed = place(copies, soft, row=now)
        if np.bincount(placed[placed >= 0], minlength=k).min() < least:
            break
        labels, rates, row = placed, soft, now
    return labels, rates, row
