"""Local preview server.

Binds 127.0.0.1 unless told otherwise, and never serves a file outside the
site folder: the request path is decoded, resolved with symlinks followed,
and refused unless the result is inside the site folder's real path. With
``--watch`` it rebuilds when inputs change; open pages reload through a small
script file the server adds to HTML responses (only in watch mode, never in
the built site).
"""
from __future__ import annotations

import http.server
import posixpath
import sys
import threading
import time
import urllib.parse
from functools import partial
from pathlib import Path

from .errors import SitegenError

_RELOAD_PATH = "/__sitegen/reload.js"
_VERSION_PATH = "/__sitegen/version"
_RELOAD_JS = b"""// sitegen serve --watch: reload the page after each rebuild
(function () {
  var seen = null;
  function poll() {
    fetch('/__sitegen/version', {cache: 'no-store'}).then(function (r) { return r.text(); }).then(function (v) {
      if (seen === null) { seen = v; } else if (v !== seen) { location.reload(); }
    }).catch(function () {}).finally(function () { setTimeout(poll, 1000); });
  }
  poll();
})();
"""


def resolve_inside(root: Path, url_path: str) -> Path | None:
    """The file a URL path names inside ``root``, or None if it would leave it.

    Percent-encoding is decoded once (as a browser sends it), query and
    fragment dropped, and the result resolved with symlinks followed.
    """
    path = urllib.parse.urlsplit(url_path).path
    path = urllib.parse.unquote(path, errors="strict") if "%" in path else path
    if "\x00" in path or "\\" in path:
        return None
    parts = [p for p in posixpath.normpath("/" + path).split("/") if p]
    if any(p in ("..", ".") for p in parts):
        return None
    real_root = root.resolve()
    candidate = real_root.joinpath(*parts) if parts else real_root
    try:
        real = candidate.resolve(strict=True)
    except (FileNotFoundError, RuntimeError, OSError):
        return None
    if real != real_root and real_root not in real.parents:
        return None
    if real.is_dir():
        index = real / "index.html"
        return index if index.is_file() else None
    return real


class SiteHandler(http.server.SimpleHTTPRequestHandler):
    """Serves one folder; refuses anything that resolves outside it."""

    root: Path = Path(".")
    watch_state: "_WatchState | None" = None
    quiet = False

    def __init__(self, *args, root: Path, watch_state=None, quiet=False, **kwargs):
        self.root = root
        self.watch_state = watch_state
        self.quiet = quiet
        super().__init__(*args, directory=str(root), **kwargs)

    def do_GET(self) -> None:  # noqa: N802 - http.server's naming
        self._respond(head=False)

    def do_HEAD(self) -> None:  # noqa: N802
        self._respond(head=True)

    def _respond(self, head: bool) -> None:
        raw = self.path
        if self.watch_state is not None and raw.split("?")[0] in (_RELOAD_PATH, _VERSION_PATH):
            body = _RELOAD_JS if raw.startswith(_RELOAD_PATH) else str(self.watch_state.version).encode()
            ctype = "text/javascript" if raw.startswith(_RELOAD_PATH) else "text/plain"
            return self._send(200, body, ctype, head)
        try:
            target = resolve_inside(self.root, raw)
        except UnicodeDecodeError:
            target = None
        if target is None or not target.is_file():
            missing = self.root / "404.html"
            body = missing.read_bytes() if missing.is_file() else b"not found"
            return self._send(404, body, "text/html; charset=utf-8", head)
        body = target.read_bytes()
        ctype = self.guess_type(str(target))
        if ctype.startswith("text/html"):
            ctype = "text/html; charset=utf-8"
            if self.watch_state is not None:
                body = body.replace(b"</body>", f'<script src="{_RELOAD_PATH}"></script></body>'.encode(), 1)
        self._send(200, body, ctype, head)

    def _send(self, status: int, body: bytes, ctype: str, head: bool) -> None:
        self.send_response(status)
        self.send_header("Content-Type", ctype)
        self.send_header("Content-Length", str(len(body)))
        self.send_header("Cache-Control", "no-cache")
        self.send_header("X-Content-Type-Options", "nosniff")
        self.end_headers()
        if not head:
            self.wfile.write(body)

    def log_message(self, format: str, *args) -> None:  # noqa: A002 - http.server's signature
        if not self.quiet:
            sys.stderr.write("%s - %s\n" % (self.address_string(), format % args))


