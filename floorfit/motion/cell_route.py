"""Holonomic paths through the roadmap's cells: translate inside one slice's free-space component,
rotate inside the overlap of two (the rotation zone).

:func:`route_in_slices` turns a roadmap path (a Dijkstra path over the cells) into waypoints
(x m, y m, heading degrees, local frame) whose linear interpolation stays in the free space of
each waypoint's slice: legs inside one component through its triangulation
(:mod:`floorfit.motion.cell_mesh`), rotations in place inside a rotation zone
(:func:`floorfit.cspace.roadmap.rotation_zone`). With a clearance the legs and rotation points
keep that far inside where they can (room for a differential base's manoeuvres).
"""

from __future__ import annotations

import math
from itertools import pairwise
from typing import Any

import networkx as nx
import numpy as np
import shapely
import shapely.ops
from shapely.geometry import Point, Polygon

from floorfit.cspace.headings import arc_deg
from floorfit.cspace.roadmap import MIN_ZONE_AREA_M2, rotation_zone
from floorfit.cspace.slices import SliceSet
from floorfit.motion.cell_mesh import MESHES

__all__ = ["route_in_slices"]

#: Rotations merged into one waypoint pair stay below this, degrees (so the shorter arc is the one meant).
_MAX_MERGED_TURN_DEG = 120.0



def _merge_rotations(path: list[np.ndarray]) -> np.ndarray:
    """Drop repeated waypoints and merge runs of same-direction rotations in place."""
    out: list[np.ndarray] = [path[0]]
    run = 0.0
    for p in path[1:]:
        q = out[-1]
        same_xy = abs(p[0] - q[0]) < 1e-12 and abs(p[1] - q[1]) < 1e-12
        dh = float(arc_deg(q[2], p[2]))
        if same_xy and abs(dh) < 1e-12:
            continue
        if same_xy and len(out) >= 2:
            r = out[-2]
            prev_is_rot = abs(r[0] - q[0]) < 1e-12 and abs(r[1] - q[1]) < 1e-12
            if prev_is_rot and np.sign(dh) == np.sign(run) and abs(run + dh) < _MAX_MERGED_TURN_DEG:
                out[-1] = p
                run += dh
                continue
        run = dh if same_xy else 0.0
        out.append(p)
    return np.asarray(out)


