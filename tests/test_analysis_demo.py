"""analyse_partition end to end: planted partitions, then the demo data against its planted truth.

The demo data (demo_data/generate.py) writes truth.csv (each deck's planted
archetype, "brew" for one-off decks) and truth.json (core cards per
archetype and season). Brews are left out of the ARI: they were planted as
noise belonging to no archetype, and the method has no noise label except
the other-decks group, which takes clusters, not single decks.
"""
from __future__ import annotations

import importlib.util
import json
import pickle
from pathlib import Path

import pandas as pd
import pytest
from sklearn.metrics import adjusted_rand_score

from _planted import planted_partition
from sitegen import config
from sitegen.analysis.params import AnalysisParams
from sitegen.analysis.embed import place_map
from sitegen.analysis.partition import analyse_partition, draw_map
from sitegen.model import OTHER_KEY, PartitionInput

ROOT = Path(__file__).resolve().parents[1]
FAST = AnalysisParams(map_points=200, map_iterations=100)


# ---------------------------------------------------------------- planted partitions

def _mapped(part, params=FAST):
    """A partition analysed and its map drawn (a fresh map: no previous season)."""
    result = analyse_partition(part, params)
    return place_map(result, draw_map(result.map_sample, params)) if result.map_sample is not None else result


@pytest.fixture(scope="module")
def planted():
    part, truth, cores = planted_partition(n_decks=700, n_archetypes=4, seed=3, variants=1, variant_shared=7)
    return part, truth, cores, _mapped(part)


def test_planted_archetypes_found_named_and_ordered(planted):
    part, truth, cores, result = planted
    assert result.status == "clustered" and result.n_decks == 700
    keys = [a.key for a in result.archetypes]
    assert keys == [f"a{i}" for i in range(1, 5)]
    sizes = [a.n_decks for a in result.archetypes]
    assert sizes == sorted(sizes, reverse=True)
    got = result.assignments.set_index("deck_id")["archetype"].loc[truth.index]
    keep = (truth != "brew").to_numpy()
    assert adjusted_rand_score(truth[keep], got[keep]) > 0.99
    for a in result.archetypes:
        members = got.index[got == a.key]
        planted_label = truth.loc[members].value_counts().index[0]
        assert {s.card for s in a.signature[:3]} <= set(cores[planted_label])
        assert a.name.startswith("Vessa · ") and " & " in a.name
    slugs = [g.slug for g in result.groups]
    assert len(set(slugs)) == len(slugs)


def test_planted_groups_account_for_every_deck(planted):
    part, truth, cores, result = planted
    a = result.assignments
    assert list(a.columns) == ["deck_id", "archetype", "distance", "x", "y"]
    assert a["deck_id"].tolist() == sorted(part.decks["deck_id"])
    assert sum(g.n_decks for g in result.groups) == 700
    assert set(a["archetype"]) == {g.key for g in result.groups}
    assert a["distance"].between(0, 2).all() and (a["distance"] == a["distance"].round(4)).all()
    if result.other is not None:
        assert result.other.key == OTHER_KEY and result.other.is_other


def test_planted_medoid_profile_results_and_tables(planted):
    part, truth, cores, result = planted
    decks = part.decks.set_index("deck_id")
    got = result.assignments.set_index("deck_id")["archetype"]
    for g in result.groups:
        members = got.index[got == g.key]
        assert g.medoid_deck_id in members
        medoid_rows = part.cards[part.cards["deck_id"] == g.medoid_deck_id]
        assert g.medoid_total == medoid_rows["quantity"].sum()
        assert [(d.card_type, d.card) for d in g.medoid] == sorted((d.card_type, d.card) for d in g.medoid)
        assert g.wins == decks.loc[members, "wins"].sum() and g.losses == decks.loc[members, "losses"].sum()
        assert g.has_results
        assert min(g.profile.values()) >= 0.02
        shares = [(-c.share, c.card) for c in g.inclusion]
        assert shares == sorted(shares) and all(c.share >= FAST.inclusion_min_share for c in g.inclusion)
    assert result.inclusion and result.inclusion[0].share >= result.inclusion[-1].share


def test_planted_map_points(planted):
    part, truth, cores, result = planted
    m = result.map_points
    assert list(m.columns) == ["deck_id", "archetype", "x", "y", "cards"]
    assert len(m) == 200 and set(m["archetype"]) == {g.key for g in result.groups}
    assert (m["x"] == m["x"].round(3)).all()
    assert m["cards"].str.count(", ").eq(2).all()
    a = result.assignments.set_index("deck_id")
    assert a.loc[m["deck_id"], "x"].tolist() == m["x"].tolist()
    assert a["x"].isna().sum() == 700 - 200