class _WatchState:
    def __init__(self) -> None:
        self.version = 0


def make_server(root: Path, host: str = "127.0.0.1", port: int = 0, *, watch_state=None,
                quiet: bool = True) -> http.server.ThreadingHTTPServer:
    """A server for ``root`` (not yet serving); port 0 picks a free port."""
    handler = partial(SiteHandler, root=Path(root), watch_state=watch_state, quiet=quiet)
    try:
        return http.server.ThreadingHTTPServer((host, port), handler)
    except OSError as exc:
        raise SitegenError(f"cannot listen on {host}:{port} ({exc.strerror}); try another --port") from None


def _inputs(cfg) -> list[Path]:
    """Files and folders whose change means a rebuild."""
    paths = [cfg.source] if cfg.source else []
    for key in ("data.deck_cards", "data.decks", "data.cards", "data.decklists", "data.parquet_folder",
                "site.content", "site.templates"):
        p = cfg.path(key)
        if p is not None:
            paths.append(p)
    return [p for p in paths if p is not None]


def _stamp(paths: list[Path]) -> tuple:
    out = []
    for p in paths:
        if p.is_dir():
            for sub in sorted(p.rglob("*")):
                if sub.is_file():
                    st = sub.stat()
                    out.append((str(sub), st.st_mtime_ns, st.st_size))
        elif p.exists():
            st = p.stat()
            out.append((str(p), st.st_mtime_ns, st.st_size))
    return tuple(out)


def serve(target: Path, *, host: str = "127.0.0.1", port: int = 8000, watch: bool = False, quiet: bool = False) -> None:
    """Serve a built site (a config file's output, or a folder) until interrupted."""
    cfg = settings = None
    if target.is_dir() and not (target / "site.toml").is_file():
        root = target
    else:
        from . import config as config_mod
        from .build_settings import BuildSettings

        cfg = config_mod.load(target / "site.toml" if target.is_dir() else target)
        settings = BuildSettings.from_config(cfg)
        root = settings.output_dir()
    if watch and settings is None:
        raise SitegenError("--watch needs the site's config file, not a built folder; give the path of site.toml")
    if watch:
        settings.checked_output()  # --watch rebuilds into the output: refuse one a build must not replace, now
    if not root.is_dir():
        raise SitegenError(f"no built site at {root}; run 'sitegen build' first")
    state = _WatchState() if watch else None
    server = make_server(root, host, port, watch_state=state, quiet=quiet)
    url = f"http://{host}:{server.server_address[1]}/"
    print(f"Serving {root} at {url} (Ctrl+C stops)", flush=True)
    if watch:
        threading.Thread(target=_watch_loop, args=(cfg, state), daemon=True).start()
    try:
        server.serve_forever()
    except KeyboardInterrupt:
        pass
    finally:
        server.server_close()


def _watch_loop(cfg, state: _WatchState, interval: float = 1.0) -> None:
    from .build import build

    paths = _inputs(cfg)
    last = _stamp(paths)
    while True:
        time.sleep(interval)
        now = _stamp(paths)
        if now == last:
            continue
        last = now
        print("change seen: rebuilding", flush=True)
        try:
            report = build(cfg.source, quiet=True)
            print(report.summary().splitlines()[-2], flush=True)
            state.version += 1
        except SitegenError as exc:
            print(f"error: {exc}", file=sys.stderr, flush=True)
        except Exception as exc:  # noqa: BLE001 - keep the preview alive, say what broke
            print(f"error: rebuild failed: {exc!r}", file=sys.stderr, flush=True)
