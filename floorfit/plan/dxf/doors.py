"""Doors: swing arcs with leaves, door blocks, bare opening lines.

With the default *door open* policy a door symbol is not an obstacle: the swing arc and
the leaf are removed and the opening is recorded as a :class:`~floorfit.plan.model.Doorway`
(centre of the opening between the hinge and the closed-leaf end of the arc, width =
swing radius). ADA 2010 §404.2.3 measures door clear width with the door open 90°;
``keep_door_leaves=True`` keeps the leaf at its drawn (open) position as an obstacle.

Recognised forms:

* ``swing``: an arc on a door / opening layer (span 20-200°, radius 0.4-2.5 times the
  median radius of that layer's 60-120° arcs, so a wrong unit header does not hide it), or on
  any layer an arc of 60-120° with door-sized radius (0.5-1.5 m) and a leaf from its
  centre: a line as long as the radius (±10 %) or a thin polyline (leaf rectangle)
  reaching an arc end. Door-layer lines lying inside the swing
  sector (grown by 10 % of the radius) are the leaf and threshold and are removed.
* ``block``: an INSERT of a door block (name DOOR*, *DOOR*, D90..., door library): one
  doorway per arc inside, width = arc radius after the insert's scale; a door block
  without arcs gives one doorway across its longest side. Its content is removed.
* ``opening-line``: on a door layer without any arc, circle or ellipse, each straight line is an
  opening (a door drawn as a line across the gap) and is removed; a straight polyline
  (a door drawn as a thin rectangle) is an opening along its longest side.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from scipy.spatial import cKDTree

from floorfit.plan.dxf.primitives import ArcInfo, DoorGroup, Prim

__all__ = ["DoorFound", "door_size_evidence", "find_doors", "SWING_RADIUS_M"]

#: Radius range (m) for a swing found by arc + leaf on a layer of any role.
SWING_RADIUS_M = (0.5, 1.5)
_DOOR_LAYER_SPAN = (math.radians(20), math.radians(200))
_CANDIDATE_SPAN = (math.radians(60), math.radians(120))


@dataclass
class DoorFound:
    """A doorway in world coordinates, drawing units."""

    x: float
    y: float
    width: float
    layer: str
    source: str
    handle: str


def _is_segment(prim: Prim) -> bool:
    return prim.kind == "line" and prim.curve is None and prim.points is not None and len(prim.points) == 2


class _Vertices:
    """KD-tree over the vertices of straight primitives (lines and polylines without bulges)."""

    def __init__(self, prims: list[Prim], indices: list[int]):
        self.owner = []
        pts = []
        for i in indices:
            pts.append(prims[i].points)
            self.owner.extend([i] * len(prims[i].points))
        self.owner = np.array(self.owner, dtype=int)
        self.tree = cKDTree(np.vstack(pts)) if pts else None

    def prims_near(self, point: np.ndarray, radius: float) -> list[int]:
        if self.tree is None:
            return []
        return sorted({int(self.owner[k]) for k in self.tree.query_ball_point(point, radius)})


def _leaf_far_end(arc: ArcInfo, pts: np.ndarray) -> np.ndarray | None:
    """The far end of a door leaf drawn from the arc centre, or None if ``pts`` is not a leaf.

    A leaf is a line from the hinge as long as the radius (±10 %) ending near an arc end,
    or a thin polyline (rectangle) inside the swing circle reaching from the hinge to an
    arc end.
    """
    r = arc.radius
    d = np.hypot(pts[:, 0] - arc.centre[0], pts[:, 1] - arc.centre[1])
    if d.min() > 0.1 * r:
        return None
    if len(pts) == 2:
        length = float(np.hypot(*(pts[1] - pts[0])))
        if not (0.9 * r <= length <= 1.1 * r):
            return None
        far = pts[int(np.argmax(d))]
    else:
        if d.max() > 1.1 * r or d.max() < 0.85 * r:
            return None
        box = shapely.minimum_rotated_rectangle(shapely.MultiPoint(pts))
        if box.geom_type == "Polygon":
            c = np.asarray(box.exterior.coords)
            sides = np.hypot(*np.diff(c, axis=0).T)
            if sides.min() > 0.2 * r:
                return None
        far = pts[int(np.argmax(d))]
    if min(np.hypot(*(far - arc.p_start)), np.hypot(*(far - arc.p_end))) > 0.15 * r:
        return None
    return far


def _swing_candidates(prims: list[Prim], verts: _Vertices) -> list[tuple[int, int, np.ndarray]]:
    """(arc prim, leaf prim, leaf far end): arc of 60-120° with a leaf from its centre (unit-free)."""
    found = []
    for i, p in enumerate(prims):
        a = p.arc
        if a is None or p.role in ("door", "opening", "door-block", "ignore") or p.closed:
            continue
        if not (_CANDIDATE_SPAN[0] <= a.span <= _CANDIDATE_SPAN[1]):
            continue
        for j in verts.prims_near(a.centre, 0.1 * a.radius):
            far = _leaf_far_end(a, prims[j].points)
            if far is not None:
                found.append((i, j, far))
                break
    return found


def _straight_indices(prims: list[Prim]) -> list[int]:
    return [i for i, p in enumerate(prims) if p.kind == "line" and p.curve is None and p.points is not None
            and p.role not in ("ignore", "door-block") and p.width == 0 and len(p.points) <= 12]


def _group_arcs(prims: list[Prim]) -> dict[int, list[int]]:
    groups: dict[int, list[int]] = {}
    for i, p in enumerate(prims):
        if p.role == "door-block":
            groups.setdefault(p.group, []).append(i)
    return groups


def door_size_evidence(prims: list[Prim], groups: dict[int, DoorGroup]) -> list[float]:
    """Door sizes in drawing units (swing radii, door-block widths) for the unit check."""
    sizes: list[float] = []
    for p in prims:
        if p.arc is not None and p.role in ("door", "opening") and \
                _DOOR_LAYER_SPAN[0] <= p.arc.span <= _DOOR_LAYER_SPAN[1]:
            sizes.append(p.arc.radius)
    for members in _group_arcs(prims).values():
        radii = [prims[i].arc.radius for i in members if prims[i].arc is not None and not prims[i].closed
                 and math.radians(20) <= prims[i].arc.span <= math.radians(200)]
        if radii:
            sizes.append(max(radii))
    for i, _, _ in _swing_candidates(prims, _Vertices(prims, _straight_indices(prims))):
        sizes.append(prims[i].arc.radius)
    return sizes


def _long_side(pts: np.ndarray) -> tuple[float, np.ndarray]:
    """Longest side and centre of the minimum rotated rectangle around ``pts``."""
    box = shapely.minimum_rotated_rectangle(shapely.MultiPoint(pts))
    coords = np.asarray(box.exterior.coords) if box.geom_type == "Polygon" else np.asarray(box.coords)
    sides = np.hypot(*np.diff(coords, axis=0).T) if len(coords) > 1 else np.array([0.0])
    return float(sides.max()), np.asarray(box.centroid.coords[0])


def _far_ends(arc: ArcInfo, paths) -> list[np.ndarray]:
    """Far ends of the leaf paths that start at the swing's hinge (within 10 % of its radius)."""
    ends = []
    for path in paths:
        d0, d1 = np.hypot(*(path[0] - arc.centre)), np.hypot(*(path[-1] - arc.centre))
        if min(d0, d1) <= 0.1 * arc.radius:
            ends.append(path[-1] if d0 <= d1 else path[0])
    return ends


