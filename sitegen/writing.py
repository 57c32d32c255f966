"""Writing the built site: all or nothing, one build at a time.

A build renders every file in memory, then :func:`write_site` writes them
into a new folder beside the output and swaps it in only when complete. On
Linux the swap is one atomic ``renameat2(RENAME_EXCHANGE)``; elsewhere two
renames, and a build killed between them is repaired by the next one
(:func:`recover`). Files whose bytes did not change are hard-linked (or
copied with their times) from the previous output, so syncing to a host
uploads only what changed.

The output folder is sitegen's alone: :func:`check_output` refuses, before
anything is read, an output that is or holds something else (the config's
folder, the data, notes, templates, cache, the home folder, a file-system
root) or a non-empty folder sitegen did not write. sitegen knows its own
folders by the :data:`MARKER` file every write puts in them. An output that is
a symbolic link is published through: the link's target is the folder
written (and swapped atomically), the link itself is left as it is.

:func:`build_lock` keeps a second build of the same site out: it holds an
``flock`` on a lock file beside the output's real path (so two spellings of
one folder share it), which the kernel releases when the process dies. Worker
processes forked during a build do not keep it: each drops its copy of the
lock's file descriptor at fork, so only the building process's own life counts.
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
from typing import Iterator, Mapping, Sequence

from .errors import BuildBusyError, SitegenError
from .reuse.files import file_stat

try:
    import fcntl
except ImportError:  # pragma: no cover - not on Linux
    fcntl = None  # type: ignore[assignment]

_AT_FDCWD = -100
_RENAME_EXCHANGE = 2

#: The file every write puts at the top of the output folder: sitegen replaces only folders holding it.
MARKER = ".sitegen-output"
MARKER_TEXT = (b"This folder was written by sitegen (a static-site generator). Every build replaces\n"
               b"all of its content: keep nothing of your own in it.\n")


class OutputFolderError(SitegenError):
    """The output folder is one a build must not replace."""


def resolve_output(path: Path | str) -> Path:
    """The real path of an output folder (symbolic links followed, also a link whose target does not exist yet)."""
    try:
        return Path(os.path.realpath(Path(path).absolute(), strict=False))
    except (OSError, RuntimeError, ValueError) as exc:
        raise OutputFolderError(f"cannot find where the output folder '{path}' leads ({exc}); "
                                "check the symbolic links on the way to it") from None


def _within(inner: Path, outer: Path) -> bool:
    """True when ``inner`` is ``outer`` or inside it (both real, absolute paths)."""
    return inner == outer or outer in inner.parents


def _entries(folder: Path) -> list[str]:
    """Every file, link and other non-folder entry under ``folder`` (not following links), relative."""
    found = []
    for top, dirs, files in os.walk(folder, followlinks=False):
        rel = Path(top).relative_to(folder)
        found += [(rel / name).as_posix() for name in files]
        found += [(rel / name).as_posix() for name in dirs if os.path.islink(os.path.join(top, name))]
    return sorted(found)


def _as_recorded(path: Path, recorded: tuple[int, int] | None) -> bool:
    """True when ``path`` is a regular file of the recorded (size, time of change)."""
    found = file_stat(path, follow_links=False, regular_only=True)
    return recorded is not None and found is not None and found == tuple(recorded)


def is_own_folder(out: Path) -> bool:
    """True when ``out`` is a folder holding sitegen's :data:`MARKER` file."""
    return (out / MARKER).is_file() and not (out / MARKER).is_symlink()


def check_output(
    out: Path,
    *,
    setting: str,
    given: str,
    fix: str,
    config_dir: Path | None = None,
    protected: Sequence[tuple[str, Path]] = (),
    known_files: Mapping[str, tuple[int, int]] | None = None,
) -> tuple[Path, bool]:
    """Refuse an output folder a build must not replace; else its real path, and whether it is a
    folder an earlier sitegen wrote before the marker existed (to be adopted).

    ``setting`` names where the folder came from (``site.output`` or ``-o``), ``given`` its value
    as written and ``fix`` how to choose another. ``protected`` are (what, path) pairs the output may
    neither be, hold nor lie inside. ``known_files`` are the files the last build recorded writing,
    each with its size and time of change (from the cache): a folder without the marker holding only
    such files, each still as recorded, is one an earlier sitegen wrote, and is adopted.
    """
    if not str(given).strip():
        raise OutputFolderError(f"{setting} is empty: an empty output folder means the current folder, "
                                f"which a build would replace whole; {fix}")
    real = resolve_output(out)
    shown = f"{setting} '{given}'" + (f" ({real})" if str(given) != str(real) else "")

    def refuse(reason: str, also: str = "") -> OutputFolderError:
        return OutputFolderError(f"refusing to write the site to {shown}: it {reason}, and a build replaces "
                                 f"everything in its output folder; {also}{fix}")

    if real == Path(real.anchor):
        raise refuse("is the root of the file system")
    try:
        home = resolve_output(Path.home())
    except (RuntimeError, KeyError, OutputFolderError):
        home = None
    if home is not None and home != Path(home.anchor) and _within(home, real):
        raise refuse("is your home folder" if home == real else f"holds your home folder ({home})")
    if config_dir is not None:
        cdir = resolve_output(config_dir)
        if _within(cdir, real):
            raise refuse("is the folder of the config file" if cdir == real
                         else f"holds the folder of the config file ({cdir})")
    for what, path in protected:
        p = resolve_output(path)
        if p == real:
            raise refuse(f"is {what}")
        if _within(p, real):
            raise refuse(f"holds {what} ({p})")
        if _within(real, p):
            raise refuse(f"is inside {what} ({p})")
    if real.exists() and not real.is_dir():
        raise refuse("is a file, not a folder")
    adopt = False
    if real.is_dir() and not is_own_folder(real):
        entries = _entries(real)
        if any(real.iterdir()):
            strangers = [e for e in entries if not (known_files and _as_recorded(real / e, known_files.get(e)))]
            if known_files and entries and not strangers:
                adopt = True  # written by an earlier sitegen, before the marker: every file is one it recorded
            else:
                sample = ", ".join(f"'{e}'" for e in strangers[:3]) or "empty folders"
                raise refuse(f"is a folder sitegen did not write (it holds {sample} and no {MARKER} file)",
                             "if it may be replaced, empty it first; else ")
    return real, adopt


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


