"""Describing archetypes: medoid against brute force, signature cards, inclusion tables, names, slugs."""
from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.spatial.distance import cdist

from sitegen.analysis import describe, features
from sitegen.model import TIERS, SignatureCard


def _unit_rows(seed: int, n: int, d: int, sparse: bool):
    rng = np.random.default_rng(seed)
    x = rng.random((n, d)) * (rng.random((n, d)) < 0.4)
    x[:, 0] += 0.01  # no all-zero rows (cosine distance is undefined for them)
    x = features.l2_rows(x)
    return sp.csr_matrix(x) if sparse else x


@pytest.mark.parametrize("sparse", [False, True])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_medoid_equals_brute_force_cosine_argmin(sparse, seed):
    # Reference: scipy.spatial.distance.cdist(metric="cosine"), summed per row, argmin.
    x = _unit_rows(seed, 80, 12, sparse)
    dense = x.toarray() if sparse else x
    expected = int(np.argmin(cdist(dense, dense, metric="cosine").sum(axis=1)))
    assert describe.medoid(x) == expected
    members = np.arange(5, 80, 3)
    sub = dense[members]
    expected_sub = int(members[np.argmin(cdist(sub, sub, metric="cosine").sum(axis=1))])
    assert describe.medoid(x, members) == expected_sub


def test_medoid_tie_goes_to_first_row():
    # Rows 1 and 3 are the same deck; either is a medoid, the first (smallest deck id) wins.
    x = features.l2_rows(np.array([[1.0, 0.0], [1.0, 1.0], [0.0, 1.0], [1.0, 1.0]]))
    assert describe.medoid(x) == 1


def test_signature_cards_by_hand():
    # 4 decks, members 0 and 1. Card A: in 2/2 vs 0/2 -> 1.0; card B: 2/2 vs 2/2 -> 0 (dropped);
    # card C: 1/2 vs 0/2 -> 0.5.
    present = sp.csr_matrix(np.array([[1, 1, 1], [1, 1, 0], [0, 1, 0], [0, 1, 0]], dtype=float))
    sig = describe.signature_cards(present, np.array([0, 1]), ["A", "B", "C"])
    assert [(s.card, s.score, s.rate_in, s.rate_out) for s in sig] == [("A", 1.0, 1.0, 0.0), ("C", 0.5, 0.5, 0.0)]


def test_best_score_against_siblings():
    # Mean lead of the top 3 cards; measured against a chosen group, not the whole partition.
    present = sp.csr_matrix(np.array([[1, 1, 1, 0], [1, 1, 1, 0], [0, 0, 1, 1], [0, 0, 0, 1]], dtype=float))
    assert describe.best_score(present, np.array([0, 1])) == pytest.approx((1 + 1 + 0.5) / 3)
    assert describe.best_score(present, np.array([0, 1]), np.array([3])) == pytest.approx(1.0)


def test_inclusion_table_by_hand():
    # 4 member decks of 5. Card "Ash": copies 1, 2, 3, 3 -> share 1, mean 2.25, at 1/2/3+ = .25/.25/.5.
    # "Bell": in 1 of 4 -> share .25, below a 0.3 floor -> left out. "Cairn": 2 of 4 at 2 copies.
    counts = sp.csr_matrix(np.array([
        [1, 0, 2], [2, 0, 2], [3, 0, 0], [3, 1, 0], [0, 3, 3],
    ], dtype=float))
    table = describe.inclusion_table(counts, np.array([0, 1, 2, 3]), ["Ash", "Bell", "Cairn"],
                                     {"Ash": "Vassal"}, 0.3)
    assert [c.card for c in table] == ["Ash", "Cairn"]
    ash, cairn = table
    assert (ash.share, ash.mean_copies, ash.at_1, ash.at_2, ash.at_3_plus) == (1.0, 2.25, 0.25, 0.25, 0.5)
    assert (ash.card_type, cairn.card_type) == ("Vassal", "")
    assert (cairn.share, cairn.mean_copies, cairn.at_2) == (0.5, 2.0, 0.5)
    assert ash.tier == TIERS[0][0] and cairn.tier == "regular"


def test_tiers_follow_the_model_table():
    # Each tier starts at its least share (sitegen.model.TIERS), most played first.
    for name, least in TIERS:
        assert describe.tier_of(least) == name
    assert describe.tier_of(0.0) == TIERS[-1][0]


def test_decklist_grouped_by_type_then_card():
    counts = sp.csr_matrix(np.array([[2, 1, 3]], dtype=float))
    lines, total = describe.decklist(counts, 0, ["Bell", "Ash", "Cairn"], {"Bell": "Ritual", "Cairn": "Omen"})
    assert [(d.card_type, d.card, d.quantity) for d in lines] == [("", "Ash", 1), ("Omen", "Cairn", 3), ("Ritual", "Bell", 2)]
    assert total == 6


def test_archetype_name_format():
    sig = [SignatureCard(c, 1.0, 1.0, 0.0) for c in ("Gilded Quarrel", "Ashen Ledger", "Pale Urn")]
    assert describe.archetype_name("Orsolya", sig, 2, "x") == "Orsolya · Gilded Quarrel & Ashen Ledger"
    assert describe.archetype_name("Orsolya", sig, 3, "x") == "Orsolya · Gilded Quarrel, Ashen Ledger & Pale Urn"
    assert describe.archetype_name("Orsolya", [], 2, "archetype 1") == "Orsolya · archetype 1"


