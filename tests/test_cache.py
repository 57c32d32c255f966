"""Cache entries: round trip, distrust of damaged or foreign entries, fingerprints."""
from __future__ import annotations

import dataclasses
import hashlib

import pandas as pd
import pytest

import sitegen
from sitegen import cache as cache_mod
from sitegen.cache import Cache
from sitegen.reuse.partition_key import fingerprint
from sitegen.model import PartitionInput, PartitionResult


@dataclasses.dataclass(frozen=True)
class _Params:
    # Stands in for the analysis settings: any frozen dataclass is accepted.
    k_max: int = 12
    seed: int = 0
    pinned: tuple = ()


def _part() -> PartitionInput:
    # Planted: three decks of one season and leader.
    decks = pd.DataFrame({
        "deck_id": ["d1", "d2", "d3"], "season": "S1", "leader": "Vessa",
        "wins": pd.array([3, 1, None], dtype="Int64"), "losses": pd.array([1, 3, None], dtype="Int64"),
        "event": ["e", "e", None], "player": [None, None, None], "title": ["Fire", None, "Ice"],
    })
    cards = pd.DataFrame({
        "deck_id": ["d1", "d1", "d2", "d2", "d3"],
        "card": ["Ash Wisp", "Cinder Hound", "Ash Wisp", "Frost Lark", "Frost Lark"],
        "quantity": [3, 2, 1, 3, 2],
    })
    return PartitionInput("S1", "Vessa", decks, cards, {"Ash Wisp": "unit", "Frost Lark": "unit"})


def _result(fp: str = "") -> PartitionResult:
    return PartitionResult(
        season="S1", leader="Vessa", n_decks=3, status="too-small", reason="3 decks, fewer than 30",
        chosen_k=None, silhouette=(), k_reason="", archetypes=(), other=None,
        assignments=pd.DataFrame({"deck_id": ["d1", "d2", "d3"], "archetype": ["other"] * 3}),
        map_points=pd.DataFrame(columns=["deck_id", "archetype", "x", "y", "cards"]), inclusion=(), fingerprint=fp,
    )


@pytest.fixture()
def stored(tmp_path):
    fp = fingerprint(_part(), _Params(), sitegen.__version__)
    c = Cache(tmp_path / "cache")
    c.put(fp, _result(fp))
    return c, fp, tmp_path / "cache" / f"{fp}{cache_mod.SUFFIX}"


def test_round_trip(stored):
    # What goes in comes out equal.
    c, fp, _ = stored
    got = c.get(fp)
    assert got is not None and c.last_problem is None
    assert got.reason == "3 decks, fewer than 30" and got.fingerprint == fp
    pd.testing.assert_frame_equal(got.assignments, _result().assignments)


def test_missing_entry_is_none(tmp_path):
    c = Cache(tmp_path)
    assert c.get("0" * 64) is None
    assert c.last_problem == "no entry"


def test_truncated_entry_is_none(stored):
    c, fp, path = stored
    data = path.read_bytes()
    path.write_bytes(data[: len(data) - 7])
    assert c.get(fp) is None
    assert "truncated" in c.last_problem


def test_truncated_inside_header_is_none(stored):
    c, fp, path = stored
    path.write_bytes(path.read_bytes()[:20])
    assert c.get(fp) is None
    assert c.last_problem == "no header line"


def test_one_byte_edited_is_none(stored):
    # Flip one payload byte in the middle: the checksum no longer matches.
    c, fp, path = stored
    data = bytearray(path.read_bytes())
    i = data.index(b"\n") + (len(data) - data.index(b"\n")) // 2
    data[i] ^= 0x01
    path.write_bytes(bytes(data))
    assert c.get(fp) is None
    assert "checksum" in c.last_problem


def test_other_version_header_is_none(stored):
    # An entry made by another sitegen version, with a valid checksum: still ignored.
    c, fp, path = stored
    data = path.read_bytes()
    header, payload = data.split(b"\n", 1)
    parts = header.split(b" ")
    parts[2] = b"0.0.0-other"
    path.write_bytes(b" ".join(parts) + b"\n" + payload)
    assert c.get(fp) is None
    assert "0.0.0-other" in c.last_problem


