"""Season linking (Hungarian matching, profile similarity, slugs, splits, merges) and trend rows."""
from __future__ import annotations

import dataclasses
import itertools
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy.optimize import linear_sum_assignment
from scipy.spatial.distance import braycurtis, jaccard
from statsmodels.stats.proportion import proportion_confint

from sitegen.analysis.seasons import link_seasons, match, profile_similarity
from sitegen.analysis.trends import trend_rows

from _seasons_helpers import arch, cards, other, result

STAPLES = cards("staple", 6, 0.8)


# -- match: against scipy and against brute force ---------------------------------------------

@pytest.mark.parametrize("shape", [(1, 1), (3, 3), (4, 6), (7, 2), (12, 12)])
def test_match_equals_linear_sum_assignment(shape):
    # Reference library: scipy.optimize.linear_sum_assignment(maximize=True); with
    # threshold 0 and similarities in [0, 1) no pair is masked or dropped.
    rng = np.random.default_rng(sum(shape))
    for _ in range(20):
        sim = rng.random(shape)
        rows, cols = linear_sum_assignment(sim, maximize=True)
        assert match(sim, 0.0) == sorted(zip(rows.tolist(), cols.tolist()))


def _brute_force(sim: np.ndarray, threshold: float) -> tuple[float, set[tuple[int, int]]]:
    # Independent check: every one-to-one map of the smaller side into the larger,
    # scored by the total similarity of its pairs that reach the threshold.
    n, m = sim.shape
    best, best_pairs = -1.0, set()
    if n <= m:
        maps = ([(i, j) for i, j in enumerate(p)] for p in itertools.permutations(range(m), n))
    else:
        maps = ([(i, j) for j, i in enumerate(p)] for p in itertools.permutations(range(n), m))
    for pairs in maps:
        kept = {(i, j) for i, j in pairs if sim[i, j] >= threshold}
        total = sum(sim[i, j] for i, j in kept)
        if total > best + 1e-12:
            best, best_pairs = total, kept
    return best, best_pairs


@pytest.mark.parametrize("shape", [(2, 2), (3, 3), (3, 5), (5, 3), (4, 4), (5, 5)])
@pytest.mark.parametrize("threshold", [0.0, 0.5, 0.8])
def test_match_equals_brute_force(shape, threshold):
    rng = np.random.default_rng(100 + 10 * shape[0] + shape[1])
    for _ in range(15):
        sim = rng.random(shape)
        total, pairs = _brute_force(sim, threshold)
        got = match(sim, threshold)
        assert set(got) == pairs
        assert sum(sim[i, j] for i, j in got) == pytest.approx(total)
        assert all(sim[i, j] >= threshold for i, j in got)


def test_match_of_nothing_is_empty():
    assert match(np.zeros((0, 3)), 0.5) == []
    assert match(np.zeros((2, 2)), 0.5) == []


# -- similarity --------------------------------------------------------------------------------

def test_similarity_on_sets_is_jaccard():
    # Reference library: scipy.spatial.distance.jaccard on 0/1 vectors (similarity = 1 - distance).
    a = {"p": 1.0, "q": 1.0, "r": 1.0}
    b = {"q": 1.0, "r": 1.0, "s": 1.0, "t": 1.0}
    universe = sorted(set(a) | set(b))
    u = np.array([c in a for c in universe])
    v = np.array([c in b for c in universe])
    assert profile_similarity([a], [b])[0, 0] == pytest.approx(1 - jaccard(u, v))


def test_similarity_on_shares_matches_bray_curtis():
    # Reference library: scipy.spatial.distance.braycurtis d; weighted Jaccard = (1 - d) / (1 + d)
    # (algebra: sum min = (S - D) / 2, sum max = (S + D) / 2 with S = sum(a+b), D = sum|a-b|).
    rng = np.random.default_rng(3)
    names = [f"c{i}" for i in range(30)]
    for _ in range(10):
        u = rng.random(30) * (rng.random(30) < 0.6)
        v = rng.random(30) * (rng.random(30) < 0.6)
        a = {n: float(x) for n, x in zip(names, u) if x > 0}
        b = {n: float(x) for n, x in zip(names, v) if x > 0}
        d = braycurtis(u, v)
        assert profile_similarity([a], [b])[0, 0] == pytest.approx((1 - d) / (1 + d))


