"""One stage of the site check run on a second process while this process goes on with others.

The check's manoeuvre budget (station-pair drives) and its clearance and turnability stages
read the same slices and roadmap and do not depend on one another. :class:`Sidecar` starts a
stage on a forked child process: the child sees this process's memory as it was at the fork
(the slices, the roadmap, the station reach), copy-on-write, so nothing is pickled on the way
in; its answer comes back pickled through a pipe. The stage runs the same code on the same
inputs as it would here, and its limits are counts, not clocks, so the answer is the same as
on one process.

Where the fork start method is missing (not Linux or macOS), or the child ends without an
answer (killed for memory, for instance), the stage runs in this process when its result is
asked for: slower, never different. Ctrl-C reaches the parent, which stops the child.
"""

from __future__ import annotations

import gc
import multiprocessing
import signal
from collections.abc import Callable
from typing import Any

__all__ = ["Sidecar", "fork_available"]


def fork_available() -> bool:
    """True where child processes can be forked (they then share this process's memory)."""
    return "fork" in multiprocessing.get_all_start_methods()


def _child(conn, fn: Callable, args: tuple, kwargs: dict) -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)     # the parent handles Ctrl-C and stops the child
    try:
        value = fn(*args, **kwargs)
    except BaseException as exc:                     # hand the error to the parent, which raises it
        try:
            conn.send(("error", exc))
        except Exception:                            # an error that does not pickle: its words
            conn.send(("error", RuntimeError(f"{type(exc).__name__}: {exc}")))
    else:
        conn.send(("ok", value))
    finally:
        conn.close()


class Sidecar:
    """``fn(*args, **kwargs)`` started on a forked child process; :meth:`result` waits for its value.

    With ``enabled=False`` (or without fork) nothing starts and :meth:`result` calls ``fn`` here.
    An exception raised by ``fn`` in the child is raised again by :meth:`result`.
    """

    def __init__(self, fn: Callable, *args: Any, enabled: bool = True, **kwargs: Any):
        self._call = (fn, args, kwargs)
        self._proc = None
        self._conn = None
        if enabled and fork_available():
            ctx = multiprocessing.get_context("fork")
            self._conn, child_conn = ctx.Pipe(duplex=False)
            self._proc = ctx.Process(target=_child, args=(child_conn, fn, args, kwargs), daemon=True)
            gc.freeze()          # the child's collector leaves the shared objects alone: fewer pages copied
            try:
                self._proc.start()
            finally:
                gc.unfreeze()
            child_conn.close()

    @property
    def running_apart(self) -> bool:
        """True when the stage runs on its own process."""
        return self._proc is not None

    def result(self) -> Any:
        """The stage's value (waits for the child; runs the stage here if there is no child or it
        ended without an answer)."""
        fn, args, kwargs = self._call
        if self._proc is None:
            return fn(*args, **kwargs)
        try:
            try:
                kind, value = self._conn.recv()
            except EOFError:                         # the child died without an answer: do it here
                kind, value = "ok", fn(*args, **kwargs)
        except BaseException:
            self.stop()
            raise
        self._close()
        if kind == "error":
            raise value
        return value

    def stop(self) -> None:
        """Stop the child (if any) without waiting for its answer."""
        if self._proc is not None and self._proc.is_alive():
            self._proc.terminate()
        self._close()

    def _close(self) -> None:
        if self._proc is not None:
            self._proc.join()
            self._proc = None
        if self._conn is not None:
            self._conn.close()
            self._conn = None
