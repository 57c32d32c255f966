"""The kinds of chart the pages show: map, share and win-rate trends, share bars, head-to-head heat map.

Each builds a Vega-Lite spec as a Python dict and hands it to :func:`sitegen.site.charts._finish`, which makes
the :class:`~sitegen.site.charts.Chart` (caption, table alternative, checks). Each takes ``checks``, the
build's :class:`~sitegen.site.charts.ChartChecks` (None: the spec is checked at once by a fresh one).
:mod:`sitegen.site.charts` holds that machinery and the archetypes' looks, and re-exports every function here.
"""
from __future__ import annotations

import dataclasses
from collections import Counter
from dataclasses import dataclass
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from ..model import ALL_LEADERS, OTHER_KEY, PartitionResult
from .charts import (OTHER_GREY, PALETTE, SHAPES, _MAP_HEIGHT, _MID_HEIGHT, Chart, ChartChecks, Look, _finish,
                     _num, _pct)


def _leader_text(leader: str) -> str:
    return "all leaders" if leader == ALL_LEADERS else leader


@dataclass(frozen=True)
class _Style:
    """Colour and shape scales for a list of groups, in legend order."""

    domain: list[str]
    colours: list[str]
    shapes: list[str]

    def color(self, field: str, title: str = "Archetype") -> dict:
        return {"field": field, "type": "nominal", "title": title, "sort": self.domain,
                "scale": {"domain": self.domain, "range": self.colours}}

    def shape(self, field: str, title: str = "Archetype") -> dict:
        return {"field": field, "type": "nominal", "title": title, "sort": self.domain,
                "scale": {"domain": self.domain, "range": self.shapes}}


