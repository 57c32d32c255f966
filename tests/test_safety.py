"""Nothing half-written: builds killed at any stage, and builds started together."""
from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time

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


# -- killed with workers running: the next build never waits on a lock a worker kept --------

# Each patch makes the build die by ``SIG`` (SIGKILL or SIGTERM) at one point while two workers run:
# sent by a worker to the building process (the worker then lingers, as an orphan would), or by the
# building process to itself.
KILL_WITH_WORKERS = {
    "while workers analyse": """
        import sitegen.runner as r
        real = r.analyse_partition
        def killer(part, params):
            os.kill(os.getppid(), SIG)
            time.sleep(120)  # a worker that outlives its build must not keep the lock
            return real(part, params)
        r.analyse_partition = killer
    """,
    "while workers draw maps": """
        import sitegen.runner as r
        real = r.draw_map
        def killer(sample, params, previous=None):
            os.kill(os.getppid(), SIG)
            time.sleep(120)
            return real(sample, params, previous)
        r.draw_map = killer
    """,
    "while writing pages": KILL_POINTS["writing pages"].replace("signal.SIGKILL", "SIG"),
    "just before the swap": KILL_POINTS["just before the swap"].replace("signal.SIGKILL", "SIG"),
}


@pytest.fixture(scope="module")
def built_project(tmp_path_factory):
    """A scaffolded project built once; each test works on a copy."""
    project = make_project(tmp_path_factory.mktemp("built") / "guide")
    build(project, quiet=True)
    return project.parent


@pytest.fixture(scope="module")
def clean_changed_site(built_project, tmp_path_factory):
    """The site a clean build makes of the project after change_one_deck."""
    clean = copy_project(built_project, tmp_path_factory.mktemp("clean") / "guide")
    change_one_deck(clean.parent)
    build(clean, quiet=True)
    return tree(clean.parent / "site")


def _group_members(pgid: int) -> list[int]:
    """Live (not zombie) processes of a process group, from /proc (Linux)."""
    found = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat") as fh:
                fields = fh.read().rsplit(")", 1)[1].split()
        except OSError:
            continue
        if fields[0] != "Z" and int(fields[2]) == pgid:
            found.append(int(entry))
    return found


@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM], ids=["SIGKILL", "SIGTERM"])
@pytest.mark.parametrize("point", list(KILL_WITH_WORKERS))
def test_build_killed_with_workers_never_blocks_the_next(tmp_path, built_project, clean_changed_site, point, sig):
    guide = tmp_path / "guide"
    shutil.copytree(built_project, guide, symlinks=True)
    project = guide / "site.toml"
    previous = tree(guide / "site")
    change_one_deck(guide)
    code = f"import os, signal, sys, time\nSIG = {int(sig)}\n" + textwrap.dedent(KILL_WITH_WORKERS[point]) + textwrap.dedent(f"""
        from sitegen.build import build
        build({str(project)!r}, quiet=True, workers=2)
        print("finished without being killed")
    """)
    # Output to files, not pipes: a leftover worker holding a pipe open must not hold up this test.
    # Its own process group: its workers are found by it.
    with open(tmp_path / "out.txt", "w") as out_fh, open(tmp_path / "err.txt", "w") as err_fh:
        proc = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=out_fh, stderr=err_fh,
                                start_new_session=True)
    try:
        proc.wait(timeout=300)
        assert proc.returncode == -sig, ((tmp_path / "out.txt").read_text(), (tmp_path / "err.txt").read_text()[-2000:])
        assert tree(guide / "site") == previous  # the previous output is intact

        build(project, quiet=True)  # at once: no BuildBusyError from a lock a leftover worker holds
        assert tree(guide / "site") == clean_changed_site  # equals a clean build, byte for byte
        assert not [p.name for p in guide.iterdir() if p.name.startswith(".site.") and "lock" not in p.name]
        if sys.platform.startswith("linux"):
            # The workers died with the build (their parent-death signal); waited for, not timed.
            for _ in range(200):
                if not _group_members(proc.pid):
                    break
                time.sleep(0.05)
            assert _group_members(proc.pid) == []
    finally:
        try:
            os.killpg(proc.pid, signal.SIGKILL)  # tidy up whatever a failing run left behind
        except (ProcessLookupError, PermissionError):
            pass


def test_a_process_forked_while_the_lock_is_held_does_not_keep_it(tmp_path):
    # The lock is an flock, which every forked copy of its descriptor shares; a forked child drops
    # its copy, so only the building process's own life counts.
    out = tmp_path / "site"
    code = textwrap.dedent(f"""
        import os, sys, time
        sys.path.insert(0, {ROOT!r})
        from sitegen.writing import build_lock
        with build_lock({str(out)!r}):
            child = os.fork()
            if child == 0:
                null = os.open(os.devnull, os.O_RDWR)
                os.dup2(null, 1)  # let go of the pipes the test reads
                os.dup2(null, 2)
                time.sleep(120)
                os._exit(0)
            print(child, flush=True)
            os.kill(os.getpid(), 9)
    """)
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    child = int(proc.stdout.split()[0])
    try:
        assert proc.returncode == -9
        os.kill(child, 0)  # the forked child still lives...
        with build_lock(out):  # ...and the lock is free
            pass
    finally:
        os.kill(child, signal.SIGKILL)
