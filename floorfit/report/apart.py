"""One part of the report drawn in a second process while this one draws the rest.

report.pdf takes the longest to draw (its text above all) and needs nothing the other files
make, so :func:`start` can draw it in a forked child process while the writer draws the figures,
report.html and overlay.dxf. The child inherits the finished check by the fork (nothing is
pickled on the way in) and sends back only the bytes, so the files are the same as drawn in one
process. Where no second process can be used (one core, ``workers=1``, no ``fork`` start method,
a daemonic process, a child that fails to start or dies), the part is drawn in this process
when it is asked for: the same bytes, and an error is raised where drawing it raises.
"""

from __future__ import annotations

import multiprocessing
import os
import sys
from collections.abc import Callable
from typing import Any

__all__ = ["Pending", "start", "usable_cores"]


def usable_cores() -> int:
    """The number of cores this process may run on (at least 1)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def _may_fork(workers: int | None) -> bool:
    """True when a forked child may draw a part: Linux (fork is safe with matplotlib there), more
    than one worker asked for or (``None``) more than one usable core and a process that is not
    itself a worker of a process pool (a batch's pool already shares out the cores; daemonic
    processes may not have children)."""
    if not sys.platform.startswith("linux") or "fork" not in multiprocessing.get_all_start_methods():
        return False
    if multiprocessing.current_process().daemon:
        return False
    if workers is None:
        return multiprocessing.parent_process() is None and usable_cores() >= 2
    return int(workers) >= 2


def _child(conn: Any, fn: Callable[..., bytes], args: tuple, kwargs: dict) -> None:
    """In the child: draw, send ``(True, bytes)`` or ``(False, None)`` when drawing failed."""
    try:
        data = fn(*args, **kwargs)
    except BaseException:           # the parent draws it again itself and raises there
        conn.send((False, None))
    else:
        conn.send((True, data))
    finally:
        conn.close()


class Pending:
    """A part being drawn: :meth:`result` gives its bytes (waiting for the child when there is one)."""

    def __init__(self, fn: Callable[..., bytes], args: tuple, kwargs: dict, workers: int | None):
        self._call = (fn, args, kwargs)
        self._proc = None
        self._conn = None
        if _may_fork(workers):
            ctx = multiprocessing.get_context("fork")
            recv, send = ctx.Pipe(duplex=False)
            sys.stdout.flush()
            sys.stderr.flush()
            try:
                proc = ctx.Process(target=_child, args=(send, fn, args, kwargs), daemon=True)
                proc.start()
            except OSError:
                recv.close()
            else:
                self._proc, self._conn = proc, recv
            finally:
                send.close()

    @property
    def apart(self) -> bool:
        """True while a child process is drawing the part."""
        return self._proc is not None

    def result(self) -> bytes:
        """The part's bytes: the child's, or drawn here when there is no child or it failed."""
        ok, data = False, None
        if self._proc is not None:
            try:
                ok, data = self._conn.recv()
            except (EOFError, OSError):     # the child died before sending
                ok = False
            finally:
                self._conn.close()
                self._proc.join()
                self._proc, self._conn = None, None
        if ok:
            return data
        fn, args, kwargs = self._call
        return fn(*args, **kwargs)

    def cancel(self) -> None:
        """Stop the child (if any) and release it; :meth:`result` then draws the part here."""
        if self._proc is None:
            return
        self._conn.close()
        if self._proc.is_alive():
            self._proc.terminate()
        self._proc.join()
        self._proc, self._conn = None, None


def start(fn: Callable[..., bytes], *args: Any, workers: int | None = None, **kwargs: Any) -> Pending:
    """Begin ``fn(*args, **kwargs)`` (which returns bytes) in a forked child when ``workers`` (None:
    the usable cores) allows a second process; see :class:`Pending`."""
    return Pending(fn, args, kwargs, workers)
