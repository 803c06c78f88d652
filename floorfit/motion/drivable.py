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
    completions, :func:`floorfit.motion.plan_car_path` (:func:`plan_car`).

Frames and units: poses here are in the plan's **local** frame, metres; the searches of
:mod:`floorfit.motion` work in radians, everything returned to callers is in degrees.

Why the sampled checks are sound (:class:`SliceMotionCheck`)
-----------------------------------------------------------
A point of slice k's free space F_k is clear for every heading of cell k. The searches
hand over poses sampled along each motion at most ``s`` metres (track of the reference
point) and ``d`` degrees apart. A pose is accepted when its position lies in F_k at a
distance of at least ``δ = s/2 + σ`` from the boundary of F_k, for **every** cell k
that meets a window of headings around its own: the half-way headings towards its
neighbouring samples, or ``±d/2`` where the neighbour is not in the same batch. Along
straights, arcs and rotations the heading is linear in the travelled distance, so every
pose between two samples lies within ``s/2`` (position) of the nearer sample and within
its heading window; it is therefore in F_k of its own cell with ``σ`` to spare. ``σ``
bounds how far a chord between two output samples ``path_step_m`` apart leaves the arc
(``l²/8R + l³/6R²``, R the turning radius; 0 for differential bases), so the linear
interpolation of the returned samples is collision-free as well as the true motion.

What the checks cost in precision (:func:`drive_tolerance_m`): the slice's own growth,
the rotation to a slice heading up to ``max_cell_turn + d/2`` away, and ``δ``; answers err
towards "not found", never towards "fits".

Limits: the searches stop at the limits of :class:`DriveLimits`; their failure is
reported as ``"not-found-within-limits"``, never as "impossible".
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
import shapely
from scipy import ndimage

from floorfit.cspace.slices import SliceSet
from floorfit.errors import InputError
from floorfit.cspace.headings import arc_deg, rotation_displacement_m, wrap_deg
from floorfit.motion import (
    OccupancyGrid,
    Segment,
    direction_changes,
    dubins_words,
    grid_heuristic,
    merge_segments,
    plan_car_path,
    reeds_shepp_words,
    rotate_and_drive,
    sample,
    total_length,
)
from floorfit.motion._words import word_segments
from floorfit.cspace.raster import fill_polygons
from floorfit.vehicles.rigid import Vehicle

__all__ = [
    "FOUND",
    "NOT_FOUND",
    "DriveLimits",
    "DrivePlan",
    "SliceMotionCheck",
    "chord_error_m",
    "drive_tolerance_m",
    "finish_plan",
    "plan_car",
    "plan_differential",
    "reference_grid",
    "segment_dicts",
    "shortcut_car_path",
]

FOUND = "found"
NOT_FOUND = "not-found-within-limits"
#: Shortcuts tried per pair of path poses (the best Reeds–Shepp / Dubins words).
SHORTCUT_WORDS = 3
#: A car path longer than this many segments is not shortcut (the pass is quadratic).
SHORTCUT_MAX_SEGMENTS = 40
#: Largest default cell width of the car search, metres (else a quarter of the turning radius):
#: coarser cells miss the short moves of a multi-point turn in an aisle.
DEFAULT_XY_RESOLUTION_M = 0.25
#: The heuristic grid of the car search has at most this many cells (its cell grows on big sites).
GRID_MAX_CELLS = 250_000


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
        :data:`DEFAULT_XY_RESOLUTION_M`.
    heading_bins : int
        Heading cells of the car search per full turn.
    max_checks : int
        Poses the differential conversion may check.
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


def chord_error_m(radius_m: float | None, step_m: float) -> float:
    """How far the chord between two samples ``step_m`` apart on an arc of ``radius_m`` can lie
    from the true pose at the same fraction of the way (m); 0 for straight-only paths.

    Leading terms of the difference of chord and arc point at fraction t, bounded over t:
    radial ``l²/8R`` (the sagitta) plus tangential ``l³/6R²``.
    """
    if radius_m is None:
        return 0.0
    r = float(radius_m)
    return step_m ** 2 / (8.0 * r) + step_m ** 3 / (6.0 * r * r)


