"""Writing the built site: all or nothing, one build at a time.

A build renders every file in memory, then :func:`write_site` writes them
into a new folder beside the output and swaps it in only when complete. On
Linux the swap is one atomic ``renameat2(RENAME_EXCHANGE)``; elsewhere two
renames, and a build killed between them is repaired by the next one
(:func:`recover`). Files whose bytes did not change are hard-linked (or
copied with their times) from the previous output, so syncing to a host
uploads only what changed.

:func:`build_lock` keeps a second build of the same site out: it holds an
``flock`` on a lock file, which the kernel releases when the process dies,
so a killed build never leaves it stuck.
"""
from __future__ import annotations

import ctypes
import ctypes.util
import errno
import os
import shutil
import stat
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path, PurePosixPath
from typing import Iterator, Mapping

from .errors import BuildBusyError, SitegenError

try:
    import fcntl
except ImportError:  # pragma: no cover - not on Linux
    fcntl = None  # type: ignore[assignment]

_AT_FDCWD = -100
_RENAME_EXCHANGE = 2


@dataclass(frozen=True)
class WriteReport:
    """What a write did: files in the site, and how many were new or changed."""

    files: int
    changed: int
    removed: int


def safe_relpath(name: str) -> PurePosixPath:
    """Check an output path made from data stays inside the output folder."""
    path = PurePosixPath(name)
    if (not name or path.is_absolute() or name.startswith(("/", "\\")) or "\\" in name
            or any(part in ("", ".", "..") for part in name.split("/")) or "\x00" in name):
        raise SitegenError(f"refusing to write '{name}': an output path must be relative and stay inside the output folder")
    return path


def _exchange(a: Path, b: Path) -> bool:
    """Atomically swap two paths (Linux renameat2); False where not supported."""
    libc_name = ctypes.util.find_library("c")
    if not libc_name:
        return False
    libc = ctypes.CDLL(libc_name, use_errno=True)
    fn = getattr(libc, "renameat2", None)
    if fn is None:
        return False
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    rc = fn(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE)
    if rc == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.ENOSYS, errno.EINVAL, getattr(errno, "ENOTSUP", errno.EINVAL)):
        return False
    raise OSError(err, os.strerror(err), str(a))


def _sibling(out: Path, tag: str) -> Path:
    return out.with_name(f".{out.name}.{tag}")


def recover(out: Path) -> None:
    """Repair what a killed build may have left: restore the old output, drop half-written folders."""
    old = _sibling(out, "old")
    if old.exists() and not out.exists():
        os.replace(old, out)
    for tag in ("old", "new"):
        leftover = _sibling(out, tag)
        if leftover.exists():
            shutil.rmtree(leftover, ignore_errors=True)


def write_site(out: Path, files: Mapping[str, bytes]) -> WriteReport:
    """Write ``files`` (output path -> bytes) as the whole new content of ``out``."""
    out = Path(out).absolute()
    out.parent.mkdir(parents=True, exist_ok=True)
    recover(out)
    new = _sibling(out, "new")
    new.mkdir()
    changed = 0
    made: set[Path] = {new}  # folders already made, so each is made once, not once per file
    try:
        for name in sorted(files):
            rel = safe_relpath(name)
            target = new / rel
            if target.parent not in made:
                target.parent.mkdir(parents=True, exist_ok=True)
                made.add(target.parent)
            data = files[name]
            previous = out / rel
            if _same_bytes(previous, data):
                try:
                    os.link(previous, target)
                except OSError:
                    shutil.copy2(previous, target)
                continue
            target.write_bytes(data)
            changed += 1
        removed = 0
        if out.exists():
            old_names = {p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file()}
            removed = len(old_names - set(files))
        _swap_in(new, out)
    except BaseException:
        shutil.rmtree(new, ignore_errors=True)
        raise
    return WriteReport(files=len(files), changed=changed, removed=removed)


def _same_bytes(path: Path, data: bytes) -> bool:
    """True when ``path`` is a regular file (not a symlink) holding exactly ``data``."""
    try:
        st = path.lstat()  # one call answers "file?", "symlink?" and the size
        if not stat.S_ISREG(st.st_mode) or st.st_size != len(data):
            return False
        return path.read_bytes() == data
    except OSError:
        return False


def _swap_in(new: Path, out: Path) -> None:
    if not out.exists():
        os.replace(new, out)
        return
    if not out.is_dir():
        raise SitegenError(f"output '{out}' exists and is not a folder; move it away or choose another site.output")
    if _exchange(new, out):
        shutil.rmtree(new, ignore_errors=True)  # now holds the previous site
        return
    old = _sibling(out, "old")
    os.replace(out, old)
    os.replace(new, out)
    shutil.rmtree(old, ignore_errors=True)


@contextmanager
def build_lock(out: Path) -> Iterator[None]:
    """Hold the build lock of the site written to ``out``; refuse if another build holds it."""
    out = Path(out).absolute()
    out.parent.mkdir(parents=True, exist_ok=True)
    lock_path = out.with_name(f".{out.name}.sitegen-lock")
    fh = open(lock_path, "a+")
    try:
        if fcntl is not None:
            try:
                fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                fh.seek(0)
                holder = fh.read().strip() or "unknown"
                raise BuildBusyError(
                    f"another build of this site is running (process {holder}, lock {lock_path}); "
                    "wait for it to finish, then build again") from None
        fh.seek(0)
        fh.truncate()
        fh.write(str(os.getpid()))
        fh.flush()
        yield
    finally:
        fh.close()
