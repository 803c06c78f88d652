"""Limits on the size of one analysis, so that a huge site gets advice instead of thrashing.

The work of building the slices grows with (obstacle edges × heading slices); memory grows
with the free-space vertices kept per slice. Beyond :data:`MAX_EDGE_SLICES` floorfit stops
before starting and says what to do: a coarser ``--heading-step`` or a crop with
``--window``. The advice is computed, not guessed: the step named is the finest whose
slices (uniform ones plus the wall-direction and start/goal slices the run adds) the limit
accepts, and the window named holds few enough edges for the limit to accept the run.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import shapely

from floorfit.errors import LimitExceeded

__all__ = ["MAX_EDGE_SLICES", "MAX_EDGES", "check_problem_size", "ADVICE_STEPS_DEG", "advised_step_deg",
           "advised_window", "window_budget", "WALL_DIRECTION_SLICES"]

#: Largest (obstacle edges × heading slices) for one run: 20,000 edges × 720 slices.
MAX_EDGE_SLICES = 20_000 * 720
#: Largest number of obstacle edges in one run.
MAX_EDGES = 400_000
#: Heading steps the advice picks from, degrees (the coarsest a run accepts is 45°).
ADVICE_STEPS_DEG = (1.0, 1.25, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 7.5, 9.0, 10.0, 12.0, 15.0, 18.0, 20.0, 22.5,
                    30.0, 36.0, 45.0)
#: The most slices the plan's wall directions add to a run: two families × four directions ×
#: a slice and two guards (:func:`floorfit.cspace.headings.dominant_directions_deg`,
#: :func:`floorfit.cspace.headings.make_heading_cells`).
WALL_DIRECTION_SLICES = 2 * 4 * 3
#: Slices a run may add to the uniform ones when no count is known: wall directions and start
#: and goal (× three).
_EXTRA_SLICES = WALL_DIRECTION_SLICES + 2 * 3


def _slices_at(step: float, slices_for_step: Callable[[float], int] | None) -> int:
    if slices_for_step is not None:
        return int(slices_for_step(step))
    return int(round(360.0 / step)) + _EXTRA_SLICES


def advised_step_deg(edges: int, slices_for_step: Callable[[float], int] | None = None) -> float | None:
    """The finest step of :data:`ADVICE_STEPS_DEG` whose run the edge × slice limit accepts, or None."""
    for step in ADVICE_STEPS_DEG:
        if edges * _slices_at(step, slices_for_step) <= MAX_EDGE_SLICES:
            return step
    return None


def _edge_counts(plan) -> tuple[np.ndarray, np.ndarray]:
    """Each obstacle (local frame) and an upper bound on its edges once clipped to a window."""
    geoms, counts = [], []
    if len(plan.walls):
        geoms.append(plan.walls)
        counts.append(shapely.get_num_coordinates(plan.walls) - 1)
    if len(plan.solids):
        # clipping a ring to a rectangle adds at most the rectangle's corners and one edge per crossing
        geoms.append(plan.solids)
        counts.append(2 * (shapely.get_num_coordinates(plan.solids) - 1) + 4)
    if not geoms:
        return np.zeros(0, dtype=object), np.zeros(0, dtype=np.int64)
    return np.concatenate(geoms), np.concatenate(counts).astype(np.int64)


def advised_window(plan, max_edges: int, keep=None, keep_pad_m: float = 2.0
                   ) -> tuple[float, float, float, float] | None:
    """A ``--window`` (drawing units) around the middle of the obstacles holding at most ``max_edges`` edges.

    The window is a square about the middle, cut to the obstacles' extent (a long building
    keeps its whole depth), and the largest (by bisection on its size) for which the
    obstacles it touches have at most ``max_edges`` edges, counted as an upper bound on what
    clipping leaves (lines keep at most their own edges; a clipped polygon at most twice its
    edges plus four). With ``keep`` (local-frame points, metres: the run's stations, start or
    goal) the window grows from the box holding them, ``keep_pad_m`` around each, so that the
    cropped run still has them. None when no window helps.
    """
    geoms, counts = _edge_counts(plan)
    if not len(geoms) or max_edges < 1:
        return None
    tree = shapely.STRtree(geoms)
    x0, y0, x1, y1 = plan.local_bounds()
    reach = 0.5 * max(x1 - x0, y1 - y0)
    if keep is not None and len(np.asarray(keep, dtype=float).reshape(-1, 2)):
        pts = np.asarray(keep, dtype=float).reshape(-1, 2)
        k0, k1 = pts.min(axis=0) - keep_pad_m, pts.max(axis=0) + keep_pad_m
    else:
        k0 = k1 = np.array([0.5 * (x0 + x1), 0.5 * (y0 + y1)])

    def window(scale: float) -> tuple[float, float, float, float]:
        grow = scale * reach
        # grown by ``grow``, cut to the obstacles' extent, never cutting into the kept points' box
        lo_x, lo_y = np.minimum(k0, np.maximum((x0, y0), k0 - grow))
        hi_x, hi_y = np.maximum(k1, np.minimum((x1, y1), k1 + grow))
        return float(lo_x), float(lo_y), float(hi_x), float(hi_y)

    def edges_in(scale: float) -> int:
        return int(counts[tree.query(shapely.box(*window(scale)), predicate="intersects")].sum())

    lo, hi = 0.0, 2.0
    if edges_in(1e-6) > max_edges:
        return None
    for _ in range(30):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if edges_in(mid) <= max_edges else (lo, mid)
    if lo <= 0.0 and keep is None:
        return None
    ox, oy = plan.origin
    mpu = plan.metres_per_unit or 1.0
    # drawing units, rounded inwards so the window printed is no larger than the one measured
    # (and outwards where it must hold a kept point's room)
    a0, b0, a1, b1 = window(lo)
    w = ((a0 + ox) / mpu, (b0 + oy) / mpu, (a1 + ox) / mpu, (b1 + oy) / mpu)
    digits = max(0, 3 - int(math.floor(math.log10(max(abs(v) for v in w) or 1.0))))
    q = 10.0 ** digits
    return (math.ceil(w[0] * q) / q, math.ceil(w[1] * q) / q, math.floor(w[2] * q) / q, math.floor(w[3] * q) / q)


def window_budget(n_slices: int) -> int:
    """Most obstacle edges a run cropped with ``--window`` may hold for the limits to accept it.

    The cropped run keeps the heading step and the station, start and goal headings of a run
    with ``n_slices`` slices, but its wall directions are those of the cropped linework, which
    may differ: it has at most ``n_slices`` + :data:`WALL_DIRECTION_SLICES` slices.
    """
    return max(0, min(MAX_EDGES, MAX_EDGE_SLICES // max(1, n_slices + WALL_DIRECTION_SLICES)))


def _window_text(plan, max_edges: int, keep=None) -> str:
    win = advised_window(plan, max_edges, keep)
    if win is None:
        return "crop it with --window"
    return "crop it, e.g. --window " + ",".join(f"{v:g}" for v in win)


def check_problem_size(plan, n_slices: int, slices_for_step: Callable[[float], int] | None = None,
                       keep=None) -> None:
    """Raise :class:`LimitExceeded` with advice when the run would be too large.

    ``slices_for_step(step)`` gives the number of slices the run would have at a uniform
    ``step`` (degrees); the advised step is one whose count passes this check. Without it
    the count is bounded by the uniform slices plus the most wall-direction and start/goal
    slices a run adds. ``keep``: local-frame points (metres) an advised window must hold (the
    run's stations, or its start and goal).
    """
    edges = plan.edge_count()
    if edges > MAX_EDGES:
        raise LimitExceeded(f"the plan has {edges:,} obstacle edges, above the limit of {MAX_EDGES:,} for one run; "
                            f"{_window_text(plan, window_budget(n_slices), keep)} (drawing units), or keep only "
                            "the plan layers (--layers)", plan.source)
    if edges * n_slices > MAX_EDGE_SLICES:
        step = advised_step_deg(edges, slices_for_step)
        if step is not None:
            advice = f"use a coarser --heading-step (e.g. {step:g}°) or crop with --window"
        else:
            advice = _window_text(plan, window_budget(n_slices), keep) + " (drawing units)"
        raise LimitExceeded(f"{edges:,} obstacle edges × {n_slices} heading slices is above the limit of "
                            f"{MAX_EDGE_SLICES:,} for one run; {advice}", plan.source)