def test_similarity_of_empty_profiles_is_zero():
    assert profile_similarity([{}], [{}])[0, 0] == 0.0
    assert profile_similarity([], [{"a": 1.0}]).shape == (0, 1)


# -- linking: planted lineages -----------------------------------------------------------------

def _planted_three_seasons():
    # Planted truth: A continues S1->S2->S3 and splits in S3 (A2); B continues into S2 then merges
    # with the new D in S3 (M); C retires after S1.
    s1 = result("S1", "Vessa", [
        arch("a1", "alpha", STAPLES | cards("a", 12), season="S1"),
        arch("a2", "beta", STAPLES | cards("b", 12), season="S1"),
        arch("a3", "gamma", STAPLES | cards("c", 12), season="S1"),
    ], other("S1"))
    s2 = result("S2", "Vessa", [
        # Provisional slugs differ from last season's: the lineage slug must win.
        arch("a1", "alpha-drift", STAPLES | cards("a", 12, 0.85), season="S2"),
        arch("a2", "beta-drift", STAPLES | cards("b", 10) | cards("b2", 2), season="S2"),
        arch("a3", "delta", STAPLES | cards("d", 12), season="S2"),
    ], other("S2"))
    a_core = cards("a", 12)
    s3 = result("S3", "Vessa", [
        arch("a1", "alpha", STAPLES | a_core | cards("x", 4), season="S3"),
        arch("a2", "alpha", STAPLES | dict(list(a_core.items())[:8]) | cards("y", 6), season="S3"),
        arch("a3", "mixed", STAPLES | cards("b", 10) | cards("d", 12), season="S3"),
    ], other("S3"))
    return [s1, s2, s3]


def _slugs(results):
    return {(r.season, a.key): a.slug for r in results for a in r.archetypes}


def test_planted_lineages_keep_slugs_and_report_split_and_merge():
    out, history = link_seasons(_planted_three_seasons(), ["S1", "S2", "S3"], 0.5)
    s = _slugs(out)
    assert s[("S1", "a1")] == s[("S2", "a1")] == s[("S3", "a1")] == "alpha"
    assert s[("S2", "a2")] == "beta"
    assert s[("S2", "a3")] == "delta"
    assert s[("S3", "a3")] == "delta"       # M continues D, its best match
    assert s[("S3", "a2")] == "alpha-2"     # provisional "alpha" is taken by the lineage
    links = {(l.season, l.slug): l for l in history.links}
    assert links[("S3", "alpha-2")].kind == "split" and links[("S3", "alpha-2")].sources == ("alpha",)
    assert links[("S3", "alpha")].kind == "continues" and links[("S3", "alpha")].sources == ("alpha",)
    assert links[("S3", "delta")].kind == "merge" and links[("S3", "delta")].sources == ("delta", "beta")
    assert links[("S2", "delta")].kind == "new" and links[("S2", "delta")].sources == ()
    assert links[("S1", "gamma")].kind == "new"
    assert history.last_seen["gamma"] == "S1" and history.last_seen["beta"] == "S2"
    assert history.seasons_of["alpha"] == ("S1", "S2", "S3")
    assert len(history.links) == 9


def test_linking_leaves_other_group_and_assignments_alone():
    results = _planted_three_seasons()
    out, _ = link_seasons(results, ["S1", "S2", "S3"], 0.5)
    for before, after in zip(results, out):
        assert after.other == before.other
        assert after.assignments is before.assignments
        assert [a.key for a in after.archetypes] == [a.key for a in before.archetypes]