def test_other_format_header_is_none(stored):
    c, fp, path = stored
    data = path.read_bytes()
    path.write_bytes(data.replace(b"SITEGEN-CACHE 1 ", b"SITEGEN-CACHE 99 ", 1))
    assert c.get(fp) is None
    assert "format 99" in c.last_problem


def test_entry_copied_under_another_name_is_none(stored):
    c, fp, path = stored
    other = "f" * 64
    (path.parent / f"{other}{cache_mod.SUFFIX}").write_bytes(path.read_bytes())
    assert c.get(other) is None
    assert "another fingerprint" in c.last_problem


def test_valid_checksum_but_not_a_result_is_none(tmp_path):
    # A well-formed entry whose payload is not a PartitionResult is not trusted either.
    c = Cache(tmp_path)
    c.put("a" * 64, {"not": "a result"})
    assert c.get("a" * 64) is None
    assert "not a PartitionResult" in c.last_problem


def test_garbage_file_is_none(tmp_path):
    (tmp_path / f"{'b' * 64}{cache_mod.SUFFIX}").write_bytes(b"\x00\xff" * 1000)
    c = Cache(tmp_path)
    assert c.get("b" * 64) is None


def test_key_that_is_not_a_fingerprint_never_touches_files(tmp_path):
    c = Cache(tmp_path)
    c.put("../escape", _result())
    assert c.get("../escape") is None
    assert list(tmp_path.iterdir()) == []


def test_put_leaves_no_temp_files_and_header_checksum_is_sha256(stored):
    # The header's checksum is the sha256 of the payload (hashlib, standard library).
    c, fp, path = stored
    assert sorted(p.name for p in path.parent.iterdir()) == [path.name]
    header, payload = path.read_bytes().split(b"\n", 1)
    assert header.split(b" ")[-1].decode() == hashlib.sha256(payload).hexdigest()


def test_prune_keeps_only_wanted(stored):
    c, fp, path = stored
    c.put("c" * 64, _result())
    (path.parent / "notes.txt").write_text("not ours")
    assert c.prune({fp}) == 1
    assert sorted(p.name for p in path.parent.iterdir()) == sorted([path.name, "notes.txt"])


def test_fingerprint_ignores_row_order():
    part = _part()
    shuffled = dataclasses.replace(
        part,
        decks=part.decks.iloc[[2, 0, 1]].reset_index(drop=True),
        cards=part.cards.iloc[[4, 2, 0, 3, 1]].reset_index(drop=True),
    )
    assert fingerprint(part, _Params(), "1") == fingerprint(shuffled, _Params(), "1")


def test_fingerprint_changes_when_one_deck_card_changes():
    part = _part()
    cards = part.cards.copy()
    cards.loc[1, "card"] = "Cinder Drake"
    assert fingerprint(part, _Params(), "1") != fingerprint(dataclasses.replace(part, cards=cards), _Params(), "1")


def test_fingerprint_changes_when_a_quantity_moves_between_decks():
    # Same multiset of cards and of quantities, different decks: must differ.
    part = _part()
    cards = part.cards.copy()
    cards.loc[0, "quantity"], cards.loc[2, "quantity"] = cards.loc[2, "quantity"], cards.loc[0, "quantity"]
    assert fingerprint(part, _Params(), "1") != fingerprint(dataclasses.replace(part, cards=cards), _Params(), "1")


@pytest.mark.parametrize("column,value", [("wins", 4), ("losses", 0), ("title", "Storm")])
def test_fingerprint_changes_when_deck_row_changes(column, value):
    part = _part()
    decks = part.decks.copy()
    decks.loc[0, column] = value
    assert fingerprint(part, _Params(), "1") != fingerprint(dataclasses.replace(part, decks=decks), _Params(), "1")


def test_fingerprint_changes_with_settings_version_and_card_types():
    part = _part()
    base = fingerprint(part, _Params(), "1")
    assert fingerprint(part, _Params(k_max=11), "1") != base
    assert fingerprint(part, _Params(pinned=(("S1", "Vessa", 3),)), "1") != base
    assert fingerprint(part, _Params(), "2") != base
    assert fingerprint(dataclasses.replace(part, card_types={"Ash Wisp": "spell"}), _Params(), "1") != base
    assert fingerprint(part, _Params(), "1") == base  # and it is deterministic


