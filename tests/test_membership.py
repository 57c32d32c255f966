"""The archetype rule: centres, random-deck cuts, own cards, leave-one-out scores, placement, stability."""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
import scipy.sparse as sp
from sklearn.metrics import jaccard_score
from sklearn.metrics.pairwise import cosine_similarity
from statsmodels.stats.contingency_tables import Table2x2

from sitegen.analysis import card_rates, features, membership, random_decks, stability
from sitegen.analysis.params import AnalysisParams
from sitegen.analysis.partition import analyse_partition
from sitegen.model import OTHER_KEY

from _planted import planted_partition


def _rows(seed=0, n=60, m=30, p=0.2):
    rng = np.random.default_rng(seed)
    dense = (rng.random((n, m)) < p).astype(float)
    dense[:, 0] = 1.0  # no empty deck
    counts = sp.csr_matrix(dense)
    return counts, features.tfidf(counts)


def test_centres_are_unit_means_of_the_rows():
    # Reference: numpy's mean of each group's rows, scaled by numpy.linalg.norm.
    _, w = _rows()
    labels = np.arange(60) % 3
    ours = membership.centres_of(w, labels, 3)
    dense = w.toarray()
    for c in range(3):
        mean = dense[labels == c].mean(axis=0)
        np.testing.assert_allclose(ours[c], mean / np.linalg.norm(mean), atol=1e-12)


def test_similarities_equal_scikit_learn_cosine():
    # Reference: sklearn.metrics.pairwise.cosine_similarity.
    _, w = _rows(1)
    centres = membership.centres_of(w, np.arange(60) % 4, 4)
    np.testing.assert_allclose(membership.similarities(w, centres), cosine_similarity(w, centres), atol=1e-12)


def test_leave_one_out_similarity_by_brute_force():
    # Each member against the mean of the others, by scikit-learn's cosine_similarity.
    _, w = _rows(2)
    members = np.arange(0, 60, 3)
    ours = membership.loo_similarity(w, members)
    dense = w.toarray()
    for i, m in enumerate(members):
        rest = dense[np.setdiff1d(members, [m])].mean(axis=0, keepdims=True)
        assert ours[i] == pytest.approx(cosine_similarity(dense[[m]], rest)[0, 0], abs=1e-9)


def test_own_group_scored_without_the_deck_itself():
    # A deck's own group's centre is taken without it; other groups' centres whole (brute force as above).
    _, w = _rows(3)
    labels = np.arange(60) % 3
    labels[5] = -1
    ours = membership._own_out_similarities(w, labels, 3)
    dense = w.toarray()
    for d in (0, 1, 5, 7):
        for c in range(3):
            members = np.flatnonzero(labels == c)
            if labels[d] == c:
                members = members[members != d]
            mean = dense[members].mean(axis=0, keepdims=True)
            assert ours[d, c] == pytest.approx(cosine_similarity(dense[[d]], mean)[0, 0], abs=1e-9)


def _presence(groups):
    """A presence matrix from (n decks, {card: share}) per group, cards played by the first share of decks."""
    rows = []
    for n, plays in groups:
        for i in range(n):
            rows.append([1.0 if i < round(share * n) else 0.0 for share in plays])
    return sp.csr_matrix(np.array(rows))


def test_a_variant_is_distinct_and_a_flex_cut_is_not():
    # Cards: 0-1 core of both, 2 parent only, 3 variant only, 4-5 flex played independently.
    rng = np.random.default_rng(0)
    n_parent, n_variant = 80, 40
    present = np.zeros((n_parent + n_variant, 6))
    present[:, :2] = 1
    present[:n_parent, 2] = np.arange(n_parent) % 5 != 0  # 80 % of the parent's decks
    present[n_parent:, 3] = np.arange(n_variant) % 10 < 7  # 70 % of the variant's decks
    present[:, 4] = rng.random(n_parent + n_variant) < 0.4
    present[:, 5] = rng.random(n_parent + n_variant) < 0.4
    present = sp.csr_matrix(present)
    parent, variant = np.arange(n_parent), np.arange(n_parent, n_parent + n_variant)
    assert membership.distinct(present, parent, variant, strict=True)
    # A cut of the parent along flex card 4 (played by one piece only) finds no card of the other piece's own.
    dense = present.toarray()
    with4, without4 = parent[dense[parent, 4] == 1], parent[dense[parent, 4] == 0]
    assert not membership.distinct(present, with4, without4, strict=True)
    # Cut along flex cards 4 and 5 at once: each piece "owns" one, but the two play independently.
    only4 = parent[(dense[parent, 4] == 1) & (dense[parent, 5] == 0)]
    only5 = parent[(dense[parent, 4] == 0) & (dense[parent, 5] == 1)]
    assert membership.distinct(present, only4, only5)  # the lenient test alone would keep them apart
    both = np.concatenate([only4, only5])
    everyone = parent  # across the whole parent group, 4 and 5 are independent: no exclusion
    table = Table2x2(np.array([[np.sum((dense[everyone, 4] == 1) & (dense[everyone, 5] == 1)),
                                np.sum((dense[everyone, 4] == 1) & (dense[everyone, 5] == 0))],
                               [np.sum((dense[everyone, 4] == 0) & (dense[everyone, 5] == 1)),
                                np.sum((dense[everyone, 4] == 0) & (dense[everyone, 5] == 0))]]))
    q = (table.oddsratio - 1) / (table.oddsratio + 1)  # Yule's Q from statsmodels' odds ratio
    assert q > membership.EXCLUSION
    assert len(both) > 0


