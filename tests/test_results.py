"""Card results inside an archetype: the statistics against statsmodels and scipy, and the table on planted data."""
from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.stats import fisher_exact
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.proportion import confint_proportions_2indep

from sitegen.analysis import results as R


@pytest.mark.parametrize("x1,n1,x2,n2", [
    (56, 70, 48, 80), (9, 10, 3, 10), (0, 15, 5, 20), (20, 20, 0, 20), (1, 3, 2, 3),
    (300, 612, 1411, 2904), (5, 1000, 9, 1000), (140, 250, 140, 250),
])
def test_newcombe_difference_equals_statsmodels(x1, n1, x2, n2):
    # Reference library: statsmodels confint_proportions_2indep(method="newcomb", compare="diff"),
    # Newcombe's hybrid score interval (method 10), 95%.
    diff, low, high = R.newcombe_diff(x1, n1, x2, n2)
    ref_low, ref_high = confint_proportions_2indep(x1, n1, x2, n2, method="newcomb", compare="diff", alpha=0.05)
    assert diff == pytest.approx(x1 / n1 - x2 / n2, abs=1e-12)
    assert low == pytest.approx(ref_low, abs=1e-10)
    assert high == pytest.approx(ref_high, abs=1e-10)


def test_newcombe_published_example():
    # Newcombe (1998), Statistics in Medicine 17:873-890, Table II example (56/70 against 48/80):
    # method 10 gives 0.0524 to 0.3339 (figures from memory; confirmed against statsmodels above).
    _, low, high = R.newcombe_diff(56, 70, 48, 80)
    assert round(low, 4) == 0.0524
    assert round(high, 4) == 0.3339


def test_fisher_p_is_scipys_two_sided_test():
    # Reference library: scipy.stats.fisher_exact, two-sided, on the table [[wins, losses], [wins, losses]].
    assert R.fisher_p(30, 50, 20, 50) == pytest.approx(fisher_exact([[30, 20], [20, 30]])[1], rel=1e-12)


def test_bh_decisions_equal_statsmodels():
    # Reference library: statsmodels multipletests(method="fdr_bh", alpha=0.05).
    rng = np.random.default_rng(3)
    for _ in range(50):
        m = int(rng.integers(1, 40))
        p = np.concatenate([rng.uniform(0, 1, m), rng.uniform(0, 0.01, int(rng.integers(0, 6)))])
        rng.shuffle(p)
        assert R.bh_reject(p.tolist()) == multipletests(p, alpha=0.05, method="fdr_bh")[0].tolist()
    assert R.bh_reject([]) == []


def _planted(seed: int = 0, n: int = 400):
    """An archetype of ``n`` decks: card 0 lifts the win chance from 45% to 65%, cards 1-3 do nothing,
    card 4 is in every deck, card 5 in 3% of decks. Each deck plays 6 games."""
    rng = np.random.default_rng(seed)
    present = np.zeros((n, 6), dtype=np.int64)
    present[:, 0] = rng.random(n) < 0.5
    present[:, 1:4] = rng.random((n, 3)) < 0.4
    present[:, 4] = 1
    present[:, 5] = rng.random(n) < 0.03
    copies = present * rng.integers(1, 4, size=(n, 6))
    p = np.where(present[:, 0] == 1, 0.65, 0.45)
    games = np.full(n, 6)
    wins = rng.binomial(games, p)
    return sp.csr_matrix(copies), wins.astype(float), (games - wins).astype(float), [f"card {i}" for i in range(6)]


def test_card_results_counts_and_intervals_from_the_decks():
    counts, wins, losses, cards = _planted()
    members = np.arange(counts.shape[0])
    rows = R.card_results(counts, members, cards, wins, losses)
    dense = counts.toarray()
    got = {(r.card, r.copies): r for r in rows}
    # Cards in every deck (card 4) or in too few (card 5, 3%) are not compared (the documented 10%-90% rule).
    assert not any(r.card in ("card 4", "card 5") for r in rows)
    for (card, copies), r in got.items():
        j = cards.index(card)
        mask = {"any": dense[:, j] >= 1, "1": dense[:, j] == 1, "2": dense[:, j] == 2, "3+": dense[:, j] >= 3}[copies]
        out = dense[:, j] == 0
        # Counted by hand over the decks (numpy), then the interval by statsmodels.
        assert (r.wins_with, r.games_with) == (int(wins[mask].sum()), int((wins + losses)[mask].sum()))
        assert (r.wins_without, r.games_without) == (int(wins[out].sum()), int((wins + losses)[out].sum()))
        ref = confint_proportions_2indep(r.wins_with, r.games_with, r.wins_without, r.games_without,
                                         method="newcomb", compare="diff")
        assert (r.low, r.high) == pytest.approx(ref, abs=1e-6)
    tested = [r for r in rows if not r.small]
    assert tested, "the planted archetype has enough games to test"
    # The BH decisions over the archetype's tested rows equal statsmodels' on scipy's Fisher p-values.
    p = [fisher_exact([[r.wins_with, r.games_with - r.wins_with],
                       [r.wins_without, r.games_without - r.wins_without]])[1] for r in tested]
    assert [r.survives for r in tested] == multipletests(p, alpha=0.05, method="fdr_bh")[0].tolist()
    # The planted lift of card 0 survives; small samples come last, unranked, with no p-value.
    assert got[("card 0", "any")].survives and got[("card 0", "any")].low > 0
    assert all(r.p_value is None and not r.survives for r in rows if r.small)
    firsts = [i for i, r in enumerate(rows) if r.small]
    assert firsts == list(range(len(rows) - len(firsts), len(rows)))


