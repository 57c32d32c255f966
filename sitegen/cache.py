"""Stored partition analyses, keyed by a fingerprint of what they came from.

Analysing a season x leader partition is the slow part of a build, and most
partitions do not change between builds. :func:`fingerprint` digests
everything an analysis depends on (the partition's deck rows and card rows,
the analysis settings, the tool version); :class:`Cache` keeps one file per
fingerprint.

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

import dataclasses
import hashlib
import json
import os
import pickle
import re
import tempfile
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from pandas.util import hash_pandas_object

from . import __version__
from .model import CARD_ROW_COLUMNS, DECK_COLUMNS, MapLayout, PartitionInput, PartitionResult, in_row_order, narrowest_int

MAGIC = b"SITEGEN-CACHE"
#: Bumped when the entry layout changes; entries of another format are ignored.
FORMAT = 1
SUFFIX = ".entry"
_FINGERPRINT = re.compile(r"[0-9a-f]{64}")
# A header line is short; a longer first line means the file is not ours.
_MAX_HEADER = 512


def _row_digests(frame: pd.DataFrame, first: tuple[str, ...]) -> tuple[list[str], np.ndarray]:
    """Column names in canonical order and one 64-bit digest per row, sorted.

    Sorting the per-row digests (numbers) rather than the rows (strings) gives
    the same bytes for any row order at a fraction of the cost: hashing is
    vectorised in pandas and the sort is one numpy call.
    """
    columns = [c for c in first if c in frame.columns]
    columns += sorted(str(c) for c in frame.columns if c not in first)
    if frame.empty:
        return columns, np.zeros(0, dtype=np.uint64)
    digests = hash_pandas_object(frame[columns], index=False, categorize=True).to_numpy()
    return columns, np.sort(digests)


def _settings_text(params: Any) -> str:
    """A canonical text of the analysis settings (any frozen dataclass, dict or None)."""
    if params is None:
        body: Any = None
    elif dataclasses.is_dataclass(params) and not isinstance(params, type):
        body = {"type": f"{type(params).__module__}.{type(params).__qualname__}", "fields": dataclasses.asdict(params)}
    elif isinstance(params, dict):
        body = params
    else:
        body = repr(params)
    return json.dumps(body, sort_keys=True, default=_json_fallback, ensure_ascii=True, separators=(",", ":"))


def _json_fallback(value: Any) -> Any:
    # Sets have no order; tuples and paths have an unambiguous text.
    if isinstance(value, (set, frozenset)):
        return sorted(map(repr, value))
    return repr(value)


def feed_labelled(h, label: str, data: bytes | list) -> None:
    """``data`` into the digest ``h`` under ``label``, length-prefixed, so no two different inputs
    concatenate alike; a list of buffers is hashed piece by piece, as if joined (no copy of them)."""
    pieces = [memoryview(d).cast("B") for d in data] if isinstance(data, list) else [memoryview(data).cast("B")]
    h.update(label.encode("utf-8") + b":" + str(sum(p.nbytes for p in pieces)).encode("ascii") + b":")
    for piece in pieces:
        h.update(piece)


def fingerprint(part: PartitionInput, params: Any, version: str = __version__) -> str:
    """A sha256 hex digest of a partition's rows, the analysis settings and the tool version.

    The same rows in any order give the same digest; changing any value of
    any deck or card row, any setting, a card's type or the version gives
    another one. Text counts by its value, whatever its dtype (object,
    string or category), and so do whole numbers.

    The rows are digested in a canonical form (decks by id; card rows by
    deck, then card, as numbers into the sorted distinct ids and names),
    which the partitions a build cuts already have, so their bytes are
    hashed as they lie: at a million decks, a tenth of the time of hashing
    each row on its own and sorting the hashes. Rows with no such form (a
    deck id twice, a missing id or name) are digested row by row instead.
    """
    h = hashlib.sha256()

    def feed(label: str, data: bytes | list) -> None:
        feed_labelled(h, label, data)

    feed("format", str(FORMAT).encode("ascii"))
    feed("rows", b"canonical-1")  # how rows are digested (below)
    feed("version", version.encode("utf-8"))
    feed("season", str(part.season).encode("utf-8"))
    feed("leader", str(part.leader).encode("utf-8"))
    for label, frame, first, canonical in (("decks", part.decks, DECK_COLUMNS, _canonical_decks),
                                           ("cards", part.cards, CARD_ROW_COLUMNS, _canonical_cards)):
        pieces = canonical(frame)
        if pieces is None:
            columns, digests = _row_digests(frame, first)
            pieces = [("rows-digested", [digests.astype("<u8", copy=False)])]
        else:
            columns = _column_order(frame, first)
        feed(label + "-columns", json.dumps(columns).encode("utf-8"))
        for name, data in pieces:
            feed(f"{label}-{name}", data)
    feed("card-types", json.dumps(sorted((str(k), str(v)) for k, v in part.card_types.items())).encode("utf-8"))
    feed("settings", _settings_text(params).encode("utf-8"))
    return h.hexdigest()


def _column_order(frame: pd.DataFrame, first: tuple[str, ...]) -> list[str]:
    return [c for c in first if c in frame.columns] + sorted(str(c) for c in frame.columns if c not in first)


def _canonical_decks(frame: pd.DataFrame) -> list[tuple[str, list]] | None:
    """A deck table's bytes, rows by deck id; None when an id is missing or repeated."""
    if "deck_id" not in frame.columns:
        return None
    ids = _text(frame["deck_id"])
    if ids is None or ids.null_count:
        return None
    if len(ids) > 1 and not pc.all(pc.greater(ids[1:], ids[:-1])).as_py():
        order = pc.sort_indices(ids)
        in_order = ids.take(order)
        if pc.any(pc.equal(in_order[1:], in_order[:-1])).as_py():
            return None
        frame = frame.iloc[order.to_numpy()]
    return [(f"column-{c}", column_bytes(frame[c])) for c in _column_order(frame, DECK_COLUMNS)]