def _two_card_decks(both: int, only_x: int, only_y: int, neither: int) -> sp.csr_matrix:
    """Decks over cards x, y in the four cells of a 2x2 table, in that order."""
    rows = [[1, 1]] * both + [[1, 0]] * only_x + [[0, 1]] * only_y + [[0, 0]] * neither
    return sp.csr_matrix(np.array(rows, dtype=float))


def test_a_cut_needs_its_pair_to_pass_fishers_test_and_a_variant_does():
    # A cut k-means drew through one archetype of 40 decks along two flex cards: x on one piece, y on
    # the other. Across all 40 they met once: Q about -0.85, yet chance gives such a table about 1 time
    # in 130 (scipy's Fisher exact test, one-sided), so the cut is not kept.
    from scipy.stats import fisher_exact

    present = _two_card_decks(1, 15, 11, 13)
    a = np.r_[0:16, 27:32]  # x's decks and 5 of those playing neither
    b = np.setdiff1d(np.arange(40), a)
    assert membership.yules_q(1, 15, 11, 13) <= membership.EXCLUSION
    p = fisher_exact([[1, 15], [11, 13]], alternative="less").pvalue
    assert membership.SPLIT_P < p < 0.05
    assert membership.distinct(present, a, b, strict=True)  # two groups found apart by density stay apart
    assert not membership.distinct(present, a, b, strict=True, p_max=membership.SPLIT_P)
    # A variant of 10 decks cut from its parent's 40: its own card x on 8 of its decks and 2 of the
    # parent's, the parent's own card y on 33 of the parent's and none of its: p about 3e-5, kept.
    present = _two_card_decks(0, 10, 33, 7)
    variant = np.r_[0:8, 43:45]
    parent = np.setdiff1d(np.arange(50), variant)
    assert fisher_exact([[0, 10], [33, 7]], alternative="less").pvalue < membership.SPLIT_P
    assert membership.distinct(present, variant, parent, strict=True, p_max=membership.SPLIT_P)


def test_a_small_variant_inside_a_group_is_cut_out_by_its_own_card():
    # Planted: 90 decks of a parent (core cards 0-5) and 10 of a variant that keeps cards 0-3, drops
    # 4-5 and plays its own cards 6-7; both play flex cards 8-13 independently at 40%. The variant's
    # own card cuts it out; the parent alone, cut along any flex card, gives nothing.
    rng = np.random.default_rng(3)
    n_parent, n_variant = 90, 10
    dense = np.zeros((n_parent + n_variant, 14))
    dense[:, :4] = rng.random((n_parent + n_variant, 4)) < 0.9
    dense[:n_parent, 4:6] = rng.random((n_parent, 2)) < 0.9
    dense[n_parent:, 6:8] = rng.random((n_variant, 2)) < 0.9
    dense[:, 8:] = rng.random((n_parent + n_variant, 6)) < 0.4
    decks = membership.DeckCards.of(sp.csr_matrix(dense))
    everyone = np.arange(n_parent + n_variant)
    own = membership._card_cut(decks, everyone, 6, seed=0)
    assert own is not None
    variant = set(range(n_parent, n_parent + n_variant))
    assert len(set(own.tolist()) & variant) >= 0.8 * len(own) and len(set(own.tolist()) & variant) >= 7
    assert membership._card_cut(decks, np.arange(n_parent), 6, seed=0) is None


