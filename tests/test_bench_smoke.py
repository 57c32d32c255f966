"""The benchmark runs end to end at its smoke size (figures are printed, never asserted)."""
from __future__ import annotations

import os
import re
import subprocess
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


@pytest.mark.slow
def test_benchmark_smoke_runs_and_reports_every_figure(tmp_path):
    proc = subprocess.run([sys.executable, os.path.join(ROOT, "bench", "run.py"), "--size", "smoke",
                           "--work", str(tmp_path)], capture_output=True, text=True, timeout=900)
    assert proc.returncode == 0, proc.stderr[-3000:]
    for label in ("(a) sitegen full build", "(b) notebook method", "(c) no-op rebuild", "(d) one season changed",
                  "sitegen ARI vs planted truth", "notebook ARI vs planted truth", "speed-up"):
        assert label in proc.stdout, label
    # the no-op rebuild analysed nothing; the changed season re-analysed something (planted by the benchmark)
    assert re.search(r"no-op rebuild\s+[\d.]+ s, 0 partitions analysed", proc.stdout)
    assert re.search(r"one season changed\s+[\d.]+ s, [1-9]\d* partitions analysed", proc.stdout)
    # (d) is the median of three rebuilds, each of which analysed something
    counts = re.search(r"rebuilds: [\d.]+, [\d.]+, [\d.]+ s \(changed, changed back, changed again; (\d+)/(\d+)/(\d+) partitions\)",
                       proc.stdout)
    assert counts and all(int(n) > 0 for n in counts.groups())
