"""Exact measures of a passage at a point, and the width a vehicle needs.

Clear width at a point p: the distance to the nearest obstacle plus the distance to the
nearest obstacle on the far side of p (beyond the line through p perpendicular to the
first direction). For a doorway or a straight aisle with p on its centre line this is
the clear width between the jambs or the aisle faces, exact up to the plan's curve
tolerance. :func:`narrowest_width_near` minimises it over a small neighbourhood.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
import shapely.ops
from shapely.geometry import Point, Polygon

__all__ = ["ObstacleIndex", "min_width", "narrowest_width_near"]


class ObstacleIndex:
    """Nearest-obstacle queries over a plan's walls and solids (local frame, metres)."""

    def __init__(self, walls, solids):
        parts = [g for g in list(walls) + list(solids) if g is not None and not g.is_empty]
        self.geoms = np.asarray(parts, dtype=object)
        self.tree = shapely.STRtree(self.geoms)

    def nearest(self, x: float, y: float) -> tuple[float, np.ndarray]:
        """Distance (m) and nearest obstacle point to (x, y)."""
        p = Point(x, y)
        i = self.tree.nearest(p)
        if i is None:
            return math.inf, np.array([x, y])
        q = shapely.ops.nearest_points(self.geoms[i], p)[0]
        return float(p.distance(q)), np.array([q.x, q.y])

    def width_at(self, x: float, y: float, reach: float = 50.0) -> tuple[float, np.ndarray, np.ndarray]:
        """Clear width (m) through (x, y) and the two obstacle points that bound it."""
        d1, q1 = self.nearest(x, y)
        if not math.isfinite(d1) or d1 == 0:
            return d1 * 2 if math.isfinite(d1) else math.inf, q1, q1
        u = (q1 - np.array([x, y])) / d1
        # half-plane beyond p, away from q1
        n = np.array([-u[1], u[0]])
        c = np.array([x, y])
        far = Polygon([c + n * reach, c + n * reach - u * reach, c - n * reach - u * reach, c - n * reach])
        idx = self.tree.query(far, predicate="intersects")
        best = math.inf
        q2 = c
        pt = Point(x, y)
        for i in idx:
            clipped = self.geoms[i].intersection(far)
            if clipped.is_empty:
                continue
            d = clipped.distance(pt)
            if d < best:
                best = d
                qq = shapely.ops.nearest_points(clipped, pt)[0]
                q2 = np.array([qq.x, qq.y])
        return d1 + best, q1, q2


def narrowest_width_near(index: ObstacleIndex, x: float, y: float, radius: float, n: int = 7):
    """Smallest clear width (m) over a grid of points within ``radius`` of (x, y), and where it occurs.

    Points closer to an obstacle than a quarter of the best width found are skipped (they
    sit beside a jamb rather than in the passage).
    """
    best = (math.inf, x, y, None, None)
    offs = np.linspace(-radius, radius, n)
    for dx in offs:
        for dy in offs:
            if dx * dx + dy * dy > radius * radius + 1e-12:
                continue
            px, py = x + dx, y + dy
            d1, _ = index.nearest(px, py)
            w, q1, q2 = index.width_at(px, py)
            if d1 < 0.45 * w:      # off the centre line: not the passage's clear width
                continue
            if w < best[0]:
                best = (w, px, py, q1, q2)
    if best[3] is None:
        w, q1, q2 = index.width_at(x, y)
        best = (w, x, y, q1, q2)
    return best


def min_width(poly: Polygon) -> float:
    """Smallest width of a polygon's convex hull over all directions, metres (rotating calipers).

    The minimum is attained perpendicular to a hull edge, so only edge normals are tried.
    """
    hull = np.asarray(poly.convex_hull.exterior.coords)
    edges = np.diff(hull, axis=0)
    lengths = np.hypot(edges[:, 0], edges[:, 1])
    edges = edges[lengths > 0] / lengths[lengths > 0, None]
    normals = np.c_[-edges[:, 1], edges[:, 0]]
    proj = hull[:-1] @ normals.T
    return float(np.min(proj.max(axis=0) - proj.min(axis=0)))