def test_a_variant_too_small_for_an_archetype_is_cut_out_of_its_parent_as_other_decks():
    # Planted: an archetype of 600 decks (core cards 0-5 at 85%) holding a variant of 24 decks that keeps
    # cards 0-3, drops 4-5 and plays its own cards 6-7 at 85%; every deck plays 40 flex cards (8-47)
    # independently at 2-40%. least = 50 (2% of 2 500 decks): the variant is too small for an
    # archetype, and its own card cuts it out as a small group of its own; the parent alone gives none.
    rng = np.random.default_rng(11)
    n_parent, n_variant, least = 600, 24, 50
    n = n_parent + n_variant
    dense = np.zeros((n, 48))
    dense[:, :4] = rng.random((n, 4)) < 0.85
    dense[:n_parent, 4:6] = rng.random((n_parent, 2)) < 0.85
    dense[n_parent:, 6:8] = rng.random((n_variant, 2)) < 0.85
    dense[:, 8:] = rng.random((n, 40)) < rng.uniform(0.02, 0.4, 40)
    decks = membership.DeckCards.of(sp.csr_matrix(dense))
    labels = np.zeros(n, dtype=int)
    cuts = membership._own_cuts(decks, labels, 1, least, seed=0, found=[])
    assert len(cuts) == 1
    variant = set(range(n_parent, n))
    caught = set(cuts[0].tolist())
    assert len(caught & variant) >= 0.9 * len(caught) and len(caught & variant) >= 0.7 * n_variant
    assert membership._own_cuts(decks, labels[:n_parent], 1, least, seed=0, found=[]) == []
    # A group already found for the same decks is not found twice.
    assert membership._own_cuts(decks, labels, 1, least, seed=0, found=[cuts[0]]) == []


def test_a_small_cut_holds_every_pair_to_its_bonferroni_share():
    # A pair with Q between -0.8 and -0.5 passes on a one-sided Fisher p under 1e-6 (scipy's
    # fisher_exact) for two groups found apart; a small cut, picked from many pairs, must also bring
    # the p under its own share of the family-wise level (``p_max``).
    from scipy.stats import fisher_exact

    present = _two_card_decks(7, 29, 1491, 892)
    a = np.arange(36)
    b = np.setdiff1d(np.arange(7 + 29 + 1491 + 892), a)
    q = membership.yules_q(7, 29, 1491, 892)
    p = fisher_exact([[7, 29], [1491, 892]], alternative="less").pvalue
    assert membership.EXCLUSION < q <= membership.EXCLUSION_LOOSE
    assert 1e-8 < p < membership.EXCLUSION_P
    rates = (np.array([1.0, 7 / 36]), np.asarray(present[b].mean(axis=0)).ravel())
    assert membership.distinct(present, a, b, *rates, strict=True)
    assert not membership.distinct(present, a, b, *rates, strict=True, p_max=1e-8)


def test_yules_q_of_the_exclusion_check_matches_statsmodels():
    # Two own cards that never meet: Yule's Q is -1 (statsmodels' odds ratio is 0 there).
    present = sp.csr_matrix(np.array([[1, 0]] * 10 + [[0, 1]] * 10 + [[0, 0]] * 5, dtype=float))
    a, b = np.arange(10), np.arange(10, 25)
    assert membership.distinct(present, a, b, strict=True)
    assert membership.yules_q(0, 10, 10, 5) == -1.0
    # Reference: Yule's Q = (OR - 1) / (OR + 1) with statsmodels' Table2x2 odds ratio, on tables without zeros.
    for a, b, c, d in ((3, 10, 12, 5), (20, 4, 6, 30), (7, 7, 7, 7)):
        ratio = Table2x2(np.array([[a, b], [c, d]])).oddsratio
        assert membership.yules_q(a, b, c, d) == pytest.approx((ratio - 1) / (ratio + 1))


def test_cuts_are_quantiles_of_random_decks_over_the_centres():
    # Reference: numpy.quantile at 1 - (1 - NULL_QUANTILE) / k of the random decks' similarities to each centre.
    counts, w = _rows(4)
    centres = membership.centres_of(w, np.arange(60) % 2, 2)
    null, _ = random_decks.null_rows(features.presence(counts), features.idf(counts), np.zeros(30, bool), 500, 0)
    assert null.shape == (500, 30)
    np.testing.assert_allclose(np.asarray(null.multiply(null).sum(axis=1)).ravel(), 1.0)
    ref = np.quantile(cosine_similarity(null, centres), 1 - (1 - membership.NULL_QUANTILE) / 2, axis=0)
    np.testing.assert_allclose(membership.cuts_for(null, centres), ref)


