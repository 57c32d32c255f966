"""Analysts' corrections to the computed archetypes, read from note front matter.

Overrides are keyed by archetype slug, and run after season linking, so they
hold across rebuilds and across every season the archetype appears in.
Keys read from an archetype note's front matter:

``rename: New name``
    show the archetype under this name (``title`` means the same;
    ``rename`` wins when both are given).
``merge_into: other-slug``
    in every season and leader where both appear, this archetype's decks join
    the other one: decks, shares, wins and losses are added, card profiles
    averaged by deck count, assignment and map rows relabelled; this one
    disappears. The other one keeps its name, signature, medoid and card
    table. Chains (a into b, b into c) end at c.
``hide: true``
    do not publish the archetype: its decks join the partition's other-decks
    group (one is made when the partition has none).
``signature: card a; card b``
    show these signature cards instead of the computed ones, in this order.

An override that points at nothing (a slug no archetype has, a card the
archetype never plays, a merge into itself or in a loop) is skipped and
reported as a ``override-unknown`` finding naming the note file and key.
Other keys are left to the notes reader.
"""
from __future__ import annotations

import dataclasses
import hashlib
import json
from collections.abc import Sequence

import pandas as pd

from ..model import OTHER_KEY, Archetype, Finding, PartitionResult, SignatureCard

_TRUE = {"true", "yes", "on", "1"}


def _finding(file: str, key: str, problem: str, arch: Archetype | None = None) -> Finding:
    return Finding(
        "override-unknown", f"{file}: key '{key}': {problem}",
        season=arch.season if arch else None, leader=arch.leader if arch else None,
    )


def _is_true(value: object) -> bool:
    return value is True or str(value).strip().lower() in _TRUE


def _pin_signature(arch: Archetype, cards: list[str], file: str, findings: list[Finding]) -> Archetype:
    computed = {s.card: s for s in arch.signature}
    pinned: list[SignatureCard] = []
    for card in cards:
        if card in computed:
            pinned.append(computed[card])
        elif card in arch.profile:
            # Not among the computed ones: its in-archetype rate is known, the rest is not.
            pinned.append(SignatureCard(card=card, score=0.0, rate_in=float(arch.profile[card]), rate_out=0.0))
        else:
            findings.append(_finding(file, "signature",
                                     f"archetype '{arch.slug}' in season {arch.season} never plays card '{card}'; "
                                     "check the spelling against its card table", arch))
    if not pinned:
        return arch
    return dataclasses.replace(arch, signature=tuple(pinned))


def _absorb(target: Archetype, merged: Sequence[Archetype]) -> Archetype:
    """``target`` with the decks, results and card profile of ``merged`` added."""
    group = [target, *merged]
    n = sum(a.n_decks for a in group)
    profile: dict[str, float] = {}
    if n > 0:
        for card in sorted({c for a in group for c in a.profile}):
            # A share of decks playing the card: the pooled share is the deck-weighted mean.
            profile[card] = sum(a.profile.get(card, 0.0) * a.n_decks for a in group) / n
    mean_distance = sum(a.mean_distance * a.n_decks for a in group) / n if n else target.mean_distance
    return dataclasses.replace(
        target, n_decks=n, share=sum(a.share for a in group), wins=sum(a.wins for a in group),
        losses=sum(a.losses for a in group), profile=profile, mean_distance=mean_distance,
    )


def _relabel(frame: pd.DataFrame, mapping: dict[str, str]) -> pd.DataFrame:
    if not mapping or frame is None or "archetype" not in frame.columns:
        return frame
    out = frame.copy()
    out["archetype"] = out["archetype"].replace(mapping)
    return out


def _relabelled_key(rows_key: str, mapping: dict[str, str]) -> str:
    """A result's ``rows_key`` once its assignments are relabelled by ``mapping``."""
    if not rows_key:
        return ""
    text = json.dumps([rows_key, sorted(mapping.items())], ensure_ascii=True)
    return "relabelled:" + hashlib.sha256(text.encode("ascii")).hexdigest()


def _blank_other(like: Archetype) -> Archetype:
    """An empty other-decks group for a partition that has none, to take hidden decks."""
    return dataclasses.replace(
        like, key=OTHER_KEY, slug=OTHER_KEY, name="Other decks", n_decks=0, share=0.0, signature=(),
        wins=0, losses=0, profile={}, is_other=True, mean_distance=0.0,
    )