class _Clearance:
    """Geometry of a route kept ``clearance_m`` inside the free space where the space allows.

    Eroded copies of components and rotation zones are made on demand (round joins, so an
    eroded polygon lies inside the original). Where the eroded geometry is empty or does
    not connect the points, the plain geometry is used: the preference never loses a route.
    """

    def __init__(self, clearance_m: float):
        self.c = float(clearance_m)
        self._cache: dict = {}

    def eroded(self, key, geom, fraction: float = 1.0):
        if self.c <= 0:
            return None
        if key not in self._cache:
            self._cache[key] = MESHES.eroded(geom, self.c * fraction)
        return self._cache[key]

    def point(self, region, near, heading_deg: float | None = None, poly=None) -> np.ndarray:
        """A rotation point in ``region``: with a heading, the nearest one straight ahead (or behind)
        of ``near`` on its heading line, kept ``clearance_m`` (or at least half of it) inside, that
        ``poly`` lets it drive to, so that a base that drives only along its heading needs no
        extra turn; else the nearest point of the eroded region; else of the region."""
        e = self.eroded(("zone", region.wkb), region)
        if heading_deg is not None and poly is not None and self.c > 0:
            for level in (e, self.eroded(("zone/2", region.wkb), region, 0.5)):
                q = self._on_heading_line(level, near, heading_deg, poly) if level is not None else None
                if q is not None:
                    return q
        return MESHES.point_inside(e if e is not None else region, near)

    @staticmethod
    def _on_heading_line(target, near, heading_deg, poly):
        t = math.radians(heading_deg)
        x0, y0, x1, y1 = target.bounds
        reach = math.hypot(x1 - x0, y1 - y0) + float(Point(near).distance(target)) + 1.0
        best = None
        for sign in (1.0, -1.0):
            far = (near[0] + sign * reach * math.cos(t), near[1] + sign * reach * math.sin(t))
            hit = shapely.intersection(shapely.LineString([near, far]), target)
            if hit.is_empty:
                continue
            q = shapely.ops.nearest_points(hit, Point(near))[0]
            q = np.array([q.x, q.y])
            d = float(np.hypot(*(q - np.asarray(near))))
            if (best is None or d < best[0]) and target.covers(Point(q)) \
                    and (d < 1e-12 or poly.covers(shapely.LineString([near, q]))):
                best = (d, q)
        return None if best is None else best[1]

    def leg(self, key, poly, a, b) -> np.ndarray | None:
        """Waypoints from a to b inside ``poly``, through its eroded copy where possible; first
        inside the part of ``poly`` near a and b (:func:`_part_near`), which is cheaper to
        triangulate and erode on a large free space, then inside the whole of it."""
        near = _part_near(poly, a, b)
        if near is not None:
            got = self._leg((key, near.bounds), near, a, b)
            if got is not None:
                return got
        return self._leg(key, poly, a, b)

    def _leg(self, key, poly, a, b) -> np.ndarray | None:
        e = self.eroded(key, poly)
        if e is not None:
            a2, b2 = MESHES.point_inside(e, a), MESHES.point_inside(e, b)
            ends_ok = all(np.allclose(p, q) or poly.covers(shapely.LineString([p, q])) for p, q in ((a, a2), (b2, b)))
            part = e
            if ends_ok and not isinstance(e, Polygon):
                parts = [g for g in shapely.get_parts(e) if g.covers(Point(a2))]
                part = parts[0] if parts else None
            if ends_ok and part is not None:
                inner = MESHES.path(part, a2, b2)
                if inner is not None:
                    pts = [np.asarray(a, dtype=float)] + list(inner) + [np.asarray(b, dtype=float)]
                    keep = [pts[0]] + [p for prev, p in pairwise(pts) if not np.allclose(prev, p, atol=1e-12)]
                    return np.asarray(keep)
        return MESHES.path(poly, a, b)


#: A leg is first sought inside the component cut to the box around its ends grown by this
#: much, metres (or by the leg's length, when longer).
LEG_REACH_M = 3.0


def _part_near(poly, a, b):
    """The piece of ``poly`` inside the box around a and b (grown by :data:`LEG_REACH_M` or |ab|)
    that holds both points, or None (no such piece, or the box holds all of ``poly``)."""
    reach = max(LEG_REACH_M, float(np.hypot(b[0] - a[0], b[1] - a[1])))
    lo = np.minimum(a[:2], b[:2]) - reach
    hi = np.maximum(a[:2], b[:2]) + reach
    x0, y0, x1, y1 = poly.bounds
    if lo[0] <= x0 and lo[1] <= y0 and hi[0] >= x1 and hi[1] >= y1:
        return None
    cut = shapely.intersection(poly, shapely.box(lo[0], lo[1], hi[0], hi[1]))
    pa, pb = Point(a[0], a[1]), Point(b[0], b[1])
    return next((g for g in shapely.get_parts(cut)
                 if isinstance(g, Polygon) and g.covers(pa) and g.covers(pb)), None)


#: Components with more vertices than this together get their rotation zones near the route
#: only (:func:`_zone_near`); smaller ones whole, as cheap as a cut.
LOCAL_ZONE_MIN_VERTICES = 20_000