def test_no_slug_shared_by_two_lineages_across_leaders():
    # Same provisional slug for unrelated archetypes of two leaders, and for the "other" group.
    results = [
        result("S1", "Vessa", [arch("a1", "alpha", cards("a", 12), leader="Vessa")], other("S1", "Vessa")),
        result("S1", "Kor", [arch("a1", "alpha", cards("k", 12), leader="Kor"),
                             arch("a2", "other", cards("o", 12), leader="Kor")], other("S1", "Kor")),
    ]
    out, history = link_seasons(results, ["S1"], 0.5)
    slugs = [a.slug for r in out for a in r.archetypes]
    assert sorted(slugs) == ["alpha", "alpha-2", "other-2"]
    assert {r.leader: r.archetypes[0].slug for r in out} == {"Kor": "alpha", "Vessa": "alpha-2"}  # leaders in name order


def test_leader_missing_a_season_links_across_the_gap():
    results = [
        result("S1", "Kor", [arch("a1", "kappa", cards("k", 12), leader="Kor", season="S1")]),
        result("S3", "Kor", [arch("a1", "kappa-new", cards("k", 12, 0.8), leader="Kor", season="S3")]),
        result("S2", "Vessa", [arch("a1", "alpha", cards("a", 12), season="S2")]),
    ]
    out, history = link_seasons(results, ["S1", "S2", "S3"], 0.5)
    assert out[1].archetypes[0].slug == "kappa"
    assert history.seasons_of["kappa"] == ("S1", "S3")


def test_too_small_partition_is_a_gap_too():
    skipped = dataclasses.replace(result("S2", "Kor", []), status="too-small", archetypes=(), other=None)
    results = [
        result("S1", "Kor", [arch("a1", "kappa", cards("k", 12), leader="Kor")]),
        skipped,
        result("S3", "Kor", [arch("a1", "k3", cards("k", 12), leader="Kor", season="S3")]),
    ]
    out, history = link_seasons(results, ["S1", "S2", "S3"], 0.5)
    assert out[1] is skipped
    assert out[2].archetypes[0].slug == "kappa"


def test_adding_a_season_keeps_earlier_slugs():
    # Slugs are handed out season by season, so a new season cannot take an old slug.
    base = _planted_three_seasons()[:2]
    later = [result("S3", "Amon", [arch("a1", "delta", cards("z", 12), leader="Amon", season="S3")])]
    before, _ = link_seasons(base, ["S1", "S2"], 0.5)
    after, _ = link_seasons(base + later, ["S1", "S2", "S3"], 0.5)
    assert _slugs(before) == {k: v for k, v in _slugs(after).items() if k[0] != "S3"}
    assert after[-1].archetypes[0].slug == "delta-2"


def test_below_threshold_is_new():
    results = [
        result("S1", "Vessa", [arch("a1", "alpha", STAPLES | cards("a", 12))]),
        result("S2", "Vessa", [arch("a1", "alpha", STAPLES | cards("a", 4) | cards("n", 10), season="S2")]),
    ]
    out, history = link_seasons(results, ["S1", "S2"], 0.5)
    assert out[1].archetypes[0].slug == "alpha-2"
    assert history.links[1].kind == "new" and 0 < history.links[1].similarity < 0.5


@pytest.mark.parametrize("seasons,match_text", [
    (["S1"], "not among the seasons"),
    (["S1", "S1", "S2", "S3"], "must not repeat"),
])
def test_bad_seasons_are_refused(seasons, match_text):
    with pytest.raises(ValueError, match=match_text):
        link_seasons(_planted_three_seasons(), seasons, 0.5)


def test_duplicate_partition_is_refused():
    r = _planted_three_seasons()[0]
    with pytest.raises(ValueError, match="two results for season 'S1'"):
        link_seasons([r, r], ["S1"], 0.5)


# -- trend rows --------------------------------------------------------------------------------


def _trend_results():
    # Planted: Vessa in S1 and S2, Kor in S2 only; seasons given out of name order.
    return [
        result("S2", "Vessa", [arch("a1", "alpha", cards("a", 3), season="S2", n_decks=60, share=0.6, wins=120, losses=80),
                               arch("a2", "beta", cards("b", 3), season="S2", n_decks=30, share=0.3, wins=20, losses=30)],
               other("S2", n_decks=10)),
        result("S1", "Vessa", [arch("a1", "alpha", cards("a", 3), season="S1", n_decks=50, share=1.0)]),
        result("S2", "Kor", [arch("a1", "kappa", cards("k", 3), season="S2", leader="Kor", n_decks=5, share=1.0,
                                  wins=3, losses=1)]),
    ]


