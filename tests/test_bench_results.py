"""The benchmark publishes its figures into bench/RESULTS.md, one block per size, and leaves the rest alone."""
from __future__ import annotations

import importlib.util
import json
import shutil
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
_spec = importlib.util.spec_from_file_location("bench_run", ROOT / "bench" / "run.py")
bench = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(bench)


def test_results_live_in_bench_results_md_with_a_block_per_published_size():
    assert bench.RESULTS == ROOT / "bench" / "RESULTS.md"
    text = bench.RESULTS.read_text(encoding="utf-8")
    for size in ("demo", "1m", "1m-one-season"):
        assert text.count(f"<!-- bench:{size}:start -->") == 1 and text.count(f"<!-- bench:{size}:end -->") == 1
    assert "bench:" not in (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")


def test_publish_last_rewrites_only_its_size_block(tmp_path, monkeypatch):
    results = tmp_path / "RESULTS.md"
    shutil.copy(bench.RESULTS, results)
    monkeypatch.setattr(bench, "RESULTS", results)
    before = results.read_text(encoding="utf-8")
    work = tmp_path / "work"
    (work / "demo").mkdir(parents=True)
    rows = [["data", "planted 7 decks"], ["(a) sitegen full build", "planted 1.5 s"]]
    (work / "demo" / "last-results.json").write_text(json.dumps(rows), encoding="utf-8")

    assert bench.main(["--size", "demo", "--work", str(work), "--publish-last"]) == 0

    after = results.read_text(encoding="utf-8")
    start, end = "<!-- bench:demo:start -->", "<!-- bench:demo:end -->"
    block = after.split(start, 1)[1].split(end, 1)[0]
    assert "| data | planted 7 decks |" in block and "| (a) sitegen full build | planted 1.5 s |" in block
    # Everything outside the demo block, the other sizes' figures included, is as it was.
    outside = lambda text: text.split(start, 1)[0] + text.split(end, 1)[1]  # noqa: E731
    assert outside(after) == outside(before)