def _canonical_cards(frame: pd.DataFrame) -> list[tuple[str, list]] | None:
    """Card rows' bytes: the sorted distinct deck ids and card names, then per row the two
    positions among them and the other columns, rows in that order; None when a deck id or
    card name is missing or a (deck, card) pair repeats."""
    if "deck_id" not in frame.columns or "card" not in frame.columns:
        return None
    decks, cards = _sorted_codes(frame["deck_id"]), _sorted_codes(frame["card"])
    if decks is None or cards is None:
        return None
    (deck_codes, deck_names), (card_codes, card_names) = decks, cards
    if in_row_order(deck_codes, card_codes):
        order = None
    else:
        order = np.lexsort((card_codes, deck_codes))
        deck_codes, card_codes = deck_codes[order], card_codes[order]
        if not in_row_order(deck_codes, card_codes):
            return None  # a (deck, card) pair twice
    pieces = [("deck-ids", column_bytes(pd.Series(deck_names, dtype="str"))),
              ("card-names", column_bytes(pd.Series(card_names, dtype="str"))),
              ("deck-at", _narrowest(deck_codes)), ("card-at", _narrowest(card_codes))]
    for c in _column_order(frame, CARD_ROW_COLUMNS):
        if c not in ("deck_id", "card"):
            column = frame[c] if order is None else frame[c].iloc[order]
            pieces.append((f"column-{c}", column_bytes(column)))
    return pieces


def _sorted_codes(column: pd.Series) -> tuple[np.ndarray, pd.Index] | None:
    """Each value's position among the column's distinct values sorted (code point order);
    None when a value is missing. A categorical whose categories are exactly that (a
    partition cut by a build) needs no work."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = np.asarray(column.array.codes)
        if codes.size and codes.min() < 0:
            return None
        categories = column.cat.categories
        used = np.zeros(len(categories), dtype=bool)
        used[codes] = True
        if used.all() and categories.is_monotonic_increasing:
            return codes, categories
    if column.isna().any():
        return None
    codes, uniques = pd.factorize(column.astype("str"), sort=True)
    return codes, pd.Index(uniques, dtype="str")


def _narrowest(values: np.ndarray) -> list:
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


def _text(column: pd.Series) -> pa.Array | None:
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
        return [b"whole", np.packbits(missing), *_narrowest(values)]
    if pd.api.types.is_float_dtype(kind):
        values = np.where(missing, 0.0, column.to_numpy(dtype=np.float64, na_value=np.nan))
        return [b"float", np.packbits(missing), values.astype("<f8")]
    array = _text(column)
    if array is None:  # mixed values: their text, as the row digests see them
        array = pa.array([None if m else str(v) for v, m in zip(column.tolist(), missing)], type=pa.large_string())
    offsets = np.frombuffer(array.buffers()[1], dtype="<i8", count=len(array) + 1, offset=array.offset * 8)
    data = array.buffers()[2]
    body = memoryview(data)[int(offsets[0]):int(offsets[-1])] if data is not None else b""
    return [b"text", np.packbits(missing), np.diff(offsets).astype("<i8"), body]


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
