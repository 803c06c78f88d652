"""A disk cache of imported IFC storeys, so that a second command on the same model reuses the import.

The key is the model file's sha256, the storey asked for, the height band, the source of the
importer's modules and the ifcopenshell version: a changed file, storey, band or importer is a
new entry, so what comes from the cache is what importing again would give. Entries are
pickled plans written atomically under ``<cache folder>/ifc`` (the slice cache's folder, see
:mod:`floorfit.cspace.slicecache`); the commands turn both caches on and off together
(``--no-cache``, ``FLOORFIT_CACHE=off``). The library does not cache unless
:func:`use_import_cache` is called.
"""

from __future__ import annotations

import hashlib
import importlib.util
import os
import pickle
import tempfile
from pathlib import Path

__all__ = ["use_import_cache", "import_cache_dir", "cache_key", "cached_plan", "store_plan"]

_ACTIVE: dict = {"dir": None}
#: Modules whose source decides the imported plan.
_IMPORT_CODE = ("floorfit.plan.ifc.importer", "floorfit.plan.ifc.sections", "floorfit.plan.ifc.meshing",
                "floorfit.plan.ifc.doors", "floorfit.plan.ifc.dropoffs", "floorfit.plan.ifc.reading",
                "floorfit.plan.model")
_FORMAT = b"floorfit ifc import v1"


def use_import_cache(folder: str | os.PathLike | None) -> None:
    """Turn the import cache on (in ``folder``) or off (None) for this process."""
    _ACTIVE["dir"] = Path(folder) if folder is not None else None


def import_cache_dir() -> Path | None:
    """The folder :func:`use_import_cache` set, or None (off)."""
    return _ACTIVE["dir"]


def _file_digest(path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def cache_key(path, storey, band_top_m) -> str:
    """The cache key of importing ``storey`` of the model at ``path`` with this band."""
    import ifcopenshell

    h = hashlib.sha256(_FORMAT)
    for name in _IMPORT_CODE:
        h.update(Path(importlib.util.find_spec(name).origin).read_bytes())
    h.update(str(getattr(ifcopenshell, "version", "")).encode())
    h.update(_file_digest(path).encode())
    h.update(repr((None if storey is None else str(storey).strip(),
                   None if band_top_m is None else round(float(band_top_m), 6))).encode())
    return h.hexdigest()[:40]


def cached_plan(key: str):
    """The plan stored under ``key``, or None (cache off, no entry, or an unreadable one)."""
    folder = import_cache_dir()
    if folder is None:
        return None
    try:
        data = (folder / f"{key}.pickle").read_bytes()
    except OSError:
        return None
    if not data.startswith(_FORMAT):
        return None
    try:
        return pickle.loads(data[len(_FORMAT):])
    except Exception:                # a damaged entry is imported again
        return None


def store_plan(key: str, plan) -> bool:
    """Store ``plan`` under ``key`` (atomically; a folder that cannot be written is skipped)."""
    folder = import_cache_dir()
    if folder is None:
        return False
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=folder, suffix=".part")
        with os.fdopen(fd, "wb") as fh:
            fh.write(_FORMAT + pickle.dumps(plan, protocol=pickle.HIGHEST_PROTOCOL))
        os.replace(tmp, folder / f"{key}.pickle")
        return True
    except (OSError, pickle.PicklingError):
        return False
