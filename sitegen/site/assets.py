"""The site's static files: the offline Vega bundle and templates/assets, content-hashed.

Every asset is written under a name that carries a digest of its bytes
(``assets/charts.3f2a9c1b0d.js``), so a browser may cache it for ever and a
changed file always gets a new name. The Vega bundle (Vega, Vega-Lite,
Vega-Embed and its tooltip handler, no CDN) comes from
``vl_convert.javascript_bundle()``; making it takes a second or two, so it is
kept in the site's cache folder (``cache.folder``), named by the vl-convert and
Vega-Lite versions. A site without a cache folder makes it afresh each build.
"""
from __future__ import annotations

import hashlib
import os
import re
import tempfile
from pathlib import Path

from ..errors import RenderError
from .charts import vl_version

#: Output name (before hashing) of the Vega bundle, and its logical name.
BUNDLE_NAME = "vega-bundle.js"
_LOGICAL_ALIASES = {BUNDLE_NAME: "vega"}
_HASH_LEN = 10
_HASHED = re.compile(r"^assets/(?P<stem>.+)\.(?P<digest>[0-9a-f]{%d})(?P<ext>\.[^./]+)$" % _HASH_LEN)


def bundle_cache_path(cache_dir: Path) -> Path:
    """Where the bundle is kept in a cache folder: one file per vl-convert and Vega-Lite version."""
    import vl_convert

    return cache_dir / f"vega-bundle-vlc{vl_convert.__version__}-vl{vl_version()}.js"


def vega_bundle(cache_dir: Path | None = None) -> bytes:
    """The Vega + Vega-Lite + Vega-Embed bundle, from the cache folder or made afresh.

    The bundle's default snippet sets ``window.vegaEmbed``, ``window.vega``
    and ``window.vegaLite``; Vega-Embed carries the expression interpreter
    its ``ast`` option uses, so charts run without eval. With no
    ``cache_dir`` (a site without ``cache.folder``) nothing is kept on disk.
    """
    import vl_convert

    path = bundle_cache_path(cache_dir) if cache_dir is not None else None
    if path is not None:
        try:
            return path.read_bytes()
        except OSError:
            pass
    try:
        data = vl_convert.javascript_bundle(vl_version=vl_version()).encode("utf-8")
    except Exception as exc:
        raise RenderError(f"could not make the Vega bundle with vl-convert {vl_convert.__version__}: {exc}") from exc
    if path is None:
        return data
    folder = path.parent
    try:
        folder.mkdir(parents=True, exist_ok=True)
        # written to a temporary file then renamed, so a concurrent build never reads half a bundle
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".bundle-", suffix=".tmp")
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, path)
    except OSError:
        pass  # an unwritable cache only costs time on the next build
    return data


def hashed_name(name: str, data: bytes) -> str:
    """``charts.js`` -> ``assets/charts.<digest>.js`` (the digest of ``data``)."""
    digest = hashlib.sha256(data).hexdigest()[:_HASH_LEN]
    stem, dot, ext = name.rpartition(".")
    if not dot or not stem:
        return f"assets/{name}.{digest}"
    return f"assets/{stem}.{digest}.{ext}"


def _asset_files(templates_dirs: list[Path]) -> dict[str, bytes]:
    """Files under each folder's ``assets/``, by relative name; earlier folders win."""
    found: dict[str, bytes] = {}
    for folder in templates_dirs:
        root = Path(folder) / "assets"
        if not root.is_dir():
            continue
        for path in sorted(root.rglob("*")):
            if not path.is_file() or path.name.startswith("."):
                continue
            rel = path.relative_to(root).as_posix()
            if rel not in found:
                found[rel] = path.read_bytes()
    return found


def static_assets(templates_dirs: list[Path], cache_dir: Path | None = None) -> dict[str, bytes]:
    """Every asset the site needs, keyed by its output path under the site root.

    ``templates_dirs`` is the template search list, most specific first (the
    site's own ``templates/`` then the packaged one); a file in an earlier
    folder's ``assets/`` replaces the same-named file of a later one. The
    Vega bundle is added as ``assets/vega-bundle.<digest>.js``. Keys are sorted.
    """
    files = _asset_files(templates_dirs)
    if BUNDLE_NAME not in files:  # a site may pin its own bundle by shipping one
        files[BUNDLE_NAME] = vega_bundle(cache_dir)
    out = {hashed_name(name, data): data for name, data in files.items()}
    return dict(sorted(out.items()))


def logical_name(name: str) -> str:
    """``site.css`` -> ``site_css``; the bundle is ``vega``."""
    if name in _LOGICAL_ALIASES:
        return _LOGICAL_ALIASES[name]
    return re.sub(r"[^A-Za-z0-9]+", "_", name).strip("_").lower()


def asset_urls(assets: dict[str, bytes]) -> dict[str, str]:
    """Logical names to output paths of :func:`static_assets`' result.

    ``{"vega": "assets/vega-bundle.<d>.js", "charts_js": "assets/charts.<d>.js",
    "charts_css": ..., "site_css": ..., "site_js": ...}``. Paths are relative
    to the site root; pages prefix their own way up to it.
    """
    urls: dict[str, str] = {}
    for path in assets:
        match = _HASHED.match(path)
        name = f"{match['stem']}{match['ext']}" if match else path.removeprefix("assets/")
        urls[logical_name(name)] = path
    return urls
