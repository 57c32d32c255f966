"""Key bytes of page contexts: what a page memo (site/memo.py) digests to tell an unchanged page.

A context is pickled as it is, except a value that offers ``key_text()`` (the :class:`KeyText`
protocol, e.g. :class:`sitegen.site.charts.LazyChart`): it stands in the key by that text alone,
which must name everything the value is made from. Only key making does this; pickled anywhere
else, such a value is itself.
"""
from __future__ import annotations

import io
import pickle
from typing import Any, Protocol, runtime_checkable


@runtime_checkable
class KeyText(Protocol):
    """A context value that stands in a page's key by a text naming all it is made from."""

    def key_text(self) -> str: ...


def _stands_for(text: str) -> str:
    """What a :class:`KeyText` value is written as in key bytes (never read back)."""
    return text


class _KeyPickler(pickle.Pickler):
    def reducer_override(self, obj: Any) -> Any:
        make = getattr(type(obj), "key_text", None)
        if make is None:
            return NotImplemented
        return _stands_for, (make(obj),)


def key_bytes(value: Any) -> bytes:
    """``value`` pickled (protocol 5), each :class:`KeyText` in it written as its key text.

    Raises what :func:`pickle.dumps` raises for a value that cannot be pickled.
    """
    buf = io.BytesIO()
    _KeyPickler(buf, protocol=5).dump(value)
    return buf.getvalue()
