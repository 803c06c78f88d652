"""Where the vehicle can be, at which headings, and where it can turn around.

* ``heading_raster``: for each map cell (centre point, local frame), which heading slices
  hold that point in their free space (sound bound). The count is the map of the
  plane-times-circle configuration space; "all slices" means the vehicle can spin fully
  in place there.
* ``turn_region``: where the centre of a turning circle (radius ρ_min; for most modes the
  footprint's smallest enclosing circle, see :func:`floorfit.analysis.maneuvers.turnaround_circle`)
  can sit with that circle clear of obstacles. There the vehicle can reverse its
  heading by rotating about that centre: directly for an omnidirectional base, with short
  back-and-forth manoeuvres for a differential one (small-time local controllability;
  Laumond et al., IEEE T-RA 10(5), 1994). For a rectangle l × w, 2ρ_min = √(l² + w²), the
  exact width a straight corridor needs for reversing. It is a sufficient condition:
  tight multi-point turns in junctions are not credited (errs towards "cannot turn").
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon

from floorfit.cspace.headings import format_heading_ranges
from floorfit.cspace.minkowski import ObstacleSet, cobstacle_pieces
from floorfit.cspace.raster import fill_polygons
from floorfit.cspace.slices import SliceSet

__all__ = ["HeadingRaster", "heading_raster", "turn_region", "heading_ranges", "format_heading_ranges",
           "NARROW_RANGE_DEG"]


@dataclass
class HeadingRaster:
    """``free[k, iy, ix]``: slice k's free space holds the centre of cell (ix, iy). Local frame, metres."""

    x0: float
    y0: float
    cell: float
    free: np.ndarray
    headings_deg: np.ndarray

    @property
    def counts(self) -> np.ndarray:
        return self.free.sum(axis=0)

    def centres(self):
        _, ny, nx = self.free.shape
        return (self.x0 + (np.arange(nx) + 0.5) * self.cell, self.y0 + (np.arange(ny) + 0.5) * self.cell)

    def index_of(self, x, y):
        _, ny, nx = self.free.shape
        ix = np.clip(((np.asarray(x) - self.x0) / self.cell).astype(int), 0, nx - 1)
        iy = np.clip(((np.asarray(y) - self.y0) / self.cell).astype(int), 0, ny - 1)
        return iy, ix


def heading_raster(slices: SliceSet, bounds, cell: float) -> HeadingRaster:
    """Sample every slice's free space at the centres of a grid over ``bounds`` (local frame)."""
    x0, y0, x1, y1 = bounds
    nx = max(1, int(math.ceil((x1 - x0) / cell)))
    ny = max(1, int(math.ceil((y1 - y0) / cell)))
    free = np.zeros((len(slices), ny, nx), dtype=bool)
    for k in range(len(slices)):
        comps = slices.components[k]
        if len(comps):
            free[k] = fill_polygons(comps, x0, y0, cell, nx, ny)
    return HeadingRaster(x0, y0, cell, free, slices.cells.headings.copy())


def turn_region(obstacles: ObstacleSet, domain: Polygon, radius: float, sides: int = 64):
    """Positions (local frame) where a disc of ``radius`` is clear of obstacles.

    The disc is replaced by its circumscribed ``sides``-gon, which contains it, so the
    region is never larger than the true one.
    """
    r = radius / math.cos(math.pi / sides)
    t = np.linspace(0, 2 * np.pi, sides, endpoint=False)
    disc = np.c_[r * np.cos(t), r * np.sin(t)]
    pieces = cobstacle_pieces(obstacles, [disc])
    blocked = shapely.union_all(pieces) if len(pieces) else Polygon()
    return shapely.difference(domain, blocked)


#: A free heading range narrower than this (degrees) is the narrow cell around one special
#: heading (see :data:`floorfit.cspace.headings.GUARD_DEG`) and is stated as that heading.
NARROW_RANGE_DEG = 0.25


def heading_ranges(free_headings: np.ndarray, headings_deg: np.ndarray, below: np.ndarray,
                   above: np.ndarray) -> list[tuple[float, float]]:
    """Contiguous arcs (start, end in degrees, CCW) covered by the cells of the free slices."""
    n = len(headings_deg)
    if not free_headings.any():
        return []
    if free_headings.all():
        return [(-180.0, 180.0)]
    # rotate so that we start just after a non-free slice
    start = int(np.flatnonzero(~free_headings)[0])
    order = [(start + 1 + i) % n for i in range(n)]
    out = []
    run = []
    for k in order:
        if free_headings[k]:
            run.append(k)
        elif run:
            out.append(run)
            run = []
    if run:
        out.append(run)
    ranges = []
    for r in out:
        a = float(headings_deg[r[0]] - below[r[0]])
        b = float(headings_deg[r[-1]] + above[r[-1]])
        if b - a < NARROW_RANGE_DEG:
            # only the narrow cell of a wall direction (or a docking heading) is free: the vehicle
            # fits when aligned with it; the cell's edges are an artefact of the slicing
            h = float(headings_deg[r[len(r) // 2]])
            h = (h + 180.0) % 360.0 - 180.0
            ranges.append((round(h, 2), round(h, 2)))
            continue
        a = (a + 180.0) % 360.0 - 180.0
        b = (b + 180.0) % 360.0 - 180.0
        ranges.append((round(a, 2), round(b, 2)))
    return ranges


