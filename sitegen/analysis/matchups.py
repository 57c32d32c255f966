"""Head-to-head results: each season's archetypes against each other, from the matches table.

Every deck of a season belongs to one group of its partition: an archetype,
or its leader's other decks. A match between two decks of one season counts
for the pair of their groups, whichever leaders they play: the matrix of a
season holds every group of every leader, so games where the two sides use
different leaders and games where they share one pool (the same leader, or
``analysis.by_leader = false``) are counted alike. A cell is the row group's
games against the column group: its win rate is wins / (wins + losses) with a
95% Wilson interval; **draws are counted apart and left out of the win rate**.
Each game between two different groups counts once in each of the two mirrored
cells (a win of one side is a loss of the other). A group against itself (a
mirror) counts each game once, and its win rate is 50% by construction: every
game is won by the group and lost by it. Matches whose decks are in different
seasons, or whose deck is in no partition (left out by a rule), are skipped
and counted.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..model import PartitionResult
from .stats import wilson


@dataclass(frozen=True)
class Matchup:
    """One cell: group ``group`` (leader, key) against ``opponent`` in ``season``.

    For a mirror (``group == opponent``) every decisive game is one win and one
    loss of the group: ``wins`` and ``losses`` both equal its games.
    """

    season: str
    group: tuple[str, str]
    opponent: tuple[str, str]
    wins: int
    losses: int
    draws: int
    mirror: bool

    @property
    def games(self) -> int:
        """Won plus lost games (draws left out); a mirror's games once (its wins and losses are both that number)."""
        return self.wins if self.mirror else self.wins + self.losses

    @property
    def rate(self) -> float:
        """Win rate: wins / (wins + losses); 0.5 for a mirror; NaN without games."""
        return self.wins / (self.wins + self.losses) if self.wins + self.losses else float("nan")

    @property
    def interval(self) -> tuple[float, float]:
        """95% Wilson interval of the win rate; (0.5, 0.5) for a mirror, which is 50% by construction."""
        if self.mirror:
            return (0.5, 0.5)
        return wilson(self.wins, self.games)


@dataclass(frozen=True)
class SeasonMatchups:
    """A season's cells (both directions of every pair, mirrors once), and its match counts."""

    season: str
    cells: tuple[Matchup, ...]
    matches: int
    draws: int
    skipped: int


def matchups(matches: pd.DataFrame, decks: pd.DataFrame, results: Sequence[PartitionResult],
             seasons: Sequence[str]) -> dict[str, SeasonMatchups]:
    """Each season's matchups from checked ``matches`` (deck, opponent, result: see
    :mod:`sitegen.load.matches`), the deck table (deck_id, season) and the partitions' assignments."""
    groups: list[tuple[str, str, str]] = []
    ids, codes = [], []
    for r in results:
        df = r.assignments
        if df is None or not len(df):
            continue
        keys, uniques = pd.factorize(df["archetype"].astype(str))
        base = len(groups)
        groups += [(r.season, r.leader, str(k)) for k in uniques]
        ids.append(df["deck_id"].astype(str).to_numpy())
        codes.append(keys + base)
    group_of = pd.Series(np.concatenate(codes) if codes else np.empty(0, dtype=np.int64),
                         index=pd.Index(np.concatenate(ids) if ids else np.empty(0, dtype=object)))
    group_of = group_of[~group_of.index.duplicated(keep="last")]
    season_of = pd.Series(decks["season"].astype(str).to_numpy(), index=decks["deck_id"].astype(str).to_numpy())
    season_of = season_of[~season_of.index.duplicated(keep="first")]

    a = group_of.reindex(matches["deck"].to_numpy()).to_numpy(dtype=np.float64, na_value=np.nan)
    b = group_of.reindex(matches["opponent"].to_numpy()).to_numpy(dtype=np.float64, na_value=np.nan)
    sa = season_of.reindex(matches["deck"].to_numpy()).to_numpy(dtype=object)
    sb = season_of.reindex(matches["opponent"].to_numpy()).to_numpy(dtype=object)
    ok = ~np.isnan(a) & ~np.isnan(b) & (sa == sb)
    result = matches["result"].to_numpy(dtype=object)
    win, loss, draw = (result == "win"), (result == "loss"), (result == "draw")

    out: dict[str, SeasonMatchups] = {}
    for season in seasons:
        in_season = sa == season
        keep = ok & in_season
        skipped = int((in_season & ~ok).sum())
        ga, gb = a[keep].astype(np.int64), b[keep].astype(np.int64)
        w, lo, d = win[keep].astype(np.int64), loss[keep].astype(np.int64), draw[keep].astype(np.int64)
        mirror = ga == gb
        # Both directions of every game between two groups; a mirror's games once.
        rows = np.concatenate([ga[~mirror], gb[~mirror], ga[mirror]])
        cols = np.concatenate([gb[~mirror], ga[~mirror], gb[mirror]])
        wins = np.concatenate([w[~mirror], lo[~mirror], (w + lo)[mirror]])
        losses = np.concatenate([lo[~mirror], w[~mirror], (w + lo)[mirror]])
        draws = np.concatenate([d[~mirror], d[~mirror], d[mirror]])
        frame = pd.DataFrame({"row": rows, "col": cols, "wins": wins, "losses": losses, "draws": draws})
        summed = frame.groupby(["row", "col"], sort=True).sum()
        cells = []
        for (ra, cb), x in zip(summed.index.tolist(), summed.itertuples(index=False)):
            cells.append(Matchup(season=season, group=groups[ra][1:], opponent=groups[cb][1:],
                                 wins=int(x.wins), losses=int(x.losses), draws=int(x.draws), mirror=ra == cb))
        if cells or keep.any() or skipped:
            out[season] = SeasonMatchups(season=season, cells=tuple(cells), matches=int(keep.sum()),
                                         draws=int(d.sum()), skipped=skipped)
    return out
