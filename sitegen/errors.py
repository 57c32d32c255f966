"""One error hierarchy for the whole tool.

Every error says where (file, row, column, or config key), what value was
found, and how to fix it. The CLI prints ``str(error)`` as one line and exits
non-zero; nothing below the CLI prints or exits.
"""
from __future__ import annotations

import unicodedata
from pathlib import Path


class SitegenError(Exception):
    """Base of every error sitegen raises on purpose."""


def _hidden(c: str) -> bool:
    """A character a reader cannot tell from others, or cannot see: combining marks, format and
    control characters, spaces other than the plain space, and characters NFC would change."""
    kind = unicodedata.category(c)
    return (kind[0] in "MC" or (kind[0] == "Z" and c != " ")
            or unicodedata.normalize("NFC", c) != c)


def visible(text: str) -> str:
    """A name quoted for a message so that two look-alike spellings look different: as repr()
    shows it, but combining marks, invisible and look-alike characters written as escapes
    ('Ashe\\u0301n Oracle' against 'Ash\u00e9n Oracle' shows as 'Ashén Oracle')."""
    if not any(_hidden(c) for c in text):
        return repr(text)
    out = []
    for c in text:
        if c == "\\":
            out.append("\\\\")
        elif _hidden(c):
            out.append(f"\\u{ord(c):04x}" if ord(c) <= 0xFFFF else f"\\U{ord(c):08x}")
        else:
            out.append(c)
    return "'" + "".join(out) + "'"


def _show(value: object, limit: int = 60) -> str:
    """Render a bad value safely for a one-line message (text as :func:`visible` shows it)."""
    if hasattr(value, "item") and callable(value.item) and getattr(value, "shape", None) == ():
        value = value.item()  # a numpy number shows as 0, not np.int64(0)
    text = visible(value) if isinstance(value, str) else repr(value)
    if len(text) > limit:
        text = text[: limit - 1] + "…"
    return text


class ConfigError(SitegenError):
    """A setting is unknown, of the wrong type, or out of range."""

    def __init__(self, file: Path | str, key: str, problem: str, fix: str = "") -> None:
        self.file = str(file)
        self.key = key
        self.problem = problem
        self.fix = fix
        msg = f"{self.file}: setting '{key}': {problem}"
        if fix:
            msg += f"; {fix}"
        super().__init__(msg)


class DataError(SitegenError):
    """One problem in one input file, located as a spreadsheet would number it.

    ``row`` is the spreadsheet row: the header is row 1, the first data row
    is row 2. For text decklists it is the line number in the file.
    """

    def __init__(
        self,
        file: Path | str,
        problem: str,
        *,
        row: int | None = None,
        column: str | None = None,
        value: object = None,
        fix: str = "",
        has_value: bool | None = None,
    ) -> None:
        self.file = str(file)
        self.problem = problem
        self.row = row
        self.column = column
        self.value = value
        self.fix = fix
        where = self.file
        if row is not None:
            where += f", row {row}"
        if column is not None:
            where += f", column '{column}'"
        msg = f"{where}: {problem}"
        if has_value or (has_value is None and value is not None):
            msg += f" (value {_show(value)})"
        if fix:
            msg += f"; {fix}"
        super().__init__(msg)


class DataErrors(SitegenError):
    """Several data errors found in one pass, so users fix them all at once."""

    def __init__(self, errors: list[DataError]) -> None:
        self.errors = list(errors)
        first = str(self.errors[0]) if self.errors else "no errors"
        more = f" (and {len(self.errors) - 1} more)" if len(self.errors) > 1 else ""
        super().__init__(first + more)

    def lines(self, limit: int = 20) -> list[str]:
        """The first ``limit`` messages, then a count of the rest."""
        out = [str(e) for e in self.errors[:limit]]
        rest = len(self.errors) - limit
        if rest > 0:
            out.append(f"… and {rest} more error{'s' if rest != 1 else ''} not shown")
        return out


class RenderError(SitegenError):
    """A page, chart or note could not be rendered."""


class BuildBusyError(SitegenError):
    """Another build of the same site is running."""