def test_rows_per_leader_in_season_order():
    rows = trend_rows(_trend_results(), ["S1", "S2"], min_games=100)
    assert list(rows) == ["Kor", "Vessa"] and set(rows["Vessa"]) == {"winrates"}
    # S1 is given first though its result comes second; within S2 the partition's archetype order.
    s1_with_games = result("S1", "Vessa", [arch("a1", "alpha", cards("a", 3), season="S1", n_decks=50, share=1.0,
                                                wins=5, losses=5)])
    rows = trend_rows([_trend_results()[0], s1_with_games], ["S1", "S2"], min_games=100)
    assert [(r["season"], r["slug"]) for r in rows["Vessa"]["winrates"]] == [("S1", "alpha"), ("S2", "alpha"),
                                                                            ("S2", "beta")]


def test_win_rates_carry_wilson_interval_and_small_flag():
    rows = trend_rows(_trend_results(), ["S1", "S2"], min_games=100)
    win = rows["Vessa"]["winrates"]
    # S1 alpha has no recorded games and the other group is not ranked: both left out.
    assert [(r["season"], r["slug"]) for r in win] == [("S2", "alpha"), ("S2", "beta")]
    alpha, beta = win
    # Reference library: statsmodels proportion_confint(method="wilson"), 95%.
    low, high = proportion_confint(120, 200, method="wilson")
    assert alpha["win_rate"] == 0.6 and alpha["games"] == 200 and alpha["small"] is False
    assert alpha["low"] == pytest.approx(low, abs=1e-6) and alpha["high"] == pytest.approx(high, abs=1e-6)
    assert beta["games"] == 50 and beta["small"] is True and beta["win_rate"] == 0.4
    assert rows["Kor"]["winrates"][0]["small"] is True


def test_min_games_zero_flags_nothing_and_unknown_seasons_are_left_out():
    rows = trend_rows(_trend_results(), ["S2"], min_games=0)
    assert all(not r["small"] for leader in rows.values() for r in leader["winrates"])
    assert {r["season"] for r in rows["Vessa"]["winrates"]} == {"S2"}


# -- linking the analysis of the demo data, scored against its planted truth ------------------

DEMO_GENERATOR = Path(__file__).resolve().parents[1] / "demo_data" / "generate.py"


def _planted_lineage_families(archetypes: dict) -> dict[str, int]:
    """Planted archetype -> family number: archetypes joined by variant, split or merge share one."""
    parent = {a: a for a in archetypes}

    def find(a):
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    for a, info in archetypes.items():
        for b in [info.get("variant_of"), info.get("split_from"), *(info.get("merged_from") or [])]:
            if b:
                parent[find(a)] = find(b)
    roots = sorted({find(a) for a in archetypes})
    return {a: roots.index(find(a)) for a in archetypes}


@pytest.fixture(scope="module")
def linked_demo(demo_site, repo_root):
    # Planted truth of our own: the committed demo data (demo_data/), whose archetypes, drift,
    # splits and merges the generator chose and wrote to truth.csv and truth.json. The analyses
    # come from the demo build's cache (conftest's demo_site), run through the build's own stages.
    from sitegen import config
    from sitegen.analysis.params import AnalysisParams
    from sitegen.cache import Cache
    from sitegen.check import check_rules
    from sitegen.load import load_data
    from sitegen.partitions import split
    from sitegen.runner import analyse_all

    cfg = config.load(repo_root / "site.toml")
    data = check_rules(load_data(cfg), cfg)
    results, _ = analyse_all(split(data, cfg["analysis.by_leader"]), AnalysisParams.from_config(cfg), Cache(demo_site.parent / "cache"))
    truth = pd.read_csv(repo_root / "demo_data" / "truth.csv", dtype=str).set_index("deck_id")["archetype"]
    planted = json.loads((repo_root / "demo_data" / "truth.json").read_text(encoding="utf-8"))
    seasons = [s["name"] for s in planted["seasons"]]
    assert list(data.seasons) == seasons  # publication order read from the dates
    linked, history = link_seasons(results, seasons, cfg["analysis.link_threshold"])

    # Each found archetype stands for the planted archetype most of its decks come from.
    found = []  # (season, leader, planted, decks, slug, name)
    for r in linked:
        for a in r.archetypes:
            ids = r.assignments.loc[r.assignments["archetype"] == a.key, "deck_id"]
            found.append((r.season, r.leader, truth.loc[ids].value_counts().index[0], a.n_decks, a.slug, a.name))
    return planted, seasons, found, history


