"""Vega-Lite chart specs for the site, built as plain dicts and checked at build time.

Each builder takes plain data (a :class:`~sitegen.model.PartitionResult` or
a list of row dicts) and returns a :class:`Chart`: the spec, a caption, and
the table the chart summarises (its text alternative on the page). Every
builder passes its spec through :func:`validate_spec`, so a spec that breaks
the Vega-Lite schema or does not compile fails the build, not the browser.
Specs hold their data inline and reach pages only through ``|tojson``.
"""
from __future__ import annotations

import dataclasses
import functools
import hashlib
import importlib.util
import io
import json
import math
import pickle
import re
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterable, Iterator, Sequence

from ..errors import RenderError

# Okabe, M. & Ito, K. (2008), "Color Universal Design (CUD): how to make
# figures and presentations that are friendly to colorblind people" -- the
# eight colours as published (kept for reference and for the tests).
OKABE_ITO: tuple[str, ...] = (
    "#E69F00",  # orange
    "#56B4E9",  # sky blue
    "#009E73",  # bluish green
    "#0072B2",  # blue
    "#D55E00",  # vermillion
    "#CC79A7",  # reddish purple
    "#000000",  # black
    "#F0E442",  # yellow
)
#: The archetype colours: Okabe & Ito's hues that stand at least 3:1 against
#: the white chart background (WCAG 2.1 success criterion 1.4.11, non-text
#: contrast), their orange darkened to an ochre that does; their yellow and
#: sky blue (1.3:1 and 2.3:1 on white) are left out. Beyond six archetypes a
#: leader's charts tell them apart by shape (see :func:`archetype_looks`).
PALETTE: tuple[str, ...] = (
    "#0072B2",  # blue
    "#D55E00",  # vermillion
    "#009E73",  # bluish green
    "#CC79A7",  # reddish purple
    "#9E6A00",  # ochre (Okabe & Ito's orange, darkened)
    "#000000",  # black
)
#: The other-decks group: a mid grey that stands 4.5:1 against white.
OTHER_GREY = "#767676"
#: The chart background, written into every spec (the page's own paper colour).
BACKGROUND = "#ffffff"
#: Point shapes: the first for the first six archetypes of a leader, then the next.
SHAPES: tuple[str, ...] = ("circle", "square", "triangle-up", "diamond", "cross", "triangle-down")


@dataclass(frozen=True)
class Look:
    """How one archetype is drawn in every chart of its leader: colour and point shape."""

    colour: str
    shape: str


OTHER_LOOK = Look(OTHER_GREY, "circle")


def archetype_looks(seasons: Sequence[Iterable[str]]) -> dict[str, Look]:
    """A look for every archetype of one leader, that follows the archetype, not its rank.

    ``seasons``: the archetype identities (page slugs) of the leader in each
    season, oldest first. Archetypes are taken in the order they first appear
    (season, then slug); each gets the first colour no archetype of its first
    season already holds, and the first (colour, shape) pair no earlier
    archetype of the leader holds. An archetype's look depends only on the
    seasons up to its first, so adding a season or rebuilding never changes
    the look of an archetype already drawn.
    """
    combos = [Look(c, sh) for sh in SHAPES for c in PALETTE]
    looks: dict[str, Look] = {}
    used: set[Look] = set()
    for members in seasons:
        members = sorted(set(members))
        for slug in members:
            if slug in looks:
                continue
            present = {looks[m].colour for m in members if m in looks}
            free = [k for k in combos if k not in used] or combos
            fresh = [k for k in free if k.colour not in present]
            look = (fresh or free)[0]
            looks[slug] = look
            used.add(look)
    return looks


#: The site's system font stack (no web fonts), so chart text matches the page.
SYSTEM_FONT = 'system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif'

