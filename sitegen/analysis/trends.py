"""Rows for the win-rate-over-time charts: each archetype's win rate per season.

Run after season linking (and overrides), so one slug is one line across
seasons. (Shares over time are read by the site from the results themselves,
exact, as every other share on the pages is.) Win rates carry a 95% Wilson interval; those from fewer than
``min_games`` games are flagged ``small`` so charts can draw them faintly
and tables can leave them out of rankings.
"""
from __future__ import annotations

from collections.abc import Sequence

from ..model import PartitionResult
from .stats import wilson

# Six decimals are far below what a chart can show and keep the JSON short.
_DIGITS = 6


def trend_rows(results: Sequence[PartitionResult], seasons: Sequence[str], min_games: int) -> dict[str, dict[str, list[dict]]]:
    """Per leader: ``{"winrates": [...]}`` rows, in season order.

    ``winrates`` rows: season, archetype, slug,
    win_rate, low, high (Wilson interval), games, small; archetypes only,
    and only those with at least one recorded game. Leaders are in name
    order; within a season rows follow the partition's archetype order.
    Results of a season not in ``seasons`` are left out.
    """
    order = {s: i for i, s in enumerate(seasons)}
    placed = sorted((r for r in results if r.season in order), key=lambda r: (order[r.season], r.leader))
    out: dict[str, dict[str, list[dict]]] = {}
    for r in placed:
        if not r.groups:
            continue
        rows = out.setdefault(r.leader, {"winrates": []})
        for a in r.groups:
            games = int(a.wins) + int(a.losses)
            if a.is_other or games == 0:
                continue
            low, high = wilson(int(a.wins), games)
            rows["winrates"].append({
                "season": r.season, "archetype": a.name, "slug": a.slug,
                "win_rate": round(a.wins / games, _DIGITS), "low": round(low, _DIGITS), "high": round(high, _DIGITS),
                "games": games, "small": games < min_games,
            })
    return {leader: out[leader] for leader in sorted(out)}