def _zone_near(slices: SliceSet, edge, pos) -> tuple[tuple[float, float, float, float] | None, Any]:
    """The rotation zone of roadmap ``edge`` near ``pos`` (local frame, m): on large components
    (:data:`LOCAL_ZONE_MIN_VERTICES`) cut to a square around ``pos`` that is doubled until it
    holds part of the zone (at most the whole zone), else whole. Returns the square (xmin, ymin,
    xmax, ymax) or None (whole), and the zone's part inside it."""
    u, v = edge
    a, b = slices.components[u[0]][u[1]], slices.components[v[0]][v[1]]
    if shapely.get_num_coordinates(a) + shapely.get_num_coordinates(b) <= LOCAL_ZONE_MIN_VERTICES:
        return None, rotation_zone(slices, u, v)
    ext = np.array([a.bounds, b.bounds])
    lo, hi = ext[:, :2].min(axis=0), ext[:, 2:].max(axis=0)
    half = 2.0 * slices.vehicle.radius_m + 1.0
    while True:
        window = (pos[0] - half, pos[1] - half, pos[0] + half, pos[1] + half)
        whole = window[0] <= lo[0] and window[1] <= lo[1] and window[2] >= hi[0] and window[3] >= hi[1]
        zone = rotation_zone(slices, u, v, window=None if whole else window)
        if whole or zone.area > MIN_ZONE_AREA_M2:
            return window, zone
        half *= 2.0


def route_in_slices(slices: SliceSet, G: nx.Graph, start_local, goal_local, *,
                    clearance_m: float = 0.0) -> tuple[str, np.ndarray | None, dict]:
    """Search ``G`` (roadmap of ``slices``) between two local-frame poses.

    Returns (status, local path (N, 3) or None, info). Status: "reachable", "unreachable",
    "start-outside" or "goal-outside" (the pose is not in its slice's free space).
    With ``clearance_m`` > 0 the path keeps that far (m) inside the free space of each
    slice where it can (legs and rotation points), which leaves room for a vehicle that
    must deviate from it (differential bases), and rotation points are put on the
    current heading line where the free space allows (a drive without an extra turn).
    """
    s = slices.locate(*start_local)
    if s is None:
        return "start-outside", None, {}
    g = slices.locate(*goal_local)
    if g is None:
        return "goal-outside", None, {"start_node": s}
    try:
        nodes = nx.dijkstra_path(G, s, g, weight="weight")
    except nx.NetworkXNoPath:
        return "unreachable", None, {"start_node": s, "goal_node": g}
    room = _Clearance(clearance_m)
    heads = slices.cells.headings
    pos = np.array(start_local[:2], dtype=float)
    path: list[np.ndarray] = [np.array([pos[0], pos[1], start_local[2]])]
    edges = list(pairwise(nodes))
    i = 0
    while i < len(edges):
        # rotate through as many consecutive slices as possible at one point: the
        # intersection of their rotation zones
        window, region = _zone_near(slices, edges[i], pos)
        j = i + 1
        while j < len(edges):
            nxt = shapely.intersection(region, rotation_zone(slices, *edges[j], window=window))
            if nxt.area <= 1e-6:
                break
            region, j = nxt, j + 1
        u = edges[i][0]
        h_u = start_local[2] if u == s else heads[u[0]]
        p = room.point(region, pos, h_u, slices.components[u[0]][u[1]])
        leg = room.leg(u, slices.components[u[0]][u[1]], pos, p)
        if leg is None:
            return "unreachable", None, {"error": f"no path inside cell {u}"}
        path.extend(np.array([x, y, h_u]) for x, y in leg[1:])
        for _, v in edges[i:j]:
            path.append(np.array([p[0], p[1], heads[v[0]]]))
        pos = p
        i = j
    comp = slices.components[g[0]][g[1]]
    leg = room.leg(g, comp, pos, goal_local[:2])
    if leg is None:
        return "unreachable", None, {"error": "no path inside the goal cell"}
    h_g = heads[g[0]] if len(nodes) > 1 else start_local[2]
    path.extend(np.array([x, y, h_g]) for x, y in leg[1:])
    path.append(np.array(goal_local, dtype=float))
    return "reachable", _merge_rotations(path), {"nodes": nodes}
