"""One part of a run done in a forked second process while this process does the rest.

Two users: the report writer draws report.pdf (the longest part, needing nothing the other
files make) while it draws the figures, report.html and overlay.dxf; the site check plans its
station-pair drives while it runs the clearance and turnability stages. :func:`start` runs
``fn(*args, **kwargs)`` in a forked child: the child inherits this process's memory by the fork
(the finished check, the slices; nothing is pickled on the way in) and sends back only the
value, so the answer is the one this process would compute. Where no second process can be
used (one core, ``workers=1``, no ``fork`` start method, a worker of a process pool, a child
that fails to start, fails or dies), the part is done in this process when its result is asked
for: the same value, and an error is raised where doing it raises. Ctrl-C reaches this process,
which stops the child.
"""

from __future__ import annotations

import gc
import multiprocessing
import os
import signal
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
    """True when a forked child may do a part: Linux (fork is safe with matplotlib there), more
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


def _child(conn: Any, fn: Callable[..., Any], args: tuple, kwargs: dict) -> None:
    """In the child: do the part, send ``(True, value)`` or ``(False, None)`` when it failed."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)      # Ctrl-C is the parent's; it stops the child
    try:
        data = fn(*args, **kwargs)
    except BaseException:           # the parent does it again itself and raises there
        conn.send((False, None))
    else:
        conn.send((True, data))
    finally:
        conn.close()


class Pending:
    """A part under way: :meth:`result` gives its value (waiting for the child when there is one)."""

    def __init__(self, fn: Callable[..., Any], args: tuple, kwargs: dict, workers: int | None):
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
                gc.freeze()        # the child's collector leaves the inherited objects alone: fewer pages copied
                try:
                    proc.start()
                finally:
                    gc.unfreeze()
            except OSError:
                recv.close()
            else:
                self._proc, self._conn = proc, recv
            finally:
                send.close()

    @property
    def apart(self) -> bool:
        """True while a child process is doing the part."""
        return self._proc is not None

    def result(self) -> Any:
        """The part's value: the child's, or computed here when there is no child or it failed."""
        ok, data = False, None
        if self._proc is not None:
            try:
                ok, data = self._conn.recv()
            except (EOFError, OSError):     # the child died before sending
                ok = False
            except BaseException:           # Ctrl-C while waiting: stop the child rather than wait for it
                self.cancel()
                raise
            self._release()
        if ok:
            return data
        fn, args, kwargs = self._call
        return fn(*args, **kwargs)

    def cancel(self) -> None:
        """Stop the child (if any) and release it; :meth:`result` then does the part here."""
        if self._proc is None:
            return
        if self._proc.is_alive():
            self._proc.terminate()
        self._release()

    def _release(self) -> None:
        """Close the pipe and reap the child (which has sent its value, ended or been stopped)."""
        self._conn.close()
        self._proc.join()
        self._proc, self._conn = None, None


def start(fn: Callable[..., Any], *args: Any, workers: int | None = None, **kwargs: Any) -> Pending:
    """Begin ``fn(*args, **kwargs)`` (whose value must pickle) in a forked child when ``workers``
    (None: the usable cores) allows a second process; see :class:`Pending`."""
    return Pending(fn, args, kwargs, workers)
