"""A small progress display for long runs, on standard error.

On a terminal it keeps one line up to date (``\\r``); when standard error is not a
terminal (a log file, CI) it prints one plain line per stage instead; with
``quiet=True`` it prints nothing. Every stage line carries the time elapsed since the
run started, so a log shows where the time went.
"""

from __future__ import annotations

import sys
import time
from typing import TextIO

__all__ = ["Progress"]


class Progress:
    """Stages of a run with an optional count inside each.

    A Progress is also a callable: ``progress("name")`` starts a stage, so it can be passed
    wherever a ``progress(message)`` callback is expected; code that finds an ``update``
    attribute on the callback may report counts through it.

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

    def __call__(self, name: str) -> None:
        self.stage(name)

    @property
    def elapsed_s(self) -> float:
        """Seconds since this progress display was created."""
        return time.monotonic() - self._started

    def _counter(self) -> str:
        return f"[{self.index}/{self.total}] " if self.total else ""

    def _clock(self) -> str:
        return f" ({self.elapsed_s:.1f} s)"

    def _draw(self, text: str) -> None:
        line = f"{self.prefix}: {text}"
        pad = max(self._width - len(line), 0)
        self.stream.write("\r" + line + " " * pad)
        self.stream.flush()
        self._width = len(line)

    def stage(self, name: str) -> None:
        """Start the next stage called ``name`` (printed with the elapsed time)."""
        self.index += 1
        self.name = name
        if self.quiet:
            return
        if self.live:
            self._draw(f"{self._counter()}{name}{self._clock()}")
        else:
            self.stream.write(f"{self.prefix}: {self._counter()}{name}{self._clock()}\n")
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
        self._draw(f"{self._counter()}{self.name} {amount}{self._clock()}")

    def done(self, message: str | None = None) -> None:
        """Finish: clear the live line (or print ``message`` as a plain line)."""
        if self.quiet:
            return
        if self.live:
            self.stream.write("\r" + " " * self._width + "\r")
            self._width = 0
        if message:
            self.stream.write(f"{self.prefix}: {message}{self._clock()}\n")
        self.stream.flush()
