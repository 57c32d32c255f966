"""`sitegen serve --watch`: a change to a note rebuilds the site and open pages are told to reload."""
from __future__ import annotations

import os
import re
import subprocess
import sys
import time
import urllib.request

from sitegen.build import build

from _sites import make_project

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def _get(url: str) -> str:
    with urllib.request.urlopen(url, timeout=10) as resp:
        return resp.read().decode("utf-8")


def test_watch_rebuilds_and_signals_reload(tmp_path):
    project = make_project(tmp_path / "guide")
    build(project, quiet=True)
    proc = subprocess.Popen([sys.executable, "-m", "sitegen", "serve", str(project), "--watch", "--port", "0", "-q"],
                            cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)
    try:
        line = proc.stdout.readline()
        url = re.search(r"http://127\.0\.0\.1:\d+/", line).group(0)
        assert _get(url + "__sitegen/version") == "0"
        front = _get(url)
        assert '<script src="/__sitegen/reload.js"></script></body>' in front  # only the preview adds it
        assert "__sitegen" not in (project.parent / "site" / "index.html").read_text()
        (project.parent / "content" / "index.md").write_text("---\ntitle: Welcome\n---\nFresh words for the front page.\n")
        deadline = time.monotonic() + 90
        while time.monotonic() < deadline and _get(url + "__sitegen/version") == "0":
            time.sleep(0.5)
        assert _get(url + "__sitegen/version") == "1"
        assert "Fresh words for the front page." in _get(url)
    finally:
        proc.terminate()
        proc.wait(timeout=10)