def drive_tolerance_m(slices: SliceSet, limits: DriveLimits, radius_m: float | None) -> float:
    """Largest amount (m) by which the drive checks may have grown the vehicle (errs towards "not found").

    A pose at heading h is checked in the slice of every cell within ``check_step_deg/2`` of h,
    whose heading lies up to ``max_turn + check_step_deg/2`` from h: the footprint turned that
    far moves by at most ``2ρ·sin(Δ/2)``; each slice's own footprint is grown by at most
    ``slices.tolerance_m``; and positions keep the check margin of :class:`SliceMotionCheck`
    (half the check step plus the chord error of the path samples) from the slice boundary.
    A motion whose footprint grown by this much stays clear of the obstacles passes the checks.
    """
    turn = float(np.max(slices.cells.max_turn)) + limits.check_step_deg / 2.0
    margin = (0.5 * limits.check_step_m + chord_error_m(radius_m, limits.path_step_m) + 1e-9) \
        / math.cos(math.pi / (4 * SliceMotionCheck._QUAD_SEGS))
    return float(slices.tolerance_m) + rotation_displacement_m(slices.vehicle.radius_m, turn) + margin


class SliceMotionCheck:
    """Sound collision test of sampled motions against sound slices (local frame).

    ``is_free`` is the callback for :mod:`floorfit.motion` (poses in radians); see the
    module docstring for why a motion whose samples pass is collision-free.

    Implementation: each slice's free space is eroded by the margin (round joins, the
    erosion distance raised so that the flattened arcs stay outside the true erosion) and
    blocks of :data:`BLOCK` consecutive slices are laid side by side (shifted along x) in one
    STRtree, so that a batch of poses needs one query per block of headings it touches.
    Blocks are built on first use. One instance may serve many searches on the same slices.

    Parameters
    ----------
    slices : SliceSet
        Sound slices (``bound == "sound"``).
    step_m, step_deg : float
        Largest spacing of the samples that will be checked (m, degrees).
    extra_margin_m : float
        Added to the position margin ``step_m / 2`` (the chord error of the output path).
    """

    #: Slices per stacked block.
    BLOCK = 48
    _QUAD_SEGS = 8

    def __init__(self, slices: SliceSet, step_m: float, step_deg: float, extra_margin_m: float = 0.0):
        if slices.bound != "sound":
            raise ValueError("drive checks need sound slices")
        self.slices = slices
        self.step_m = float(step_m)
        self.step_deg = float(step_deg)
        self.margin_m = 0.5 * self.step_m + float(extra_margin_m) + 1e-9
        # erosion distance: a chord of the flattened round join lies within e·cos(π/4q) of the vertex
        self._erode = self.margin_m / math.cos(math.pi / (4 * self._QUAD_SEGS))
        cells = slices.cells
        self._starts = cells.headings - cells.below          # cell lower ends, ascending
        x0, _, x1, _ = slices.domain.bounds
        self._shift = (x1 - x0) + 10.0
        self._blocks: dict[int, tuple | None] = {}
        self.poses_checked = 0

    # --- cells -------------------------------------------------------------------------
    def _cell_of(self, h_deg: np.ndarray) -> np.ndarray:
        s0 = self._starts[0]
        y = np.mod(h_deg - s0, 360.0) + s0
        idx = np.searchsorted(self._starts, y, side="right") - 1
        return np.clip(idx, 0, len(self._starts) - 1)

    def _block(self, b: int):
        """Stacked tree and prepared eroded free space of slices [b·BLOCK, (b+1)·BLOCK)."""
        if b not in self._blocks:
            parts = []
            for k in range(b * self.BLOCK, min((b + 1) * self.BLOCK, len(self.slices))):
                comps = self.slices.components[k]
                if not len(comps):
                    continue
                eroded = shapely.buffer(comps, -self._erode, quad_segs=self._QUAD_SEGS)
                eroded = shapely.get_parts(eroded[~shapely.is_empty(eroded)])
                if len(eroded):
                    dx = (k - b * self.BLOCK) * self._shift
                    parts.append(shapely.transform(eroded, lambda c, dx=dx: c + np.array([dx, 0.0])))
            if parts:
                geoms = np.concatenate(parts)
                shapely.prepare(geoms)
                self._blocks[b] = (shapely.STRtree(geoms), geoms)
            else:
                self._blocks[b] = None
        return self._blocks[b]

    def free_in_windows(self, poses_deg, lo_deg, hi_deg) -> np.ndarray:
        """True where each pose's position lies at least ``margin_m`` inside the free space of
        every cell meeting the heading window [h + lo, h + hi] (degrees, lo ≤ 0 ≤ hi)."""
        p = np.asarray(poses_deg, dtype=float).reshape(-1, 3)
        n = len(self._starts)
        ia = self._cell_of(p[:, 2] + np.asarray(lo_deg, dtype=float))
        ib = self._cell_of(p[:, 2] + np.asarray(hi_deg, dtype=float))
        count = np.mod(ib - ia, n) + 1
        rows = np.repeat(np.arange(len(p)), count)
        offs = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
        ks = np.mod(np.repeat(ia, count) + offs, n)
        blocks = ks // self.BLOCK
        ok = np.zeros(len(rows), dtype=bool)
        for b in np.unique(blocks):
            block = self._block(int(b))
            if block is None:
                continue
            tree, geoms = block
            sel = np.flatnonzero(blocks == b)
            xs = p[rows[sel], 0] + (ks[sel] - b * self.BLOCK) * self._shift
            ys = p[rows[sel], 1]
            # candidates by bounding box, then the prepared point-in-polygon test
            i_pt, i_geom = tree.query(shapely.points(xs, ys))
            inside = shapely.intersects_xy(geoms[i_geom], xs[i_pt], ys[i_pt])
            ok[sel[i_pt[inside]]] = True
        out = np.ones(len(p), dtype=bool)
        np.logical_and.at(out, rows, ok)
        self.poses_checked += len(p)
        return out

    # --- batches from floorfit.motion ---------------------------------------------------
    def windows(self, poses_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Heading windows (lo, hi) in degrees for consecutive samples of one batch.

        Neighbours closer than the sample spacing are taken to be the same motion
        (half-way headings towards them); a side without such a neighbour gets ±step/2.
        """
        p = np.asarray(poses_deg, dtype=float).reshape(-1, 3)
        n = len(p)
        lo = np.zeros(n)
        hi = np.zeros(n)
        if n == 0:
            return lo, hi
        half = 0.5 * self.step_deg
        dxy = np.hypot(np.diff(p[:, 0]), np.diff(p[:, 1]))
        dh = arc_deg(p[:-1, 2], p[1:, 2]) if n > 1 else np.zeros(0)
        pair = (dxy <= self.step_m * (1 + 1e-9) + 1e-12) & (np.abs(dh) <= self.step_deg * (1 + 1e-9) + 1e-12)
        right = np.zeros(n, dtype=bool)
        left = np.zeros(n, dtype=bool)
        right[:-1] = pair
        left[1:] = pair
        d_next = np.zeros(n)
        d_prev = np.zeros(n)
        d_next[:-1] = dh
        d_prev[1:] = dh
        lo = np.where(right, np.minimum(lo, 0.5 * d_next), -half)
        hi = np.where(right, np.maximum(hi, 0.5 * d_next), half)
        lo = np.where(left, np.minimum(lo, -0.5 * d_prev), np.minimum(lo, -half))
        hi = np.where(left, np.maximum(hi, -0.5 * d_prev), np.maximum(hi, half))
        return lo, hi

    def is_free(self, poses_rad) -> np.ndarray:
        """Callback for :mod:`floorfit.motion`: (N, 3) local poses (x m, y m, heading rad)."""
        p = np.array(poses_rad, dtype=float).reshape(-1, 3)
        p[:, 2] = np.degrees(p[:, 2])
        lo, hi = self.windows(p)
        return self.free_in_windows(p, lo, hi)

    def samples_inside(self, poses_deg) -> np.ndarray:
        """True where each pose lies in its own slice's free space (no margin): a consistency check."""
        return self.slices.are_free(poses_deg)


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


def plan_differential(slices: SliceSet, holonomic_local, *, reverse: bool,
                      limits: DriveLimits = DriveLimits(), check: SliceMotionCheck | None = None) -> DrivePlan:
    """Rotate-and-drive path along a holonomic path (local frame, (N, 3) [x m, y m, heading deg]).

    The holonomic path (from :func:`floorfit.motion.route_query.route_in_slices`) is converted by
    :func:`floorfit.motion.rotate_and_drive`: rotations only where the checks find the
    rotation free, hops to the farthest waypoint first (few rotations). Status
    ``"found"`` or ``"not-found-within-limits"``. ``check``: a :class:`SliceMotionCheck`
    of these slices to share between calls (default: a new one for ``limits``).
    """
    t0 = time.perf_counter()
    way = np.array(holonomic_local, dtype=float).reshape(-1, 3)
    start, goal = tuple(way[0]), tuple(way[-1])
    check = check or SliceMotionCheck(slices, limits.check_step_m, limits.check_step_deg)
    before = check.poses_checked
    rad = way.copy()
    rad[:, 2] = np.radians(rad[:, 2])
    segs = rotate_and_drive(rad, reverse=reverse, is_free=check.is_free, step_m=limits.check_step_m,
                            step_deg=limits.check_step_deg, max_checks=limits.max_checks)
    if segs is not None and not reverse and any(sg.direction == "reverse" for sg in segs):
        raise RuntimeError("internal error: a forward-only conversion drove in reverse")
    if segs is None:
        how = "forward only, " if not reverse else ""
        return DrivePlan(NOT_FOUND, reason=f"no rotate-and-drive path ({how}following the holonomic route) "
                         f"was found within the limits", elapsed_s=time.perf_counter() - t0,
                         poses_checked=check.poses_checked - before)
    plan = DrivePlan(FOUND, segments=segs, reason="rotate-and-drive along the holonomic route",
                     elapsed_s=time.perf_counter() - t0, poses_checked=check.poses_checked - before)
    return finish_plan(plan, check, limits, start, goal)


def reference_grid(slices: SliceSet, cell_m: float) -> OccupancyGrid:
    """Where the reference point can be at some heading (union of the slices' free space),
    on a grid of ``cell_m`` (grown until it has at most :data:`GRID_MAX_CELLS` cells), dilated by one
    cell so that narrow passages stay open. A search heuristic only (local frame)."""
    x0, y0, x1, y1 = slices.domain.bounds
    cell = float(cell_m)
    while math.ceil((x1 - x0) / cell) * math.ceil((y1 - y0) / cell) > GRID_MAX_CELLS:
        cell *= 1.5
    nx = max(1, math.ceil((x1 - x0) / cell))
    ny = max(1, math.ceil((y1 - y0) / cell))
    free = np.zeros((ny, nx), dtype=bool)
    for comps in slices.components:
        if len(comps):
            free |= fill_polygons(comps, x0, y0, cell, nx, ny)
    free = ndimage.binary_dilation(free, structure=np.ones((3, 3), bool))
    return OccupancyGrid(free=free, origin=(x0 + 0.5 * cell, y0 + 0.5 * cell), cell_m=cell)


def _path_cost(segments, reverse_factor: float, change_cost: float) -> float:
    """The car search's cost (m): length, reverse distance times ``reverse_factor``, plus
    ``change_cost`` per change of direction."""
    length = sum(sg.length_m * (reverse_factor if sg.direction == "reverse" else 1.0) for sg in segments)
    return length + change_cost * direction_changes(segments)


def shortcut_car_path(segments: list[Segment], *, radius_m: float, reverse: bool, check: SliceMotionCheck,
                      step_m: float, step_deg: float, reverse_cost_factor: float = 2.0,
                      direction_change_cost_m: float | None = None) -> list[Segment]:
    """Improve a car path by replacing runs of segments with analytic curves (local frame, radians).

    From each segment boundary, the farthest later boundary that one of the
    :data:`SHORTCUT_WORDS` cheapest Reeds–Shepp (``reverse``) or Dubins curves reaches at a
    lower cost than the run it replaces (the search's cost: length, reverse distance times
    ``reverse_cost_factor``, ``direction_change_cost_m`` per change of direction, default
    twice the radius) replaces that run when its samples pass ``check``. The search grid
    leaves zig-zags and needless cusps; every replacement is checked like the search's
    own moves, so the collision guarantee holds.
    """
    segs = merge_segments(segments)
    if len(segs) < 2 or len(segs) > SHORTCUT_MAX_SEGMENTS:
        return segs
    change = 2.0 * radius_m if direction_change_cost_m is None else float(direction_change_cost_m)
    cost = lambda run: _path_cost(run, reverse_cost_factor, change)
    words_of = reeds_shepp_words if reverse else dubins_words
    poses = [segs[0].start] + [sg.end for sg in segs]
    n = len(segs)
    out: list[Segment] = []
    i = 0
    while i < n:
        done = False
        for j in range(n, i + 1, -1):
            old = cost(segs[i:j])
            cands = []
            for word in words_of(poses[i], poses[j], radius_m):
                new = word_segments(poses[i], word, radius_m)
                c = cost(new)
                if new and c < old - 1e-9:
                    cands.append((c, new))
            for _, new in sorted(cands, key=lambda item: item[0])[:SHORTCUT_WORDS]:
                end = new[-1].end
                if math.hypot(end[0] - poses[j][0], end[1] - poses[j][1]) > 1e-6 or \
                        abs(float(wrap_deg(math.degrees(end[2] - poses[j][2])))) > 1e-6:
                    continue
                if bool(check.is_free(sample(new, step_m, step_deg)).all()):
                    out.extend(new)
                    i, done = j, True
                    break
            if done:
                break
        if not done:
            out.append(segs[i])
            i += 1
    return merge_segments(out)


def plan_car(slices: SliceSet, vehicle: Vehicle, start_local, goal_local, *, reverse: bool | None = None,
             limits: DriveLimits = DriveLimits(), grid: OccupancyGrid | None = None,
             check: SliceMotionCheck | None = None) -> DrivePlan:
    """Car path (arcs at ``vehicle.min_turn_radius_m`` and straights) between local poses
    (x m, y m, heading deg) by hybrid A* (:func:`floorfit.motion.plan_car_path`).

    ``reverse`` defaults to ``vehicle.reverse``; with it the completions are Reeds–Shepp
    curves, without it Dubins curves. ``grid``: the 2-D heuristic (default
    :func:`reference_grid` at a quarter of the turning radius, at least 0.1 m).
    ``check``: a :class:`SliceMotionCheck` of these slices to share between calls (its
    steps must be those of ``limits`` and its extra margin the chord error of the path).
    """
    radius = vehicle.min_turn_radius_m
    if radius is None or not radius > 0:
        raise InputError(f"vehicle '{vehicle.name}' has no min_turn_radius; a car-like vehicle needs one",
                         vehicle.source, "motion.min_turn_radius")
    rev = vehicle.reverse if reverse is None else bool(reverse)
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
                           bounds=slices.domain.bounds,
                           goal_tolerance=(limits.goal_tolerance_m, math.radians(limits.goal_tolerance_deg)),
                           xy_resolution=res, heading_bins=limits.heading_bins,
                           max_expansions=limits.max_expansions, time_limit_s=limits.time_limit_s,
                           heuristic_grid=lambda xy: weight * grid_h(xy), step_m=limits.check_step_m, step_deg=limits.check_step_deg,
                           reverse_cost_factor=limits.reverse_cost_factor,
                           direction_change_cost_m=limits.direction_change_cost_m)
    plan = DrivePlan(FOUND if result.status == "found" else NOT_FOUND, segments=list(result.segments),
                     reason=result.reason, expansions=result.expansions,
                     elapsed_s=time.perf_counter() - t0, poses_checked=check.poses_checked - before)
    if not plan.found:
        return plan
    plan.segments = shortcut_car_path(plan.segments, radius_m=radius, reverse=rev, check=check,
                                      step_m=limits.check_step_m, step_deg=limits.check_step_deg,
                                      reverse_cost_factor=limits.reverse_cost_factor,
                                      direction_change_cost_m=limits.direction_change_cost_m)
    plan.elapsed_s = time.perf_counter() - t0
    plan.poses_checked = check.poses_checked - before
    return finish_plan(plan, check, limits, start_local, goal_local)
