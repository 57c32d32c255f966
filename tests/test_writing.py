"""Writing the site: all or nothing, unchanged files kept, one build at a time."""
from __future__ import annotations

import os
import subprocess
import sys

import pytest

from sitegen.errors import BuildBusyError, SitegenError
from sitegen.writing import MARKER, build_lock, recover, safe_relpath, write_site


def _tree(root):
    """The site's files, without sitegen's marker file (which every write adds)."""
    return {p.relative_to(root).as_posix(): p.read_bytes() for p in sorted(root.rglob("*"))
            if p.is_file() and p.name != MARKER}


def test_write_then_rewrite_replaces_the_whole_tree(tmp_path):
    out = tmp_path / "site"
    r1 = write_site(out, {"index.html": b"one", "a/b.html": b"two", "gone.txt": b"x"})
    assert r1.changed == 3 and _tree(out) == {"index.html": b"one", "a/b.html": b"two", "gone.txt": b"x"}
    r2 = write_site(out, {"index.html": b"one", "a/b.html": b"TWO"})
    assert _tree(out) == {"index.html": b"one", "a/b.html": b"TWO"}
    assert (r2.changed, r2.removed) == (1, 1)
    assert not list(tmp_path.glob(".site.*[!k]"))  # no .new/.old left beside it (the lock file may stay)


def test_unchanged_files_keep_their_times(tmp_path):
    # A sync tool that compares size and modification time uploads only what changed.
    out = tmp_path / "site"
    write_site(out, {"same.html": b"same", "diff.html": b"a"})
    os.utime(out / "same.html", ns=(1_000_000_000, 1_000_000_000))
    write_site(out, {"same.html": b"same", "diff.html": b"b"})
    assert (out / "same.html").stat().st_mtime_ns == 1_000_000_000
    assert (out / "diff.html").read_bytes() == b"b"


@pytest.mark.parametrize("bad", ["../x.html", "/etc/passwd", "a/../../x", "a//b", "a\\b", "", "./a", "a/\x00"])
def test_paths_outside_the_output_are_refused(tmp_path, bad):
    with pytest.raises(SitegenError, match="must be relative and stay inside"):
        safe_relpath(bad)
    out = tmp_path / "site"
    write_site(out, {"index.html": b"old"})
    with pytest.raises(SitegenError):
        write_site(out, {"index.html": b"new", bad: b"x"})
    assert _tree(out) == {"index.html": b"old"}  # a failed write leaves the previous site as it was


def test_recover_restores_a_site_left_between_two_renames(tmp_path):
    out = tmp_path / "site"
    old = tmp_path / ".site.old"
    old.mkdir()
    (old / "index.html").write_bytes(b"previous")
    half = tmp_path / ".site.new"
    half.mkdir()
    (half / "index.html").write_bytes(b"half")
    recover(out)
    assert _tree(out) == {"index.html": b"previous"} and not half.exists()


def test_second_build_is_refused_while_one_holds_the_lock(tmp_path):
    out = tmp_path / "site"
    with build_lock(out):
        with pytest.raises(BuildBusyError, match=r"another build of this site is running \(process \d+"):
            with build_lock(out):
                pass
    with build_lock(out):  # released when the first one ends
        pass


def test_lock_of_a_killed_process_does_not_stay_stuck(tmp_path):
    out = tmp_path / "site"
    code = (f"import os, sys; sys.path.insert(0, {os.getcwd()!r}); from sitegen.writing import build_lock\n"
            f"with build_lock({str(out)!r}):\n    print('held', flush=True); os.kill(os.getpid(), 9)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == -9 and "held" in proc.stdout
    with build_lock(out):
        pass
