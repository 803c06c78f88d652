"""The free-space test for single poses and sampled motions, straight against the obstacles.

This is the direct check (no configuration space): place the footprint at the pose and
ask whether it meets any obstacle. It is exact up to the plan's curve flattening and is
used for start/goal checks, station checks and to re-verify paths.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from shapely.geometry import Polygon

from floorfit.cspace.headings import arc_deg
from floorfit.plan.model import Plan

__all__ = ["PoseChecker", "place_footprint", "sample_motion"]


def place_footprint(footprint: Polygon, poses) -> np.ndarray:
    """Footprint polygons at (N, 3) poses (x, y, heading_deg), vectorised. Same frame as the poses."""
    poses = np.asarray(poses, dtype=float).reshape(-1, 3)
    ring = np.asarray(footprint.exterior.coords)
    t = np.radians(poses[:, 2])
    c, s = np.cos(t)[:, None], np.sin(t)[:, None]
    xs = c * ring[None, :, 0] - s * ring[None, :, 1] + poses[:, 0:1]
    ys = s * ring[None, :, 0] + c * ring[None, :, 1] + poses[:, 1:2]
    return shapely.polygons(np.stack([xs, ys], axis=-1))


class PoseChecker:
    """Collision and clearance of a footprint against a plan's obstacles (local frame, metres)."""

    def __init__(self, plan: Plan, footprint: Polygon, obstacles=None):
        geoms = np.concatenate([plan.walls, plan.solids]) if obstacles is None else np.asarray(obstacles)
        self.geoms = geoms
        self.footprint = footprint
        self.tree = shapely.STRtree(geoms)

    def collides(self, poses) -> np.ndarray:
        """True where the footprint at a pose touches or overlaps an obstacle."""
        fps = place_footprint(self.footprint, poses)
        hit = np.zeros(len(fps), dtype=bool)
        if len(self.geoms):
            idx = self.tree.query(fps, predicate="intersects")
            hit[idx[0]] = True
        return hit

    def clearance(self, poses) -> np.ndarray:
        """Distance from the footprint at each pose to the nearest obstacle, metres (0 when touching)."""
        fps = place_footprint(self.footprint, poses)
        if not len(self.geoms):
            return np.full(len(fps), np.inf)
        i_fp, i_obs = self.tree.query_nearest(fps, return_distance=False, all_matches=False)
        d = np.full(len(fps), np.inf)
        d[i_fp] = shapely.distance(fps[i_fp], self.geoms[i_obs])
        return d


def sample_motion(path, *, step_m: float = 0.01, step_deg: float = 0.5, radius_m: float = 1.0) -> np.ndarray:
    """Dense samples of the motion through waypoints (N, 3): x, y linear, heading along the shorter arc.

    Samples are spaced so that no footprint point (within ``radius_m`` of the reference)
    moves more than about ``step_m`` between samples and the heading changes by at most
    ``step_deg``.
    """
    path = np.asarray(path, dtype=float).reshape(-1, 3)
    out = [path[:1]]
    for a, b in zip(path[:-1], path[1:]):
        dh = float(arc_deg(a[2], b[2]))
        dist = math.hypot(b[0] - a[0], b[1] - a[1]) + radius_m * math.radians(abs(dh))
        n = max(1, int(math.ceil(max(dist / step_m, abs(dh) / step_deg))))
        t = np.linspace(0, 1, n + 1)[1:, None]
        seg = np.hstack([a[:2] + t * (b[:2] - a[:2]), (a[2] + t[:, 0] * dh)[:, None]])
        seg[:, 2] = (seg[:, 2] + 180.0) % 360.0 - 180.0
        out.append(seg)
    return np.vstack(out)
