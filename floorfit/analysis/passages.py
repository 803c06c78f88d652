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

#: Rounding allowance (m) when an obstacle's whole distance bounds its clipped part's from below.
CLIP_SLACK_M = 1e-9


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

    def nearest_many(self, xs, ys) -> tuple[np.ndarray, np.ndarray]:
        """Vectorised :meth:`nearest`: distances (m) and nearest obstacle points ((N, 2)) of the
        points (``xs[i]``, ``ys[i]``); the same values, one tree search for all of them."""
        xs, ys = np.asarray(xs, dtype=float), np.asarray(ys, dtype=float)
        if not len(self.geoms):
            return np.full(len(xs), math.inf), np.c_[xs, ys]
        pts = shapely.points(xs, ys)
        near = shapely.get_point(shapely.shortest_line(self.geoms[self.tree.nearest(pts)], pts), 0)
        return shapely.distance(pts, near), shapely.get_coordinates(near)

    def width_at(self, x: float, y: float, reach: float = 50.0) -> tuple[float, np.ndarray, np.ndarray]:
        """Clear width (m) through (x, y) and the two obstacle points that bound it."""
        d1, q1 = self.nearest(x, y)
        return self.width_from(x, y, d1, q1, reach)

    def width_from(self, x: float, y: float, d1: float, q1: np.ndarray,
                   reach: float = 50.0) -> tuple[float, np.ndarray, np.ndarray]:
        """:meth:`width_at` given the nearest obstacle's distance ``d1`` (m) and point ``q1``."""
        if not math.isfinite(d1) or d1 == 0:
            return d1 * 2 if math.isfinite(d1) else math.inf, q1, q1
        u = (q1 - np.array([x, y])) / d1
        # half-plane beyond p, away from q1
        n = np.array([-u[1], u[0]])
        c = np.array([x, y])
        far = Polygon([c + n * reach, c + n * reach - u * reach, c - n * reach - u * reach, c - n * reach])
        best, q2 = self._nearest_clipped(self.tree.query(far, predicate="intersects"), far, Point(x, y))
        return d1 + best, q1, (c if q2 is None else q2)

    def _nearest_clipped(self, idx: np.ndarray, far: Polygon, pt: Point) -> tuple[float, np.ndarray | None]:
        """Smallest distance (m) from ``pt`` to the obstacles ``idx`` clipped to ``far``, and the
        nearest point (None when every clipped piece is empty); ties go to the first in ``idx``.

        An obstacle is clipped only while its whole distance (never more than its clipped part's,
        :data:`CLIP_SLACK_M` allowed for rounding) does not exceed the best distance found.
        """
        if not len(idx):
            return math.inf, None
        whole = shapely.distance(self.geoms[idx], pt)
        d = np.full(len(idx), math.inf)
        clipped = {}
        best = math.inf
        for j in np.argsort(whole, kind="stable"):
            if whole[j] > best + CLIP_SLACK_M:
                break
            piece = self.geoms[idx[j]].intersection(far)
            if piece.is_empty:
                continue
            clipped[j] = piece
            d[j] = piece.distance(pt)
            best = min(best, d[j])
        d[np.isnan(d)] = math.inf
        j = int(np.argmin(d))
        if not d[j] < math.inf:
            return math.inf, None
        qq = shapely.ops.nearest_points(clipped[j], pt)[0]
        return float(d[j]), np.array([qq.x, qq.y])


def narrowest_width_near(index: ObstacleIndex, x: float, y: float, radius: float, n: int = 7):
    """Smallest clear width (m) over a grid of points within ``radius`` of (x, y), and where it occurs.

    Points closer to an obstacle than a quarter of the best width found are skipped (they
    sit beside a jamb rather than in the passage). The grid's nearest obstacles are found in
    one search (:meth:`ObstacleIndex.nearest_many`).
    """
    best = (math.inf, x, y, None, None)
    offs = np.linspace(-radius, radius, n)
    dx, dy = (a.ravel() for a in np.meshgrid(offs, offs, indexing="ij"))
    inside = dx * dx + dy * dy <= radius * radius + 1e-12
    px, py = x + dx[inside], y + dy[inside]
    d1s, q1s = index.nearest_many(px, py)
    for i in range(len(px)):
        d1 = float(d1s[i])
        w, q1, q2 = index.width_from(float(px[i]), float(py[i]), d1, q1s[i])
        if d1 < 0.45 * w:      # off the centre line: not the passage's clear width
            continue
        if w < best[0]:
            best = (w, px[i], py[i], q1, q2)
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