def _chains(wanted: dict[str, str], slugs: set[str], files: dict[str, str],
            findings: list[Finding]) -> dict[str, list[str]]:
    """Each merging slug's chain of targets (a -> [b, c] when b merges into c); loops and unknown targets dropped."""
    out: dict[str, list[str]] = {}
    for slug in sorted(wanted):
        chain = [wanted[slug]]
        while chain[-1] in wanted and chain[-1] != slug and chain[-1] not in chain[:-1]:
            chain.append(wanted[chain[-1]])
        if chain[-1] == slug or chain[-1] in chain[:-1]:
            findings.append(_finding(files[slug], "merge_into", f"merging '{slug}' into '{wanted[slug]}' goes round in a loop "
                                     f"({' -> '.join([slug, *chain])}); break the loop in one of these notes"))
        elif wanted[slug] not in slugs:
            findings.append(_finding(files[slug], "merge_into", f"no archetype has slug '{wanted[slug]}'; "
                                     "use the slug from the archetype's page address"))
        else:
            out[slug] = chain
    return out


def apply_overrides(
    results: Sequence[PartitionResult], notes_front_matter: dict[str, tuple[str, dict]]
) -> tuple[tuple[PartitionResult, ...], list[Finding]]:
    """Results with the notes' overrides applied, and findings for those that point at nothing.

    ``notes_front_matter`` maps an archetype slug to (note file, front
    matter). Results keep their order; partitions without archetypes pass
    through unchanged.
    """
    findings: list[Finding] = []
    all_slugs = {g.slug for r in results for g in r.groups}
    notes = {slug: (str(file), dict(meta)) for slug, (file, meta) in sorted(notes_front_matter.items())}
    files = {slug: file for slug, (file, _) in notes.items()}
    present = {a.slug for r in results for a in r.archetypes}

    wanted_merge = {}
    for slug, (file, meta) in notes.items():
        target = str(meta.get("merge_into") or "").strip()
        if not target or slug not in present:
            continue
        if target == slug:
            findings.append(_finding(file, "merge_into", f"'{slug}' is asked to merge into itself; remove the key"))
            continue
        wanted_merge[slug] = target
    chains = _chains(wanted_merge, all_slugs, files, findings)
    hidden = {slug for slug, (_, meta) in notes.items() if _is_true(meta.get("hide", ""))}
    ever_together: set[str] = set()

    out: list[PartitionResult] = []
    for r in results:
        if not r.archetypes:
            out.append(r)
            continue
        # 1. Per archetype: name and signature.
        archetypes: list[Archetype] = []
        for a in r.archetypes:
            file, meta = notes.get(a.slug, ("", {}))
            name = str(meta.get("rename") or meta.get("title") or "").strip()
            if name:
                a = dataclasses.replace(a, name=name)
            sig = [c.strip() for c in str(meta.get("signature") or "").split(";") if c.strip()]
            if sig:
                a = _pin_signature(a, sig, file, findings)
            archetypes.append(a)
        other = r.other

        # 2. Where each archetype's decks end up: the furthest target of its
        # merge chain found in this partition, and hidden ones (or those
        # merged into a hidden one) in the other-decks group.
        by_slug = {a.slug: a for a in archetypes}
        other_slug = other.slug if other is not None else None
        dest: dict[str, str] = {}  # archetype key -> key of the group it joins
        for a in archetypes:
            here = [t for t in chains.get(a.slug, []) if t in by_slug or t == other_slug]
            target = here[-1] if here else a.slug
            if here:
                ever_together.add(a.slug)
            if target == other_slug or target in hidden:
                dest[a.key] = OTHER_KEY
            elif target != a.slug:
                dest[a.key] = by_slug[target].key
        if not dest:
            out.append(dataclasses.replace(r, archetypes=tuple(archetypes)))
            continue
        joining: dict[str, list[Archetype]] = {}
        for a in archetypes:
            if a.key in dest:
                joining.setdefault(dest[a.key], []).append(a)
        kept = [_absorb(a, joining[a.key]) if a.key in joining else a for a in archetypes if a.key not in dest]
        if OTHER_KEY in joining:
            other = _absorb(other if other is not None else _blank_other(joining[OTHER_KEY][0]), joining[OTHER_KEY])
        out.append(dataclasses.replace(
            r, archetypes=tuple(kept), other=other,
            assignments=_relabel(r.assignments, dest), map_points=_relabel(r.map_points, dest),
            rows_key=_relabelled_key(r.rows_key, dest),
        ))

    for slug in sorted(set(chains) - ever_together):
        findings.append(_finding(files[slug], "merge_into", f"'{slug}' and '{wanted_merge[slug]}' never appear in the same season "
                                 "and leader, so nothing was merged; check the slug"))
    return tuple(out), findings
