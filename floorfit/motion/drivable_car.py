"""Drivable paths for car-like bases: hybrid A* with analytic shortcuts, then the subdivision fallback.

This module owns the ``car`` mode of the drive conversion (straight segments and circular arcs
of radius ``min_turn_radius`` at the reference point, forward and, if allowed, in reverse):
:func:`plan_car` (hybrid A* with Reeds–Shepp or Dubins completions,
:func:`floorfit.motion.plan_car_path`, on the 2-D heuristic of :func:`reference_grid`, then for a
car that may reverse the Reeds–Shepp subdivision of the holonomic route,
:func:`plan_car_subdivision`), both shortened by :func:`floorfit.motion.subdivision.shortcut_car`. Poses are in the
plan's local frame, metres and degrees (radians inside the searches); limits and answers are
the :class:`floorfit.motion.drivable.DriveLimits` and :class:`floorfit.motion.drivable.DrivePlan`
of :mod:`floorfit.motion.drivable`, the collision checks those of :mod:`floorfit.motion.slice_checks`.
"""

from __future__ import annotations

import itertools
import math
import time
from dataclasses import replace

import numpy as np
import shapely
from scipy import ndimage

from floorfit.cspace.headings import arc_deg
from floorfit.cspace.raster import fill_polygons
from floorfit.cspace.slices import SliceSet
from floorfit.errors import InputError
from floorfit.motion import (
    OccupancyGrid,
    Segment,
    grid_heuristic,
    plan_car_path,
)
from floorfit.motion.drivable import (
    FOUND,
    NOT_FOUND,
    DriveLimits,
    DrivePlan,
    _limit_reason,
    finish_plan,
    plan_differential,
)
from floorfit.motion.slice_checks import ExactSliceCheck, SliceMotionCheck, chord_error_m
from floorfit.motion.subdivision import (
    arcs_as_turns,
    differential_steer,
    redo,
    reeds_shepp_steer,
    shortcut_car,
    shortcut_differential,
    subdivide,
)
from floorfit.vehicles.rigid import Vehicle

__all__ = [
    "car_copy",
    "plan_car",
    "plan_car_subdivision",
    "reference_grid",
]

#: Largest default cell width of the car search, metres (else a quarter of the turning radius):
#: coarser cells miss the short moves of a multi-point turn in an aisle.
DEFAULT_XY_RESOLUTION_M = 0.25
#: The heuristic grid of the car search has at most this many cells (its cell grows on big sites).
GRID_MAX_CELLS = 250_000
#: The limits of the car searches when none are given (frozen, so one instance serves every call).
_DEFAULT_LIMITS = DriveLimits()


def plan_car_subdivision(slices: SliceSet, vehicle: Vehicle, holonomic_local, *, limits: DriveLimits = _DEFAULT_LIMITS,
                         check: ExactSliceCheck | None = None, deadline: float | None = None,
                         differential=None) -> DrivePlan:
    """Car path for a car that may reverse, complete relative to the holonomic analysis up to the limits.

    The holonomic route is first made into rotations in place and straight drives
    (:func:`plan_differential`, or ``differential(deadline) -> DrivePlan`` when given: the
    straights are car moves already); each rotation in place
    is then replaced by Reeds–Shepp pieces, splitting it in halves where they collide
    (Laumond et al. 1994: Reeds–Shepp curves have the topological property, and a short
    rotation's curves stay near its point); finally Reeds–Shepp shortcuts
    (:func:`floorfit.motion.subdivision.shortcut_car`) remove most of the manoeuvring. Status
    ``"not-found-within-limits"`` only when ``max_split_depth``, ``max_steering_checks`` or
    ``time_limit_s`` was reached (named in the reason).
    """
    t0 = time.perf_counter()
    radius = float(vehicle.min_turn_radius_m)
    way = np.array(holonomic_local, dtype=float).reshape(-1, 3)
    start, goal = tuple(way[0]), tuple(way[-1])
    exact = check or ExactSliceCheck(slices, limits.path_step_m, limits.path_step_deg)
    if differential is not None:
        diff = differential(deadline)
    else:
        diff = plan_differential(slices, way, reverse=True, limits=limits, check=exact, deadline=deadline)
    if not diff.found:
        diff.reason = diff.reason.replace("rotate-and-drive path", "path of straights and turns")
        return diff
    steer = reeds_shepp_steer(radius)
    out: list[Segment] = []
    pose = diff.segments[0].start
    depth = 0
    checks = 0             # one budget of steering checks for all the turns
    for seg in diff.segments:
        if seg.kind != "rotate":
            out.append(redo(seg, pose))
            pose = out[-1].end
            continue
        target = (pose[0], pose[1], pose[2] + math.radians(seg.angle_deg))
        res = subdivide([pose, target], steer=steer, free=exact.free, max_depth=limits.max_split_depth,
                        max_checks=limits.max_steering_checks - checks, deadline=deadline,
                        first_free=exact.first_free)
        checks += res.checks
        if res.segments is None:
            name = {"max_depth": "max_split_depth", "max_checks": "max_steering_checks"}.get(res.limit, res.limit)
            detail = res.reason if res.limit != "max_checks" else \
                f"{limits.max_steering_checks} steering checks were used for the turns"
            return DrivePlan(NOT_FOUND, reason=f"no Reeds–Shepp manoeuvre replaces the turn in place at "
                             f"({pose[0]:.2f}, {pose[1]:.2f}): " + _limit_reason(name, detail),
                             elapsed_s=time.perf_counter() - t0, limit=name)
        depth = max(depth, res.depth)
        out += res.segments
        pose = out[-1].end
    segs = shortcut_car(out, free=exact.free, maybe_free=exact.maybe_free, radius_m=radius,
                        reverse_factor=limits.reverse_cost_factor, change_cost=limits.direction_change_cost_m,
                        deadline=deadline)
    if not exact.free(segs):       # the pieces were checked; joining them may round (cannot matter)
        return DrivePlan(NOT_FOUND, reason="internal: the joined path failed the exact check",
                         elapsed_s=time.perf_counter() - t0)
    plan = DrivePlan(FOUND, segments=segs, reason=f"straights of the holonomic route with Reeds–Shepp manoeuvres "
                     f"for its turns (subdivision, {depth} halvings at most, {checks} steering checks), shortened",
                     elapsed_s=time.perf_counter() - t0)
    return finish_plan(plan, exact, limits, start, goal)