def test_card_results_need_results():
    counts, wins, losses, cards = _planted()
    nothing = np.full(len(wins), np.nan)
    assert R.card_results(counts, np.arange(counts.shape[0]), cards, nothing, nothing) == ()


def test_small_samples_are_flagged_not_tested():
    # 30 decks of 1 game each: every side has fewer than MIN_GAMES games.
    counts, wins, losses, cards = _planted(n=30)
    rows = R.card_results(counts, np.arange(30), cards, np.minimum(wins, 1), 1 - np.minimum(wins, 1))
    assert rows and all(r.small and r.p_value is None for r in rows)


# ---------------------------------------------------------------- on a built site

@pytest.fixture(scope="module")
def small_demo(tmp_path_factory):
    """A small demo site (2 seasons, 3 leaders) with its matches, built once."""
    import importlib.util
    from pathlib import Path

    from sitegen import config
    from sitegen.build import build

    root = Path(__file__).resolve().parents[1]
    spec = importlib.util.spec_from_file_location("demo_generate", root / "demo_data" / "generate.py")
    gen = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(gen)
    work = tmp_path_factory.mktemp("questions")
    gen.generate(work / "data", seasons=2, leaders=3, decks_per_season=1200, decklists=0, matches_per_season=3000)
    cfg = config.from_dict({"site": {"output": "site"}, "cache": {"folder": "cache"},
                            "data": {"decks": "data/decks.csv", "deck_cards": "data/deck_cards.parquet",
                                     "cards": "data/cards.csv", "matches": "data/matches.csv"},
                            "analysis": {"map_points": 100, "map_iterations": 50, "workers": 1}}, root=work)
    build(cfg=cfg, quiet=True)
    return work


def test_comparison_pages_show_shares_recounted_from_the_decks(small_demo):
    # Reference: the shares recounted with pandas from deck_cards.parquet and the assignments export.
    import re
    from html import unescape

    import pandas as pd

    site = small_demo / "site"
    rows = pd.read_parquet(small_demo / "data" / "deck_cards.parquet")
    assigned = pd.read_csv(site / "data" / "assignments.csv", dtype=str, keep_default_na=False)
    pages = sorted(site.glob("archetypes/*/*-vs-*.html"))
    assert pages
    for page in pages[:6]:
        slug_a = page.parent.name
        season_slug, slug_b = page.stem.split("-vs-")
        text = page.read_text(encoding="utf-8")
        tables = re.findall(r"<tbody>(.*?)</tbody>", text, flags=re.S)
        first = re.findall(r"<tr>\s*<td data-sort=\"([^\"]*)\">.*?data-sort=\"([0-9.]+)\".*?</td>.*?"
                           r"data-sort=\"[0-9.]*\".*?data-sort=\"([0-9.]+)\"", tables[0], flags=re.S)
        assert first, page
        members = {}
        for slug in (slug_a, slug_b):
            ids = assigned.loc[assigned["archetype"] == slug, ["deck_id", "season"]]
            season = next(s for s in ids["season"].unique() if _slug(s) == season_slug)
            members[slug] = set(ids.loc[ids["season"] == season, "deck_id"])
        for card, share_a, share_b in first[:5]:
            card = unescape(card)
            for slug, shown in ((slug_a, share_a), (slug_b, share_b)):
                decks = members[slug]
                playing = rows.loc[(rows["card"] == card) & rows["deck_id"].isin(decks), "deck_id"].nunique()
                assert float(shown) == pytest.approx(playing / len(decks), abs=1e-4), (page.name, card, slug)
            assert float(share_a) - float(share_b) >= 0.1  # listed only from a 10-point gap


def _slug(season: str) -> str:
    return season.lower().replace(" ", "-")


def test_archetype_pages_carry_card_results_matchups_and_cautions(small_demo):
    site = small_demo / "site"
    pages = [p for p in site.glob("archetypes/*/*.html") if p.name != "index.html" and "-vs-" not in p.name]
    with_results = [p for p in pages if "Cards and winning" in p.read_text(encoding="utf-8")]
    assert with_results
    text = with_results[0].read_text(encoding="utf-8")
    assert "association, not cause" in text and "could be chance" in text
    assert 'class="table-scroll" role="region" tabindex="0" aria-label="Card results in' in text
    assert "Best and worst matchups" in text and "compare-links" in text
    # Every download the data page links to exists.
    data_page = (site / "data.html").read_text(encoding="utf-8")
    links = re.findall(r'<a href="(data/[^"]+)"', data_page)
    assert {"data/assignments.csv", "data/card-results.csv", "data/matchups.csv"} <= set(links)
    assert all((site / link).is_file() for link in links)


import re  # noqa: E402  (used by the page checks above)


def test_fisher_p_equals_scipy_on_many_tables():
    # Reference: scipy.stats.fisher_exact(alternative="two-sided") on the same 2x2 tables, small and large.
    from scipy.stats import fisher_exact
    from sitegen.analysis.results import fisher_p
    rng = np.random.default_rng(7)
    for _ in range(300):
        n1, n2 = (int(x) for x in rng.integers(1, 3000, size=2))
        w1, w2 = int(rng.integers(0, n1 + 1)), int(rng.integers(0, n2 + 1))
        ref = fisher_exact([[w1, n1 - w1], [w2, n2 - w2]], alternative="two-sided")[1]
        assert fisher_p(w1, n1, w2, n2) == pytest.approx(ref, rel=1e-6, abs=1e-12), (w1, n1, w2, n2)
    for table in ((0, 5, 0, 7), (5, 5, 7, 7), (3, 10, 7, 10), (1, 1, 0, 1)):
        ref = fisher_exact([[table[0], table[1] - table[0]], [table[2], table[3] - table[2]]])[1]
        assert fisher_p(*table) == pytest.approx(ref, rel=1e-9)
