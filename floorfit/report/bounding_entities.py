"""The drawing entities that bound a finding's place, with their layers and handles.

This module owns the lookup the finding sheets of :mod:`floorfit.report.sheets` use to name what
bounds a place: the obstacle index of a plan (:func:`sheet_obstacles`: walls and solids with their
layers, DXF handles or building-model element ids and heights, in the plan's local frame, metres),
its nearest-entity and overlap queries, the doorway near a finding, and :class:`Bound`, the entity
as a sheet lists it (side, kind, layer, handle, distance in metres, nearest point in the drawing
frame).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import shapely
import shapely.ops

from floorfit.report.kinds import plain_text

__all__ = ["Bound", "sheet_obstacles"]


@dataclass(frozen=True)
class Bound:
    """A drawing entity that bounds the place: which side, what, on which layer, its handle."""

    side: str
    entity: str          # "linework", "solid" (with the DXF entity type where kept), "doorway", "overhead"
    layer: str
    handle: str | None
    distance_m: float
    x: float
    y: float
    id_name: str = "handle"

    def text(self) -> str:
        if self.handle:
            handle = f"handle #{self.handle}" if self.id_name == "handle" else f"{self.id_name} {self.handle}"
        else:
            handle = "handle not kept by the importer"
        layer = f"layer {self.layer}" if self.layer else "no layer"
        return (f"{self.side}: {self.entity} on {layer}, {handle}, nearest point ({self.x:.2f}, {self.y:.2f}) m")


# -- obstacles with their layers and handles ------------------------------------------------------
class _Obstacles:
    def __init__(self, plan: Any):
        self.plan = plan
        walls, solids = list(plan.walls), list(plan.solids)
        self.geoms = np.asarray(walls + solids, dtype=object)
        self.kind = np.array(["linework"] * len(walls) + ["solid"] * len(solids), dtype=object)
        self.layer = np.concatenate([np.asarray(plan.wall_layers, dtype=object),
                                     np.asarray(plan.solid_layers, dtype=object)]) if len(self.geoms) \
            else np.zeros(0, dtype=object)
        self.handle, self.id_name = _entity_ids(plan, len(walls), len(solids))
        # DXF entity types where the importer kept them ("LINE", "HATCH", ...)
        self.etype = _per_obstacle(plan, "wall_types", "solid_types", len(walls), len(solids))
        heights = np.concatenate([np.asarray(plan.wall_heights).reshape(-1, 2),
                                  np.asarray(plan.solid_heights).reshape(-1, 2)])
        self.bottom = heights[:, 0] if len(heights) else np.zeros(0)
        self.floor = self.bottom <= 0
        self.tree = shapely.STRtree(self.geoms) if len(self.geoms) else None
        floor_geoms = self.geoms[self.floor] if len(self.geoms) else self.geoms
        self.floor_union = shapely.STRtree(floor_geoms) if len(floor_geoms) else None
        self.floor_geoms = floor_geoms
        self._clipped: dict[tuple[float, ...], tuple[list, list, list]] = {}

    def in_box(self, box: tuple[float, float, float, float]) -> np.ndarray:
        if self.tree is None:
            return np.zeros(0, dtype=int)
        return np.sort(self.tree.query(shapely.box(*box)))

    def clipped(self, box: tuple[float, float, float, float]) -> tuple[list, list, list]:
        """The floor solids, floor linework and overhead obstacles that meet ``box`` (local frame, m),
        each cut to the box, in obstacle order; worked out once per box (a sheet's close-up in
        report.html and in report.pdf share it)."""
        key = tuple(float(v) for v in box)
        if key not in self._clipped:
            idx = self.in_box(key)
            cut = shapely.intersection(self.geoms[idx], shapely.box(*key)) if len(idx) else np.zeros(0, dtype=object)
            floor = self.floor[idx]
            kind = self.kind[idx]
            self._clipped[key] = (list(cut[(kind == "solid") & floor]), list(cut[(kind == "linework") & floor]),
                                  list(cut[~floor]))
        return self._clipped[key]

    def nearest_bound(self, side: str, lx: float, ly: float, *, floor_only: bool = True) -> Bound | None:
        if self.tree is None:
            return None
        p = shapely.Point(lx, ly)
        idx = self.tree.query(p.buffer(0.05))
        cand = [int(i) for i in idx if not floor_only or self.floor[int(i)]]
        if not cand:
            near = self.tree.query_nearest(p, max_distance=5.0)
            cand = [int(i) for i in near if not floor_only or self.floor[int(i)]]
        if not cand:
            return None
        d = [self.geoms[i].distance(p) for i in cand]
        i = cand[int(np.argmin(d))]
        q = shapely.ops.nearest_points(self.geoms[i], p)[0]
        x, y = self.plan.to_drawing(q.x, q.y)
        return Bound(side, self.what(i), plain_text(self.layer[i]), self.handle[i], float(min(d)), x, y,
                     self.id_name)

    def what(self, i: int) -> str:
        """What obstacle ``i`` is: "linework" or "solid", with its DXF entity type where kept."""
        etype = self.etype[i]
        return f"{self.kind[i]} ({plain_text(etype)})" if etype else str(self.kind[i])

    def collides(self, poly: Any) -> bool:
        if self.floor_union is None:
            return False
        return bool(len(self.floor_union.query(poly, predicate="intersects")))

    def overlap_area(self, poly: Any) -> float:
        if self.floor_union is None:
            return 0.0
        idx = self.floor_union.query(poly, predicate="intersects")
        area = 0.0
        for i in idx:
            g = self.floor_geoms[int(i)]
            area += poly.intersection(g).area if g.geom_type.endswith("Polygon") else poly.intersection(g).length * 0.01
        return area


def _per_obstacle(plan: Any, w_key: str, s_key: str, n_walls: int, n_solids: int) -> list[str | None]:
    """One text per obstacle (walls, then solids) from the plan's optional arrays; None where unknown."""
    out: list[str | None] = [None] * (n_walls + n_solids)
    for key, start, n in ((w_key, 0, n_walls), (s_key, n_walls, n_solids)):
        values = getattr(plan, key, None)
        if values is not None and len(values) == n:
            out[start:start + n] = [None if v is None or v == "" else str(v) for v in values]
    return out


def _entity_ids(plan: Any, n_walls: int, n_solids: int) -> tuple[list[str | None], str]:
    """The entity each obstacle came from: element ids of a building model, else DXF handles."""
    for w_key, s_key, name in (("wall_ids", "solid_ids", "element id"), ("wall_handles", "solid_handles", "handle")):
        if getattr(plan, w_key, None) is not None or getattr(plan, s_key, None) is not None:
            return _per_obstacle(plan, w_key, s_key, n_walls, n_solids), name
    return [None] * (n_walls + n_solids), "handle"


def sheet_obstacles(result: Any) -> _Obstacles:
    """The obstacle index the close-ups share (build once per report)."""
    return _Obstacles(result.plan)


def _doorway_bound(result: Any, f: Any) -> Bound | None:
    plan = result.plan
    lx, ly = plan.to_local(f.x, f.y)
    best = None
    for door in plan.doors:
        d = math.hypot(door.x - lx, door.y - ly)
        if d <= 1.5 and (best is None or d < best[0]):
            best = (d, door)
    if best is None:
        return None
    door = best[1]
    x, y = plan.to_drawing(door.x, door.y)
    name = f"doorway {door.label}" if door.label else "doorway"
    return Bound("door", f"{plain_text(name)} ({door.width_m:.2f} m drawn, found as {door.source or 'door'})",
                 plain_text(door.layer), door.handle, best[0], x, y)
