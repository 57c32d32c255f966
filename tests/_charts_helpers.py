"""Hand-made partition results and trend rows for the chart and browser tests.

The data is invented (our truth, planted): ten archetypes plus the other
group, so the palette has to repeat colours with a second shape.
"""
from __future__ import annotations

import jinja2
import numpy as np
import pandas as pd

from sitegen.model import OTHER_KEY, Archetype, PartitionResult
from sitegen.resources import default_templates_dir
from sitegen.site import charts

#: The policy every site page carries (notes/site-layout.md).
CSP = ("default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
       "object-src 'none'; base-uri 'none'; form-action 'none'")

N_ARCHETYPES = 10
KEYS = tuple(f"a{i}" for i in range(1, N_ARCHETYPES + 1))


def arch(key: str, n_decks: int, *, is_other: bool = False) -> Archetype:
    return Archetype(
        key=key, slug=f"slug-{key}", name=f"Arch {key}", season="Spring", leader="Vessa", n_decks=n_decks,
        share=n_decks / 220, signature=(), medoid_deck_id=f"{key}-0", medoid=(), medoid_total=40, inclusion=(),
        profile={}, is_other=is_other,
    )


def partition(n_per: int = 20, *, seed: int = 0) -> PartitionResult:
    """Ten archetypes of ``n_per`` decks plus ``n_per`` other decks, on a map of blobs."""
    rng = np.random.default_rng(seed)
    keys = KEYS + (OTHER_KEY,)
    rows = []
    for i, key in enumerate(keys):
        cx, cy = 10 * np.cos(i), 10 * np.sin(i)
        for j in range(n_per):
            rows.append({"deck_id": f"{key}-{j}", "archetype": key, "x": cx + rng.normal(), "y": cy + rng.normal(),
                         "cards": f"Card {i}, Card {j % 5}"})
    points = pd.DataFrame(rows)
    assignments = points[["deck_id", "archetype"]].assign(distance=0.1, x=points["x"], y=points["y"])
    return PartitionResult(
        season="Spring", leader="Vessa", n_decks=len(rows), status="clustered", reason="", chosen_k=N_ARCHETYPES,
        silhouette=tuple((k, 0.05 + 0.02 * k - (0.03 if k > 10 else 0)) for k in range(2, 13)),
        k_reason="k = 10 had the highest mean silhouette.",
        archetypes=tuple(arch(k, n_per) for k in KEYS), other=arch(OTHER_KEY, n_per, is_other=True),
        assignments=assignments, map_points=points, inclusion=(),
    )


SEASONS = ("Winter", "Autumn", "Spring")  # publication order, deliberately not alphabetical


def share_rows() -> list[dict]:
    return [
        {"season": s, "archetype": a, "share": share, "decks": int(share * 200), "is_other": a == "Other decks"}
        for s, split in zip(SEASONS, ((0.5, 0.3, 0.2), (0.4, 0.4, 0.2), (0.2, 0.6, 0.2)))
        for a, share in zip(("Ember rush", "Tide control", "Other decks"), split)
    ]


def winrate_rows() -> list[dict]:
    return [
        {"season": "Winter", "archetype": "Ember rush", "win_rate": 0.55, "low": 0.50, "high": 0.60, "games": 400,
         "small": False},
        {"season": "Winter", "archetype": "Tide control", "win_rate": 0.40, "low": 0.22, "high": 0.61, "games": 20,
         "small": True},
        {"season": "Autumn", "archetype": "Ember rush", "win_rate": 0.51, "low": 0.47, "high": 0.55, "games": 600,
         "small": False},
        {"season": "Autumn", "archetype": "Tide control", "win_rate": 0.48, "low": 0.44, "high": 0.52, "games": 500,
         "small": False},
    ]


def bar_rows() -> list[dict]:
    return [
        {"archetype": "Tide control", "share": 0.25, "decks": 50},
        {"archetype": "Ember rush", "share": 0.45, "decks": 90},
        {"archetype": "Other decks", "share": 0.30, "decks": 60, "is_other": True},
    ]


#: A display name with markup in it, to check it stays text.
MARKUP_NAME = "<b>Bold</b> & co"


def all_charts() -> list[charts.Chart]:
    """One chart of each kind (ids unique on one page)."""
    result = partition()
    names = {"a1": MARKUP_NAME}
    return [
        charts.map_chart(result, names, "map"),
        charts.share_chart(share_rows(), "share", "Vessa"),
        charts.winrate_chart(winrate_rows(), "winrate"),
        charts.bar_share_chart(bar_rows(), "bars"),
    ]


_PAGE = """<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="{{ csp }}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Chart test page</title>
<link rel="stylesheet" href="{{ urls.charts_css }}">
</head>
<body>
<main>
<h1>Charts</h1>
{{ extra|safe }}
{% for chart in charts %}{% include "_chart.html" %}
{% endfor %}
</main>
<script src="{{ urls.vega }}" defer></script>
<script src="{{ urls.charts_js }}" defer></script>
</body>
</html>
"""


def render_page(charts_: list[charts.Chart], urls: dict[str, str], extra: str = "") -> str:
    """A page holding ``charts_`` through templates/_chart.html, under the site's CSP."""
    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(default_templates_dir())), autoescape=True,
                             undefined=jinja2.StrictUndefined)
    return env.from_string(_PAGE).render(charts=charts_, urls=urls, csp=CSP, extra=extra)
