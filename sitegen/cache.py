"""Stored partition analyses, keyed by a fingerprint of what they came from.

Analysing a season x leader partition is the slow part of a build, and most
partitions do not change between builds. :func:`sitegen.reuse.partition_key.fingerprint`
digests everything an analysis depends on (the partition's deck rows and card
rows, the analysis settings, the tool version); :class:`Cache` keeps one file
per fingerprint (and the other kinds of work filed under keys made there).

An entry file is one header line, then a pickle payload::

    SITEGEN-CACHE <format> <tool version> <fingerprint> <payload bytes> <payload sha256>\\n

Any entry that is truncated, edited, from another format or tool version,
or filed under the wrong name is not trusted: :meth:`Cache.get` returns None
and the partition is analysed again. Nothing here raises for a bad entry
or logs; ``Cache.last_problem`` says why the last lookup or write missed.

The checksum guards against damage, not against tampering: unpickling runs
code, so the cache folder must be as trusted as the site project itself
(it lives inside it).
"""
from __future__ import annotations

import hashlib
import os
import pickle
import re
import tempfile
from pathlib import Path

from . import __version__
from .model import MapLayout, PartitionResult

#: The partition key is made in sitegen.reuse.keys; named here too, beside the cache it files.
__all__ = ["Cache", "FORMAT", "MAGIC", "SUFFIX"]

MAGIC = b"SITEGEN-CACHE"
#: Bumped when the entry layout changes; entries of another format are ignored.
FORMAT = 1
SUFFIX = ".entry"
_FINGERPRINT = re.compile(r"[0-9a-f]{64}")
# A header line is short; a longer first line means the file is not ours.
_MAX_HEADER = 512


class Cache:
    """One folder of entries, one file per fingerprint (``<fingerprint>.entry``)."""

    def __init__(self, folder: Path) -> None:
        self.folder = Path(folder)
        #: Why the last :meth:`get` missed or :meth:`put` failed; None after a success.
        self.last_problem: str | None = None

    def _path(self, fingerprint: str) -> Path | None:
        # Only our own hex digests name files, so a key can never leave the folder.
        if not isinstance(fingerprint, str) or not _FINGERPRINT.fullmatch(fingerprint):
            return None
        return self.folder / (fingerprint + SUFFIX)

    def get(self, fingerprint: str, kind: type = PartitionResult):
        """The stored ``kind`` (a partition's result, or a map's layout) for ``fingerprint``,
        or None (absent or not trustworthy)."""
        result = self._read(fingerprint, kind)
        if result is None:
            return None
        self.last_problem = None
        return result

    def _read(self, fingerprint: str, kind: type = PartitionResult):
        path = self._path(fingerprint)
        if path is None:
            self.last_problem = "not a fingerprint"
            return None
        try:
            data = path.read_bytes()
        except FileNotFoundError:
            self.last_problem = "no entry"
            return None
        except OSError as exc:
            self.last_problem = f"unreadable: {exc.strerror or exc}"
            return None
        end = data.find(b"\n", 0, _MAX_HEADER)
        if end < 0:
            self.last_problem = "no header line"
            return None
        parts = data[:end].split(b" ")
        if len(parts) != 6 or parts[0] != MAGIC:
            self.last_problem = "not a sitegen cache entry"
            return None
        _, fmt, version, stored_fp, length, digest = parts
        if fmt != str(FORMAT).encode("ascii"):
            self.last_problem = f"entry format {fmt.decode('ascii', 'replace')}, expected {FORMAT}"
            return None
        if version != __version__.encode("utf-8"):
            self.last_problem = f"made by sitegen {version.decode('utf-8', 'replace')}, this is {__version__}"
            return None
        if stored_fp != fingerprint.encode("ascii"):
            self.last_problem = "entry filed under another fingerprint"
            return None
        payload = data[end + 1:]
        if length != str(len(payload)).encode("ascii"):
            self.last_problem = "payload length differs from header (truncated?)"
            return None
        if hashlib.sha256(payload).hexdigest().encode("ascii") != digest:
            self.last_problem = "payload checksum differs from header (damaged?)"
            return None
        try:
            result = pickle.loads(payload)
        except Exception as exc:  # a payload that passed the checksum but will not load
            self.last_problem = f"payload does not load: {type(exc).__name__}"
            return None
        if not isinstance(result, kind):
            self.last_problem = f"payload is a {type(result).__name__}, not a {kind.__name__}"
            return None
        return result

    def put(self, fingerprint: str, result: PartitionResult | MapLayout) -> None:
        """Store ``result`` under ``fingerprint``, atomically.

        The entry is written to a temporary file in the same folder and moved
        into place with :func:`os.replace`, so a reader sees the old entry or
        the new one, never half of one. A failure to write is not an error
        (the build goes on without caching this partition); it is recorded in
        ``last_problem``.
        """
        path = self._path(fingerprint)
        if path is None:
            self.last_problem = "not a fingerprint"
            return
        payload = pickle.dumps(result, protocol=pickle.HIGHEST_PROTOCOL)
        header = b" ".join([
            MAGIC, str(FORMAT).encode("ascii"), __version__.encode("utf-8"), fingerprint.encode("ascii"),
            str(len(payload)).encode("ascii"), hashlib.sha256(payload).hexdigest().encode("ascii"),
        ]) + b"\n"
        tmp_name: str | None = None
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            fd, tmp_name = tempfile.mkstemp(prefix=".tmp-", suffix=SUFFIX, dir=self.folder)
            with os.fdopen(fd, "wb") as fh:
                fh.write(header)
                fh.write(payload)
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp_name, path)
            tmp_name = None
            self.last_problem = None
        except OSError as exc:
            self.last_problem = f"could not write entry: {exc.strerror or exc}"
        finally:
            if tmp_name is not None:
                try:
                    os.unlink(tmp_name)
                except OSError:
                    pass

    def prune(self, keep: set[str]) -> int:
        """Delete entries whose fingerprint is not in ``keep`` (and left-over temp files); return how many."""
        removed = 0
        try:
            names = sorted(os.listdir(self.folder))
        except OSError:
            return 0
        for name in names:
            if not name.endswith(SUFFIX):
                continue  # not ours: leave it alone
            stem = name[: -len(SUFFIX)]
            if name.startswith(".tmp-") or (_FINGERPRINT.fullmatch(stem) and stem not in keep):
                try:
                    os.unlink(self.folder / name)
                    removed += 1
                except OSError:
                    pass
        return removed
