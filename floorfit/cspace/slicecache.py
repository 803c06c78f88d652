"""A disk cache of heading slices, so that a second command on the same drawing and vehicle reuses them.

A planner runs ``check``, then a few ``route`` queries, then ``check`` again with another
site file: the slices are the same each time. Each slice's free space is stored under a
key that covers everything it is computed from:

* the prepared obstacles (every vertex, exactly), the slice domain and the cluster labels;
* the slice's job: footprint parts, heading, growth and anchor (exactly);
* the clipping settings and the source code of the modules that compute a slice, so a
  changed floorfit never reads slices an older one wrote.

A hit returns the very polygons that were computed (WKB keeps every double), so an answer
with the cache is the answer without it. Commands use the cache unless ``--no-cache`` is
given or ``FLOORFIT_CACHE=off``; ``FLOORFIT_CACHE=DIR`` puts it elsewhere (default
``$XDG_CACHE_HOME/floorfit/slices``, else ``~/.cache/floorfit/slices``). The library does
not cache unless :func:`use_cache` is called.
"""

from __future__ import annotations

import hashlib
import importlib.util
import os
import tempfile
from pathlib import Path

import numpy as np
import shapely

__all__ = ["SliceCache", "job_digest", "use_cache", "active_cache_dir", "default_cache_dir", "CACHE_ENV"]

#: Environment variable: a folder for the cache, or ``off`` to turn it off.
CACHE_ENV = "FLOORFIT_CACHE"
_ACTIVE: dict = {"dir": None}


def default_cache_dir() -> Path | None:
    """The cache folder the commands use: ``$FLOORFIT_CACHE``, else the user cache folder; None when off."""
    env = os.environ.get(CACHE_ENV, "").strip()
    if env.lower() in ("off", "0", "no", "false", "none"):
        return None
    if env:
        return Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "floorfit" / "slices"


def use_cache(folder: str | os.PathLike | None) -> None:
    """Turn the slice cache on (in ``folder``) or off (None) for this process."""
    _ACTIVE["dir"] = Path(folder) if folder is not None else None


def active_cache_dir() -> Path | None:
    """The folder :func:`use_cache` set, or None."""
    return _ACTIVE["dir"]


#: Modules whose source decides the slices: a change to any of them invalidates the cache.
_SLICE_CODE = ("floorfit.cspace.minkowski", "floorfit.cspace.slices", "floorfit.cspace.freespace",
               "floorfit.plan.dxf.cleanup")


def _code_digest() -> bytes:
    """sha256 over the source files of :data:`_SLICE_CODE` (found, not imported: no import cycle)."""
    h = hashlib.sha256()
    for name in _SLICE_CODE:
        h.update(Path(importlib.util.find_spec(name).origin).read_bytes())
    return h.digest()


def _array_bytes(h, a) -> None:
    a = np.ascontiguousarray(np.asarray(a))
    h.update(str((a.dtype.str, a.shape)).encode())
    h.update(a.tobytes())


def job_digest(job) -> str:
    """A hex digest of one slice's job (footprint parts, heading, growth, anchor), exactly."""
    parts, heading, grow, anchor = job
    h = hashlib.sha256()
    for p in parts:
        h.update(shapely.to_wkb(p))
    _array_bytes(h, np.array([heading, grow], dtype=float))
    _array_bytes(h, np.asarray(anchor, dtype=float))
    return h.hexdigest()[:40]


class SliceCache:
    """Slices of one obstacle set, domain and clustering, stored in ``folder`` (see the module docstring)."""

    def __init__(self, folder: str | os.PathLike, obstacles, domain, labels, settings: tuple = ()):
        h = hashlib.sha256(b"floorfit slices v1")
        h.update(_code_digest())
        h.update(repr(settings).encode())
        for G in obstacles.convex_groups:
            _array_bytes(h, G.vertices)
        if len(obstacles.nonconvex):
            h.update(b"".join(shapely.to_wkb(obstacles.nonconvex)))
        h.update(shapely.to_wkb(domain))
        if labels is not None:
            _array_bytes(h, labels)
        self.folder = Path(folder) / h.hexdigest()[:32]
        self.hits = 0
        self.stored = 0

    def _path(self, job) -> Path:
        return self.folder / f"{job_digest(job)}.wkb"

    def has(self, job) -> bool:
        """True when a slice for ``job`` is stored."""
        return self._path(job).is_file()

    def get(self, job) -> np.ndarray | None:
        """The stored free-space components of ``job``, or None."""
        try:
            data = self._path(job).read_bytes()
        except OSError:
            return None
        n = int.from_bytes(data[:8], "little")
        sizes = np.frombuffer(data[8:8 + 8 * n], dtype="<i8")
        body = memoryview(data)[8 + 8 * n:]
        ends = np.cumsum(sizes)
        if n and ends[-1] != len(body):
            return None                                  # a damaged file is recomputed
        blobs = [bytes(body[e - s:e]) for s, e in zip(sizes, ends)]
        self.hits += 1
        return shapely.from_wkb(blobs) if blobs else np.zeros(0, dtype=object)

    def put(self, job, comps: np.ndarray) -> None:
        """Store ``comps`` for ``job`` (atomically; a folder that cannot be written is skipped)."""
        blobs = [shapely.to_wkb(c) for c in comps]
        data = len(blobs).to_bytes(8, "little") + np.asarray([len(b) for b in blobs], dtype="<i8").tobytes() \
            + b"".join(blobs)
        target = self._path(job)
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=self.folder, suffix=".part")
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.replace(tmp, target)
            self.stored += 1
        except OSError:
            return