def test_demo_planted_archetypes_that_continue_keep_their_slug(linked_demo):
    # At least 95% of planted archetypes present in two consecutive seasons: the biggest
    # archetype found for it in the later season has a slug it had in the earlier one.
    planted, seasons, found, _ = linked_demo
    slugs = {}
    for season, _, label, n, slug, _ in found:
        slugs.setdefault((label, season), []).append((n, slug))
    kept = total = 0
    for name, info in planted["archetypes"].items():
        for earlier, later in zip(info["seasons"], info["seasons"][1:]):
            if (name, earlier) in slugs and (name, later) in slugs:
                total += 1
                kept += max(slugs[(name, later)])[1] in {s for _, s in slugs[(name, earlier)]}
    assert total >= 8
    assert kept / total >= 0.95, f"{kept} of {total} kept their slug"


def test_demo_no_slug_shared_by_unrelated_planted_archetypes(linked_demo):
    # A slug may pass from a parent to a child of a planted split or merge (that is how a
    # lineage continues), and variants of one archetype may be found as one; never between
    # archetypes the generator planted apart. Brews (one-off decks) are no archetype.
    planted, _, found, _ = linked_demo
    family = _planted_lineage_families(planted["archetypes"])
    by_slug = {}
    for _, leader, label, _, slug, _ in found:
        if label != "brew":
            by_slug.setdefault(slug, set()).add(family[label])
    assert by_slug and all(len(families) == 1 for families in by_slug.values()), by_slug


def test_demo_planted_split_is_reported(linked_demo):
    # Every planted split: some archetype found for one of its children is linked as a split
    # (or the parent's own slug continues into it), from a slug the parent had the season before.
    planted, seasons, found, history = linked_demo
    assert planted["splits"], "the demo run plants a split"
    link_of = {(l.season, l.slug): l for l in history.links}
    for split in planted["splits"]:
        before = seasons[seasons.index(split["season"]) - 1]
        parent_slugs = {slug for s, _, label, _, slug, _ in found if s == before and label == split["parent"]}
        kinds = [link_of[(s, slug)].kind for s, _, label, _, slug, _ in found
                 if s == split["season"] and label in split["children"]
                 and set(link_of[(s, slug)].sources) & parent_slugs]
        assert "split" in kinds, (split, kinds)
        assert "continues" in kinds or "merge" in kinds


def test_demo_planted_archetypes_that_continue_keep_their_name(linked_demo):
    # At least 90% of planted archetypes present in two consecutive seasons (planted truth of our
    # own: demo_data/truth.json): the biggest archetype found for it keeps both its slug and its
    # name from one season to the next.
    planted, seasons, found, _ = linked_demo
    got = {}
    for season, _, label, n, slug, name in found:
        got.setdefault((label, season), []).append((n, slug, name))
    kept = total = 0
    for label, info in planted["archetypes"].items():
        for earlier, later in zip(info["seasons"], info["seasons"][1:]):
            if (label, earlier) in got and (label, later) in got:
                total += 1
                _, slug, name = max(got[(label, later)])
                kept += (slug, name) in {(s, nm) for _, s, nm in got[(label, earlier)]}
    assert total >= 8
    assert kept / total >= 0.9, f"{kept} of {total} kept their name"
