"""Running the slices of a recipe, in this process or on a process pool.

Owns the parallel building of slices: how many processes to use (:func:`worker_count`,
:func:`pool_size` with the :data:`POOL_MIN_WORK` threshold of obstacle pieces × slices), the
worker-side state (the obstacle set, domain and cluster labels sent once per worker), Ctrl-C
handling in the workers, and :func:`run_slice_jobs`, which computes every job's free-space
components with :func:`floorfit.cspace.freespace.slice_free`. The result does not depend on the
number of processes. Local frame, metres; headings in degrees.
"""

from __future__ import annotations

import signal
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor

import numpy as np
from shapely.geometry import Polygon

from floorfit.cspace.freespace import slice_free
from floorfit.cspace.minkowski import ObstacleSet
from floorfit.forking import usable_cores

__all__ = ["run_slice_jobs", "worker_count", "pool_size", "POOL_MIN_WORK"]


def _slice_components(obstacles: ObstacleSet, parts: list[Polygon], heading: float, grow: float,
                      domain: Polygon, anchor_local: np.ndarray, labels: np.ndarray | None = None) -> np.ndarray:
    return slice_free(obstacles, parts, heading, grow, anchor_local, domain, labels)


# --- process-pool plumbing: the obstacle set is sent once per worker ------------------
_WORKER: dict = {}


def _init_worker(obstacles, domain, labels=None):
    _WORKER["obstacles"] = obstacles
    _WORKER["domain"] = domain
    _WORKER["labels"] = labels


def _worker_slice(args):
    parts, heading, grow, anchor = args
    return _slice_components(_WORKER["obstacles"], parts, heading, grow, _WORKER["domain"], anchor,
                             _WORKER.get("labels"))


#: Slice building goes to a process pool only above this much work (obstacle pieces × slices):
#: below it, starting the processes costs more than they save. The results do not depend on it.
POOL_MIN_WORK = 100_000


def worker_count(workers: int | None) -> int:
    """Processes to use for ``workers`` (None or 0: every core this process may run on)."""
    if workers:
        return max(1, int(workers))
    return usable_cores()


def _ignore_interrupt() -> None:
    # Ctrl-C reaches the whole process group: the parent stops the pool, workers stay quiet
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _init_pool_worker(obstacles, domain, labels=None):
    _ignore_interrupt()
    _init_worker(obstacles, domain, labels)


def run_slice_jobs(obstacles: ObstacleSet, jobs: list, domain: Polygon, labels: np.ndarray | None,
                   workers: int | None = 1, progress: Callable[[int, int], None] | None = None,
                   processes: int | None = None) -> list[np.ndarray]:
    """Free-space components of every job of a slice recipe, on ``workers`` processes (None: all cores).

    ``jobs``: :attr:`floorfit.cspace.slices.SliceRecipe.jobs` (or a subset of them).

    Each slice is computed by the same function whichever process runs it, so the result is
    the same for any number of workers. Small runs (below :data:`POOL_MIN_WORK`, see
    :func:`pool_size`) stay in this process; ``processes`` overrides that choice.
    ``progress(done, total)`` is called as slices complete. Ctrl-C stops the pool and raises
    KeyboardInterrupt here.
    """
    n_workers = pool_size(obstacles, len(jobs), workers) if processes is None else max(1, int(processes))
    n_workers = min(n_workers, max(1, len(jobs)))
    total = len(jobs)
    if progress is not None:
        progress(0, total)
    if n_workers > 1:
        pool = ProcessPoolExecutor(max_workers=n_workers, initializer=_init_pool_worker,
                                   initargs=(obstacles, domain, labels))
        try:
            out = []
            # small chunks: Ctrl-C waits only for the slices the workers hold
            for comps in pool.map(_worker_slice, jobs, chunksize=max(1, min(2, len(jobs) // (8 * n_workers)))):
                out.append(comps)
                if progress is not None:
                    progress(len(out), total)
            pool.shutdown(wait=True)
            return out
        except BaseException:
            # no new slices start; the workers (which ignore Ctrl-C) finish the chunk they hold
            # and exit (terminating them instead makes the pool's manager thread report errors)
            pool.shutdown(wait=False, cancel_futures=True)
            raise
    out = []
    for p, h, g, a in jobs:
        out.append(_slice_components(obstacles, p, h, g, domain, a, labels))
        if progress is not None:
            progress(len(out), total)
    return out


def pool_size(obstacles: ObstacleSet, n_jobs: int, workers: int | None) -> int:
    """Processes to use for ``n_jobs`` slices of ``obstacles`` with ``workers`` asked for (None: all cores):
    1 for small runs (fewer than 8 slices, or below :data:`POOL_MIN_WORK` pieces × slices)."""
    n = min(worker_count(workers), max(1, n_jobs))
    return n if n > 1 and n_jobs >= 8 and obstacles.piece_count * n_jobs >= POOL_MIN_WORK else 1
