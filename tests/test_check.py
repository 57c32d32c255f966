"""Deck-building rule warnings on small hand-made decks.

The 3-copy limit and the 40-card minimum are common practice, no source;
every count below is planted by hand.
"""
from __future__ import annotations

import pandas as pd

from sitegen.check import check_rules, deck_totals
from sitegen.config import from_dict
from sitegen.model import DeckData, Finding


def _data(rows: list[tuple[str, str, int]], findings: tuple[Finding, ...] = ()) -> DeckData:
    cards = pd.DataFrame(rows, columns=["deck_id", "card", "quantity"]).astype({"deck_id": "str", "card": "str"})
    cards = cards.sort_values(["deck_id", "card"]).reset_index(drop=True)
    ids = sorted(set(cards["deck_id"]))
    decks = pd.DataFrame({"deck_id": ids, "season": "S1", "leader": "Orm",
                          "wins": pd.array([pd.NA] * len(ids), dtype="Int64"),
                          "losses": pd.array([pd.NA] * len(ids), dtype="Int64"),
                          "event": None, "player": None, "title": None})
    return DeckData(decks=decks, cards=cards, card_info=None, seasons=("S1",), findings=findings)


def _deck(deck_id: str, copies: list[int]) -> list[tuple[str, str, int]]:
    return [(deck_id, f"Card {i:02d}", q) for i, q in enumerate(copies)]


# Planted: 'ok' = 40 cards at 3 copies at most; 'four' plays 4 of one card (40 total);
# 'small' holds 39; 'big' holds 61 (common practice, no source, for the limits).
DECKS = (_deck("ok", [3] * 13 + [1]) + _deck("four", [4] + [3] * 12)
         + _deck("small", [3] * 13) + _deck("big", [3] * 20 + [1]))


def _cfg(tmp_path, **rules):
    return from_dict({"rules": rules} if rules else {}, root=tmp_path)


def test_totals_per_deck():
    # Planted sums: 3*13+1, 4+3*12, 3*13, 3*20+1.
    totals = deck_totals(_data(DECKS).cards)
    assert totals.to_dict() == {"big": 61, "four": 40, "ok": 40, "small": 39}


def test_default_rules_flag_copies_and_small_decks(tmp_path):
    # Defaults: 3 copies, 40 cards, no maximum (common practice, no source).
    earlier = Finding("name-variants", "kept")
    out = check_rules(_data(DECKS, (earlier,)), _cfg(tmp_path))
    assert out.findings[0] is earlier  # existing findings are kept, new ones appended
    new = [(f.kind, f.deck_id) for f in out.findings[1:]]
    assert new == [("copies-over-limit", "four"), ("deck-too-small", "small")]
    assert "4 copies of 'Card 00'" in out.findings[1].message
    assert out.findings[1].season == "S1" and out.findings[1].leader == "Orm"
    assert out.excluded == frozenset()


def test_max_cards_and_exclusion(tmp_path):
    # Planted: with a 60-card maximum 'big' (61) breaks it; breakers are excluded when asked.
    out = check_rules(_data(DECKS), _cfg(tmp_path, max_cards=60, exclude_breakers=True))
    assert [(f.kind, f.deck_id) for f in out.findings] == [
        ("deck-too-large", "big"), ("copies-over-limit", "four"), ("deck-too-small", "small")]
    assert out.excluded == frozenset({"big", "four", "small"})


def test_limits_follow_settings(tmp_path):
    # Planted: a 4-copy limit and no minimum leave only 'big' over a 50-card maximum.
    out = check_rules(_data(DECKS), _cfg(tmp_path, max_copies=4, min_cards=0, max_cards=50))
    assert [(f.kind, f.deck_id) for f in out.findings] == [("deck-too-large", "big")]


def test_input_is_not_changed(tmp_path):
    data = _data(DECKS)
    check_rules(data, _cfg(tmp_path, exclude_breakers=True))
    assert data.findings == () and data.excluded == frozenset()


def test_unsorted_cards_give_the_same_totals():
    # The run-based sum must agree with a pandas groupby when rows are not grouped by deck.
    cards = _data(DECKS).cards.sample(frac=1, random_state=0).reset_index(drop=True)
    expected = cards.groupby("deck_id")["quantity"].sum().to_dict()
    assert deck_totals(cards).to_dict() == expected


def test_deck_totals_over_million_row_blocks_equal_pandas_groupby():
    # Reference: pandas groupby-sum. 2.5 million int8 rows in runs of 1 to 60 rows, so runs
    # straddle the million-row blocks the sums are taken in; one deck's total passes int8's 127.
    import numpy as np
    import pandas as pd

    from sitegen.check import deck_totals

    rng = np.random.default_rng(11)
    lengths = rng.integers(1, 61, size=80_000)
    lengths[7] = 200  # 200 rows of 3 copies: 600, beyond int8
    ids = pd.Index([f"d{i:06d}" for i in range(lengths.size)], dtype="str")
    codes = np.repeat(np.arange(lengths.size, dtype=np.int32), lengths)
    quantity = rng.integers(1, 4, size=codes.size).astype(np.int8)
    quantity[codes == 7] = 3
    cards = pd.DataFrame({"deck_id": pd.Categorical.from_codes(codes, categories=ids), "quantity": quantity})
    got = deck_totals(cards)
    expected = pd.DataFrame({"deck_id": ids[codes], "quantity": quantity.astype(np.int64)}).groupby(
        "deck_id", sort=False)["quantity"].sum()
    assert got.index.tolist() == expected.index.tolist()
    assert got.tolist() == expected.tolist() and got["d000007"] == 600