def test_random_decks_keep_staples_and_size():
    counts, _ = _rows(5)
    present = features.presence(counts)
    staples = np.zeros(30, bool)
    staples[0] = True
    null, copies = random_decks.null_rows(present, features.idf(counts), staples, 200, 1)
    assert (null[:, 0].toarray() > 0).all()  # card 0 is in every deck and is a staple
    sizes = np.diff(null.indptr)
    assert sizes.min() >= 1 and sizes.max() <= np.diff(present.indptr).max()
    assert (copies != 0).toarray().tolist() == (null != 0).toarray().tolist()


def test_random_decks_keep_staple_copies_and_draw_levels_a_card_is_played_at():
    # Planted: card 0 (a staple) at 3 copies in every deck; cards 1-9 always at 1 copy, cards 10-19
    # at 2 or 3. A random deck keeps its staple's copies and plays each fresh card at a level that
    # card is played at in the data, so random decks look no likelier at any level than real decks.
    rng = np.random.default_rng(4)
    dense = (rng.random((80, 20)) < 0.3) * np.where(np.arange(20) < 10, 1.0, rng.integers(2, 4, (80, 20)))
    dense[:, 0] = 3.0
    counts = sp.csr_matrix(dense)
    staples = np.zeros(20, bool)
    staples[0] = True
    _, copies = random_decks.null_rows(counts, features.idf(counts), staples, 300, 2)
    held = copies.toarray()
    assert (held[:, 0] == 3).all()
    assert set(np.unique(held[:, 1:10])) <= {0.0, 1.0} and set(np.unique(held[:, 10:])) <= {0.0, 2.0, 3.0}
    assert (held[:, 10:] == 2).any() and (held[:, 10:] == 3).any()


def test_copy_levels_worked_by_hand():
    # Worked by hand from fit_rates' formula: among a group's decks playing a card, the share at each
    # level, drawn towards the partition's mix by LEVEL_SMOOTHING = 1 deck. Card 0: group 0 plays it at
    # 3, 3, 1 copies, group 1 at 1, 1; partition mix: 3 of 5 at 1 copy, 2 of 5 at 3 or more.
    assert card_rates.LEVEL_SMOOTHING == 1.0 and card_rates.LEVELS == 3
    counts = sp.csr_matrix(np.array([[3, 1], [3, 1], [1, 1], [1, 1], [1, 1]], dtype=float))
    rates = card_rates.fit_rates(counts, np.array([0, 0, 0, 1, 1]), 2, sp.csr_matrix((0, 2)), 0.0)
    lv = rates.levels  # columns: card 0 at 1, card 1 at 1, card 0 at 2, card 1 at 2, card 0 at 3+, card 1 at 3+
    assert lv.shape == (3, 6)
    np.testing.assert_allclose(np.exp(lv[0, [0, 4]]), [(1 + 3 / 5) / 4, (2 + 2 / 5) / 4])
    np.testing.assert_allclose(np.exp(lv[1, [0, 4]]), [(2 + 3 / 5) / 3, (0 + 2 / 5) / 3])
    assert (lv[:2, 2] == card_rates.LEVEL_FLOOR).all()  # no deck plays card 0 at 2 copies
    np.testing.assert_allclose(lv[:2, 1], 0.0)  # card 1 is only ever played at 1 copy: its level says nothing
    # A deck at 3 copies of card 0 now leans to group 0, at 1 copy to group 1, by the shares' ratio.
    both = card_rates.scores(sp.csr_matrix(np.array([[3.0, 1], [1, 1]])), rates)
    plain = card_rates.scores(sp.csr_matrix(np.array([[1.0, 1], [1, 1]])), rates)
    np.testing.assert_allclose(both[0, :2] - plain[1, :2], lv[:2, 4] - lv[:2, 0])


def test_presence_alone_is_read_as_one_copy_of_each_card():
    # Where every deck plays every card at one copy, the levels add nothing: the scores are the
    # presence scores (the BernoulliNB test below then holds for the whole rule).
    counts, _ = _rows(8, n=50, m=12, p=0.4)
    rates = card_rates.fit_rates(counts, np.repeat([0, 1, -1], [20, 20, 10]), 2, sp.csr_matrix((0, 12)), 0.0)
    np.testing.assert_allclose(card_rates.scores(counts, rates),
                               counts.toarray() @ rates.log_odds.T + rates.constants, atol=1e-12)