# Shared look: the page's font, and text a little larger than Vega's defaults so it reads on phones.
_CONFIG = {
    "font": SYSTEM_FONT,
    "axis": {"labelFontSize": 12, "titleFontSize": 12},
    "legend": {"labelFontSize": 12, "titleFontSize": 12},
    "background": BACKGROUND,
}

_ID = re.compile(r"[A-Za-z][A-Za-z0-9_-]*\Z")
_MAP_HEIGHT = 420
_MID_HEIGHT = 300


@dataclass(frozen=True)
class Chart:
    """One chart: its element id, Vega-Lite spec, caption, and text alternative.

    ``columns`` and ``rows`` are the table the chart summarises, with cells
    already formatted for display; a page shows them when a reader cannot
    or would rather not read the chart.
    """

    id: str
    spec: dict
    caption: str
    columns: tuple[str, ...]
    rows: tuple[tuple, ...]
    #: The rows of a chart whose data lives in a file of its own (a map holds
    #: thousands of points): the spec on the page then holds an empty
    #: ``data.values``, filled by charts.js from the script :func:`data_script`
    #: makes, loaded only when the chart is drawn. None: the data is in the spec.
    values: list | None = None
    #: True for a cloud of many points that a screen reader should not walk
    #: through mark by mark: the page hides the drawing and points to the table.
    hidden: bool = False


#: The global the chart data files fill, one entry per chart id.
DATA_GLOBAL = "SITEGEN_CHART_DATA"


def data_script(chart_id: str, values: list) -> bytes:
    """A chart's rows as a script that registers them under its id in :data:`DATA_GLOBAL`.

    A script, not a JSON file, because pages opened from file:// may not
    fetch() but may load a script of their own site under the page's CSP
    (script-src 'self'). ``<``, ``>`` and ``&`` are written as \\u escapes.
    """
    text = json.dumps(values, ensure_ascii=True, separators=(",", ":"), allow_nan=False)
    text = text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")
    key = json.dumps(chart_id)
    return (f"(window.{DATA_GLOBAL} = window.{DATA_GLOBAL} || {{}})[{key}] = {text};\n").encode("utf-8")


class LazyChart:
    """A :class:`Chart` made when a page first reads it, ``kind(**inputs, checks=checks)``, for
    charts costly to make (a map holds thousands of points).

    In a page's memo key (site/keys.py) it stands by :meth:`key_text`, made from ``kind`` and
    ``inputs`` alone: the very values the chart is drawn from, so a chart kind that gains an input
    changes its key with no list to keep. A page whose context is unchanged is then reused without
    making its charts at all. Pickled (sent to another process), it is itself: its kind and inputs
    (the chart made there when read, checked by a fresh :class:`ChartChecks`).
    """

    __slots__ = ("kind", "inputs", "checks", "_chart", "_key")

    def __init__(self, kind: Callable[..., Chart], inputs: dict[str, Any], checks: ChartChecks | None = None) -> None:
        self.kind = kind
        self.inputs = dict(inputs)
        self.checks = checks
        self._chart: Chart | None = None
        self._key: str | None = None

    def __getattr__(self, name: str) -> Any:
        if name.startswith("_"):
            raise AttributeError(name)
        if self._chart is None:
            self._chart = self.kind(**self.inputs, checks=self.checks)
        return getattr(self._chart, name)

    def key_text(self) -> str:
        """A digest of the chart kind (by name) and its inputs (see :func:`input_key`)."""
        if self._key is None:
            self._key = f"lazy-chart\0{input_key(self.kind, self.inputs)}"
        return self._key

    def __reduce__(self):
        return (LazyChart, (self.kind, self.inputs))