def test_fingerprint_same_for_object_string_and_category_columns():
    # Loaders may hand over text as object, pandas string or category columns; the values decide.
    part = _part()
    as_category = dataclasses.replace(part, cards=part.cards.astype({"deck_id": "category", "card": "category"}),
                                      decks=part.decks.astype({"deck_id": "string", "leader": "category"}))
    assert fingerprint(part, _Params(), "1") == fingerprint(as_category, _Params(), "1")


def _big_part(seed: int = 0) -> PartitionInput:
    # Planted: 400 decks of 6 to 20 distinct cards out of 90, rows grouped by deck and sorted.
    import numpy as np

    rng = np.random.default_rng(seed)
    ids = [f"d{i:04d}" for i in range(400)]
    names = sorted(f"Card {i:02d}" for i in range(90))
    rows = [(d, c, int(rng.integers(1, 4))) for d in ids
            for c in sorted(rng.choice(names, size=int(rng.integers(6, 21)), replace=False))]
    cards = pd.DataFrame(rows, columns=["deck_id", "card", "quantity"])
    decks = pd.DataFrame({"deck_id": ids, "season": "S1", "leader": "Vessa",
                          "wins": pd.array(rng.integers(0, 9, 400), dtype="Int64"),
                          "losses": pd.array([None] * 400, dtype="Int64"),
                          "event": None, "player": [f"p{i % 7}" for i in range(400)], "title": None})
    return PartitionInput("S1", "Vessa", decks, cards, {})


def _as_cut(part: PartitionInput) -> PartitionInput:
    """The partition as a build cuts it: categoricals of exactly its sorted decks and cards, copies int8."""
    cards = part.cards.assign(
        deck_id=pd.Categorical(part.cards["deck_id"], categories=sorted(set(part.cards["deck_id"]))),
        card=pd.Categorical(part.cards["card"], categories=sorted(set(part.cards["card"]))),
        quantity=part.cards["quantity"].astype("int8"))
    return dataclasses.replace(part, cards=cards, decks=part.decks.astype({"deck_id": "str", "player": "str"}))


def test_fingerprint_of_a_cut_partition_equals_plain_shuffled_rows():
    # Planted: the same rows as a build cuts them (categoricals, narrow copies, in order) and as
    # plain text columns in a shuffled order must give one fingerprint; any copy changed must not.
    part = _big_part(1)
    shuffled = dataclasses.replace(part, cards=part.cards.sample(frac=1.0, random_state=2).reset_index(drop=True),
                                   decks=part.decks.sample(frac=1.0, random_state=3).reset_index(drop=True))
    base = fingerprint(_as_cut(part), _Params(), "1")
    assert fingerprint(shuffled, _Params(), "1") == base
    cards = part.cards.copy()
    cards.loc[len(cards) // 2, "quantity"] = cards.loc[len(cards) // 2, "quantity"] % 3 + 1
    assert fingerprint(dataclasses.replace(part, cards=cards), _Params(), "1") != base
    # Categories holding an unused or unsorted name describe the same rows.
    cut = _as_cut(part)
    odd = cut.cards.assign(card=cut.cards["card"].cat.add_categories(["Zz unused"]).cat.reorder_categories(
        ["Zz unused", *reversed(cut.cards["card"].cat.categories)]))
    assert fingerprint(dataclasses.replace(cut, cards=odd), _Params(), "1") == base


def test_fingerprint_of_rows_without_a_canonical_form_ignores_their_order():
    # Planted: a deck id twice and a (deck, card) pair twice; such rows are digested row by row,
    # which must still not depend on their order, and must tell them from the rows without the twin.
    part = _big_part(4)
    twin_cards = pd.concat([part.cards, part.cards.iloc[[5]]], ignore_index=True)
    twin_decks = pd.concat([part.decks, part.decks.iloc[[9]]], ignore_index=True)
    twins = dataclasses.replace(part, cards=twin_cards, decks=twin_decks)
    mixed = dataclasses.replace(part, cards=twin_cards.iloc[::-1].reset_index(drop=True),
                                decks=twin_decks.iloc[::-1].reset_index(drop=True))
    assert fingerprint(twins, _Params(), "1") == fingerprint(mixed, _Params(), "1")
    assert fingerprint(twins, _Params(), "1") != fingerprint(part, _Params(), "1")
