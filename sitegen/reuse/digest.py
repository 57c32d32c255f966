"""The pieces every key is made of: column and row bytes, labelled feeding, and digests of
sitegen's own code found from the import graph (file stamps are in :mod:`.files`).

Nothing here knows what a key is for; :mod:`sitegen.reuse.keys` puts the pieces together.
"""
from __future__ import annotations

import ast
import hashlib
from collections.abc import Iterable
from functools import lru_cache
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
from pandas.util import hash_pandas_object

from ..model import narrowest_int
from .files import file_stat

# -- labelled feeding -------------------------------------------------------------------------


def feed_labelled(h, label: str, data: bytes | list) -> None:
    """``data`` into the digest ``h`` under ``label``, length-prefixed, so no two different inputs
    concatenate alike; a list of buffers is hashed piece by piece, as if joined (no copy of them)."""
    pieces = [memoryview(d).cast("B") for d in data] if isinstance(data, list) else [memoryview(data).cast("B")]
    h.update(label.encode("utf-8") + b":" + str(sum(p.nbytes for p in pieces)).encode("ascii") + b":")
    for piece in pieces:
        h.update(piece)


def feed_column(h, label: str, column: pd.Series) -> None:
    """A column's values into ``h`` by value whatever their dtype (:func:`column_bytes`), each
    piece under ``label`` on its own, so the pieces' lengths are in the digest too."""
    for piece in column_bytes(column):
        feed_labelled(h, label, piece)


# -- columns and rows -------------------------------------------------------------------------


def column_order(frame: pd.DataFrame, first: tuple[str, ...]) -> list[str]:
    """``first`` (those present), then the other columns by name."""
    return [c for c in first if c in frame.columns] + sorted(str(c) for c in frame.columns if c not in first)


def row_digests(frame: pd.DataFrame, first: tuple[str, ...]) -> tuple[list[str], np.ndarray]:
    """Column names in canonical order and one 64-bit digest per row, sorted.

    Sorting the per-row digests (numbers) rather than the rows (strings) gives
    the same bytes for any row order at a fraction of the cost: hashing is
    vectorised in pandas and the sort is one numpy call.
    """
    columns = column_order(frame, first)
    if frame.empty:
        return columns, np.zeros(0, dtype=np.uint64)
    digests = hash_pandas_object(frame[columns], index=False, categorize=True).to_numpy()
    return columns, np.sort(digests)


def narrowest_bytes(values: np.ndarray) -> list:
    """Whole numbers as little-endian bytes of the narrowest signed type holding them all (so
    the bytes follow from the values, not from the dtype they came in)."""
    values = np.asarray(values)
    low, high = (int(values.min()), int(values.max())) if values.size else (0, 0)
    narrow = narrowest_int(low, high)
    if narrow is None:  # beyond int64: unsigned 64-bit holds it (never wrapped to a negative number)
        if low < 0:
            raise OverflowError(f"whole numbers from {low} to {high} fit no 64-bit integer")
        return [b"<u8", np.ascontiguousarray(values.astype("<u8", copy=False))]
    kind = f"<i{narrow.itemsize}"
    return [kind.encode("ascii"), np.ascontiguousarray(values.astype(kind, copy=False))]


def text_array(column: pd.Series) -> pa.Array | None:
    """A column of text (any dtype holding only strings and missing values) as one Arrow
    large_string array, or None when it holds something else."""
    try:
        if isinstance(column.dtype, pd.CategoricalDtype):
            array = pa.array(column.array, from_pandas=True)
            array = array.cast(array.type.value_type)
        else:
            array = pa.array(column, from_pandas=True)
        if isinstance(array, pa.ChunkedArray):
            array = array.combine_chunks()
        if not (pa.types.is_string(array.type) or pa.types.is_large_string(array.type) or pa.types.is_null(array.type)):
            return None
        return array.cast(pa.large_string())
    except (pa.ArrowException, TypeError, ValueError):
        return None