def test_every_deck_is_placed_by_the_stored_rule():
    # The build's rule, stored with the result, places every deck of the data exactly where the build did.
    part, truth, _ = planted_partition(800, 5, seed=3, variants=1, brew_share=0.05)
    result = analyse_partition(part, AnalysisParams())
    rule = result.placement
    ids = result.assignments["deck_id"].tolist()
    counts, cards = features.build_matrix(part.cards, ids)
    assert cards == rule.cards
    w = features.tfidf(counts)
    placed = card_rates.place(counts, rule.rates())
    sims = membership.similarities(w, rule.centres)
    sim = np.where(placed >= 0, sims[np.arange(len(placed)), np.maximum(placed, 0)], sims.max(axis=1))
    keys = np.array([rule.keys[p] if p >= 0 else OTHER_KEY for p in placed], dtype=object)
    np.testing.assert_array_equal(keys, result.assignments["archetype"].to_numpy())
    np.testing.assert_allclose(result.assignments["distance"].to_numpy(), np.round(1 - sim, 4), atol=1e-12)
    assert (keys == OTHER_KEY).sum() >= 0.8 * (truth == "brew").sum()  # most planted brews are other decks


def test_jaccard_best_equals_scikit_learn():
    # Reference: sklearn.metrics.jaccard_score on the two boolean memberships.
    members = np.array([1, 1, 1, 0, 0, 0, 1, 0], bool)
    labels = np.array([0, 0, 1, 1, 1, -1, 0, 2])
    best = max(jaccard_score(members, labels == c) for c in (0, 1, 2))
    assert stability.jaccard_best(members, labels) == pytest.approx(best)
    assert stability.jaccard_best(members, np.full(8, -1)) == 0.0


def test_stability_of_a_fixed_rule_is_one_and_of_noise_lower():
    labels = np.repeat([0, 1, 2], 100)
    same = stability.stability(labels, lambda half: labels[half], seed=0, runs=4)
    np.testing.assert_allclose(same, 1.0)
    rng = np.random.default_rng(0)
    noise = stability.stability(labels, lambda half: rng.integers(0, 3, len(half)), seed=0, runs=4)
    assert (noise < stability.WEAK).all()
    assert stability.words(0.9) == "clear group" and stability.words(0.6) == "loose group"
    assert stability.words(0.3) == "weak group"


def test_a_leader_with_one_archetype_keeps_its_decks():
    # Planted truth: every deck is of the one archetype. With one group there is nothing to tell its
    # core from the leader's staples, so random decks may not keep them (they did, and 8-11% of these
    # decks fell to the other decks).
    for seed in (0, 1, 2):
        part, truth, _ = planted_partition(800, 1, seed=seed, variants=0, brew_share=0.0)
        result = analyse_partition(part, AnalysisParams())
        assert len(result.archetypes) == 1
        assert (result.assignments["archetype"] != OTHER_KEY).mean() >= 0.98


def test_staples_need_two_groups_and_score_nothing():
    # A card at least half of every group plays is a staple only when there are two groups or more;
    # centres are made blind to staples, so a random deck keeping them gains nothing from them.
    present = sp.csr_matrix(np.array([[1, 1, 0], [1, 1, 0], [1, 0, 1], [1, 0, 1]], dtype=float))
    assert membership._staples(present, np.array([0, 0, 0, 0]), 1).tolist() == [False, False, False]
    assert membership._staples(present, np.array([0, 0, 1, 1]), 2).tolist() == [True, False, False]
    assert membership._staples(present, np.array([0, 0, 1, -1]), 3).tolist() == [True, False, False]
    blind = membership._blind(present, np.array([True, False, False]))
    assert blind[:, 0].nnz == 0 and blind[:, 1:].toarray().tolist() == present[:, 1:].toarray().tolist()


