"""Slugs made from data: safe as file names on any host."""
from __future__ import annotations

import pytest

from sitegen.slugs import MAX_LEN, SlugSet, slugify


@pytest.mark.parametrize("text, slug", [
    ("Orsolya Gilded Quarrel", "orsolya-gilded-quarrel"),
    ("Éowyn's  Déjà-vu!", "eowyn-s-deja-vu"),
    ("../../etc/passwd", "etc-passwd"),
    ("C:\\Windows\\system32", "c-windows-system32"),
    ("CON", "con-x"),     # Windows reserved device names (Microsoft's file naming rules, from memory)
    ("nul", "nul-x"),
    ("Com1", "com1-x"),
])
def test_slugify(text, slug):
    assert slugify(text) == slug


@pytest.mark.parametrize("text", ["..", "", "漢字", "\u202e", "<>"])
def test_nothing_left_gives_a_stable_digest_slug(text):
    slug = slugify(text, fallback="archetype")
    assert slug.startswith("archetype-") and slug == slugify(text, fallback="archetype")


def test_long_text_is_cut_on_a_word():
    slug = slugify("Orsolya " + "Lantern-lit Bellringer " * 6)
    assert len(slug) <= MAX_LEN and not slug.endswith("-")
    assert slug.startswith("orsolya-lantern-lit-bellringer")
    assert slug.split("-")[-1] in {"lantern", "lit", "bellringer"}


def test_slug_set_counts_up_and_never_collides_when_case_folds():
    taken = SlugSet()
    assert [taken.add("A b") for _ in range(3)] == ["a-b", "a-b-2", "a-b-3"]
    assert taken.add("A B") == "a-b-4"  # "A B" and "a b" would share a file on a case-folding host
    long = "x" * 80
    first, second = taken.add(long), taken.add(long)
    assert first != second and len(second) <= MAX_LEN