def column_bytes(column: pd.Series) -> list[bytes]:
    """One column's values as bytes that depend on the values only: text as its missing-value
    mask, lengths and UTF-8 bytes; numbers as a mask and the values (whole or 64-bit float)."""
    missing = column.isna().to_numpy(dtype=bool)
    kind = column.dtype
    if pd.api.types.is_bool_dtype(kind) or pd.api.types.is_integer_dtype(kind):
        values = column.to_numpy(dtype=np.int64, na_value=0)
        return [b"whole", np.packbits(missing), *narrowest_bytes(values)]
    if pd.api.types.is_float_dtype(kind):
        values = np.where(missing, 0.0, column.to_numpy(dtype=np.float64, na_value=np.nan))
        return [b"float", np.packbits(missing), values.astype("<f8")]
    array = text_array(column)
    if array is None:  # mixed values: their text, as the row digests see them
        array = pa.array([None if m else str(v) for v, m in zip(column.tolist(), missing)], type=pa.large_string())
    offsets = np.frombuffer(array.buffers()[1], dtype="<i8", count=len(array) + 1, offset=array.offset * 8)
    data = array.buffers()[2]
    body = memoryview(data)[int(offsets[0]):int(offsets[-1])] if data is not None else b""
    return [b"text", np.packbits(missing), np.diff(offsets).astype("<i8"), body]


# -- sitegen's own code, by import ------------------------------------------------------------

#: The package whose modules code digests follow (imports of anything else are libraries).
PACKAGE = "sitegen"
_PACKAGE_DIR = Path(__file__).resolve().parent.parent


def module_file(name: str, package: str = PACKAGE, folder: Path = _PACKAGE_DIR) -> Path | None:
    """The source file of module ``name`` of ``package`` (whose folder is ``folder``), or None."""
    parts = name.split(".")
    if parts[0] != package:
        return None
    base = folder.joinpath(*parts[1:])
    for candidate in (base / "__init__.py", base.with_suffix(".py") if len(parts) > 1 else None):
        if candidate is not None and candidate.is_file():
            return candidate
    return None


@lru_cache(maxsize=512)
def _imports_of(path: Path, name: str, size_time: tuple[int, int] | None, package: str, folder: Path) -> frozenset[str]:
    """The modules of ``package`` that module ``name`` (file ``path``) names in any import
    statement, at top level or inside a function, relative or absolute. Remembered per
    (file, size, time of change)."""
    tree = ast.parse(path.read_bytes(), filename=str(path))
    is_package = path.name == "__init__.py"
    here = name if is_package else name.rpartition(".")[0]
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                parts = here.split(".")
                base_parts = parts[:len(parts) - (node.level - 1)] if node.level > 1 else parts
                base = ".".join(base_parts + ([node.module] if node.module else []))
            else:
                base = node.module or ""
            found.add(base)
            # "from . import partition" names a module; "from .model import DeckData" does not.
            found.update(f"{base}.{alias.name}" for alias in node.names if alias.name != "*")
    return frozenset(m for m in found if module_file(m, package, folder) is not None)


def imported_modules(roots: Iterable[str], package: str = PACKAGE, folder: Path = _PACKAGE_DIR) -> dict[str, Path]:
    """Every module of ``package`` that importing ``roots`` can run: the roots, what they import
    within the package (directly or through others, at any depth), and the packages holding
    each (whose ``__init__`` runs first); by name, with its source file. A root that is no
    module of the package is an error (a renamed module must be renamed here too)."""
    todo = list(roots)
    for root in todo:
        if module_file(root, package, folder) is None:
            raise LookupError(f"no module {root} in {folder}")
    seen: dict[str, Path] = {}
    while todo:
        name = todo.pop()
        if name in seen:
            continue
        path = module_file(name, package, folder)
        if path is None:
            continue
        seen[name] = path
        parents = [".".join(name.split(".")[:i]) for i in range(1, name.count(".") + 1)]
        todo.extend(parents)
        todo.extend(_imports_of(path, name, file_stat(path), package, folder))
    return dict(sorted(seen.items()))


def code_digest(roots: Iterable[str], package: str = PACKAGE, folder: Path = _PACKAGE_DIR) -> str:
    """A sha256 hex digest of the source of every module :func:`imported_modules` finds for
    ``roots``, each under its module name: moving code from one module to another, adding a
    module or renaming one all change it, and no file is named here by its path."""
    h = hashlib.sha256(f"code\0{package}\0".encode())
    for name, path in imported_modules(roots, package, folder).items():
        feed_labelled(h, name, path.read_bytes())
    return h.hexdigest()