def input_key(kind: Callable[..., Chart], inputs: dict[str, Any]) -> str:
    """A digest of a chart kind (a function pickles by its name) and its inputs by name, equal for
    equal values wherever they come from.

    Pickled without pickle's memo (so values shared by reference or copied write alike); a
    :class:`~sitegen.model.PartitionResult` with a ``rows_key`` stands by that key for its two row
    tables (assignments and map points) and the sample its map was drawn from, which it names.
    """
    from ..model import PartitionResult

    def plain(value: Any) -> Any:
        if isinstance(value, PartitionResult) and value.rows_key:
            return ("rows", value.rows_key,
                    dataclasses.replace(value, assignments=None, map_points=None, map_sample=None))
        return value

    buf = io.BytesIO()
    pickler = pickle.Pickler(buf, protocol=5)
    pickler.fast = True
    pickler.dump((kind, sorted((name, plain(value)) for name, value in inputs.items())))
    return hashlib.sha256(buf.getvalue()).hexdigest()


# -- checking -----------------------------------------------------------------


@functools.cache
def _schema_file() -> tuple[Path, str]:
    """The Vega-Lite JSON schema file shipped in altair, and its version (``v6.4.1``).

    Found by reading two of altair's own files rather than importing it (about
    0.3 s, paid by every build for the ``$schema`` URL alone); when altair's
    layout is not the expected one, altair is imported and asked.
    """
    found = importlib.util.find_spec("altair")
    for folder in (found.submodule_search_locations or []) if found is not None else []:
        base = Path(folder) / "vegalite"
        try:
            major = re.search(r"^from \.(v\d+) import \*", (base / "__init__.py").read_text("utf-8"), re.M)
            schema = base / major.group(1) / "schema" if major else None
            version = re.search(r'^SCHEMA_VERSION = "(v[0-9.]+)"$', (schema / "__init__.py").read_text("utf-8"), re.M) \
                if schema else None
        except OSError:
            continue
        if version and (schema / "vega-lite-schema.json").is_file():
            return schema / "vega-lite-schema.json", version.group(1)
    import altair

    base = Path(altair.__file__).resolve().parent / "vegalite"
    major = altair.SCHEMA_VERSION.split(".")[0]  # "v6"
    return base / major / "schema" / "vega-lite-schema.json", altair.SCHEMA_VERSION


def _schema() -> dict:
    """The Vega-Lite JSON schema shipped in altair (read once, by :func:`_validator`)."""
    with _schema_file()[0].open(encoding="utf-8") as fh:
        return json.load(fh)


@functools.cache
def _validator() -> Any:
    import jsonschema

    schema = _schema()
    cls = jsonschema.validators.validator_for(schema)
    return cls(schema)


def schema_url() -> str:
    """The ``$schema`` URL every spec names (an identifier; nothing is fetched)."""
    return f"https://vega.github.io/schema/vega-lite/{_schema_file()[1]}.json"


@functools.cache
def vl_version() -> str:
    """The Vega-Lite version (``6.4``) vl-convert compiles with and bundles.

    It matches the schema's major.minor when vl-convert carries that version,
    else the newest it carries with the same major version.
    """
    import vl_convert

    wanted = _schema_file()[1].lstrip("v").split(".")
    have = list(vl_convert.get_vegalite_versions())
    exact = ".".join(wanted[:2])
    if exact in have:
        return exact
    same_major = [v for v in have if v.split(".")[0] == wanted[0]]
    if not same_major:
        raise RenderError(
            f"vl-convert carries Vega-Lite {', '.join(have)} but the schema in altair is "
            f"v{'.'.join(wanted)}; install matching versions of altair and vl-convert-python"
        )
    return max(same_major, key=lambda v: tuple(int(p) for p in v.split(".")))


def check_salt(code_salt: str) -> str:
    """What a check's verdict depends on besides the spec: sitegen's code and templates
    (``code_salt``), the schema file and the vl-convert release that compiles."""
    from importlib.metadata import PackageNotFoundError, version

    from ..reuse.files import file_stamp

    path, schema_version = _schema_file()
    try:
        compiler = version("vl-convert-python")
    except PackageNotFoundError:  # pragma: no cover - a dependency
        compiler = "?"
    where = file_stamp(path) or str(path)
    text = f"chart-checks\0{code_salt}\0{where}\0{schema_version}\0{compiler}"
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


