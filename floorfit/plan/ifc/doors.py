"""Doors of an IFC storey: where they are and how wide they really are.

A door is passable with its leaf open; its leaf and frame are not obstacles. The clear width
is measured in the geometry: along the door's width axis (its placement's x axis), through
the middle of the door body, between the obstacles that start below the measuring height
(1 m above the floor, or half the door's height if that is lower). It is compared with the
door's ``OverallWidth``, which is often the nominal leaf size, not the clear opening.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely

from floorfit.plan.model import Doorway, ImportIssue

__all__ = ["MeasuredDoor", "measure_doors", "WIDTH_WARNING_M", "door_name", "door_aliases"]

#: A door whose measured clear width and OverallWidth differ by more than this gets a warning.
WIDTH_WARNING_M = 0.05
_MEASURE_HEIGHT_M = 1.0


@dataclass
class MeasuredDoor:
    """One door: centre (drawing frame, metres), axis, measured clear width and its attributes."""

    global_id: str
    name: str
    x: float
    y: float
    axis: tuple[float, float]
    clear_width_m: float | None
    measured: bool
    overall_width_raw: float | None      # OverallWidth as stored (model units)
    body_width_m: float

    def doorway(self, origin) -> Doorway:
        width = self.clear_width_m if self.clear_width_m is not None else self.body_width_m
        return Doorway(self.x - origin[0], self.y - origin[1], float(width), "IfcDoor",
                       "ifc" if self.measured else "ifc-body", self.global_id, self.name or None)

    def width_issue(self, metres_per_unit: float) -> ImportIssue | None:
        if not self.measured:
            return ImportIssue("door", f"door {self.name or self.global_id}: no wall opening found around it; "
                                       f"its body width {self.body_width_m:.3f} m is used", self.global_id, "IfcDoor")
        if self.overall_width_raw is None:
            return None
        ow = self.overall_width_raw * metres_per_unit
        if abs(ow - self.clear_width_m) > WIDTH_WARNING_M:
            return ImportIssue("door-width", f"door {self.name or self.global_id}: clear width "
                                             f"{self.clear_width_m:.3f} m measured in the model, OverallWidth says "
                                             f"{ow:.3f} m", self.global_id, "IfcDoor")
        return None


#: A door name longer than this, or made of ``Family:Type:Id`` parts, is shortened.
_SHORT_NAME = 24


def _short(text) -> str:
    return str(text).strip() if text and str(text).strip() else ""


def door_name(door) -> str:
    """A short name for a door: its Name when that is short (``D-12``, ``Tür-014``), else its
    Tag (Revit writes ``M_Single-Flush:0762 x 2032mm:…:150173`` as Name and ``150173`` as Tag),
    else the last part of the Name."""
    name, tag = _short(getattr(door, "Name", None)), _short(getattr(door, "Tag", None))
    if name and ":" not in name and len(name) <= _SHORT_NAME:
        return name
    if tag and len(tag) <= _SHORT_NAME:
        return tag
    if name:
        return name.rsplit(":", 1)[-1].strip()[:_SHORT_NAME] or name[:_SHORT_NAME]
    return tag[:_SHORT_NAME]


def door_aliases(door) -> list[str]:
    """Every name a site file may use for a door: short name, Name, Tag, GlobalId."""
    out = [door_name(door), _short(getattr(door, "Name", None)), _short(getattr(door, "Tag", None)), door.GlobalId]
    return list(dict.fromkeys(a for a in out if a))


def _axes(door, verts: np.ndarray) -> list[np.ndarray]:
    """Candidate width directions in plan: the placement's x and y axes and the sides of the
    body's smallest enclosing rectangle (exporters disagree on which axis is the width)."""
    import ifcopenshell.util.placement as up

    out = []
    if door.ObjectPlacement is not None:
        m = np.asarray(up.get_local_placement(door.ObjectPlacement), dtype=float)
        for col in (0, 1):
            ax = m[:2, col]
            n = math.hypot(ax[0], ax[1])
            if n > 1e-6:
                out.append(ax / n)
    rect = shapely.minimum_rotated_rectangle(shapely.multipoints(verts[:, :2]))
    c = shapely.get_coordinates(rect)
    if len(c) >= 3:
        for e in (c[1] - c[0], c[2] - c[1]):
            if np.hypot(*e) > 1e-6:
                out.append(e / np.hypot(*e))
    unique: list[np.ndarray] = []
    for ax in out:
        if not any(abs(abs(float(ax @ u)) - 1.0) < 1e-6 for u in unique):
            unique.append(ax)
    return unique or [np.array([1.0, 0.0])]