def _closed_end(arc: ArcInfo, leaf_far_ends: list[np.ndarray]) -> np.ndarray:
    """The arc end where the closed leaf would lie: the end away from the drawn (open) leaf."""
    if leaf_far_ends:
        far = np.array(leaf_far_ends)
        d_start = float(np.min(np.hypot(*(far - arc.p_start).T)))
        d_end = float(np.min(np.hypot(*(far - arc.p_end).T)))
        return arc.p_end if d_start < d_end else arc.p_start
    return arc.p_start


def _sector(arc: ArcInfo, grow: float) -> shapely.Geometry:
    a0 = math.atan2(arc.p_start[1] - arc.centre[1], arc.p_start[0] - arc.centre[0])
    t = np.linspace(a0, a0 + arc.span, max(8, int(arc.span / math.radians(5)) + 1))
    pts = np.column_stack([arc.centre[0] + arc.radius * np.cos(t), arc.centre[1] + arc.radius * np.sin(t)])
    ring = np.vstack([arc.centre, pts, arc.centre])
    return shapely.Polygon(ring).buffer(grow)


# four door recognisers in priority order sharing the remove/leaves sets: each claims primitives later ones skip
def find_doors(prims: list[Prim], flat: list[list[np.ndarray]], groups: dict[int, DoorGroup],  # noqa: C901
               mpu: float) -> tuple[list[DoorFound], set[int], set[int]]:
    """Recognise doors once the unit (``mpu`` metres per drawing unit) is known.

    Returns
    -------
    doors : list of DoorFound (drawing units, world frame)
    remove : primitives that are door symbols (arcs, opening lines) - never obstacles
    leaves : primitives that are door leaves - obstacles only with ``keep_door_leaves``
    """
    doors: list[DoorFound] = []
    remove: set[int] = set()
    leaves: set[int] = set()

    # 1. door blocks
    for gid, members in _group_arcs(prims).items():
        group = groups.get(gid)
        curved = [i for i in members if prims[i].dxftype in ("ARC", "ELLIPSE") or prims[i].arc is not None]
        arcs = [i for i in curved if prims[i].arc is not None and not prims[i].closed
                and math.radians(20) <= prims[i].arc.span <= math.radians(200)]
        others = [i for i in members if i not in curved]
        remove.update(curved)          # swings (also non-uniformly scaled ones) are never obstacles
        leaves.update(others)
        handle = group.handle if group else prims[members[0]].top
        layer = group.layer if group else prims[members[0]].layer
        if arcs:
            for i in arcs:
                a = prims[i].arc
                far_ends = [e for j in others for e in _far_ends(a, flat[j])]
                closed = _closed_end(a, far_ends)
                c = (a.centre + closed) / 2.0
                doors.append(DoorFound(float(c[0]), float(c[1]), a.radius, layer, "block", handle))
        else:
            pts = np.vstack([p for i in members for p in flat[i]]) if members else np.zeros((0, 2))
            if len(pts) >= 2:
                width, c = _long_side(pts)
                doors.append(DoorFound(float(c[0]), float(c[1]), width, layer, "block", handle))

    # 2. swings on door / opening layers. Arc radii are judged against the typical swing
    #    of the same layer (not in metres), so a wrong unit header does not hide doors.
    door_layer_lines: dict[str, list[int]] = {}
    curved_layers: set[str] = set()
    layer_arcs: dict[str, list[int]] = {}
    for i, p in enumerate(prims):
        if p.role not in ("door", "opening"):
            continue
        if p.dxftype in ("ARC", "CIRCLE", "ELLIPSE"):
            curved_layers.add(p.layer)
        if p.kind == "line" and p.arc is None:
            door_layer_lines.setdefault(p.layer, []).append(i)
        elif p.arc is not None and not p.closed and _DOOR_LAYER_SPAN[0] <= p.arc.span <= _DOOR_LAYER_SPAN[1]:
            layer_arcs.setdefault(p.layer, []).append(i)
    accepted: list[int] = []
    for members in layer_arcs.values():
        typical = [prims[i].arc.radius for i in members
                   if _CANDIDATE_SPAN[0] <= prims[i].arc.span <= _CANDIDATE_SPAN[1]]
        ref = float(np.median(typical or [prims[i].arc.radius for i in members]))
        accepted.extend(i for i in members if 0.4 * ref <= prims[i].arc.radius <= 2.5 * ref)
    line_geoms: dict[int, shapely.Geometry] = {}
    for i in sorted(accepted):
        p = prims[i]
        a = p.arc
        remove.add(i)
        sector = _sector(a, 0.1 * a.radius)
        far_ends = []
        for j in door_layer_lines.get(p.layer, []):
            if j in remove or j in leaves:
                continue
            geom = line_geoms.get(j)
            if geom is None:
                geom = line_geoms[j] = shapely.MultiLineString([g for g in flat[j] if len(g) >= 2]) \
                    if len(flat[j]) > 1 else shapely.LineString(flat[j][0])
            if sector.covers(geom):
                leaves.add(j)
                far_ends.extend(_far_ends(a, flat[j]))
        closed = _closed_end(a, far_ends)
        c = (a.centre + closed) / 2.0
        doors.append(DoorFound(float(c[0]), float(c[1]), a.radius, p.layer, "swing", p.handle))

    # 3. swings recognised by arc + leaf on other layers
    lo, hi = (v / mpu for v in SWING_RADIUS_M)
    for i, j, far in _swing_candidates(prims, _Vertices(prims, _straight_indices(prims))):
        a = prims[i].arc
        if not (lo <= a.radius <= hi) or i in remove or j in remove:
            continue
        remove.add(i)
        leaves.add(j)
        closed = _closed_end(a, [far])
        c = (a.centre + closed) / 2.0
        doors.append(DoorFound(float(c[0]), float(c[1]), a.radius, prims[i].layer, "swing", prims[i].handle))

    # 4. opening lines on door layers without any arc: each straight line is an opening,
    #    a straight polyline (a door drawn as a thin rectangle) spans its longest side
    for layer, members in door_layer_lines.items():
        if layer in curved_layers:
            continue
        for i in members:
            p = prims[i]
            if p.role != "door" or p.curve is not None or p.points is None or len(p.points) < 2:
                continue
            if _is_segment(p):
                a, b = p.points
                length = float(np.hypot(*(b - a)))
                c = (a + b) / 2.0
            else:
                length, c = _long_side(p.points)
            if length <= 0:
                continue
            remove.add(i)
            doors.append(DoorFound(float(c[0]), float(c[1]), length, layer, "opening-line", p.handle))
    return doors, remove, leaves - remove