def test_card_rates_are_scikit_learn_bernoulli_naive_bayes():
    # Reference: sklearn.naive_bayes.BernoulliNB (alpha = RATE_SMOOTHING, class priors from the weighted
    # class counts) fitted on the groups' decks and the other decks, the random decks weighing null_weight
    # decks in all; place() must pick what its predict() picks, the other decks' row standing for -1.
    from sklearn.naive_bayes import BernoulliNB

    counts, _ = _rows(6, n=90, m=25, p=0.3)
    present = features.presence(counts)
    labels = np.repeat([0, 1, 2, -1], [30, 25, 20, 15])
    null = features.presence(_rows(7, n=40, m=25, p=0.25)[0])
    rates = card_rates.fit_rates(present, labels, 3, null, 12.0)
    x = sp.vstack([present, null]).toarray()
    y = np.concatenate([np.where(labels >= 0, labels, 3), np.full(40, 3)])
    weight = np.concatenate([np.ones(90), np.full(40, 12.0 / 40)])
    nb = BernoulliNB(alpha=card_rates.RATE_SMOOTHING, force_alpha=True).fit(x, y, sample_weight=weight)
    # The other decks' rates are capped at the random decks' own (BernoulliNB fitted on them alone).
    alone = BernoulliNB(alpha=card_rates.RATE_SMOOTHING, force_alpha=True).fit(null.toarray(), np.zeros(40))
    capped = np.minimum(nb.feature_log_prob_[3], alone.feature_log_prob_[0])
    assert (capped < nb.feature_log_prob_[3]).any()
    nb.feature_log_prob_[3] = capped
    np.testing.assert_allclose(rates.log_odds, nb.feature_log_prob_ - np.log1p(-np.exp(nb.feature_log_prob_)), atol=1e-12)
    np.testing.assert_allclose(present.toarray() @ rates.log_odds.T + rates.constants,
                               nb.predict_joint_log_proba(present.toarray()), atol=1e-9)
    expected = nb.predict(present.toarray())
    np.testing.assert_array_equal(card_rates.place(present, rates), np.where(expected == 3, -1, expected))
    assert (card_rates.place(present, rates) == -1).any() and len(set(card_rates.place(present, rates))) == 4


def test_card_rates_on_chances_are_scikit_learn_bernoulli_naive_bayes_on_weighted_copies():
    # Reference: sklearn.naive_bayes.BernoulliNB fitted on every deck once per group, weighted by its
    # chance of belonging to that group (the M step of expectation-maximisation for a Bernoulli
    # mixture), the random decks with the other decks as above. One-hot chances give the hard labels' fit.
    from sklearn.naive_bayes import BernoulliNB

    counts, _ = _rows(8, n=60, m=20, p=0.3)
    present = features.presence(counts)
    null = features.presence(_rows(9, n=30, m=20, p=0.25)[0])
    rng = np.random.default_rng(10)
    chance = rng.dirichlet(np.full(4, 0.7), size=60)
    rates = card_rates.fit_rates(present, None, 3, null, 9.0, weights=chance)
    x = np.vstack([np.tile(present.toarray(), (4, 1)), null.toarray()])
    y = np.concatenate([np.repeat(np.arange(4), 60), np.full(30, 3)])
    weight = np.concatenate([chance.T.ravel(), np.full(30, 9.0 / 30)])
    nb = BernoulliNB(alpha=card_rates.RATE_SMOOTHING, force_alpha=True).fit(x, y, sample_weight=weight)
    alone = BernoulliNB(alpha=card_rates.RATE_SMOOTHING, force_alpha=True).fit(null.toarray(), np.zeros(30))
    nb.feature_log_prob_[3] = np.minimum(nb.feature_log_prob_[3], alone.feature_log_prob_[0])
    np.testing.assert_allclose(rates.log_odds, nb.feature_log_prob_ - np.log1p(-np.exp(nb.feature_log_prob_)), atol=1e-12)
    np.testing.assert_allclose(present.toarray() @ rates.log_odds.T + rates.constants,
                               nb.predict_joint_log_proba(present.toarray()), atol=1e-9)
    labels = rng.integers(-1, 3, 60)
    onehot = np.eye(4)[np.where(labels >= 0, labels, 3)]
    hard, soft = card_rates.fit_rates(counts, labels, 3, null, 9.0), card_rates.fit_rates(counts, None, 3, null, 9.0,
                                                                                           weights=onehot)
    np.testing.assert_allclose(soft.log_odds, hard.log_odds, atol=1e-12)
    np.testing.assert_allclose(soft.constants, hard.constants, atol=1e-12)
    np.testing.assert_allclose(soft.levels, hard.levels, atol=1e-12)


