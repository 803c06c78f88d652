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
from dataclasses import dataclass, field, replace

import numpy as np
import shapely
from scipy import ndimage

from floorfit.cspace.headings import arc_deg, wrap_deg
from floorfit.cspace.raster import fill_polygons
from floorfit.cspace.slices import SliceSet
from floorfit.errors import InputError
from floorfit.motion import (
    OccupancyGrid,
    Segment,
    direction_changes,
    dubins_words,
    grid_heuristic,
    merge_segments,
    plan_car_path,
    reeds_shepp_words,
    sample,
    total_length,
)
from floorfit.motion._words import word_segments
from floorfit.motion.subdivision import (
    differential_steer,
    redo,
    reeds_shepp_steer,
    shortcut_car,
    shortcut_differential,
    subdivide,
)
from floorfit.vehicles.rigid import Vehicle

__all__ = [
    "FOUND",
    "NOT_FOUND",
    "DriveLimits",
    "DrivePlan",
    "ExactSliceCheck",
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
        :data:`DEFAULT_XY_RESOLUTION_M`.
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
    """How much a returned drive path's guarantee grows the vehicle (m): the slices' own tolerance.

    Every returned path passes :class:`ExactSliceCheck`: each of its poses (and the linear
    interpolation of its samples) lies in the free space of its own heading cell, the same
    guarantee as a holonomic route of the roadmap. The sampled checks of the car search
    (:class:`SliceMotionCheck`) are stricter still; what they reject, the subdivision of the
    holonomic route (checked exactly) can still find for a vehicle that may reverse.
    ``limits`` and ``radius_m`` are accepted for compatibility; they add nothing.
    """
    return float(slices.tolerance_m)


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


class ExactSliceCheck:
    """Exact test of drive segments against sound slices (local frame; segment poses in radians).

    A motion is accepted when every pose of it lies in the free space of its own heading
    cell, the same guarantee as the holonomic roadmap's, so it adds nothing to the slices'
    tolerance:

    - a rotation in place: its position lies in the free space of every cell that meets
      the headings it sweeps (point in polygon);
    - a straight drive: the segment is covered by a free-space component of its heading's cell;
    - an arc: it is split at the cell boundaries and at the output samples (every
      ``path_step_m`` / ``path_step_deg``, as :func:`floorfit.motion.sample` places them); each
      piece must be covered by a free-space component of its cell as a polygon that contains
      both the arc piece (between its chord and its two tangents) and the chord between the
      output samples, so the linear interpolation of the returned samples is clear too.

    ``free(segments) -> bool`` is the callback of :mod:`floorfit.motion.subdivision`.
    """

    def __init__(self, slices: SliceSet, path_step_m: float = 0.05, path_step_deg: float = 2.0):
        if slices.bound != "sound":
            raise ValueError("drive checks need sound slices")
        self.slices = slices
        self.path_step_m = float(path_step_m)
        self.path_step_deg = float(path_step_deg)
        cells = slices.cells
        self._starts = cells.headings - cells.below
        self._prepared: set[int] = set()
        self.checks = 0

    def _cell_of(self, h_deg) -> np.ndarray:
        s0 = self._starts[0]
        y = np.mod(np.asarray(h_deg, dtype=float) - s0, 360.0) + s0
        idx = np.searchsorted(self._starts, y, side="right") - 1
        return np.clip(idx, 0, len(self._starts) - 1)

    def _comps(self, k: int):
        comps = self.slices.components[k]
        if k not in self._prepared:
            shapely.prepare(comps)
            self._prepared.add(k)
        return comps

    def _covered(self, k: int, geoms) -> bool:
        """Every geometry of ``geoms`` covered by some free-space component of slice ``k``."""
        geoms = np.atleast_1d(np.asarray(geoms, dtype=object))
        comps = self._comps(k)
        if not len(comps):
            return False
        i_g, i_c = self.slices.tree(k).query(geoms)
        ok = np.zeros(len(geoms), dtype=bool)
        if len(i_g):
            hit = shapely.covers(comps[i_c], geoms[i_g])
            ok[i_g[hit]] = True
        return bool(ok.all())

    def rotation_free(self, x: float, y: float, h0_deg: float, dh_deg: float) -> bool:
        n = len(self._starts)
        if abs(dh_deg) >= 360.0 - 1e-9:
            ks = np.arange(n)
        else:
            lo, hi = (h0_deg, h0_deg + dh_deg) if dh_deg >= 0 else (h0_deg + dh_deg, h0_deg)
            ia, ib = int(self._cell_of(lo)), int(self._cell_of(hi))
            ks = np.mod(ia + np.arange(int(np.mod(ib - ia, n)) + 1), n)
        pt = shapely.points(x, y)
        for k in ks:
            comps = self._comps(int(k))
            if not len(comps):
                return False
            idx = self.slices.tree(int(k)).query(pt)
            if not len(idx) or not shapely.intersects_xy(comps[idx], x, y).any():
                return False
        return True

    def _arc_pieces(self, seg: Segment) -> list[tuple[int, object]]:
        """(cell, polygon) pieces covering an arc and the chords between its output samples."""
        from floorfit.motion.segments import poses_along
        n = max(1, math.ceil(seg.length_m / self.path_step_m - 1e-9),
                math.ceil(abs(seg.angle_deg) / self.path_step_deg - 1e-9))
        h0 = math.degrees(seg.start[2])
        dh = seg.angle_deg
        # fractions where the heading crosses a cell boundary
        lo, hi = sorted((h0, h0 + dh))
        bounds = []
        for s0 in self._starts:
            for m in range(math.floor((lo - s0) / 360.0), math.ceil((hi - s0) / 360.0) + 1):
                b = s0 + 360.0 * m
                if lo < b < hi:
                    bounds.append((b - h0) / dh)
        cuts = np.unique(np.concatenate([np.arange(n + 1) / n, np.asarray(bounds, dtype=float)]))
        cuts = cuts[(cuts >= 0) & (cuts <= 1)]
        pts = poses_along(seg, cuts)
        k_of = self._cell_of(np.degrees(poses_along(seg, 0.5 * (cuts[:-1] + cuts[1:]))[:, 2]))
        sample_t = np.arange(n + 1) / n
        samples = poses_along(seg, sample_t)
        sign = seg.steer * seg.radius_m
        x0, y0, hs = seg.start
        cx, cy = x0 - sign * math.sin(hs), y0 + sign * math.cos(hs)
        out = []
        for i in range(len(cuts) - 1):
            ta, tb = cuts[i], cuts[i + 1]
            j = min(int(np.searchsorted(sample_t, ta, side="right")) - 1, n - 1)
            t_s, t_e = sample_t[j], sample_t[j + 1]
            pa, pb = samples[j, :2], samples[j + 1, :2]
            ca = pa + (pb - pa) * (ta - t_s) / (t_e - t_s)      # chord points at the same fractions
            cb = pa + (pb - pa) * (tb - t_s) / (t_e - t_s)
            A, B = pts[i, :2], pts[i + 1, :2]
            half = 0.5 * abs(math.radians(dh) * (tb - ta))
            corners = [ca, cb, B, A]
            if half >= 1e-9:      # the tangents at A and B meet at T, outside the arc
                mid = 0.5 * (A + B)
                v = mid - np.array([cx, cy])
                norm = float(np.hypot(*v))
                if norm > 0:
                    corners.append(np.array([cx, cy]) + v / norm * (seg.radius_m / math.cos(half)))
            # the convex hull contains the arc piece and the chord piece (a polygon, a line or a point)
            geom = shapely.convex_hull(shapely.multipoints(np.asarray(corners)))
            out.append((int(k_of[i]), geom))
        return out

    def segment_free(self, seg: Segment) -> bool:
        x, y, h = seg.start
        h_deg = math.degrees(h)
        if seg.kind == "rotate":
            return self.rotation_free(x, y, h_deg, seg.angle_deg)
        if seg.kind == "straight":
            k = int(self._cell_of(h_deg))
            if seg.length_m <= 1e-12:
                return self.rotation_free(x, y, h_deg, 0.0)
            return self._covered(k, shapely.linestrings([seg.start[:2], seg.end[:2]]))
        by_cell: dict[int, list] = {}
        for k, g in self._arc_pieces(seg):
            by_cell.setdefault(k, []).append(g)
        return all(self._covered(k, gs) for k, gs in by_cell.items())

    def free(self, segments) -> bool:
        """True when every segment (poses in radians, local frame) is clear."""
        self.checks += 1
        return all(self.segment_free(s) for s in segments)

    def samples_inside(self, poses_deg) -> np.ndarray:
        """True where each pose lies in its own slice's free space: a consistency check."""
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
    plan = DrivePlan(FOUND, segments=segs, reason="rotate-and-drive along the holonomic route (subdivision, "
                     f"{res.depth} halvings at most), shortened", elapsed_s=time.perf_counter() - t0)
    return finish_plan(plan, exact, limits, start, goal)


def plan_car_subdivision(slices: SliceSet, vehicle: Vehicle, holonomic_local, *, limits: DriveLimits = DriveLimits(),
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
    for seg in diff.segments:
        if seg.kind != "rotate":
            out.append(redo(seg, pose))
            pose = out[-1].end
            continue
        target = (pose[0], pose[1], pose[2] + math.radians(seg.angle_deg))
        res = subdivide([pose, target], steer=steer, free=exact.free, max_depth=limits.max_split_depth,
                        max_checks=limits.max_steering_checks, deadline=deadline)
        if res.segments is None:
            name = {"max_depth": "max_split_depth", "max_checks": "max_steering_checks"}.get(res.limit, res.limit)
            return DrivePlan(NOT_FOUND, reason=f"no Reeds–Shepp manoeuvre replaces the turn in place at "
                             f"({pose[0]:.2f}, {pose[1]:.2f}): " + _limit_reason(name, res.reason),
                             elapsed_s=time.perf_counter() - t0, limit=name)
        depth = max(depth, res.depth)
        out += res.segments
        pose = out[-1].end
    segs = shortcut_car(out, free=exact.free, radius_m=radius, reverse_factor=limits.reverse_cost_factor,
                        change_cost=limits.direction_change_cost_m, deadline=deadline)
    plan = DrivePlan(FOUND, segments=segs, reason=f"straights of the holonomic route with Reeds–Shepp manoeuvres "
                     f"for its turns (subdivision, {depth} halvings at most), shortened",
                     elapsed_s=time.perf_counter() - t0)
    return finish_plan(plan, exact, limits, start, goal)


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

    def cost(run):
        return _path_cost(run, reverse_cost_factor, change)

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


def _search_limit(reason: str) -> str:
    """The DriveLimits field named in a hybrid A* reason, or "" when the search ran out of cells."""
    for name in ("max_expansions", "time_limit_s"):
        if f"({name})" in reason:
            return name
    return ""


def plan_car(slices: SliceSet, vehicle: Vehicle, start_local, goal_local, *, reverse: bool | None = None,
             limits: DriveLimits = DriveLimits(), grid: OccupancyGrid | None = None,
             check: SliceMotionCheck | None = None, holonomic_local=None,
             exact: ExactSliceCheck | None = None, differential=None) -> DrivePlan:
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
    ``exact``: an :class:`ExactSliceCheck` to share.
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
                            limits.time_limit_s, exact, deadline)
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
                     deadline) -> DrivePlan:
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
                           bounds=slices.domain.bounds,
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
    segs = plan.segments
    if rev:
        segs = shortcut_car(segs, free=exact.free, radius_m=radius, reverse_factor=limits.reverse_cost_factor,
                            change_cost=limits.direction_change_cost_m, deadline=deadline)
    else:
        segs = shortcut_car_path(segs, radius_m=radius, reverse=rev, check=check,
                                 step_m=limits.check_step_m, step_deg=limits.check_step_deg,
                                 reverse_cost_factor=limits.reverse_cost_factor,
                                 direction_change_cost_m=limits.direction_change_cost_m)
    if not exact.free(segs):       # the sampled checks are sound, so this does not happen
        return DrivePlan(NOT_FOUND, reason="internal: a searched path failed the exact check",
                         expansions=result.expansions, elapsed_s=time.perf_counter() - t0)
    plan.segments = segs
    plan.elapsed_s = time.perf_counter() - t0
    plan.poses_checked = check.poses_checked - before
    return finish_plan(plan, check, limits, start_local, goal_local)
