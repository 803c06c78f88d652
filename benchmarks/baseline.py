"""The baseline a user without floorfit would write: test poses one by one against the obstacles.

Place the footprint at each pose (vectorised with numpy), ask a shapely STRtree which
obstacles it intersects, and repeat for every pose of a grid over the site. Only shapely
and numpy are used (no floorfit code), so the comparison is against plain library use.
The time per pose is measured on a random sample and extrapolated to the full grid
(``grid_m`` × ``grid_m`` cells over the obstacles' bounding box, ``headings`` headings).
Reading the drawing and searching the grid for a route are not counted: the baseline is
given its obstacles for free and only pays for the collision tests.
"""

from __future__ import annotations

import math
import time

import numpy as np
import shapely

__all__ = ["brute_force_seconds_per_pose", "grid_pose_count", "placed_footprints"]


def placed_footprints(ring: np.ndarray, poses: np.ndarray) -> np.ndarray:
    """Footprint polygons (vehicle-frame ``ring``, metres) at (N, 3) poses x, y, heading in degrees."""
    t = np.radians(poses[:, 2])
    c, s = np.cos(t)[:, None], np.sin(t)[:, None]
    xs = c * ring[None, :, 0] - s * ring[None, :, 1] + poses[:, 0:1]
    ys = s * ring[None, :, 0] + c * ring[None, :, 1] + poses[:, 1:2]
    return shapely.polygons(np.stack([xs, ys], axis=-1))


def brute_force_seconds_per_pose(obstacles: np.ndarray, footprint: shapely.Polygon, bounds, *,
                                 samples: int = 200_000, chunk: int = 50_000, seed: int = 0) -> tuple[float, float]:
    """Seconds per pose of the vectorised STRtree test, and the fraction of sampled poses found colliding.

    The STRtree is built once (its time is included); poses are uniform over ``bounds``.
    """
    rng = np.random.default_rng(seed)
    x0, y0, x1, y1 = bounds
    ring = np.asarray(footprint.exterior.coords)
    t0 = time.perf_counter()
    tree = shapely.STRtree(np.asarray(obstacles, dtype=object))
    hits = 0
    done = 0
    while done < samples:
        n = min(chunk, samples - done)
        poses = np.c_[rng.uniform(x0, x1, n), rng.uniform(y0, y1, n), rng.uniform(-180, 180, n)]
        fps = placed_footprints(ring, poses)
        idx = tree.query(fps, predicate="intersects")
        hit = np.zeros(n, dtype=bool)
        hit[idx[0]] = True
        hits += int(hit.sum())
        done += n
    return (time.perf_counter() - t0) / samples, hits / samples


def grid_pose_count(bounds, grid_m: float = 0.05, headings: int = 72) -> int:
    """Poses of a ``grid_m`` grid over ``bounds`` (metres) times ``headings``."""
    x0, y0, x1, y1 = bounds
    return int(math.ceil((x1 - x0) / grid_m)) * int(math.ceil((y1 - y0) / grid_m)) * headings