def test_pooled_strength_recovers_a_planted_beta_prior():
    # Planted with scipy.stats.betabinom: each group's plays of card 0 are beta-binomial with a + b = 20
    # (mean 0.3), so the method of moments for the beta-binomial (from memory: the spread of the groups'
    # rates beyond binomial sampling is p(1-p)/(a+b+1)) must give back about 20; card 1 is played at one
    # rate by every group (a deck's fill): the groups differ by sampling alone, a strength far above any
    # group's size; card 2 is a core card of half the groups: about 0, each group its own rate.
    from scipy.stats import betabinom, binom

    rng = np.random.default_rng(11)
    reach = rng.integers(30, 200, 3000).astype(np.float64)
    counts = np.column_stack([
        betabinom(reach.astype(int), 6.0, 14.0).rvs(random_state=rng),
        binom(reach.astype(int), 0.05).rvs(random_state=rng),
        binom(reach.astype(int), np.where(np.arange(3000) % 2, 0.9, 0.02)).rvs(random_state=rng),
        np.zeros(3000)]).astype(np.float64)
    strength, pooled = card_rates.pooled_strength(counts, reach)
    assert strength[0] == pytest.approx(20.0, rel=0.15) and pooled[0] == pytest.approx(0.3, abs=0.01)
    assert strength[1] > 1000 and strength[2] < 0.5 and strength[3] == 0.0 and pooled[3] == 0.0
    one_group, _ = card_rates.pooled_strength(counts[:1], reach[:1])
    assert (one_group == 0).all()


def test_pooled_card_rates_are_each_groups_beta_posterior_mean():
    # Reference: scipy.stats.beta, the posterior of a binomial rate under the prior Beta(s p, s (1 - p))
    # (s: pooled_strength's weight, p: the pooled rate) with the add-half on top, is Beta(s p + c + 0.5,
    # s (1 - p) + n - c + 0.5) for c plays in n decks: each group's rate must be its mean. The other
    # decks' row is not pooled. A card played alike by every group is then read alike in all of them.
    from scipy.stats import beta

    counts, _ = _rows(12, n=120, m=30, p=0.2)
    present = features.presence(counts).toarray()
    present[:60, :4] = 1.0  # a core of group 0's own
    present[60:, :4] = 0.0
    present = sp.csr_matrix(present)
    labels = np.repeat([0, 1, -1], [60, 40, 20])
    null = features.presence(_rows(13, n=30, m=30, p=0.2)[0])
    plain = card_rates.fit_rates(present, labels, 2, null, 6.0)
    rates = card_rates.fit_rates(present, labels, 2, null, 6.0, pooled=2)
    plays = card_rates.group_sums(present, np.where(labels >= 0, labels, 2), 2)
    decks = np.bincount(labels[labels >= 0]).astype(np.float64)
    strength, p = card_rates.pooled_strength(plays, decks)
    assert (strength[:4] < 1).all() and (strength[4:] > 1).any()
    want = beta(strength * p + plays + 0.5, strength * (1 - p) + decks[:, None] - plays + 0.5).mean()
    want = np.minimum(want, ((decks + 0.5) / (decks + 1.0))[:, None])
    np.testing.assert_allclose(1 / (1 + np.exp(-rates.log_odds[:2])), want, rtol=1e-9)
    np.testing.assert_allclose(rates.log_odds[2], plain.log_odds[2], atol=1e-12)
    fill = strength >= card_rates.POOL_MOST
    assert fill.any()
    np.testing.assert_allclose(rates.log_odds[0, fill], rates.log_odds[1, fill], atol=1e-4)