def _car_tools(slices: SliceSet, radius_m: float, limits: DriveLimits, check: ExactSliceCheck, box=None):
    """The sampled check and 2-D heuristic grid of a car of radius ``radius_m`` on these slices, as
    :func:`plan_car` would build them, kept with the shared exact check (the station pairs of one
    check then build them once). ``box`` (xmin, ymin, xmax, ymax, local m): a search kept inside it
    only needs them there (see :func:`search_box_tools`)."""
    key = ("car tools", radius_m, limits.check_step_m, limits.check_step_deg, limits.path_step_m, box)
    if key not in check.shared:
        margin = chord_error_m(radius_m, limits.path_step_m)
        if box is None:
            sampled = SliceMotionCheck(slices, limits.check_step_m, limits.check_step_deg, extra_margin_m=margin)
            check.shared[key] = (sampled, reference_grid(slices, max(0.1, radius_m / 4.0)))
        else:
            check.shared[key] = search_box_tools(slices, radius_m, limits, box)
    return check.shared[key]


#: Room (m) the sampled check of a boxed search keeps beyond the box besides its erosion margin.
BOX_CLIP_ROOM_M = 0.5


def search_box_tools(slices: SliceSet, radius_m: float, limits: DriveLimits, box):
    """The sampled check and heuristic grid of a car search kept inside ``box`` (xmin, ymin, xmax, ymax,
    local m): the free space clipped a little beyond the box (its erosion then answers as the unclipped
    one everywhere inside the box) and the grid over the box only."""
    margin = chord_error_m(radius_m, limits.path_step_m)
    room = limits.check_step_m + margin + BOX_CLIP_ROOM_M
    clip = (box[0] - room, box[1] - room, box[2] + room, box[3] + room)
    sampled = SliceMotionCheck(slices, limits.check_step_m, limits.check_step_deg, extra_margin_m=margin,
                               clip_box=clip)
    return sampled, reference_grid(slices, max(0.1, radius_m / 4.0), box=box)


