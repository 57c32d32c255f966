"""Analysts' overrides on hand-made results whose numbers we planted."""
from __future__ import annotations

import dataclasses

import pytest

from sitegen.analysis.overrides import apply_overrides
from sitegen.model import OTHER_KEY, SignatureCard

from _seasons_helpers import arch, cards, other, result


def _results():
    # Planted: S1 has alpha (40 decks), beta (20), other (10); S2 has alpha (30) and gamma (30).
    s1 = result("S1", "Vessa", [
        arch("a1", "alpha", cards("a", 4, 1.0), n_decks=40, share=40 / 70, wins=30, losses=10,
             season="S1"),
        arch("a2", "beta", cards("a", 2, 0.5) | cards("b", 2, 1.0), n_decks=20, share=20 / 70, wins=5,
             losses=15, season="S1"),
    ], other("S1", n_decks=10))
    alpha = dataclasses.replace(s1.archetypes[0], signature=(SignatureCard("a 0", 2.0, 1.0, 0.1),))
    s1 = dataclasses.replace(s1, archetypes=(alpha, s1.archetypes[1]))
    s2 = result("S2", "Vessa", [
        arch("a1", "alpha", cards("a", 4, 1.0), n_decks=30, share=0.5, season="S2"),
        arch("a2", "gamma", cards("g", 4, 1.0), n_decks=30, share=0.5, season="S2"),
    ])
    return [s1, s2]


def test_rename_applies_in_every_season():
    out, findings = apply_overrides(_results(), {"alpha": ("content/archetypes/alpha.md", {"rename": "Ash Rush"})})
    assert findings == []
    assert [r.archetypes[0].name for r in out] == ["Ash Rush", "Ash Rush"]
    assert out[0].archetypes[1].name == "Beta"


def test_title_is_rename_and_rename_wins():
    out, _ = apply_overrides(_results(), {"alpha": ("a.md", {"title": "T"}), "beta": ("b.md", {"title": "T", "rename": "R"})})
    assert out[0].archetypes[0].name == "T" and out[0].archetypes[1].name == "R"


def test_merge_into_combines_counts_and_relabels_rows():
    out, findings = apply_overrides(_results(), {"beta": ("content/archetypes/beta.md", {"merge_into": "alpha"})})
    assert findings == []
    s1 = out[0]
    assert [a.slug for a in s1.archetypes] == ["alpha"]
    alpha = s1.archetypes[0]
    assert (alpha.n_decks, alpha.wins, alpha.losses) == (60, 35, 25)
    assert alpha.share == pytest.approx(60 / 70)
    # Pooled share of decks playing "a 0": (40 * 1.0 + 20 * 0.5) / 60; "b 0": 20 / 60.
    assert alpha.profile["a 0"] == pytest.approx(50 / 60)
    assert alpha.profile["b 0"] == pytest.approx(20 / 60)
    assert set(s1.assignments["archetype"]) == {"a1", OTHER_KEY}
    assert (s1.assignments["archetype"] == "a1").sum() == 60
    assert s1.other == _results()[0].other
    assert [a.slug for a in out[1].archetypes] == ["alpha", "gamma"]


def test_hide_moves_decks_to_other_group():
    out, findings = apply_overrides(_results(), {"beta": ("beta.md", {"hide": "true"})})
    assert findings == []
    s1 = out[0]
    assert [a.slug for a in s1.archetypes] == ["alpha"]
    assert s1.other.n_decks == 30 and (s1.other.wins, s1.other.losses) == (5, 15)
    assert (s1.assignments["archetype"] == OTHER_KEY).sum() == 30


def test_hide_without_other_group_makes_one():
    out, _ = apply_overrides(_results(), {"gamma": ("gamma.md", {"hide": "yes"})})
    s2 = out[1]
    assert [a.slug for a in s2.archetypes] == ["alpha"]
    assert s2.other is not None and s2.other.is_other and s2.other.n_decks == 30
    assert set(s2.assignments["archetype"]) == {"a1", OTHER_KEY}


def test_hide_false_does_nothing():
    out, findings = apply_overrides(_results(), {"beta": ("beta.md", {"hide": "false"})})
    assert [a.slug for a in out[0].archetypes] == ["alpha", "beta"] and findings == []


def test_pin_signature_keeps_order_and_known_values():
    out, findings = apply_overrides(_results(), {"alpha": ("alpha.md", {"signature": "a 2; a 0"})})
    assert findings == []
    sig = out[0].archetypes[0].signature
    assert [s.card for s in sig] == ["a 2", "a 0"]
    assert sig[1] == SignatureCard("a 0", 2.0, 1.0, 0.1)   # the computed one is kept
    assert sig[0].rate_in == 1.0                            # from the profile


def test_pin_unknown_card_warns_with_file_and_key():
    out, findings = apply_overrides(_results(), {"alpha": ("content/archetypes/alpha.md", {"signature": "a 1; Frost Lark"})})
    assert [s.card for s in out[0].archetypes[0].signature] == ["a 1"]
    assert len(findings) == 2  # once per season alpha appears in
    f = findings[0]
    assert f.kind == "override-unknown"
    assert "content/archetypes/alpha.md" in f.message and "'signature'" in f.message and "Frost Lark" in f.message
    assert f.season == "S1" and f.leader == "Vessa"


def test_unknown_merge_target_warns_with_file_and_key():
    results = _results()
    out, findings = apply_overrides(results, {"beta": ("content/archetypes/beta.md", {"merge_into": "betta"})})
    assert [a.slug for a in out[0].archetypes] == ["alpha", "beta"]
    assert len(findings) == 1
    assert findings[0].kind == "override-unknown"
    assert "content/archetypes/beta.md" in findings[0].message
    assert "'merge_into'" in findings[0].message and "'betta'" in findings[0].message


def test_merge_target_never_alongside_warns():
    _, findings = apply_overrides(_results(), {"beta": ("beta.md", {"merge_into": "gamma"})})
    assert [f.kind for f in findings] == ["override-unknown"]
    assert "never appear in the same season" in findings[0].message


def test_merge_into_itself_and_loops_warn():
    _, findings = apply_overrides(_results(), {"beta": ("beta.md", {"merge_into": "beta"})})
    assert "into itself" in findings[0].message
    out, findings = apply_overrides(_results(), {"beta": ("beta.md", {"merge_into": "alpha"}),
                                                 "alpha": ("alpha.md", {"merge_into": "beta"})})
    assert len(findings) == 2 and all("loop" in f.message for f in findings)
    assert [a.slug for a in out[0].archetypes] == ["alpha", "beta"]


def test_merge_chain_ends_at_furthest_present():
    # beta -> alpha -> gamma: in S1 gamma is absent, so beta joins alpha; in S2 alpha joins gamma.
    out, findings = apply_overrides(_results(), {"beta": ("beta.md", {"merge_into": "alpha"}),
                                                 "alpha": ("alpha.md", {"merge_into": "gamma"})})
    assert findings == []
    assert [(a.slug, a.n_decks) for a in out[0].archetypes] == [("alpha", 60)]
    assert [(a.slug, a.n_decks) for a in out[1].archetypes] == [("gamma", 60)]


def test_merge_into_hidden_goes_to_other():
    out, _ = apply_overrides(_results(), {"beta": ("beta.md", {"merge_into": "alpha"}),
                                          "alpha": ("alpha.md", {"hide": "true"})})
    assert out[0].archetypes == ()
    assert out[0].other.n_decks == 70
    assert set(out[0].assignments["archetype"]) == {OTHER_KEY}