def test_result_pickles(planted):
    # Results cross process boundaries and go into the cache.
    result = planted[3]
    again = pickle.loads(pickle.dumps(result))
    assert again.archetypes == result.archetypes
    pd.testing.assert_frame_equal(again.assignments, result.assignments)


def test_row_order_of_the_input_does_not_matter(planted):
    # Decks are ordered by deck id and cards by name inside: shuffled input rows, same result.
    part, _, _, result = planted
    shuffled = PartitionInput(part.season, part.leader, part.decks.sample(frac=1.0, random_state=1),
                              part.cards.sample(frac=1.0, random_state=2), part.card_types, part.fingerprint)
    again = _mapped(shuffled)
    pd.testing.assert_frame_equal(again.assignments, result.assignments)
    pd.testing.assert_frame_equal(again.map_points, result.map_points)
    assert again.archetypes == result.archetypes


def test_too_small_partition():
    part, _, _ = planted_partition(n_decks=12, seed=1, with_results=False)
    result = analyse_partition(part, FAST)
    assert result.status == "too-small" and "only 12 decks" in result.reason and "analysis.min_decks" in result.reason
    assert result.archetypes == () and result.chosen_k is None and result.map_points.empty
    assert set(result.assignments["archetype"]) == {OTHER_KEY} and result.assignments["x"].isna().all()
    assert result.other.n_decks == 12 and not result.other.has_results and result.other.wins == 0


def _tiny(ids, rows):
    decks = pd.DataFrame({"deck_id": ids, "season": "S", "leader": "L",
                          "wins": pd.array([pd.NA] * len(ids), dtype="Int64"),
                          "losses": pd.array([pd.NA] * len(ids), dtype="Int64")})
    return PartitionInput("S", "L", decks, pd.DataFrame(rows, columns=["deck_id", "card", "quantity"]))


def test_identical_decks_make_one_archetype_drawn_on_one_spot():
    # Nothing to tell apart: one cluster, said in words; t-SNE has nothing to spread, no NaN leaks out.
    ids = [f"d{i:02d}" for i in range(40)]
    result = _mapped(_tiny(ids, [(i, c, 2) for i in ids for c in ("Ash", "Bell", "Cairn")]))
    assert [a.n_decks for a in result.archetypes] == [40] and result.chosen_k == 1
    assert result.k_reason.startswith("1 archetype")
    assert result.map_points[["x", "y"]].eq(0.0).all().all()


def test_decks_without_cards_join_the_other_decks():
    # Two planted groups and five empty decks: the empty ones share no cards, so they are no archetype.
    ids = [f"d{i:02d}" for i in range(40)]
    rows = [(i, c, 1) for i in ids[:20] for c in ("Ash", "Bell")] + [(i, c, 1) for i in ids[20:35] for c in ("Pyre", "Quill")]
    result = analyse_partition(_tiny(ids, rows), FAST)
    assert [a.n_decks for a in result.archetypes] == [20, 15]
    assert result.other.n_decks == 5 and result.other.medoid_total == 0
    assert "5 decks of 40 (12%) fit no archetype" in result.k_reason


def test_runs_in_a_worker_process():
    # The build sends partitions to worker processes: the function and its result must travel.
    from concurrent.futures import ProcessPoolExecutor

    part, _, _ = planted_partition(n_decks=200, n_archetypes=3, seed=5)
    here = analyse_partition(part, FAST)
    with ProcessPoolExecutor(max_workers=1) as pool:
        there = pool.submit(analyse_partition, part, FAST).result()
    pd.testing.assert_frame_equal(here.assignments, there.assignments)
    assert here.archetypes == there.archetypes


def test_pinned_k_from_config():
    cfg = config.from_dict({"analysis": {"pinned_k": [{"season": "S1", "leader": "Vessa", "k": 3},
                                                       {"season": "S2", "k": 5}]}}, root=ROOT)
    params = AnalysisParams.from_config(cfg)
    assert params.pinned("S1", "Vessa") == 3 and params.pinned("S2", "Orrin") == 5 and params.pinned("S1", "Orrin") is None
    part, _, _ = planted_partition(n_decks=300, n_archetypes=4, seed=2)
    result = analyse_partition(part, AnalysisParams(pinned_k=(("S1", "Vessa", 3),), map_points=50))
    assert result.chosen_k == 3 and "pinned" in result.k_reason