def write_site(out: Path, files: Mapping[str, bytes], *, adopt: bool = False) -> WriteReport:
    """Write ``files`` (output path -> bytes) as the whole new content of ``out``, with the
    :data:`MARKER` file beside them. ``out`` must not exist, be empty or be a folder sitegen
    wrote (holding the marker, or ``adopt``: see :func:`check_output`); a symbolic link is
    followed, and its target written."""
    if MARKER in files:
        raise SitegenError(f"refusing to write '{MARKER}' from the data: the name is sitegen's own marker file")
    out = resolve_output(out)
    if out == Path(out.anchor):
        raise OutputFolderError("refusing to write the site to the root of the file system; choose a folder of its own")
    out.parent.mkdir(parents=True, exist_ok=True)
    recover(out)
    if out.is_dir() and not adopt and not is_own_folder(out) and any(out.iterdir()):
        raise OutputFolderError(f"refusing to write the site to {out}: it is a folder sitegen did not write "
                                f"(no {MARKER} file), and a build replaces everything in it; empty it or choose another folder")
    new = _sibling(out, "new")
    new.mkdir()
    changed = 0
    made: set[Path] = {new}  # folders already made, so each is made once, not once per file
    files = {**files, MARKER: MARKER_TEXT}
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
            changed += name != MARKER
        removed = 0
        if out.exists():
            old_names = {p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file()}
            removed = len(old_names - set(files) - {MARKER})
        _swap_in(new, out)
    except BaseException:
        shutil.rmtree(new, ignore_errors=True)
        raise
    return WriteReport(files=len(files) - 1, changed=changed, removed=removed)


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


#: File descriptors of the build locks this process holds; a forked child drops its copies (see below).
_HELD_LOCKS: set[int] = set()


def _drop_locks_in_child() -> None:
    """After a fork: point the child's copies of the lock descriptors at /dev/null. An ``flock``
    belongs to the open file, which every forked copy of the descriptor shares, so a worker that
    outlived a killed build would otherwise hold its lock. The descriptor numbers stay valid
    (the parent's file objects, copied into the child, may still close them)."""
    if not _HELD_LOCKS:
        return
    try:
        null = os.open(os.devnull, os.O_RDONLY)
    except OSError:  # pragma: no cover - no /dev/null
        return
    try:
        for fd in list(_HELD_LOCKS):
            try:
                os.dup2(null, fd, inheritable=False)
            except OSError:
                pass
    finally:
        os.close(null)
    _HELD_LOCKS.clear()


if hasattr(os, "register_at_fork"):
    os.register_at_fork(after_in_child=_drop_locks_in_child)


def lock_path(out: Path) -> Path:
    """The lock file of the site written to ``out``: beside the output's real path, so every
    spelling of one folder (a symbolic link, a relative path) names the same lock."""
    real = resolve_output(out)
    return real.with_name(f".{real.name}.sitegen-lock")


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True
    return True


@contextmanager
def build_lock(out: Path) -> Iterator[None]:
    """Hold the build lock of the site written to ``out``; refuse if another build holds it."""
    path = lock_path(out)
    path.parent.mkdir(parents=True, exist_ok=True)
    fh = open(path, "a+")
    try:
        if fcntl is not None:
            try:
                fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                fh.seek(0)
                holder = fh.read().strip() or "unknown"
                gone = holder.isdigit() and not _alive(int(holder))
                raise BuildBusyError(
                    f"another build of this site is running (process {holder}, lock {path})"
                    + ("; that process has ended but a process it started still holds the lock: "
                       "stop that one (see 'fuser' or 'lsof' on the lock file), then build again" if gone
                       else "; wait for it to finish, then build again")) from None
        _HELD_LOCKS.add(fh.fileno())
        fh.seek(0)
        fh.truncate()
        fh.write(str(os.getpid()))
        fh.flush()
        yield
    finally:
        _HELD_LOCKS.discard(fh.fileno())
        fh.close()
