"""Drop-offs of an IFC storey: where there is no floor to stand on.

A vehicle must not be placed over a stair well, a shaft, the open side of a mezzanine or past
the edge of the storey's floor. The floor is the union of the storey's floor slabs
(``IfcSlab`` typed ``FLOOR`` or ``BASESLAB``, openings subtracted by the mesher) whose top
lies at the storey's floor (from :data:`FLOOR_BELOW_M` below it to the floor build-up above
it), each cut just under its top. The storey's footprint is that floor together with the
footprints of its walls and other obstacles standing on the floor, holes filled: the inside
of the building on this storey. Every part of the footprint without floor is a drop-off.

Gaps narrower than ``2 * CLOSE_M`` are closed first (a morphological closing of the floor
together with the wall footprints): slabs usually stop at the wall faces, so the ground under
a door opening, and seams between slabs, are not drop-offs. A hole narrower than that (a
pipe shaft) is not one either. The outside of the building is left alone: on the ground
floor it is the ground, and a vehicle reaches it only through an exterior door.

Drop-offs are returned as filled areas with the full height band (from the floor up, without
top) and the GlobalId of the slab whose edge bounds them, so findings next to them name it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from floorfit.plan.ifc.sections import section

__all__ = ["DropOffs", "find_dropoffs", "FLOOR_TYPES", "FLOOR_BELOW_M", "CLOSE_M", "MIN_DROP_M2", "DROP_CLASS"]

#: Slab types that are floors (``PredefinedType``; untyped slabs are not assumed to be floors).
FLOOR_TYPES = ("FLOOR", "BASESLAB")
#: A floor slab's top may lie this far below the storey floor (sunk slabs, finishes on top).
FLOOR_BELOW_M = 0.15
#: Half the widest gap in the floor that is closed (seams, door thresholds in walls up to 0.6 m thick).
CLOSE_M = 0.30
#: Drop-offs smaller than this (square metres) are dropped.
MIN_DROP_M2 = 0.05
#: The class name drop-offs carry in the plan (layers, bounding entities).
DROP_CLASS = "drop-off"


@dataclass
class DropOffs:
    """The drop-offs found (drawing frame, metres) and what they were found from."""

    areas: list                      # shapely Polygons
    slab_ids: list[str]              # per area: the GlobalId of the nearest floor slab
    slabs: int                       # floor slabs at the storey's floor
    floor_m2: float
    message: str


def _slab_floor(mesh, floor_z: float):
    """The section of one slab just under its top (None when it is not at the storey's floor)."""
    top = float(mesh.verts[:, 2].max()) - floor_z
    bottom = float(mesh.verts[:, 2].min()) - floor_z
    if len(mesh.faces) == 0:
        return None
    z = top - min(0.01, 0.5 * (top - bottom))
    rel = np.column_stack([mesh.verts[:, :2], mesh.verts[:, 2] - floor_z])
    area, _ = section(rel, mesh.faces, z)
    return area


def _fill_holes(geom):
    polys = [p for p in shapely.get_parts(geom) if p.geom_type == "Polygon"]
    return shapely.union_all([shapely.Polygon(p.exterior) for p in polys]) if polys else shapely.Polygon()


def find_dropoffs(slab_meshes, standing, floor_z: float, buildup_m: float) -> DropOffs:
    """Drop-offs from the floor slabs (``(entity, mesh)`` pairs) and the footprints of the
    obstacles ``standing`` on the floor (filled shapely geometries, drawing frame)."""
    floors, ids = [], []
    for entity, mesh in slab_meshes:
        if (getattr(entity, "PredefinedType", None) or "") not in FLOOR_TYPES or len(mesh.verts) == 0:
            continue
        top = float(mesh.verts[:, 2].max()) - floor_z
        if not (-FLOOR_BELOW_M <= top <= buildup_m):
            continue
        area = _slab_floor(mesh, floor_z)
        if area is not None and not area.is_empty:
            floors.append(area)
            ids.append(entity.GlobalId)
    if not floors:
        return DropOffs([], [], 0, 0.0, "no floor slab (IfcSlab FLOOR/BASESLAB) at the storey's floor: "
                                        "no drop-offs (stair wells, floor edges) are checked")
    floor = shapely.union_all(floors)
    walls = shapely.union_all([g for g in standing if g is not None and not g.is_empty]) if standing else None
    base = floor if walls is None else shapely.union(floor, walls)
    closed = shapely.buffer(shapely.buffer(base, CLOSE_M, join_style="mitre"), -CLOSE_M, join_style="mitre")
    footprint = _fill_holes(closed)
    missing = shapely.difference(footprint, closed)
    areas = [p for p in shapely.get_parts(missing) if p.geom_type == "Polygon" and p.area >= MIN_DROP_M2]
    slab_tree = shapely.STRtree(np.array(floors, dtype=object))
    slab_ids = [ids[int(slab_tree.query_nearest(a)[0])] for a in areas]
    total = sum(a.area for a in areas)
    msg = (f"drop-offs: {len(areas)} area(s) without floor, {total:.1f} m² (stair wells, shafts, open floor edges "
           f"inside the storey), from {len(floors)} floor slab(s) of {floor.area:.1f} m²; they are obstacles "
           f"over the full height" if areas else
           f"drop-offs: none (the storey's floor, {len(floors)} slab(s) of {floor.area:.1f} m², has no holes "
           f"wider than {2 * CLOSE_M:.1f} m)")
    return DropOffs(areas, slab_ids, len(floors), float(floor.area), msg)