def car_copy(slices: SliceSet, radius_m: float, start_local, goal_local, *, limits: DriveLimits,
             check: ExactSliceCheck, deadline: float | None = None, box=None) -> DrivePlan | None:
    """A path of turns in place and straights for a differential base that copies a car's path: hybrid
    A* for a car of radius ``radius_m`` that may reverse (within ``first_search_expansions``), its arcs
    made into chords and turns in place (:func:`floorfit.motion.subdivision.arcs_as_turns`), a last
    rotate-drive-rotate onto the goal, shortcut, checked exactly as a whole. Local poses (x m, y m,
    heading deg). None when there is none within the limits; ``samples`` are not filled. ``box``
    (xmin, ymin, xmax, ymax, local m): the car search stays inside it (a local copy)."""
    budget = None if deadline is None else deadline - time.perf_counter()
    if budget is not None and budget <= 0.05:
        return None
    car = replace(slices.vehicle, mode="car", reverse=True, min_turn_radius_m=radius_m)
    search = replace(limits, time_limit_s=budget,
                     max_expansions=min(limits.max_expansions, limits.first_search_expansions))
    sampled, grid = _car_tools(slices, radius_m, limits, check, box)
    cp = plan_car(slices, car, start_local, goal_local, limits=search, exact=check, check=sampled, grid=grid,
                  bounds=box)
    if not cp.found:
        return None
    segs = arcs_as_turns(cp.segments, free=check.free)
    if segs is None:
        return None
    end = segs[-1].end if segs else cp.segments[0].start
    goal = (goal_local[0], goal_local[1], end[2] + math.radians(float(arc_deg(math.degrees(end[2]), goal_local[2]))))
    if math.hypot(goal[0] - end[0], goal[1] - end[1]) > 1e-9 or abs(goal[2] - end[2]) > 1e-12:
        tail = next((c for c in itertools.islice(differential_steer(True, [])(end, goal), 4) if check.free(c)),
                    None)
        if tail is None:
            return None
        segs = segs + tail
    segs = shortcut_differential(segs, free=check.free, reverse=True, deadline=deadline)
    if not check.free(segs):        # its pieces were checked; joining them may round
        return None
    return DrivePlan(FOUND, segments=segs, reason="turns in place and straights along a car path of radius "
                     f"{radius_m:.2f} m (fewer direction changes than along the holonomic route)")


def reference_grid(slices: SliceSet, cell_m: float, box=None) -> OccupancyGrid:
    """Where the reference point can be at some heading (union of the slices' free space),
    on a grid of ``cell_m`` (grown until it has at most :data:`GRID_MAX_CELLS` cells), dilated by one
    cell so that narrow passages stay open. A search heuristic only (local frame). ``box`` (xmin,
    ymin, xmax, ymax, m): the grid covers only that (default the slices' domain)."""
    x0, y0, x1, y1 = slices.domain.bounds if box is None else box
    near = None if box is None else shapely.box(*box)
    cell = float(cell_m)
    while math.ceil((x1 - x0) / cell) * math.ceil((y1 - y0) / cell) > GRID_MAX_CELLS:
        cell *= 1.5
    nx = max(1, math.ceil((x1 - x0) / cell))
    ny = max(1, math.ceil((y1 - y0) / cell))
    free = np.zeros((ny, nx), dtype=bool)
    for comps in slices.components:
        if len(comps) and near is not None:
            comps = np.asarray(comps)[shapely.intersects(comps, near)]    # others add pairs of crossings only
        if len(comps):
            free |= fill_polygons(comps, x0, y0, cell, nx, ny)
    free = ndimage.binary_dilation(free, structure=np.ones((3, 3), bool))
    return OccupancyGrid(free=free, origin=(x0 + 0.5 * cell, y0 + 0.5 * cell), cell_m=cell)


def _search_limit(reason: str) -> str:
    """The DriveLimits field named in a hybrid A* reason, or "" when the search ran out of cells."""
    for name in ("max_expansions", "time_limit_s"):
        if f"({name})" in reason:
            return name
    return ""


def plan_car(slices: SliceSet, vehicle: Vehicle, start_local, goal_local, *, reverse: bool | None = None,
             limits: DriveLimits = _DEFAULT_LIMITS, grid: OccupancyGrid | None = None,
             check: SliceMotionCheck | None = None, holonomic_local=None,
             exact: ExactSliceCheck | None = None, differential=None, bounds=None) -> DrivePlan:
    """Car path (arcs at ``vehicle.min_turn_radius_m`` and straights) between local poses
    (x m, y m, heading deg).

    First hybrid A* (:func:`floorfit.motion.plan_car_path`): with reverse and a holonomic route
    ``holonomic_local`` given, for at most ``limits.first_search_expansions``; then, for a car that may
    reverse, the Reeds–Shepp subdivision of the holonomic route (:func:`plan_car_subdivision`;
    ``differential(deadline)`` may give its straights-and-turns plan, see there),
    which is complete relative to the holonomic analysis. Found paths are shortened with
    Reeds–Shepp shortcuts checked exactly (:class:`ExactSliceCheck`).

    ``reverse`` defaults to ``vehicle.reverse``; with it the completions are Reeds–Shepp
    curves, without it Dubins curves. ``grid``: the 2-D heuristic (default
    :func:`reference_grid` at a quarter of the turning radius, at least 0.1 m).
    ``check``: a :class:`SliceMotionCheck` of these slices to share between calls (its
    steps must be those of ``limits`` and its extra margin the chord error of the path);
    ``exact``: an :class:`ExactSliceCheck` to share. ``bounds`` (xmin, ymin, xmax, ymax, m): the
    hybrid A* search stays inside them (default the slices' domain).
    """
    radius = vehicle.min_turn_radius_m
    if radius is None or not radius > 0:
        raise InputError(f"vehicle '{vehicle.name}' has no min_turn_radius; a car-like vehicle needs one",
                         vehicle.source, "motion.min_turn_radius")
    rev = vehicle.reverse if reverse is None else bool(reverse)
    t0 = time.perf_counter()
    deadline = None if limits.time_limit_s is None else t0 + limits.time_limit_s
    fallback = rev and (holonomic_local is not None or differential is not None)
    search_limits = limits
    if fallback:
        search_limits = replace(limits, max_expansions=min(limits.max_expansions, limits.first_search_expansions))
    exact = exact or ExactSliceCheck(slices, limits.path_step_m, limits.path_step_deg)
    plan = _plan_car_search(slices, vehicle, start_local, goal_local, rev, search_limits, grid, check,
                            limits.time_limit_s, exact, deadline, bounds)
    if plan.found or not fallback:
        if not plan.found:
            plan.limit = _search_limit(plan.reason)
        plan.elapsed_s = time.perf_counter() - t0
        return plan
    way = holonomic_local if holonomic_local is not None else [start_local, goal_local]
    sub = plan_car_subdivision(slices, vehicle, way, limits=limits, check=exact, deadline=deadline,
                               differential=differential)
    sub.expansions = plan.expansions
    sub.poses_checked = plan.poses_checked
    searched = "hybrid A* " + (plan.reason or "found nothing")
    if _search_limit(plan.reason) == "max_expansions" and search_limits.max_expansions < limits.max_expansions:
        searched = f"hybrid A* stopped after {search_limits.max_expansions} expansions (first_search_expansions)"
    sub.reason = f"{sub.reason}; {searched}"
    sub.elapsed_s = time.perf_counter() - t0
    return sub