def _style(groups: Sequence[tuple[str, bool]], looks: Mapping[str, Look] | None = None) -> _Style:
    """Colours and shapes for the groups, in legend order.

    A name found in ``looks`` (display name -> :class:`Look`, see
    :func:`archetype_looks`) takes its look, so an archetype wears the same
    colour in every chart of its leader; other names take the palette in
    order, a colour per name, then the next shape. Other-decks groups are
    grey and differ by shape.
    """
    looks = looks or {}
    domain: list[str] = []
    colours: list[str] = []
    shapes: list[str] = []
    i = j = 0
    for name, is_other in groups:
        if name in domain:
            continue
        domain.append(name)
        if is_other:  # several other groups (one per leader) stay grey and differ by shape
            colours.append(OTHER_GREY)
            shapes.append(SHAPES[j % len(SHAPES)])
            j += 1
            continue
        if name in looks:
            colours.append(looks[name].colour)
            shapes.append(looks[name].shape)
            continue
        colours.append(PALETTE[i % len(PALETTE)])
        shapes.append(SHAPES[(i // len(PALETTE)) % len(SHAPES)])
        i += 1
    return _Style(domain, colours, shapes)


def _ordered(values: Iterable[str]) -> list[str]:
    """Distinct values in first-seen order."""
    return list(dict.fromkeys(values))


def _rate_tooltip() -> list[dict]:
    """Tooltip fields of a win rate and its 95% interval (fields win_rate, low, high)."""
    return [{"field": "win_rate", "type": "quantitative", "title": "Win rate", "format": ".1%"},
            {"field": "low", "type": "quantitative", "title": "Interval from", "format": ".1%"},
            {"field": "high", "type": "quantitative", "title": "Interval to", "format": ".1%"}]


def _legend_bottom() -> dict:
    # charts.js gives a narrow chart one column and labels cut to its width
    return {"orient": "bottom", "columns": 2, "labelLimit": 280, "symbolStrokeWidth": 2}


# -- builders -----------------------------------------------------------------


def map_chart(result: PartitionResult, names: Mapping[str, str], chart_id: str,
              looks: Mapping[str, Look] | None = None, hrefs: Mapping[str, str] | None = None,
              checks: ChartChecks | None = None) -> Chart:
    """The t-SNE map of one partition: one point per drawn deck, coloured by archetype.

    ``names`` maps archetype keys to display names (falling back to each
    archetype's own name); ``looks`` maps keys to each archetype's
    :class:`Look` (else the palette is taken in legend order); ``hrefs``
    maps keys to the address of the archetype's page as seen from the page
    the map is on, so a click on a point opens it. Legend order follows
    ``result.groups``; the other-decks group is grey. Points are drawn as
    outlines at full colour (a cloud stays readable where points overlap, and
    each outline keeps its colour's contrast). The rows go in
    :attr:`Chart.values`, for a data file of their own.
    """
    groups = {g.key: g for g in result.groups}
    hrefs = hrefs or {}

    def display(key: str) -> str:
        if key in names:
            return str(names[key])
        if key in groups:
            return groups[key].name
        return str(key)

    points = result.map_points
    keys_seen = points["archetype"].astype(str).tolist() if len(points) else []
    order = [g.key for g in result.groups] + sorted(set(keys_seen) - set(groups))
    by_name = {display(k): looks[k] for k in order if looks and k in looks}
    style = _style([(display(k), k == OTHER_KEY or (k in groups and groups[k].is_other)) for k in order], by_name)

    # As _num(x, 3) point by point, but the finite test is done on whole columns: a season page
    # draws thousands of points for each of its leaders.
    xs = points["x"].to_numpy(dtype=float, na_value=np.nan) if len(points) else np.zeros(0)
    ys = points["y"].to_numpy(dtype=float, na_value=np.nan) if len(points) else np.zeros(0)
    drawn_rows = np.flatnonzero(np.isfinite(xs) & np.isfinite(ys))  # the others were left off the map
    shown = {key: display(key) for key in dict.fromkeys(keys_seen)}
    keys_drawn = [keys_seen[i] for i in drawn_rows.tolist()]
    names_drawn = [shown[k] for k in keys_drawn]
    decks, cards = points["deck_id"].to_numpy(dtype=object), points["cards"].to_numpy(dtype=object)
    values = [{"deck": str(deck), "archetype": name, "cards": str(card), "x": round(x, 3), "y": round(y, 3),
               "href": hrefs.get(key, "")}
              for deck, key, name, card, x, y in zip(decks[drawn_rows].tolist(), keys_drawn, names_drawn,
                                                    cards[drawn_rows].tolist(), xs[drawn_rows].tolist(),
                                                    ys[drawn_rows].tolist())]
    counts = Counter(names_drawn)

    bare_axis = {"type": "quantitative", "axis": None, "scale": {"zero": False, "nice": False}}
    encoding = {
        "x": {**bare_axis, "field": "x", "title": "Map x"},
        "y": {**bare_axis, "field": "y", "title": "Map y"},
        "color": {**style.color("archetype"), "legend": _legend_bottom()},
        "shape": {**style.shape("archetype"), "legend": _legend_bottom()},
        "tooltip": [
            {"field": "archetype", "type": "nominal", "title": "Archetype"},
            {"field": "cards", "type": "nominal", "title": "Its telling cards"},
            {"field": "deck", "type": "nominal", "title": "Deck"},
        ],
    }
    if any(v["href"] for v in values):
        encoding["href"] = {"field": "href", "type": "nominal"}
    spec = {
        "width": "container",
        "height": _MAP_HEIGHT,
        "data": {"values": values},
        # aria off: thousands of points are not read out one by one (the page's table stands in)
        "mark": {"type": "point", "filled": False, "size": 36, "strokeWidth": 1.5, "opacity": 1, "aria": False},
        "encoding": encoding,
        "config": {"view": {"stroke": None}},
    }
    drawn = len(values)
    sampled = f"{drawn} of {result.n_decks} decks" if drawn < result.n_decks else f"{drawn} decks"
    caption = (
        f"Map of {sampled} ({_leader_text(result.leader)}, {result.season}), coloured by archetype. "
        "Decks that play similar cards sit close together; distances on the map are not meaningful "
        "beyond local neighbourhoods." + (" Select a point to open its archetype's page." if "href" in encoding else "")
    )
    rows = [(name, counts.get(name, 0)) for name in style.domain if counts.get(name, 0)]
    chart = _finish(chart_id, spec, caption, ("Archetype", "Decks drawn"), rows, checks)
    return dataclasses.replace(chart, spec={**chart.spec, "data": {"values": []}}, values=values, hidden=True)


def _group_style(rows: Sequence[Mapping[str, Any]], looks: Mapping[str, Look] | None = None) -> _Style:
    """Style archetypes by ``looks`` (name -> Look), else in first-seen order; a row with ``is_other`` true is grey."""
    return _style([(str(r["archetype"]), bool(r.get("is_other", False))) for r in rows], looks)


def _season_axis() -> dict:
    """The season axis: level labels, cut at 120 px; charts.js slants them on a narrow screen."""
    return {"labelAngle": 0, "labelLimit": 120, "labelOverlap": "greedy"}


def _season_order(rows: Sequence[Mapping[str, Any]], seasons: Sequence[str] | None) -> list[str]:
    """The axis order: ``seasons`` when given (publication order), else first seen in ``rows``."""
    seen = _ordered(str(r["season"]) for r in rows)
    if seasons is None:
        return seen
    order = [str(x) for x in seasons if str(x) in seen]
    return order + [x for x in seen if x not in order]


def latest_share_order(rows: Sequence[Mapping[str, Any]], seasons: Sequence[str] | None = None) -> list[str]:
    """Archetype names by their share in the latest season they appear in (latest seasons first,
    then largest share, then name); other-decks groups last. The order of a trend legend."""
    order = _season_order(rows, seasons)
    rank = {x: i for i, x in enumerate(order)}
    last: dict[str, tuple[int, float, bool]] = {}
    for r in rows:
        name, at = str(r["archetype"]), rank[str(r["season"])]
        share = _num(r.get("share", 0.0)) or 0.0
        if name not in last or at > last[name][0]:
            last[name] = (at, share, bool(r.get("is_other", False)))
    return sorted(last, key=lambda n: (last[n][2], -last[n][0], -last[n][1], n))


def _in_order(rows: Sequence[Mapping[str, Any]], names: Sequence[str] | None) -> list[Mapping[str, Any]]:
    """``rows`` with their archetypes in the order of ``names`` (others after, as they came): the legend's order."""
    if not names:
        return list(rows)
    at = {n: i for i, n in enumerate(names)}
    return sorted(rows, key=lambda r: at.get(str(r["archetype"]), len(at)))


def share_chart(rows: Sequence[Mapping[str, Any]], chart_id: str, title: str,
                seasons: Sequence[str] | None = None, looks: Mapping[str, Look] | None = None,
                checks: ChartChecks | None = None) -> Chart:
    """Each archetype's share of decks across seasons, one line per archetype.

    ``rows``: dicts with ``season``, ``archetype``, ``share`` (0..1),
    ``decks`` and optionally ``is_other``. The axis keeps ``seasons`` (the
    publication order) when given, else the order seasons first appear in
    ``rows``; ``looks`` (archetype name -> Look) sets the colours, else the
    first-seen order of archetypes does. The legend lists archetypes by
    their latest share (:func:`latest_share_order`); an archetype seen in
    one season only is drawn as a larger point with its name beside it, as
    a line needs two seasons.
    """
    seasons = _season_order(rows, seasons)
    style = _group_style(_in_order(rows, latest_share_order(rows, seasons)), looks)
    values = [{"season": str(r["season"]), "archetype": str(r["archetype"]),
               "share": _num(r["share"]), "decks": int(r["decks"])} for r in rows]
    counts: dict[str, int] = {}
    for v in values:
        counts[v["archetype"]] = counts.get(v["archetype"], 0) + 1
    once = sorted(n for n, c in counts.items() if c == 1)
    spec = {
        "width": "container",
        "height": _MID_HEIGHT,
        "data": {"values": values},
        "encoding": {
            "x": {"field": "season", "type": "ordinal", "title": "Season", "sort": seasons,
                  "axis": _season_axis()},
            "y": {"field": "share", "type": "quantitative", "title": "Share of decks",
                  "axis": {"format": ".0%"}},
            "color": {**style.color("archetype"), "legend": _legend_bottom()},
            "tooltip": [
                {"field": "season", "type": "ordinal", "title": "Season"},
                {"field": "archetype", "type": "nominal", "title": "Archetype"},
                {"field": "share", "type": "quantitative", "title": "Share", "format": ".1%"},
                {"field": "decks", "type": "quantitative", "title": "Decks"},
            ],
        },
        "layer": [
            {"mark": {"type": "line", "strokeWidth": 2}},
            {"mark": {"type": "point", "filled": True, "size": 60},
             "encoding": {"shape": {**style.shape("archetype"), "legend": _legend_bottom()}}},
        ] + ([
            {"transform": [{"filter": {"field": "archetype", "oneOf": once}}],
             "mark": {"type": "point", "filled": True, "size": 160, "stroke": "#000000", "strokeWidth": 1},
             "encoding": {"shape": {**style.shape("archetype"), "legend": _legend_bottom()}}},
            {"transform": [{"filter": {"field": "archetype", "oneOf": once}}],
             "mark": {"type": "text", "align": "left", "dx": 9, "fontSize": 11},
             "encoding": {"text": {"field": "archetype", "type": "nominal"}, "color": {"value": "#222222"}}},
        ] if once else []),
    }
    caption = f"{title}: each archetype's share of the decks in each season."
    if once:
        caption += " Seen in one season only (a larger point with its name): " + ", ".join(once) + "."
    table = [(v["season"], v["archetype"], _pct(v["share"]), v["decks"]) for v in values]
    return _finish(chart_id, spec, caption, ("Season", "Archetype", "Share", "Decks"), table, checks)


def winrate_chart(rows: Sequence[Mapping[str, Any]], chart_id: str,
                  seasons: Sequence[str] | None = None, looks: Mapping[str, Look] | None = None,
                  order: Sequence[str] | None = None, checks: ChartChecks | None = None) -> Chart:
    """Win rate by season with 95% Wilson intervals; small samples drawn hollow.

    ``rows``: dicts with ``season``, ``archetype``, ``win_rate``, ``low``,
    ``high`` (the interval), ``games``, ``small`` (bool) and optionally
    ``is_other``. Season order and ``looks`` as in :func:`share_chart`;
    ``order``: the legend's order of archetype names (the share chart's,
    by latest share), else first seen.
    """
    seasons = _season_order(rows, seasons)
    style = _group_style(_in_order(rows, order), looks)
    values = []
    for r in rows:
        small = bool(r["small"])
        values.append({
            "season": str(r["season"]), "archetype": str(r["archetype"]),
            "win_rate": _num(r["win_rate"]), "low": _num(r["low"]), "high": _num(r["high"]),
            "games": int(r["games"]), "small": small,
            "sample": "small sample: read with care" if small else "enough games",
        })
    x = {"field": "season", "type": "nominal", "title": "Season", "sort": seasons,
         "scale": {"type": "band", "paddingInner": 0.2}, "axis": _season_axis()}
    offset = {"field": "archetype", "type": "nominal", "title": "Archetype", "sort": style.domain}
    tooltip = [
        {"field": "season", "type": "nominal", "title": "Season"},
        {"field": "archetype", "type": "nominal", "title": "Archetype"},
        *_rate_tooltip(),
        {"field": "games", "type": "quantitative", "title": "Games"},
        {"field": "sample", "type": "nominal", "title": "Sample"},
    ]
    color = {**style.color("archetype"), "legend": _legend_bottom()}

    def points(small: bool) -> dict:
        return {"transform": [{"filter": {"field": "small", "equal": small}}],
                "mark": {"type": "point", "filled": not small, "size": 70, "strokeWidth": 2},
                "encoding": {"x": x, "xOffset": offset, "tooltip": tooltip,
                             "y": {"field": "win_rate", "type": "quantitative", "title": "Win rate"},
                             "color": color,
                             "shape": {**style.shape("archetype"), "legend": _legend_bottom()}}}

    spec = {
        "width": "container",
        "height": _MID_HEIGHT,
        "data": {"values": values},
        "layer": [
            {"data": {"values": [{"even": 0.5}]}, "mark": {"type": "rule", "color": OTHER_GREY, "strokeDash": [4, 3]},
             "encoding": {"y": {"field": "even", "type": "quantitative"}}},
            {"mark": {"type": "rule", "strokeWidth": 2},
             "encoding": {"x": x, "xOffset": offset, "tooltip": tooltip,
                          "y": {"field": "low", "type": "quantitative", "title": "Win rate",
                                "axis": {"format": ".0%"}, "scale": {"zero": False}},
                          "y2": {"field": "high"}, "color": color}},
            # an empty filtered layer makes Vega warn of an infinite extent, so only layers with points
            *[points(small) for small in (False, True) if any(v["small"] == small for v in values)],
        ],
    }
    caption = ("Win rate by season with its 95% Wilson interval. Hollow points are small samples "
               "whose win rate may be far from the true one.")
    table = [(v["season"], v["archetype"], _pct(v["win_rate"]), f"{_pct(v['low'])} to {_pct(v['high'])}",
              v["games"], "yes" if v["small"] else "") for v in values]
    return _finish(chart_id, spec, caption,
                   ("Season", "Archetype", "Win rate", "95% interval", "Games", "Small sample"), table, checks)


def bar_share_chart(rows: Sequence[Mapping[str, Any]], chart_id: str, title: str = "Archetype share",
                    looks: Mapping[str, Look] | None = None, checks: ChartChecks | None = None) -> Chart:
    """One partition's archetypes by share of decks, largest first, with deck counts.

    ``rows``: dicts with ``archetype``, ``share``, ``decks`` and optionally
    ``is_other``. Colours follow the order given (use the same order as the
    partition's map) unless ``looks`` gives them; bars are sorted by share, the other group last.
    """
    style = _group_style(rows, looks)
    values = [{"archetype": str(r["archetype"]), "share": _num(r["share"]), "decks": int(r["decks"]),
               "label": f"{_pct(_num(r['share']))} ({int(r['decks'])})", "other": bool(r.get("is_other", False))}
              for r in rows]
    ordered = sorted(values, key=lambda v: (v["other"], -(v["share"] or 0.0), v["archetype"]))
    sort = [v["archetype"] for v in ordered]
    y = {"field": "archetype", "type": "nominal", "title": None, "sort": sort, "axis": {"labelLimit": 240}}
    spec = {
        "width": "container",
        # a fixed height grown with the bars: a "step" height warns under the container width
        "height": 26 * max(len(ordered), 1),
        "data": {"values": [{k: v[k] for k in ("archetype", "share", "decks", "label")} for v in ordered]},
        "encoding": {
            "y": y,
            "x": {"field": "share", "type": "quantitative", "title": "Share of decks",
                  "axis": {"format": ".0%"}},
            "tooltip": [
                {"field": "archetype", "type": "nominal", "title": "Archetype"},
                {"field": "share", "type": "quantitative", "title": "Share", "format": ".1%"},
                {"field": "decks", "type": "quantitative", "title": "Decks"},
            ],
        },
        "layer": [
            {"mark": {"type": "bar"}, "encoding": {"color": {**style.color("archetype"), "legend": None}}},
            {"mark": {"type": "text", "align": "left", "dx": 4},
             "encoding": {"text": {"field": "label", "type": "nominal"}}},
        ],
    }
    caption = f"{title}: share of decks per archetype, with deck counts."
    table = [(v["archetype"], _pct(v["share"]), v["decks"]) for v in ordered]
    return _finish(chart_id, spec, caption, ("Archetype", "Share", "Decks"), table, checks)


def matchup_chart(rows: Sequence[Mapping[str, Any]], order: Sequence[str], chart_id: str, min_games: int,
                  checks: ChartChecks | None = None) -> Chart:
    """A season's head-to-head heat map: each cell the row archetype's win rate against the column's.

    ``rows``: dicts with ``archetype``, ``opponent`` (labels in ``order``),
    ``win_rate``, ``low``, ``high``, ``games``, ``draws``, ``small`` and
    ``mirror``. Cells with fewer than ``min_games`` games are drawn grey (their
    rate is in the tooltip and the table, not in the colour); mirrors are 50%
    by construction and drawn grey too.
    """
    values = []
    for r in rows:
        small, mirror = bool(r["small"]), bool(r["mirror"])
        values.append({
            "archetype": str(r["archetype"]), "opponent": str(r["opponent"]),
            "win_rate": _num(r["win_rate"]), "low": _num(r["low"]), "high": _num(r["high"]),
            "games": int(r["games"]), "draws": int(r["draws"]), "small": small, "mirror": mirror,
            "shown": not small and not mirror,
            "sample": ("mirror: 50% by construction" if mirror else
                       f"small sample: fewer than {min_games} games" if small else "enough games"),
        })
    labels = list(order)
    side = max(240, min(900, 22 * len(labels)))
    x = {"field": "opponent", "type": "nominal", "title": "Against", "sort": labels,
         "axis": {"labelAngle": -45, "labelLimit": 160}}
    y = {"field": "archetype", "type": "nominal", "title": "Win rate of", "sort": labels,
         "axis": {"labelLimit": 200}}
    tooltip = [
        {"field": "archetype", "type": "nominal", "title": "Win rate of"},
        {"field": "opponent", "type": "nominal", "title": "Against"},
        *_rate_tooltip(),
        {"field": "games", "type": "quantitative", "title": "Games"},
        {"field": "draws", "type": "quantitative", "title": "Draws (not in the rate)"},
        {"field": "sample", "type": "nominal", "title": "Sample"},
    ]
    layers = []
    if any(not v["shown"] for v in values):
        layers.append({"transform": [{"filter": {"field": "shown", "equal": False}}],
                       "mark": {"type": "rect", "color": "#8c8c8c"},
                       "encoding": {"x": x, "y": y, "tooltip": tooltip}})
    if any(v["shown"] for v in values):
        layers.append({"transform": [{"filter": {"field": "shown", "equal": True}}],
                       "mark": {"type": "rect"},
                       "encoding": {"x": x, "y": y, "tooltip": tooltip,
                                    "color": {"field": "win_rate", "type": "quantitative", "title": "Win rate",
                                              "scale": {"scheme": "blueorange", "domain": [0.25, 0.75],
                                                        "domainMid": 0.5, "clamp": True, "reverse": True},
                                              "legend": {"format": ".0%", "orient": "bottom"}}}})
    spec = {"width": side, "height": side, "data": {"values": values}, "layer": layers}
    caption = ("Head-to-head win rates: each cell is the row archetype's share of won games against the column's "
               "(draws left out), blue above 50%, orange below. Grey cells are small samples, with fewer than "
               f"{min_games} games, or mirrors, 50% by construction. The table gives each 95% Wilson interval.")
    table = [(v["archetype"], v["opponent"], _pct(v["win_rate"]),
              "" if v["mirror"] else f"{_pct(v['low'])} to {_pct(v['high'])}", v["games"], v["draws"],
              "mirror" if v["mirror"] else ("small sample" if v["small"] else "")) for v in values]
    chart = _finish(chart_id, spec, caption,
                    ("Win rate of", "Against", "Win rate", "95% interval", "Games", "Draws", "Note"), table, checks)
    # The cells (a season of many archetypes has hundreds) live in a data file beside the page.
    return dataclasses.replace(chart, spec={**chart.spec, "data": {"values": []}}, values=values)