_DIGEST = re.compile(r"[0-9a-f]{64}")


def _all_objects(values: Any) -> bool:
    return isinstance(values, list) and bool(values) and all(isinstance(row, dict) for row in values)


def _skeleton(node: Any) -> Any:
    """``node`` with every inline data set of objects cut to its first row.

    The schema takes any list of objects as inline data (``InlineDataset``),
    and Vega-Lite compiles a spec without reading its rows, so the cut spec
    passes both checks exactly when the whole one does. Checking the rows
    one by one was most of the checking time: a map holds thousands.
    """
    if isinstance(node, dict):
        out = {}
        for key, value in node.items():
            if key == "data" and isinstance(value, dict) and _all_objects(value.get("values")):
                value = {**value, "values": value["values"][:1]}
            out[key] = _skeleton(value)
        return out
    if isinstance(node, list):
        return [_skeleton(item) for item in node]
    return node


class ChartChecks:
    """What one build knows of its charts' checks: the spec skeletons that passed, and where checks run.

    Made once per build and handed to every chart kind (their ``checks`` argument), so two builds in
    one process share nothing. :meth:`trust` takes the digests an earlier build kept (under the same
    :func:`check_salt`), :meth:`passed` gives this build's to keep; inside :meth:`sent_to`, checks run
    in a process pool and are waited for when the block ends. The build sends them to its analysis
    workers, idle while pages render. Remembering the skeletons that passed took a second off a
    one-season rebuild at 1M decks, where the checks had competed with rendering for the two cores.
    """

    def __init__(self) -> None:
        #: Digests of the spec skeletons that passed both checks (here, or trusted from an earlier build).
        self._passed: set[str] = set()
        #: How many checks this build has run or sent off (one per skeleton not known to pass).
        self.started = 0
        #: While :meth:`sent_to` is active: the executor checking specs, and the checks sent to it by digest.
        self._elsewhere: tuple[Any, dict[str, Any]] | None = None

    def passed(self) -> list[str]:
        """The digests of every spec skeleton that passed, to keep for the next build."""
        return sorted(self._passed)

    def trust(self, digests: Any) -> None:
        """Count skeletons an earlier build checked (under the same :func:`check_salt`) as passed,
        so a rebuild does not check its unchanged charts again. Anything but digests is ignored."""
        if isinstance(digests, list):
            self._passed.update(d for d in digests if isinstance(d, str) and _DIGEST.fullmatch(d))

    def check(self, spec: dict, chart_id: str = "chart") -> None:
        """Check a spec against the Vega-Lite schema, then compile it with vl-convert.

        Raises :class:`RenderError` naming the chart and, for a schema error,
        the place in the spec and the schema path that refused it. Specs already
        checked by this object or trusted from the last build (same JSON text once
        inline data is cut to its first row, see :func:`_skeleton`) are not checked
        again; a spec that fails is checked whole, so the error is the one the
        whole spec gives.
        Inside :meth:`sent_to`, the check runs in another process and its
        error, if any, is raised when the block ends.
        """
        try:
            json.dumps(spec, sort_keys=True, allow_nan=False)
        except (TypeError, ValueError) as exc:
            raise RenderError(f"chart '{chart_id}': spec is not plain JSON ({exc}); pass numbers and strings only, no NaN") from exc
        skeleton = _skeleton(spec)
        digest = hashlib.sha256(json.dumps(skeleton, sort_keys=True).encode("utf-8")).hexdigest()
        if digest in self._passed:
            return
        if self._elsewhere is not None:
            executor, pending = self._elsewhere
            if digest not in pending:
                pending[digest] = executor.submit(check_skeleton, skeleton, spec, chart_id)
                self.started += 1
            return
        self.started += 1
        check_skeleton(skeleton, spec, chart_id)
        self._passed.add(digest)

    @contextmanager
    def sent_to(self, executor: Any) -> Iterator[None]:
        """Within the block, checks go to ``executor`` (a process pool that is idle while pages
        render) instead of running here; on leaving, every check is waited for and the first
        failure, in the order the charts were made, is raised. None checks here."""
        if executor is None:
            yield
            return
        pending: dict[str, Any] = {}
        self._elsewhere = (executor, pending)
        try:
            yield
        finally:
            self._elsewhere = None
        for digest, fut in pending.items():
            fut.result()  # raises the chart's RenderError
            self._passed.add(digest)


