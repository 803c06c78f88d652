"""Two-dimensional distance-to-goal over an occupancy grid (a search heuristic).

The grid says where the vehicle's reference point may be in at least one heading.
Distances are shortest 8-connected paths through free cells from the goal's cell,
computed with :func:`scipy.sparse.csgraph.dijkstra`; for cells ``c`` metres wide
the step costs are ``c`` and ``c * sqrt(2)``. An 8-connected path is up to
``sqrt(4 - 2 sqrt(2))`` = 1.0824 times longer than the straight line it follows,
and positions lie anywhere inside their cell, so :func:`grid_heuristic` divides by
that factor and subtracts one cell diagonal. The result estimates the
obstacle-aware distance closely; it is an estimate, not a proven lower bound, which
can only cost path quality: every path a planner returns is collision-checked on
its own. Cells marked blocked are treated as unreachable.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import dijkstra

from floorfit.errors import InputError

__all__ = ["OccupancyGrid", "grid_distances", "grid_heuristic"]

# Largest ratio of an 8-connected grid path to the straight segment it follows (at 22.5 deg).
_OCTILE_STRETCH = math.sqrt(4.0 - 2.0 * math.sqrt(2.0))


@dataclass(frozen=True)
class OccupancyGrid:
    """Where the reference point may be.

    Attributes
    ----------
    free : numpy.ndarray
        Boolean array (rows along y, columns along x); True where some part of the
        cell can hold the reference point in some heading.
    origin : tuple[float, float]
        (x m, y m) of the centre of cell ``free[0, 0]``.
    cell_m : float
        Cell width (m).
    """

    free: np.ndarray
    origin: tuple[float, float]
    cell_m: float

    def cell_of(self, xy) -> tuple[np.ndarray, np.ndarray]:
        """Row and column indices of positions ``xy`` ((N, 2), m), unclipped."""
        xy = np.asarray(xy, dtype=float).reshape(-1, 2)
        col = np.rint((xy[:, 0] - self.origin[0]) / self.cell_m).astype(np.int64)
        row = np.rint((xy[:, 1] - self.origin[1]) / self.cell_m).astype(np.int64)
        return row, col


def _check(grid: OccupancyGrid) -> np.ndarray:
    free = np.asarray(grid.free)
    if free.ndim != 2 or free.dtype != bool:
        raise InputError("occupancy grid must be a 2-D boolean array", where="heuristic_grid")
    if not (grid.cell_m > 0 and math.isfinite(grid.cell_m)):
        raise InputError(f"cell width must be positive, got {grid.cell_m!r}",
                         where="heuristic_grid.cell_m")
    return free


def grid_distances(grid: OccupancyGrid, goal_xy) -> np.ndarray:
    """Shortest 8-connected path length (m) from every free cell to the goal's cell.

    Returns an array shaped like ``grid.free``; ``inf`` where a cell is blocked or
    cannot reach the goal (and everywhere when the goal's cell is outside or blocked).
    """
    free = _check(grid)
    rows, cols = free.shape
    out = np.full(free.shape, np.inf)
    (g_row,), (g_col,) = grid.cell_of(goal_xy)
    if not (0 <= g_row < rows and 0 <= g_col < cols and free[g_row, g_col]):
        return out
    index = np.arange(rows * cols).reshape(rows, cols)
    src, dst, cost = [], [], []
    diagonal = math.sqrt(2.0)
    for d_row, d_col, step in ((0, 1, 1.0), (1, 0, 1.0), (1, 1, diagonal), (1, -1, diagonal)):
        # pairs (row, col) -> (row + d_row, col + d_col) that stay on the grid
        here = (slice(0, rows - d_row), slice(max(0, -d_col), cols - max(0, d_col)))
        there = (slice(d_row, rows), slice(max(0, d_col), cols - max(0, -d_col)))
        both = free[here] & free[there]
        src.append(index[here][both])
        dst.append(index[there][both])
        cost.append(np.full(int(both.sum()), step * grid.cell_m))
    src_all, dst_all, cost_all = (np.concatenate(v) for v in (src, dst, cost))
    graph = coo_matrix((cost_all, (src_all, dst_all)), shape=(rows * cols,) * 2).tocsr()
    dist = dijkstra(graph, directed=False, indices=int(index[g_row, g_col]))
    out[:] = dist.reshape(rows, cols)
    out[~free] = np.inf
    return out


def grid_heuristic(grid: OccupancyGrid, goal_xy) -> Callable[[np.ndarray], np.ndarray]:
    """A function (N, 2) positions (m) -> (N,) estimated distances to the goal (m).

    Positions outside the grid get 0 (nothing known); blocked or unreachable cells
    get ``inf``.
    """
    dist = grid_distances(grid, goal_xy) / _OCTILE_STRETCH
    slack = grid.cell_m * math.sqrt(2)
    rows, cols = dist.shape

    def lookup(xy: np.ndarray) -> np.ndarray:
        row, col = grid.cell_of(xy)
        inside = (row >= 0) & (row < rows) & (col >= 0) & (col < cols)
        out = np.zeros(row.shape)
        out[inside] = np.maximum(dist[row[inside], col[inside]] - slack, 0.0)
        return out

    return lookup
