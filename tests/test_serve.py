"""The preview server: 127.0.0.1 by default, nothing outside the site folder."""
from __future__ import annotations

import http.client
import os
import threading

import pytest

from sitegen.serve import make_server, resolve_inside


@pytest.fixture()
def site(tmp_path):
    root = tmp_path / "site"
    (root / "a").mkdir(parents=True)
    (root / "index.html").write_text("<!doctype html><title>front</title><body>front</body>")
    (root / "a" / "index.html").write_text("<!doctype html><title>a</title><body>a</body>")
    (root / "404.html").write_text("<!doctype html><title>missing</title>")
    (tmp_path / "secret.txt").write_text("secret")
    os.symlink(tmp_path / "secret.txt", root / "link-out")
    os.symlink(root / "a" / "index.html", root / "link-in.html")
    return root


@pytest.fixture()
def server(site):
    srv = make_server(site, "127.0.0.1", 0)
    thread = threading.Thread(target=srv.serve_forever, daemon=True)
    thread.start()
    yield srv
    srv.shutdown()
    srv.server_close()


def _get(server, path):
    conn = http.client.HTTPConnection("127.0.0.1", server.server_address[1], timeout=5)
    conn.putrequest("GET", path, skip_accept_encoding=True)  # sent raw, as an attacker would
    conn.endheaders()
    resp = conn.getresponse()
    return resp.status, resp.read()


def test_binds_loopback_by_default(site):
    srv = make_server(site)
    try:
        assert srv.server_address[0] == "127.0.0.1"
    finally:
        srv.server_close()


@pytest.mark.parametrize("path", [
    "/../secret.txt", "/a/../../secret.txt", "/%2e%2e/secret.txt", "/%2E%2E%2Fsecret.txt",
    "/a/%2e%2e/%2e%2e/secret.txt", "/..%2fsecret.txt", "/link-out", "/%252e%252e/secret.txt", "/a\\..\\..\\secret.txt",
])
def test_traversal_is_refused(server, path):
    status, body = _get(server, path)
    assert status == 404 and b"secret" not in body


def test_files_and_folders_inside_are_served(server):
    assert _get(server, "/") == (200, b"<!doctype html><title>front</title><body>front</body>")
    assert _get(server, "/a/")[0] == 200
    assert _get(server, "/link-in.html")[0] == 200  # a symlink that stays inside is fine
    status, body = _get(server, "/nope.html")
    assert status == 404 and b"missing" in body


def test_resolve_inside_is_pure(site):
    assert resolve_inside(site, "/a/index.html") == (site / "a" / "index.html").resolve()
    assert resolve_inside(site, "/link-out") is None
