"""Progress lines for long work: one line per stage with counts and times.

Stages call :meth:`Progress.stage` as a context manager and :meth:`Progress.step`
for countable work inside it. ``quiet`` silences everything; a non-terminal
stream gets whole lines only (no carriage-return redraws), so CI logs stay readable.
"""
from __future__ import annotations

import sys
import time
from contextlib import contextmanager
from typing import Iterator, TextIO


class Progress:
    """Prints what the build is doing, how far it is, and how long each stage took."""

    def __init__(self, stream: TextIO | None = None, quiet: bool = False) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.quiet = quiet
        self._tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self._last_step = 0.0
        self.timings: dict[str, float] = {}

    def say(self, text: str) -> None:
        if not self.quiet:
            print(text, file=self.stream, flush=True)

    @contextmanager
    def stage(self, name: str) -> Iterator["Progress"]:
        start = time.perf_counter()
        self.say(f"• {name} …")
        yield self
        took = time.perf_counter() - start
        self.timings[name] = self.timings.get(name, 0.0) + took
        if self._tty and not self.quiet:
            print("\r\033[K", end="", file=self.stream)
        self.say(f"  {name}: done in {took:.1f} s")

    def step(self, done: int, total: int, label: str = "") -> None:
        """Report ``done`` of ``total``; on a terminal redraws one line, elsewhere prints every ~5 s and at the end."""
        if self.quiet:
            return
        text = f"  {done}/{total} {label}".rstrip()
        if self._tty:
            print(f"\r\033[K{text}", end="" if done < total else "\n", file=self.stream, flush=True)
            return
        now = time.perf_counter()
        if done == total or now - self._last_step >= 5.0:
            self._last_step = now
            print(text, file=self.stream, flush=True)