def _plan_car_search(slices, vehicle, start_local, goal_local, rev, limits, grid, check, time_limit_s, exact,
                     deadline, bounds=None) -> DrivePlan:
    radius = vehicle.min_turn_radius_m
    t0 = time.perf_counter()
    check = check or SliceMotionCheck(slices, limits.check_step_m, limits.check_step_deg,
                                      extra_margin_m=chord_error_m(radius, limits.path_step_m))
    if check.margin_m < 0.5 * limits.check_step_m + chord_error_m(radius, limits.path_step_m):
        raise ValueError("the shared check's margin is smaller than these limits need")
    before = check.poses_checked
    if grid is None:
        grid = reference_grid(slices, max(0.1, radius / 4.0))
    s = (float(start_local[0]), float(start_local[1]), math.radians(float(start_local[2])))
    g = (float(goal_local[0]), float(goal_local[1]), math.radians(float(goal_local[2])))
    res = limits.xy_resolution_m if limits.xy_resolution_m is not None else min(radius / 4.0, DEFAULT_XY_RESOLUTION_M)
    # primitives must be much longer than the check spacing (see SliceMotionCheck.windows)
    res = max(res, 4.0 * limits.check_step_m)
    grid_h = grid_heuristic(grid, g[:2])
    weight = float(limits.heuristic_weight)
    result = plan_car_path(s, g, min_turn_radius=radius, reverse=rev, is_free=check.is_free,
                           bounds=slices.domain.bounds if bounds is None else bounds,
                           goal_tolerance=(limits.goal_tolerance_m, math.radians(limits.goal_tolerance_deg)),
                           xy_resolution=res, heading_bins=limits.heading_bins,
                           max_expansions=limits.max_expansions, time_limit_s=time_limit_s,
                           heuristic_grid=lambda xy: weight * grid_h(xy), step_m=limits.check_step_m,
                           step_deg=limits.check_step_deg, reverse_cost_factor=limits.reverse_cost_factor,
                           direction_change_cost_m=limits.direction_change_cost_m)
    plan = DrivePlan(FOUND if result.status == "found" else NOT_FOUND, segments=list(result.segments),
                     reason=result.reason, expansions=result.expansions,
                     elapsed_s=time.perf_counter() - t0, poses_checked=check.poses_checked - before)
    if not plan.found:
        return plan
    segs = shortcut_car(plan.segments, free=exact.free, maybe_free=exact.maybe_free, radius_m=radius, reverse=rev,
                        reverse_factor=limits.reverse_cost_factor, change_cost=limits.direction_change_cost_m,
                        deadline=deadline)
    if not exact.free(segs):       # the sampled checks are sound, so this does not happen
        return DrivePlan(NOT_FOUND, reason="internal: a searched path failed the exact check",
                         expansions=result.expansions, elapsed_s=time.perf_counter() - t0)
    plan.segments = segs
    plan.elapsed_s = time.perf_counter() - t0
    plan.poses_checked = check.poses_checked - before
    return finish_plan(plan, check, limits, start_local, goal_local)
