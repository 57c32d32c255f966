"""The last build's record, kept beside the cache (``last-build.json``), and what a build
takes from it: the no-op answer when nothing changed, the output files it left (so the
output guard knows them), its page keys, its assignments blocks and its chart checks.

Any record that is missing, damaged or from other inputs is simply not used: each use
falls back to doing the work, so nothing here can make a site differ from a fresh build.
"""
from __future__ import annotations

import json
import os
from pathlib import Path
from typing import Any

from .files import file_stat, files_under
from .keys import render_salt

STAMP_FILE = "last-build.json"
#: The assignments files whose season blocks a build may copy from the last build's (site/exports.py).
BLOCK_FILES = ("data/assignments.csv", "data/assignments.json")


def output_listing(out: Path) -> list[list]:
    """Each file under ``out`` with its size and time of change, as the record keeps them."""
    listing = []
    for p in files_under(out):
        found = file_stat(p)
        if found is not None:
            listing.append([p.relative_to(out).as_posix(), found[0], found[1]])
    return listing


class LastBuild:
    """The last build's record in ``cache_folder`` (none without a cache folder)."""

    def __init__(self, cache_folder: Path | None) -> None:
        self.folder = cache_folder
        self.record: dict | None = None
        if cache_folder is not None:
            try:
                record = json.loads((cache_folder / STAMP_FILE).read_text(encoding="utf-8"))
            except (OSError, ValueError):
                record = None
            self.record = record if isinstance(record, dict) else None

    def known_output(self) -> dict[str, tuple[int, int]] | None:
        """The output files the last build wrote (see :func:`sitegen.writing.check_output`), or None."""
        try:
            return {str(name): (int(size), int(mtime)) for name, size, mtime in self.record["output"]} \
                if self.record else None
        except (KeyError, TypeError, ValueError):
            return None

    def unchanged_report(self, stamp: str, out: Path) -> dict | None:
        """The last build's report (see :meth:`write`) when its inputs and its output are exactly as they were."""
        if self.record is None:
            return None
        try:
            if self.record.get("stamp") != stamp or self.record.get("output") != output_listing(out):
                return None
            report = self.record["report"]
            return report if isinstance(report, dict) else None
        except (OSError, ValueError, KeyError, TypeError):
            return None

    def export_blocks(self, out: Path):
        """The last build's assignments files and the index of their season blocks, when both
        files are still as that build left them (same size and time of change); else none to
        copy; None without a cache folder."""
        from ..site.exports import ExportBlocks

        if self.folder is None:
            return None
        record = self.record
        try:
            if not record or not record.get("export_blocks"):
                return ExportBlocks()  # nothing to copy: the files need not be read
            listed = self.known_output() or {}
            files = []
            for name in BLOCK_FILES:
                if listed.get(name) != file_stat(out / name):
                    return ExportBlocks()
                files.append((out / name).read_bytes())
            return ExportBlocks.from_files(files[0], files[1], record.get("export_blocks", []))
        except (OSError, ValueError, KeyError, TypeError):
            return ExportBlocks()

    def page_memo(self, out: Path, template_dirs: tuple[Path, ...]):
        """The last build's page keys, for pages whose context is unchanged (site/memo.py);
        none when the templates or the rendering code changed since; None without a cache folder."""
        from ..site.memo import PageMemo

        if self.folder is None:
            return None
        salt = render_salt(template_dirs)
        try:
            pages = self.record.get("pages") if self.record else None
            if not pages or pages.get("salt") != salt:
                return PageMemo(salt)
            return PageMemo(salt, out, {str(k): str(v) for k, v in pages["keys"].items()}, self.known_output() or {})
        except (ValueError, KeyError, TypeError, AttributeError):
            return PageMemo(salt)

    def trust_chart_checks(self, pages, checks) -> str | None:
        """Count the charts the last build checked as checked in ``checks`` (this build's
        :class:`sitegen.site.charts.ChartChecks`), when what a check depends on is unchanged
        (site/charts.py :func:`check_salt`); the salt, to keep with this build's. None without a
        page memo (no cache folder)."""
        from ..site.charts import check_salt

        if pages is None:
            return None
        salt = check_salt(pages.salt)
        kept = self.record.get("charts") if self.record else None
        if isinstance(kept, dict) and kept.get("salt") == salt:
            checks.trust(kept.get("passed"))
        return salt

    def write(self, stamp: str, out: Path, report: dict[str, Any], blocks=None, pages=None,
              check_salt: str | None = None, checks=None) -> None:
        """Keep this build's record for the next build (with the charts ``checks`` passed); a failure
        only misses a shortcut next time."""
        if self.folder is None:
            return
        record = {"stamp": stamp, "output": output_listing(out),
                  "export_blocks": blocks.new_index if blocks is not None else [],
                  "pages": {"salt": pages.salt, "keys": pages.keys} if pages is not None else None,
                  "charts": {"salt": check_salt, "passed": checks.passed()}
                  if check_salt is not None and checks is not None else None,
                  "report": report}
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            tmp = self.folder / f".{STAMP_FILE}.{os.getpid()}"
            tmp.write_text(json.dumps(record), encoding="utf-8")
            os.replace(tmp, self.folder / STAMP_FILE)
        except OSError:
            pass