def test_a_partial_list_scores_its_card_rates_scaled_by_its_length():
    # Reference: scipy.stats.bernoulli.logpmf of each card at rate f x r (f: the deck's length share,
    # r: the group's rate), summed over the cards. The log f of each card played is the same in every
    # row, so scores() leaves it out: the rows' differences must equal the reference's.
    from scipy.stats import bernoulli

    counts, _ = _rows(8, n=80, m=20, p=0.35)
    labels = np.repeat([0, 1, -1], [35, 35, 10])
    null = _rows(9, n=30, m=20, p=0.3)[0]
    rates = card_rates.fit_rates(counts, labels, 2, null, 8.0, full_size=10.0)
    sizes = card_rates.deck_sizes(counts)
    share = card_rates.length_shares(sizes, 10.0)
    assert (share < 1).any() and (share == 1).any() and rates.full_size == 10.0
    got = card_rates.scores(counts, rates)
    rate = 1.0 / (1.0 + np.exp(-rates.log_odds))
    prior = rates.constants - np.log1p(-rate).sum(axis=1)
    x = features.presence(counts).toarray()
    want = np.array([[bernoulli.logpmf(x[d], share[d] * rate[g]).sum() + prior[g] for g in range(rate.shape[0])]
                     for d in range(len(x))])
    np.testing.assert_allclose(got - got[:, :1], want - want[:, :1], atol=1e-9)
    # Steps of a twentieth, rounded down; full from 0.9 of a full deck; never below 0.3.
    np.testing.assert_array_equal(card_rates.length_shares(np.array([10, 9, 8.9, 8, 1, 0]), 10.0),
                                  [1.0, 1.0, 0.85, 0.8, 0.3, 0.3])
    # Without a full length (or with every deck full) the rates are the presence rule's, unchanged.
    plain = card_rates.fit_rates(counts, labels, 2, null, 8.0)
    np.testing.assert_array_equal(card_rates.scores(counts, plain),
                                  card_rates.scores(counts, replace(plain, full_size=0.0)))
    full = card_rates.fit_rates(counts, labels, 2, null, 8.0, full_size=1.0)
    np.testing.assert_allclose(full.log_odds, plain.log_odds)
    # A group's rate is taken over its decks' length shares: decks half as long count half.
    half = sp.csr_matrix(np.array([[1, 0], [1, 0], [0, 1], [0, 1]], dtype=float))
    fit = card_rates.fit_rates(half, np.array([0, 0, 0, 0]), 1, sp.csr_matrix((0, 2)), 0.0, full_size=2.0)
    a = card_rates.RATE_SMOOTHING
    np.testing.assert_allclose(1.0 / (1.0 + np.exp(-fit.log_odds[0])), [(2 + a) / (4 * 0.5 + 2 * a)] * 2)


def test_a_deck_with_none_of_the_rules_cards_is_an_other_deck():
    # Its score is the constants alone, which may favour an archetype; nothing in the deck does.
    rates = card_rates.CardRates(np.log(np.full((2, 3), 0.25)), np.array([0.0, -5.0]))
    present = sp.csr_matrix(np.array([[0, 0, 0], [1, 0, 1]], dtype=float))
    assert card_rates.place(present, rates).tolist() == [-1, 0]


def test_copy_levels_one_hot_matches_numpy():
    # Reference: numpy, card by card: level min(copies, LEVELS) of card j in column (level-1)*cards + j;
    # 0 copies (also an explicit zero entry) is no play; trailing empty decks stay empty.
    rng = np.random.default_rng(9)
    dense = (rng.random((25, 7)) < 0.4) * rng.integers(1, 6, (25, 7)).astype(float)
    dense[-3:] = 0.0
    counts = sp.csr_matrix(dense)
    counts.data[::4] = 0.0  # explicit zeros
    shown = counts.toarray()
    expected = np.zeros((25, 21))
    for i, j in zip(*np.nonzero(shown)):
        expected[i, (min(int(shown[i, j]), card_rates.LEVELS) - 1) * 7 + j] = 1.0
    np.testing.assert_array_equal(card_rates.as_levels(counts).toarray(), expected)
    assert expected.sum() > 0


def test_a_variant_told_only_by_copies_stays_apart_and_a_count_flex_does_not():
    # Planted by hand. Two groups of 40 decks play the same cards, X and Y at 2 copies in one and at 3 in the
    # other: each plays two cards at counts of its own, and X at 2 copies never meets Y at 3, so they are two
    # archetypes; by presence alone they are one. A count flex: 80 decks play X and Y at 2 or 3 copies
    # independently; cut by X's count, the pieces differ only in one card's count (whose two counts no deck
    # plays at once), so they are not two archetypes.
    rng = np.random.default_rng(3)
    z = np.ones(80)
    w = (rng.random(80) < 0.5).astype(float)
    counts = sp.csr_matrix(np.column_stack([np.repeat([2.0, 3.0], 40), np.repeat([2.0, 3.0], 40), z, w]))
    a, b = np.arange(40), np.arange(40, 80)
    assert membership.DeckCards.of(features.presence(counts), counts).apart(a, b)
    assert not membership.DeckCards.of(features.presence(counts)).apart(a, b)
    x, y = rng.choice([2.0, 3.0], 80), rng.choice([2.0, 3.0], 80)
    flex = sp.csr_matrix(np.column_stack([x, y, z, w]))
    assert not membership.DeckCards.of(features.presence(flex), flex).apart(np.flatnonzero(x == 2), np.flatnonzero(x == 3))
