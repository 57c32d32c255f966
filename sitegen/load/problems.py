"""Row problems of the read tables, collected as DataErrors so a user fixes them all in one go."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import DataError, DataErrors
from .tables import CSV_SUFFIXES, Table


#: Individual errors listed per problem before the rest are counted in one line.
ERRORS_PER_PROBLEM = 50


class Problems:
    """Collects DataErrors; each vectorised check reports at most a few rows in full."""

    def __init__(self) -> None:
        self.errors: list[DataError] = []

    def flag(self, table: Table, positions: np.ndarray, problem: str, *, column: str, values=None,
             notes: list[str] | None = None, fix: str = "") -> None:
        """One DataError per row position; ``values`` and ``notes`` (extra words) go with the first shown rows."""
        positions = np.asarray(positions, dtype=np.int64)
        if positions.size == 0:
            return
        shown = positions[:ERRORS_PER_PROBLEM]
        places = table.where(shown, column)
        name = table.names.get(column, column)
        for i, (file, row) in enumerate(places):
            text = problem + (notes[i] if notes is not None else "")
            value = values[i] if values is not None else None
            self.errors.append(DataError(file, text, row=row, column=name, value=value,
                                         has_value=values is not None, fix=fix))
        rest = positions.size - shown.size
        if rest:
            file, row = table.where(positions[shown.size: shown.size + 1], column)[0]
            self.errors.append(DataError(file, f"{rest} more rows like this from here on: {problem}", row=row,
                                         column=name, fix=fix))

    def raise_if_any(self) -> None:
        if self.errors:
            order = sorted(range(len(self.errors)),
                           key=lambda i: (self.errors[i].file, self.errors[i].row or 0, i))
            raise DataErrors([self.errors[i] for i in order])


def as_written(table: Table, values: np.ndarray) -> list:
    """Values to quote in messages: a CSV cell is text, even when it was read as a number."""
    if Path(table.file).suffix.lower() in CSV_SUFFIXES:
        return [str(v) for v in values.tolist()]
    return values.tolist()
