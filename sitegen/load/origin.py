"""Where each loaded row came from, so errors can name file and row.

A table file's rows are numbered as a spreadsheet shows them (header row 1,
first data row 2, blank lines counted, a quoted cell spanning lines still one
row). Text decklists number each row by its line in its own file.
"""
from __future__ import annotations

import csv
import mmap
from pathlib import Path

import numpy as np


class Origin:
    """Maps row positions of a loaded table back to (file, row)."""

    def where(self, positions: np.ndarray) -> list[tuple[str, int]]:
        raise NotImplementedError


class TableOrigin(Origin):
    """Rows of one CSV or Parquet file.

    CSV readers skip blank lines, so position + 2 is the spreadsheet row only
    when the file has none; otherwise the file is re-read with the csv module
    (only when an error must be reported, so the fast path stays fast).
    """

    def __init__(self, file: Path | str, *, is_csv: bool) -> None:
        self.file = str(file)
        self._is_csv = is_csv
        self._rows: np.ndarray | None = None
        self._simple: bool | None = None

    def _has_blank_lines(self) -> bool:
        try:
            with open(self.file, "rb") as f, mmap.mmap(f.fileno(), 0, access=mmap.ACCESS_READ) as m:
                return m.find(b"\n\n") >= 0 or m.find(b"\n\r\n") >= 0 or m.find(b"\r\r") >= 0
        except (OSError, ValueError):
            return False

    def _spreadsheet_rows(self, upto: int) -> np.ndarray:
        """Spreadsheet row of each data record, for the first ``upto + 1`` records."""
        rows: list[int] = []
        try:
            with open(self.file, encoding="utf-8-sig", errors="replace", newline="") as f:
                reader = csv.reader(f)
                header_seen = False
                for number, record in enumerate(reader, start=1):
                    if not record:
                        continue
                    if not header_seen:
                        header_seen = True
                        continue
                    rows.append(number)
                    if len(rows) > upto:
                        break
        except (OSError, csv.Error):
            pass
        return np.asarray(rows, dtype=np.int64)

    def where(self, positions: np.ndarray) -> list[tuple[str, int]]:
        positions = np.asarray(positions, dtype=np.int64)
        if not self._is_csv or positions.size == 0:
            return [(self.file, int(p) + 2) for p in positions]
        if self._simple is None:
            self._simple = not self._has_blank_lines()
        if self._simple:
            return [(self.file, int(p) + 2) for p in positions]
        need = int(positions.max())
        if self._rows is None or len(self._rows) <= need:
            self._rows = self._spreadsheet_rows(need)
        rows = self._rows
        return [(self.file, int(rows[p]) if p < len(rows) else int(p) + 2) for p in positions]


class ListOrigin(Origin):
    """Rows gathered from many small files (text decklists): file and line per row."""

    def __init__(self, files: list[str], file_index: np.ndarray, lines: np.ndarray) -> None:
        self.files = files
        self.file_index = np.asarray(file_index, dtype=np.int64)
        self.lines = np.asarray(lines, dtype=np.int64)

    def where(self, positions: np.ndarray) -> list[tuple[str, int]]:
        return [(self.files[self.file_index[p]], int(self.lines[p])) for p in np.asarray(positions, dtype=np.int64)]


class StackedOrigin(Origin):
    """Rows of several tables stacked one after another (a Parquet folder)."""

    def __init__(self, parts: list[Origin], sizes: np.ndarray) -> None:
        self.parts = parts
        self.starts = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(np.int64)

    def where(self, positions: np.ndarray) -> list[tuple[str, int]]:
        positions = np.asarray(positions, dtype=np.int64)
        part = np.searchsorted(self.starts, positions, side="right") - 1
        return [self.parts[k].where(np.array([p - self.starts[k]]))[0] for p, k in zip(positions, part)]