def validate_spec(spec: dict, chart_id: str = "chart", checks: ChartChecks | None = None) -> None:
    """:meth:`ChartChecks.check` by ``checks``, or by a fresh :class:`ChartChecks` (the spec is checked now)."""
    (checks if checks is not None else ChartChecks()).check(spec, chart_id)


def check_skeleton(skeleton: dict, spec: dict, chart_id: str) -> None:
    """:func:`validate_spec`'s schema check and compile of one spec (``skeleton`` first, then whole)."""
    import jsonschema

    error = jsonschema.exceptions.best_match(_validator().iter_errors(skeleton))
    if error is not None:  # the whole spec decides, and its error is the one reported
        error = jsonschema.exceptions.best_match(_validator().iter_errors(spec))
    if error is not None:
        where = "/".join(str(p) for p in error.absolute_path) or "(top level)"
        schema_path = "/".join(str(p) for p in error.absolute_schema_path)
        raise RenderError(
            f"chart '{chart_id}': spec breaks the Vega-Lite schema at {where} "
            f"(schema path {schema_path}): {error.message[:200]}"
        )
    import vl_convert

    try:
        try:
            vl_convert.vegalite_to_vega(skeleton, vl_version=vl_version())
        except Exception:  # compiled whole below: the whole spec decides, with its own message
            vl_convert.vegalite_to_vega(spec, vl_version=vl_version())
    except Exception as exc:  # vl-convert raises ValueError; anything else is a bad spec too
        # keep the message, drop the JavaScript stack trace under it
        lines = [ln.strip() for ln in str(exc).splitlines() if ln.strip() and not ln.strip().startswith("at ")]
        raise RenderError(f"chart '{chart_id}': Vega-Lite could not compile the spec: {' '.join(lines)[:300]}") from None


def _finish(chart_id: str, spec: dict, caption: str, columns: Sequence[str], rows: Iterable[Sequence],
            checks: ChartChecks | None = None) -> Chart:
    """Add the shared top-level parts, check the spec (by ``checks``, see :func:`validate_spec`), and wrap it as a Chart."""
    if not _ID.match(chart_id):
        raise RenderError(
            f"chart id {chart_id!r} is not a safe HTML id; use a letter then letters, digits, '-' or '_'"
        )
    full = {"$schema": schema_url(), "description": caption, **spec,
            "config": {**_CONFIG, **spec.get("config", {})}}
    validate_spec(full, chart_id, checks)
    return Chart(chart_id, full, caption, tuple(columns), tuple(tuple(r) for r in rows))


# -- shared pieces ------------------------------------------------------------


def _num(value: Any, digits: int = 4) -> float | None:
    """A rounded plain float (stable JSON text), or None for missing/NaN."""
    if value is None:
        return None
    v = float(value)
    if math.isnan(v) or math.isinf(v):
        return None
    return round(v, digits)


def _pct(value: float | None) -> str:
    return "" if value is None else f"{value * 100:.1f}%"


# The chart kinds live in chart_kinds.py; they are read from here too (charts.map_chart, ...).
from . import chart_kinds as _kinds  # noqa: E402

bar_share_chart = _kinds.bar_share_chart
latest_share_order = _kinds.latest_share_order
map_chart = _kinds.map_chart
matchup_chart = _kinds.matchup_chart
share_chart = _kinds.share_chart
winrate_chart = _kinds.winrate_chart
