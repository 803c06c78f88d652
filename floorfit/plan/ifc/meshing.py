"""Triangle meshes of IFC elements through ifcopenshell's geometry iterator, on several cores.

Openings are subtracted (so door and window openings are gaps in the walls), coordinates are
world coordinates in metres whatever the model's unit. Elements that fail to mesh are
returned by GlobalId so the importer can name them in a warning; the rest is still used.
"""

from __future__ import annotations

import multiprocessing
import os
from dataclasses import dataclass

import numpy as np

__all__ = ["Mesh", "mesh_elements", "available_cores", "LINEAR_DEFLECTION_M"]

#: Largest distance between a curved surface and its triangles, metres (the plan's curve tolerance).
LINEAR_DEFLECTION_M = 0.005


@dataclass
class Mesh:
    """One element's triangles: ``verts`` (n, 3) world metres, ``faces`` (m, 3) indices."""

    id: int
    global_id: str
    ifc_class: str
    verts: np.ndarray
    faces: np.ndarray


def available_cores() -> int:
    """Cores this process may use that other work is not already using (at least one)."""
    try:
        cores = max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # pragma: no cover - not on Linux
        cores = max(1, multiprocessing.cpu_count())
    try:
        busy = os.getloadavg()[0]
    except OSError:  # pragma: no cover - no load average on this platform
        return cores
    # on a machine already busy, more meshing threads only queue up behind the other work
    return max(1, min(cores, int(round(cores - busy + 1.0))))


def _settings():
    import ifcopenshell.geom

    s = ifcopenshell.geom.settings()
    s.set("use-world-coords", True)
    s.set("mesher-linear-deflection", LINEAR_DEFLECTION_M)
    return s


def mesh_elements(model, elements, workers: int | None = None) -> tuple[list[Mesh], list]:
    """Mesh ``elements`` (ifcopenshell entities). Returns (meshes, elements that failed)."""
    import ifcopenshell.geom

    elements = [e for e in elements if getattr(e, "Representation", None) is not None]
    if not elements:
        return [], []
    workers = workers or available_cores()
    workers = max(1, min(workers, len(elements) // 8 + 1))
    it = ifcopenshell.geom.iterator(_settings(), model, workers, include=elements)
    meshes: list[Mesh] = []
    if it.initialize():
        while True:
            shape = it.get()
            g = shape.geometry
            verts = np.frombuffer(g.verts_buffer, dtype=np.float64).reshape(-1, 3).copy()
            faces = np.frombuffer(g.faces_buffer, dtype=np.int32).reshape(-1, 3).astype(np.int64)
            meshes.append(Mesh(int(shape.id), str(shape.guid), str(shape.type), verts, faces))
            if not it.next():
                break
    got = {m.id for m in meshes}
    failed = [e for e in elements if e.id() not in got]
    return meshes, failed
