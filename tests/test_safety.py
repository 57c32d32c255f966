"""Nothing half-written: builds killed at any stage, and builds started together."""
from __future__ import annotations

import os
import subprocess
import sys
import textwrap

import pytest

from sitegen.build import build
from sitegen.writing import build_lock

from _sites import change_one_deck, copy_project, make_project, tree

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

# Each patch makes the build kill itself with SIGKILL at one point of the pipeline.
KILL_POINTS = {
    "analysing": """
        import sitegen.runner as r
        real = r.analyse_partition
        def killer(part, params):
            real(part, params)
            os.kill(os.getpid(), signal.SIGKILL)
        r.analyse_partition = killer
    """,
    "writing pages": """
        import sitegen.writing as w
        real = w.safe_relpath
        count = [0]
        def killer(name):
            count[0] += 1
            if count[0] == 40:
                os.kill(os.getpid(), signal.SIGKILL)
            return real(name)
        w.safe_relpath = killer
    """,
    "just before the swap": """
        import sitegen.writing as w
        def killer(new, out):
            os.kill(os.getpid(), signal.SIGKILL)
        w._swap_in = killer
    """,
}


def _build_and_die(config, patch: str) -> subprocess.CompletedProcess:
    code = "import os, signal, sys\n" + textwrap.dedent(patch) + textwrap.dedent(f"""
        from sitegen.build import build
        build({str(config)!r}, quiet=True, workers=1)
        print("finished without being killed")
    """)
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)


@pytest.mark.parametrize("point", list(KILL_POINTS))
def test_killed_build_leaves_previous_site_and_next_build_is_clean(tmp_path, point):
    project = make_project(tmp_path / "guide")
    build(project, quiet=True)
    previous = tree(project.parent / "site")
    change_one_deck(project.parent)  # the killed build has something new to write

    proc = _build_and_die(project, KILL_POINTS[point])
    assert proc.returncode == -9, proc.stderr[-2000:]
    assert tree(project.parent / "site") == previous  # the previous output is intact

    build(project, quiet=True)  # the next build succeeds...
    clean = copy_project(project.parent, tmp_path / "clean")
    build(clean, quiet=True)
    assert tree(project.parent / "site") == tree(clean.parent / "site")  # ...and equals a clean build
    assert not [p.name for p in project.parent.iterdir() if p.name.startswith(".site.") and "lock" not in p.name]


def test_build_refuses_while_another_holds_the_site(tmp_path):
    project = make_project(tmp_path / "guide")
    with build_lock(project.parent / "site"):
        proc = subprocess.run([sys.executable, "-m", "sitegen", "build", str(project)],
                              capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 1
    assert "another build of this site is running" in proc.stderr
    assert "Traceback" not in proc.stderr
    assert not (project.parent / "site").exists()


def test_two_builds_started_together_never_interleave(tmp_path):
    project = make_project(tmp_path / "guide")
    cmd = [sys.executable, "-m", "sitegen", "build", "-q", str(project)]
    procs = [subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
             for _ in range(2)]
    outcomes = [(p.wait(timeout=300), p.stderr.read()) for p in procs]
    assert any(code == 0 for code, _ in outcomes)
    for code, err in outcomes:
        assert code == 0 or (code == 1 and "another build of this site is running" in err), err
    clean = copy_project(project.parent, tmp_path / "clean")
    build(clean, quiet=True)
    assert tree(project.parent / "site") == tree(clean.parent / "site")  # the output of one whole build