def _gap(line, centre, blockers, reach: float):
    """The free part of ``line`` through ``centre`` between ``blockers``, or None when unbounded."""
    free = line if not blockers else shapely.difference(line, shapely.union_all(blockers))
    pc = shapely.Point(centre)
    for part in shapely.get_parts(free):
        if part.distance(pc) < 0.02 and part.length < 2 * reach - 1e-6:
            return part
    return None


class _Obstacles:
    """The obstacles that start below a height, queried along a line."""

    def __init__(self, solids, solid_h, walls, wall_h):
        self.sets = []
        for geoms, hts in ((solids, solid_h), (walls, wall_h)):
            arr = np.array(geoms, dtype=object)
            if len(arr):
                self.sets.append((shapely.STRtree(arr), arr, np.asarray(hts, dtype=float).reshape(-1, 2)))

    def along(self, line, below: float) -> list:
        out = []
        for tree, arr, hts in self.sets:
            idx = tree.query(line, predicate="intersects")
            out.extend(arr[idx[hts[idx, 0] < below]])
        return out


#: Offsets across the door (metres) tried when the line through the body's middle finds no
#: opening: door bodies are sometimes placed beside the wall face rather than in it.
_OFFSETS = (0.0, *[s * k * 0.05 for k in range(1, 13) for s in (1, -1)])


def _measure_one(door, mesh, obstacles: _Obstacles, h: float):
    """(width or None, centre, axis, body extent along the axis) of one door."""
    xy = mesh.verts[:, :2]
    best = None            # (mismatch, width, centre, axis, body extent)
    for u in _axes(door, mesh.verts):
        n = np.array([-u[1], u[0]])
        pu, pn = xy @ u, xy @ n
        body = float(pu.max() - pu.min())
        reach = max(3.0, 2.0 * body)
        middle = 0.5 * (pu.min() + pu.max()) * u + 0.5 * (pn.min() + pn.max()) * n
        for off in _OFFSETS:
            centre = middle + off * n
            line = shapely.LineString([centre - reach * u, centre + reach * u])
            part = _gap(line, centre, obstacles.along(line, h), reach)
            if part is None:
                continue
            mismatch = abs(part.length - body)
            if best is None or best[1] is None or mismatch < best[0]:
                mid = shapely.get_coordinates(part.interpolate(0.5, normalized=True))[0]
                best = (mismatch, float(part.length), mid, u, body)
            break
        if best is None:
            best = (math.inf, None, middle, u, body)
    return best[1:]


def measure_doors(doors, solids, solid_h, walls, wall_h, floor_z: float) -> list[MeasuredDoor]:
    """Measure every door (``(entity, mesh)`` pairs) against the obstacles (drawing frame)."""
    out: list[MeasuredDoor] = []
    if not doors:
        return out
    obstacles = _Obstacles(solids, solid_h, walls, wall_h)
    for door, mesh in doors:
        if len(mesh.verts) == 0:
            continue
        z = mesh.verts[:, 2] - floor_z
        if z.max() <= 0.3 or z.min() >= 1.5:        # not a door of this floor
            continue
        h = min(_MEASURE_HEIGHT_M, 0.5 * float(z.max() - max(z.min(), 0.0)))
        width, centre, u, body = _measure_one(door, mesh, obstacles, h)
        ow = getattr(door, "OverallWidth", None)
        out.append(MeasuredDoor(door.GlobalId, door_name(door), float(centre[0]), float(centre[1]),
                                (float(u[0]), float(u[1])), width, width is not None,
                                None if ow is None else float(ow), body))
    return out