def test_params_defaults_match_settings():
    # The dataclass defaults and the declared settings must agree.
    assert AnalysisParams.from_config(config.defaults(ROOT)) == AnalysisParams()


# ---------------------------------------------------------------- the demo data

def _demo_folder(tmp_path_factory) -> Path:
    """The repository's demo data, or a fresh copy from its generator when it is not written yet."""
    folder = ROOT / "demo_data"
    if (folder / "truth.csv").exists() and (folder / "truth.json").exists():
        return folder
    spec = importlib.util.spec_from_file_location("demo_generate", folder / "generate.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    out = tmp_path_factory.mktemp("demo_data")
    module.generate(out)
    return out


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = _demo_folder(tmp_path_factory)
    decks = pd.read_csv(folder / "decks.csv", dtype={"deck_id": str, "season": str, "leader": str})
    long = folder / "deck_cards.parquet"
    cards = pd.read_parquet(long) if long.exists() else pd.read_csv(folder / "deck_cards.csv", dtype={"deck_id": str})
    info = pd.read_csv(folder / "cards.csv", dtype=str)
    types = dict(zip(info["card"], info["type"]))
    truth = pd.read_csv(folder / "truth.csv", dtype=str).set_index("deck_id")["archetype"]
    planted_info = json.loads((folder / "truth.json").read_text(encoding="utf-8"))
    parts = []
    for (season, leader), d in decks.groupby(["season", "leader"], sort=True):
        rows = cards[cards["deck_id"].isin(set(d["deck_id"]))]
        parts.append(PartitionInput(season, leader, d.reset_index(drop=True), rows.reset_index(drop=True), types))
    results = [analyse_partition(p, FAST) for p in parts]
    return parts, results, truth, planted_info


def test_demo_ari_every_partition(demo):
    # The demo keeps ARI 1.0 on its planted (non-brew) decks in every partition (scikit-learn's
    # adjusted_rand_score), and most of its one-off brews are other decks.
    parts, results, truth, _ = demo
    low = []
    brews = brews_other = 0
    for part, result in zip(parts, results):
        got = result.assignments.set_index("deck_id")["archetype"]
        t = truth.loc[got.index]
        keep = (t != "brew").to_numpy()
        score = adjusted_rand_score(t[keep], got[keep])
        if score < 1.0:
            low.append((part.season, part.leader, round(score, 3)))
        brews += int((~keep).sum())
        brews_other += int((got[~keep] == OTHER_KEY).sum())
    assert not low
    assert brews and brews_other >= 0.85 * brews


def test_demo_k_equals_planted_count(demo):
    parts, results, truth, _ = demo
    hits = 0
    for part, result in zip(parts, results):
        t = truth.loc[part.decks["deck_id"]]
        hits += len(result.archetypes) == t[t != "brew"].nunique()
    assert hits == len(parts)


def test_demo_signature_cards_are_planted_core(demo):
    parts, results, truth, planted_info = demo
    wrong = []
    for part, result in zip(parts, results):
        got = result.assignments.set_index("deck_id")["archetype"]
        for a in result.archetypes:
            members = truth.loc[got.index[got == a.key]]
            label = members[members != "brew"].value_counts().index[0]
            core = set(planted_info["archetypes"][label]["core"][part.season])
            wrong += [(part.season, part.leader, a.key, s.card) for s in a.signature[:3] if s.card not in core]
    assert not wrong


def test_demo_two_runs_identical(demo):
    parts, results, _, _ = demo
    for i in (0, len(parts) // 2):
        again = analyse_partition(parts[i], FAST)
        pd.testing.assert_frame_equal(again.assignments, results[i].assignments)
        pd.testing.assert_frame_equal(again.map_points, results[i].map_points)
        assert again.archetypes == results[i].archetypes and again.other == results[i].other
        assert again.silhouette == results[i].silhouette and again.k_reason == results[i].k_reason


def test_shares_in_the_reason_never_read_zero_for_some_decks():
    from sitegen.analysis.partition import _share

    assert _share(4, 1045) == "under 1%" and _share(5, 1000) == "under 1%" and _share(6, 1000) == "1%"
    assert _share(0, 10) == "0%" and _share(5, 40) == "12%" and _share(40, 40) == "100%"
