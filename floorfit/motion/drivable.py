"""Drivable paths for differential and car-like bases, checked against the sound slices.

The core (:mod:`floorfit.motion.route_query`) finds a *holonomic* motion: the vehicle slides and
turns freely. This module turns a query into a motion the vehicle can drive in its
mode, using the configuration-space slices of :mod:`floorfit.cspace.slices` as the collision
model (sound bound):

``differential``
    Rotations in place about the reference point and straight drives along the
    heading: the holonomic path is converted by
    :func:`floorfit.motion.rotate_and_drive` (:func:`plan_differential`).
``car``
    Straight segments and circular arcs of radius ``min_turn_radius`` at the reference
    point, forward and (if allowed) in reverse: hybrid A* with Reeds–Shepp or Dubins
    completions, :func:`floorfit.motion.plan_car_path`
    (:func:`floorfit.motion.drivable_car.plan_car`, in :mod:`floorfit.motion.drivable_car`).

Frames and units: poses here are in the plan's **local** frame, metres; the searches of
:mod:`floorfit.motion` work in radians, everything returned to callers is in degrees.

The collision checks (:class:`floorfit.motion.slice_checks.SliceMotionCheck`, sampled and sound,
and :class:`floorfit.motion.slice_checks.ExactSliceCheck`) and why they are sound are in
:mod:`floorfit.motion.slice_checks`, with what they cost in precision (:func:`drive_tolerance_m`).

Limits: the searches stop at the limits of :class:`DriveLimits`; their failure is
reported as ``"not-found-within-limits"``, never as "impossible".
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from floorfit.cspace.headings import arc_deg, wrap_deg
from floorfit.cspace.slices import SliceSet
from floorfit.errors import InputError
from floorfit.motion import (
    Segment,
    direction_changes,
    sample,
    total_length,
)
from floorfit.motion.slice_checks import ExactSliceCheck, SliceMotionCheck
from floorfit.motion.subdivision import (
    differential_steer,
    shortcut_differential,
    subdivide,
)

__all__ = [
    "FOUND",
    "NOT_FOUND",
    "DriveLimits",
    "DrivePlan",
    "drive_tolerance_m",
    "finish_plan",
    "plan_differential",
    "segment_dicts",
]

FOUND = "found"
NOT_FOUND = "not-found-within-limits"
#: Tilts (degrees) the differential two-drive manoeuvres try before those of the heading cells.
WIDE_TILTS_DEG = (45.0, 20.0, 10.0, 5.0)


@dataclass(frozen=True)
class DriveLimits:
    """Resolution and limits of the drive searches.

    Attributes
    ----------
    check_step_m, check_step_deg : float
        Sample spacing of the collision checks (m of reference-point track, degrees).
        The check margin is about half of ``check_step_m``.
    path_step_m, path_step_deg : float
        Spacing of the returned ``path`` samples (m, degrees).
    max_expansions : int
        Node expansions of the car search.
    time_limit_s : float or None
        Wall-clock limit of one car search (s).
    goal_tolerance_m, goal_tolerance_deg : float
        The car search may end this close to the goal (m, degrees); the distance left
        is reported.
    xy_resolution_m : float or None
        Cell width of the car search (m); default a quarter of the turning radius, at most
        :data:`floorfit.motion.drivable_car.DEFAULT_XY_RESOLUTION_M`.
    heading_bins : int
        Heading cells of the car search per full turn.
    max_checks : int
        Poses the sampled conversions may check.
    max_split_depth : int
        Subdivision: how often one step of the holonomic route may be halved.
    max_steering_checks : int
        Subdivision: steered pieces that may be checked.
    first_search_expansions : int
        Car with reverse: expansions the hybrid A* search gets (at most ``max_expansions``)
        before the subdivision of the holonomic route takes over (a count, not a time, so that
        answers do not depend on the machine's load).
    reverse_cost_factor : float
        Car search: cost multiplier for distance driven in reverse (≥ 1; 1 = shortest path).
    direction_change_cost_m : float or None
        Car search: cost (m) of each change of direction; default twice the turning radius
        (0 = shortest path).
    heuristic_weight : float
        Car search: the obstacle-aware 2-D distance estimate is multiplied by this (≥ 1;
        weighted A*: fewer expansions, paths up to this factor costlier than the search's best;
        the shortcut pass then removes much of the excess).
    """

    check_step_m: float = 0.02
    check_step_deg: float = 1.0
    path_step_m: float = 0.05
    path_step_deg: float = 2.0
    max_expansions: int = 30_000
    time_limit_s: float | None = 30.0
    goal_tolerance_m: float = 0.05
    goal_tolerance_deg: float = 2.0
    xy_resolution_m: float | None = None
    heading_bins: int = 72
    max_checks: int = 2_000_000
    reverse_cost_factor: float = 2.0
    direction_change_cost_m: float | None = None
    heuristic_weight: float = 1.5
    max_split_depth: int = 18
    max_steering_checks: int = 30_000
    first_search_expansions: int = 2000

    def __post_init__(self) -> None:
        for name in ("check_step_m", "check_step_deg", "path_step_m", "path_step_deg"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
                raise InputError(f"{name} must be a positive number, got {v!r}", None, name)
        if self.check_step_deg > 10.0 or self.path_step_deg > 10.0:
            raise InputError("heading steps above 10° are too coarse for motion checks", None, "step_deg")
        for name in ("goal_tolerance_m", "goal_tolerance_deg"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
                raise InputError(f"{name} must be a number ≥ 0, got {v!r}", None, name)
        if not (isinstance(self.max_expansions, int) and self.max_expansions >= 1):
            raise InputError(f"max_expansions must be a whole number ≥ 1, got {self.max_expansions!r}",
                             None, "max_expansions")
        if not (isinstance(self.heuristic_weight, (int, float)) and 1.0 <= self.heuristic_weight < math.inf):
            raise InputError(f"heuristic_weight must be a number ≥ 1, got {self.heuristic_weight!r}",
                             None, "heuristic_weight")
        if self.time_limit_s is not None and not (math.isfinite(self.time_limit_s) and self.time_limit_s > 0):
            raise InputError(f"time_limit_s must be a positive number, got {self.time_limit_s!r}",
                             None, "time_limit_s")


def drive_tolerance_m(slices: SliceSet, limits: DriveLimits, radius_m: float | None) -> float:
    """How much a returned drive path's guarantee grows the vehicle (m): the slices' own tolerance.

    Every returned path passes :class:`ExactSliceCheck`: each of its poses (and the linear
    interpolation of its samples) lies in the free space of its own heading cell, the same
    guarantee as a holonomic route of the roadmap. The sampled checks of the car search
    (:class:`SliceMotionCheck`) are stricter still; what they reject, the subdivision of the
    holonomic route (checked exactly) can still find for a vehicle that may reverse.
    ``limits`` and ``radius_m`` are accepted for compatibility; they add nothing.
    """
    return float(slices.tolerance_m)


@dataclass
class DrivePlan:
    """A drivable motion (local frame) or the reason none was found.

    ``segments`` are :class:`floorfit.motion.Segment` (poses in radians); ``samples`` the
    (N, 3) local-frame poses [x m, y m, heading deg wrapped to ±180] every
    ``path_step_m`` / ``path_step_deg``.
    """

    status: str
    segments: list[Segment] = field(default_factory=list)
    samples: np.ndarray = field(default_factory=lambda: np.zeros((0, 3)))
    reason: str = ""
    expansions: int = 0
    elapsed_s: float = 0.0
    poses_checked: int = 0
    goal_error_m: float = 0.0
    goal_error_deg: float = 0.0
    #: the limit that stopped the search (a DriveLimits field name), "" when none did
    limit: str = ""
    #: subdivision stopped by a limit: the step of the holonomic route it was following
    #: (two local poses x m, y m, heading deg)
    failed_step: tuple | None = None

    @property
    def found(self) -> bool:
        return self.status == FOUND

    @property
    def direction_changes(self) -> int:
        """Changes between forward and reverse (rotations in place ignored; three-point turn = 2)."""
        return direction_changes(self.segments)

    @property
    def length_m(self) -> float:
        """Distance travelled by the reference point (m)."""
        return total_length(self.segments)

    @property
    def rotation_deg(self) -> float:
        """Sum of the absolute heading changes of all segments (degrees)."""
        return float(sum(abs(s.angle_deg) for s in self.segments))

    def cusps(self) -> list[tuple[float, float, float]]:
        """Local poses (x m, y m, heading deg) where the direction of travel flips."""
        out = []
        last = None
        for s in self.segments:
            if s.kind == "rotate" or s.length_m <= 0:
                continue
            if last is not None and s.direction != last:
                x, y, h = s.start
                out.append((x, y, float(wrap_deg(math.degrees(h)))))
            last = s.direction
        return out


def segment_dicts(segments: list[Segment], origin=(0.0, 0.0)) -> list[dict]:
    """JSON-ready segments: type, direction, length_m, angle_deg, radius_m, start/end poses
    in the drawing frame (``origin`` added; metres, degrees)."""
    ox, oy = origin
    out = []
    for s in segments:
        out.append({
            "type": s.kind,
            "direction": s.direction,
            "length_m": round(float(s.length_m), 6),
            "angle_deg": round(float(s.angle_deg), 4),
            "radius_m": None if s.radius_m is None else round(float(s.radius_m), 6),
            "start": [round(s.start[0] + ox, 6), round(s.start[1] + oy, 6),
                      round(float(wrap_deg(math.degrees(s.start[2]))), 4)],
            "end": [round(s.end[0] + ox, 6), round(s.end[1] + oy, 6),
                    round(float(wrap_deg(math.degrees(s.end[2]))), 4)],
        })
    return out


def _samples_deg(segments: list[Segment], limits: DriveLimits, start_local_deg) -> np.ndarray:
    if not segments:
        return np.asarray([start_local_deg], dtype=float)
    pts = sample(segments, limits.path_step_m, limits.path_step_deg)
    pts[:, 2] = wrap_deg(np.degrees(pts[:, 2]))
    return pts


def finish_plan(plan: DrivePlan, check: SliceMotionCheck, limits: DriveLimits, start, goal) -> DrivePlan:
    """Fill ``plan.samples`` (every ``path_step_m`` / ``path_step_deg``) and the distance left to
    ``goal`` from ``plan.segments`` (local poses in degrees); re-check that every sample lies
    in its slice's free space."""
    plan.samples = _samples_deg(plan.segments, limits, start)
    end = plan.samples[-1]
    plan.goal_error_m = float(math.hypot(end[0] - goal[0], end[1] - goal[1]))
    plan.goal_error_deg = float(abs(arc_deg(end[2], goal[2])))
    inside = check.samples_inside(plan.samples)
    if not inside.all():           # a heading exactly on a cell boundary may be given to either cell
        rows = plan.samples[~inside]
        nudged = [check.samples_inside(rows + [0.0, 0.0, d]) for d in (-1e-7, 1e-7)]
        if not (nudged[0] | nudged[1]).all():      # cannot happen if the checks are sound
            raise RuntimeError("internal error: a drive path sample lies outside the free space")
    return plan


def cell_tilts_rad(slices: SliceSet) -> list[float]:
    """Heading tilts (radians) for the two-drive manoeuvres of a differential base: a few wide ones
    and just under the half-width of every distinct heading cell, so that a base at a slice
    heading can tilt without leaving its cell (see :mod:`floorfit.motion.subdivision`)."""
    cells = slices.cells
    half = np.minimum(cells.below, cells.above)
    own = np.unique(np.round(half[half > 1e-9] * 0.95, 9))
    wide = np.array(WIDE_TILTS_DEG)
    return [math.radians(float(d)) for d in np.unique(np.concatenate([wide, own]))[::-1]]


def _limit_reason(limit: str, detail: str) -> str:
    return f"{detail} ({limit})"


def plan_differential(slices: SliceSet, holonomic_local, *, reverse: bool,
                      limits: DriveLimits = DriveLimits(), check=None, deadline: float | None = None) -> DrivePlan:
    """Rotate-and-drive path along a holonomic path (local frame, (N, 3) [x m, y m, heading deg]).

    Subdivision of the holonomic route (from :func:`floorfit.motion.route_query.route_in_slices`)
    with rotate–drive–rotate and two-drive steering (:mod:`floorfit.motion.subdivision`),
    checked exactly against the slices (:class:`ExactSliceCheck`), then shortcut to fewer
    rotations and changes of direction. Status ``"found"`` or ``"not-found-within-limits"``
    (the reason names the limit reached: ``max_split_depth``, ``max_steering_checks`` or
    ``time_limit_s``). ``check``: an :class:`ExactSliceCheck` of these slices to share.
    """
    t0 = time.perf_counter()
    way = np.array(holonomic_local, dtype=float).reshape(-1, 3)
    start, goal = tuple(way[0]), tuple(way[-1])
    exact = check if isinstance(check, ExactSliceCheck) else ExactSliceCheck(slices, limits.path_step_m,
                                                                             limits.path_step_deg)
    if deadline is None and limits.time_limit_s is not None:
        deadline = t0 + limits.time_limit_s
    rad = way.copy()
    rad[:, 2] = np.radians(rad[:, 2])
    res = subdivide(rad, steer=differential_steer(reverse, cell_tilts_rad(slices)), free=exact.free,
                    max_depth=limits.max_split_depth, max_checks=limits.max_steering_checks, deadline=deadline)
    if res.segments is None:
        how = "forward only: " if not reverse else ""
        name = {"max_depth": "max_split_depth", "max_checks": "max_steering_checks"}.get(res.limit, res.limit)
        step = None
        if res.failed_step is not None:
            step = tuple((p[0], p[1], float(wrap_deg(math.degrees(p[2])))) for p in res.failed_step)
        return DrivePlan(NOT_FOUND, reason=f"{how}no rotate-and-drive path along the holonomic route: "
                         + _limit_reason(name, res.reason), elapsed_s=time.perf_counter() - t0,
                         limit=name, failed_step=step)
    segs = shortcut_differential(res.segments, free=exact.free, reverse=reverse, deadline=deadline)
    if not reverse and any(sg.direction == "reverse" for sg in segs):
        raise RuntimeError("internal error: a forward-only conversion drove in reverse")
    if not exact.free(segs):       # the pieces were checked; joining them may round (cannot matter)
        return DrivePlan(NOT_FOUND, reason="internal: the joined path failed the exact check",
                         elapsed_s=time.perf_counter() - t0)
    plan = DrivePlan(FOUND, segments=segs, reason="rotate-and-drive along the holonomic route (subdivision, "
                     f"{res.depth} halvings at most), shortened", elapsed_s=time.perf_counter() - t0)
    return finish_plan(plan, exact, limits, start, goal)
