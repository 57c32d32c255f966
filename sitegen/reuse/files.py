"""File stamps: how a build tells a file it left alone (the standard library only, so modules that
write files can use them without loading the data libraries)."""
from __future__ import annotations

import os
import stat as stat_mod
from pathlib import Path


def file_stat(path: Path, *, follow_links: bool = True, regular_only: bool = False) -> tuple[int, int] | None:
    """A file's (size, time of last change in ns), or None when it cannot be looked at (or, with
    ``regular_only``, is not a regular file). Equal pairs are how a build tells a file it left alone."""
    try:
        st = os.stat(path) if follow_links else os.lstat(path)
    except OSError:
        return None
    if regular_only and not stat_mod.S_ISREG(st.st_mode):
        return None
    return st.st_size, st.st_mtime_ns


def file_stamp(path: Path) -> str | None:
    """``path|size|mtime_ns``: a file named and dated, or None when it cannot be looked at."""
    found = file_stat(path)
    return None if found is None else f"{path}|{found[0]}|{found[1]}"


def files_under(path: Path) -> list[Path]:
    """Every file under a folder (sorted), the file itself, or none."""
    if path.is_dir():
        return sorted(p for p in path.rglob("*") if p.is_file())
    return [path] if path.is_file() else []
