"""A small progress display for long runs, on standard error.

On a terminal it keeps one line up to date (``\\r``); when standard error is not a
terminal (a log file, CI) it prints one plain line per stage instead; with
``quiet=True`` it prints nothing.
"""

from __future__ import annotations

import sys
import time
from typing import TextIO

__all__ = ["Progress"]


class Progress:
    """Stages of a run with an optional count inside each.

    >>> import io
    >>> p = Progress(stream=io.StringIO())
    >>> p.stage("drawing figures")
    >>> p.done()
    """

    def __init__(self, total_stages: int | None = None, *, quiet: bool = False,
                 stream: TextIO | None = None, prefix: str = "floorfit"):
        self.stream = sys.stderr if stream is None else stream
        self.quiet = quiet
        self.total = total_stages
        self.prefix = prefix
        self.index = 0
        self.name = ""
        is_tty = getattr(self.stream, "isatty", None)
        self.live = bool(is_tty and is_tty()) and not quiet
        self._width = 0
        self._started = time.monotonic()
        self._last_draw = 0.0

    def _counter(self) -> str:
        return f"[{self.index}/{self.total}] " if self.total else ""

    def _draw(self, text: str) -> None:
        line = f"{self.prefix}: {text}"
        pad = max(self._width - len(line), 0)
        self.stream.write("\r" + line + " " * pad)
        self.stream.flush()
        self._width = len(line)

    def stage(self, name: str) -> None:
        """Start the next stage called ``name``."""
        self.index += 1
        self.name = name
        if self.quiet:
            return
        if self.live:
            self._draw(f"{self._counter()}{name}")
        else:
            self.stream.write(f"{self.prefix}: {self._counter()}{name}\n")
            self.stream.flush()

    def update(self, done: int, total: int | None = None) -> None:
        """Report ``done`` of ``total`` items in the current stage (terminal only, at most
        ten redraws a second)."""
        if not self.live:
            return
        now = time.monotonic()
        if now - self._last_draw < 0.1 and (total is None or done < total):
            return
        self._last_draw = now
        amount = f"{done}/{total}" if total else str(done)
        self._draw(f"{self._counter()}{self.name} {amount}")

    def done(self, message: str | None = None) -> None:
        """Finish: clear the live line (or print ``message`` as a plain line)."""
        if self.quiet:
            return
        if self.live:
            self.stream.write("\r" + " " * self._width + "\r")
            self._width = 0
        if message:
            elapsed = time.monotonic() - self._started
            self.stream.write(f"{self.prefix}: {message} ({elapsed:.1f} s)\n")
        self.stream.flush()
