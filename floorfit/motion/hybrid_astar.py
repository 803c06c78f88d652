"""Hybrid A* search for car-like vehicles (forward only, or forward and reverse).

D. Dolgov, S. Thrun, M. Montemerlo, J. Diebel, "Path planning for autonomous
vehicles in unknown semi-structured environments", IJRR 29(5), 2010.

The search runs over cells of (x, y, heading). Each expansion drives the
continuous pose of a node along short motion primitives (left arc, straight, right
arc at the minimum turning radius, forward and, if allowed, in reverse), keeps at
most one node per cell (the cheapest), and orders nodes by cost plus a heuristic:
the larger of the obstacle-free Reeds-Shepp (or Dubins) length and an optional
two-dimensional obstacle-aware distance. From time to time, and more often near
the goal, it tries to finish with an analytic Reeds-Shepp (or Dubins) path.

Soundness: every primitive and every analytic path is sampled with
:func:`floorfit.motion.sampling.sample` at ``step_m`` / ``step_deg`` and the
samples are given to the caller's ``is_free``; the sampling margin of
:func:`floorfit.motion.sampling.motion_check_margin` applies. Completeness is
limited by the cell size and the limits: when the search gives up, the status is
``"not-found-within-limits"``, never a claim that no path exists.

Poses are (x m, y m, heading rad); costs are in metres.
"""

from __future__ import annotations

import heapq
import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

from floorfit.errors import InputError
from floorfit.motion._checks import positive_number, whole_number
from floorfit.motion._words import word_cost, word_segments
from floorfit.motion.dubins import dubins_length, dubins_words
from floorfit.motion.grid_heuristic import OccupancyGrid, grid_heuristic
from floorfit.motion.poses import as_pose, from_local
from floorfit.motion.reeds_shepp import reeds_shepp_cheapest, reeds_shepp_length
from floorfit.motion.sampling import sample
from floorfit.motion.segments import Segment, arc, merge_segments, straight

__all__ = ["CarPlanResult", "plan_car_path", "FOUND", "NOT_FOUND"]

FOUND = "found"
NOT_FOUND = "not-found-within-limits"

IsFree = Callable[[np.ndarray], np.ndarray]


@dataclass(frozen=True)
class CarPlanResult:
    """Outcome of :func:`plan_car_path`.

    Attributes
    ----------
    status : {"found", "not-found-within-limits"}
    segments : list[Segment]
        The path (empty unless found); it ends within the goal tolerance.
    expansions : int
        Nodes expanded.
    reason : str
        One line: how the path was completed, or which limit stopped the search.
    cost : float
        Search cost of the path (m, with the reverse and direction-change penalties);
        ``inf`` when not found.
    elapsed_s : float
        Wall-clock time of the search (s).
    poses_checked : int
        Poses given to ``is_free``.
    """

    status: str
    segments: list[Segment] = field(default_factory=list)
    expansions: int = 0
    reason: str = ""
    cost: float = math.inf
    elapsed_s: float = 0.0
    poses_checked: int = 0


@dataclass(frozen=True)
class _Primitive:
    sign: int  # +1 forward, -1 reverse
    steer: int  # +1 left, 0 straight, -1 right
    end: np.ndarray  # (3,) end pose in the start frame
    samples: np.ndarray  # (k, 3) poses after the start, in the start frame


def _primitives(length: float, radius: float, reverse: bool, step_m: float,
                step_deg: float) -> list[_Primitive]:
    out = []
    for sign in (1, -1) if reverse else (1,):
        for steer in (1, 0, -1):
            origin = (0.0, 0.0, 0.0)
            seg = straight(origin, sign * length) if steer == 0 else \
                arc(origin, sign * length, steer, radius)
            pts = sample([seg], step_m, step_deg)[1:]
            out.append(_Primitive(sign, steer, np.asarray(seg.end), pts))
    return out


class _Checker:
    """Bounds test plus the caller's ``is_free``, counting the poses checked."""

    def __init__(self, is_free: IsFree, bounds):
        self.is_free = is_free
        self.xmin, self.ymin, self.xmax, self.ymax = bounds
        self.poses_checked = 0

    def __call__(self, poses: np.ndarray) -> np.ndarray:
        ok = ((poses[:, 0] >= self.xmin) & (poses[:, 0] <= self.xmax)
              & (poses[:, 1] >= self.ymin) & (poses[:, 1] <= self.ymax))
        if ok.any():
            inside = poses[ok]
            answer = np.asarray(self.is_free(inside))
            if answer.shape != (len(inside),):
                raise InputError(f"is_free returned shape {answer.shape} for {len(inside)} poses; "
                                 "expected one bool per pose", where="is_free")
            self.poses_checked += len(inside)
            ok[ok] = answer.astype(bool)
        return ok


def _check_bounds(bounds) -> tuple[float, float, float, float]:
    try:
        xmin, ymin, xmax, ymax = (float(v) for v in bounds)
    except (TypeError, ValueError):
        raise InputError(f"expected (xmin, ymin, xmax, ymax) in metres, got {bounds!r}",
                         where="bounds") from None
    finite = all(math.isfinite(v) for v in (xmin, ymin, xmax, ymax))
    if not (finite and xmin < xmax and ymin < ymax):
        raise InputError(f"expected finite values with xmin < xmax and ymin < ymax, "
                         f"got {bounds!r}", where="bounds")
    return xmin, ymin, xmax, ymax


@dataclass(frozen=True)
class _Settings:
    """Checked arguments of :func:`plan_car_path` (m, rad)."""

    start: tuple[float, float, float]
    goal: tuple[float, float, float]
    radius: float
    reverse: bool
    bounds: tuple[float, float, float, float]
    tol_xy: float
    tol_heading: float
    res: float
    heading_bins: int
    max_expansions: int
    time_limit_s: float | None
    step_m: float
    step_deg: float
    reverse_factor: float
    change_cost: float
    analytic_tries: int


def _settings(start, goal, min_turn_radius, reverse, bounds, goal_tolerance, xy_resolution,
              heading_bins, max_expansions, time_limit_s, step_m, step_deg,
              reverse_cost_factor, direction_change_cost_m, analytic_tries) -> _Settings:
    radius = positive_number(min_turn_radius, "min_turn_radius")
    box = _check_bounds(bounds)
    try:
        raw_xy, raw_heading = goal_tolerance
    except (TypeError, ValueError):
        raise InputError(f"expected (metres, radians), got {goal_tolerance!r}",
                         where="goal_tolerance") from None
    factor = positive_number(reverse_cost_factor, "reverse_cost_factor")
    if factor < 1.0:
        raise InputError(f"expected a factor >= 1, got {reverse_cost_factor!r}",
                         where="reverse_cost_factor")
    out = _Settings(
        start=as_pose(start, "start"),
        goal=as_pose(goal, "goal"),
        radius=radius,
        reverse=bool(reverse),
        bounds=box,
        tol_xy=positive_number(raw_xy, "goal_tolerance[0]", allow_zero=True),
        tol_heading=positive_number(raw_heading, "goal_tolerance[1]", allow_zero=True),
        res=radius / 4.0 if xy_resolution is None
        else positive_number(xy_resolution, "xy_resolution"),
        heading_bins=whole_number(heading_bins, "heading_bins", minimum=4),
        max_expansions=whole_number(max_expansions, "max_expansions", minimum=1),
        time_limit_s=None if time_limit_s is None
        else positive_number(time_limit_s, "time_limit_s"),
        step_m=positive_number(step_m, "step_m"),
        step_deg=positive_number(step_deg, "step_deg"),
        reverse_factor=factor,
        change_cost=2.0 * radius if direction_change_cost_m is None else
        positive_number(direction_change_cost_m, "direction_change_cost_m", allow_zero=True),
        analytic_tries=whole_number(analytic_tries, "analytic_tries", minimum=1),
    )
    for name, pose in (("start", out.start), ("goal", out.goal)):
        if not (box[0] <= pose[0] <= box[2] and box[1] <= pose[1] <= box[3]):
            raise InputError(f"pose ({pose[0]:.3f}, {pose[1]:.3f}) m lies outside the search "
                             f"bounds {box}", where=name)
    return out


def _two_d_heuristic(heuristic_grid, goal_xy):
    if heuristic_grid is None:
        return None
    if isinstance(heuristic_grid, OccupancyGrid):
        return grid_heuristic(heuristic_grid, goal_xy)
    if callable(heuristic_grid):
        return heuristic_grid
    raise InputError("expected an OccupancyGrid or a function of (N, 2) positions",
                     where="heuristic_grid")


def _wrapped(angle: float) -> float:
    """Scalar angle (rad) into [-pi, pi)."""
    return (angle + math.pi) % (2.0 * math.pi) - math.pi


#: Poses of an analytic completion checked first (then four times as many, and so on).
ANALYTIC_FIRST_CHUNK = 64


class _Search:
    """One hybrid A* search; nodes are kept in parallel lists indexed by node id."""

    def __init__(self, s: _Settings, check: _Checker, h2d):
        self.s = s
        self.check = check
        self.h2d = h2d
        self.nh_length = reeds_shepp_length if s.reverse else dubins_length
        # Primitives long enough to leave the cell: even on an arc the chord
        # (L sin(L/2R) / (L/2R)) exceeds the cell diagonal.
        diagonal = math.sqrt(2.0) * s.res
        self.prim_length = 1.05 * diagonal / float(np.sinc(diagonal / (2.0 * math.pi * s.radius)))
        self.prims = _primitives(self.prim_length, s.radius, s.reverse, s.step_m, s.step_deg)
        self.ends = np.stack([p.end for p in self.prims])
        self.bin_width = 2.0 * math.pi / s.heading_bins
        # node store: pose, parent, primitive used to get there, cost, arriving direction
        self.poses: list[tuple[float, float, float]] = [s.start]
        self.parents: list[int] = [-1]
        self.via: list[int] = [-1]
        self.costs: list[float] = [0.0]
        self.signs: list[int] = [0]

    def heuristic(self, poses: np.ndarray) -> np.ndarray:
        h = np.asarray(self.nh_length(poses, self.s.goal, self.s.radius), dtype=float).reshape(-1)
        if self.h2d is not None:
            h = np.maximum(h, np.asarray(self.h2d(poses[:, :2]), dtype=float).reshape(-1))
        return h

    def cell(self, pose) -> tuple[int, int, int]:
        s = self.s
        return (round((pose[0] - s.bounds[0]) / s.res), round((pose[1] - s.bounds[1]) / s.res),
                round(_wrapped(pose[2]) / self.bin_width) % s.heading_bins)

    def at_goal(self, pose) -> bool:
        g = self.s.goal
        return (math.hypot(pose[0] - g[0], pose[1] - g[1]) <= self.s.tol_xy
                and abs(_wrapped(pose[2] - g[2])) <= self.s.tol_heading)

    def step_cost(self, node: int, prim: _Primitive) -> float:
        cost = self.prim_length * (self.s.reverse_factor if prim.sign < 0 else 1.0)
        if self.signs[node] and prim.sign != self.signs[node]:
            cost += self.s.change_cost
        return cost

    def path_to(self, node: int) -> list[Segment]:
        chain = []
        while self.parents[node] >= 0:
            chain.append(node)
            node = self.parents[node]
        segs = []
        for n in reversed(chain):
            p = self.prims[self.via[n]]
            origin = self.poses[self.parents[n]]
            segs.append(straight(origin, p.sign * self.prim_length) if p.steer == 0
                        else arc(origin, p.sign * self.prim_length, p.steer, self.s.radius))
        return segs

    def analytic(self, node: int) -> tuple[list[Segment], float] | None:
        """The cheapest free analytic path from ``node`` to the goal, with its cost."""
        s = self.s

        pose = self.poses[node]
        if s.reverse:
            words = reeds_shepp_cheapest(pose, [s.goal], s.radius, reverse_factor=s.reverse_factor,
                                         change_cost=s.change_cost, arriving_sign=self.signs[node],
                                         count=s.analytic_tries)[0]
        else:
            words = sorted(((word_cost(w, s.radius, s.reverse_factor, s.change_cost, self.signs[node]), w)
                            for w in dubins_words(pose, s.goal, s.radius)), key=lambda item: item[0])
        for cost, word in words[:s.analytic_tries]:
            segs = word_segments(pose, word, s.radius)
            if self._all_free(sample(segs, s.step_m, s.step_deg)):
                return segs, cost
        return None

    def _all_free(self, pts: np.ndarray) -> bool:
        """Whether every pose of ``pts`` is free, checked from the start in growing chunks, so a
        long completion that collides early costs little (the same answer as one check of all)."""
        lo, size = 0, ANALYTIC_FIRST_CHUNK
        while lo < len(pts):
            if not self.check(pts[lo:lo + size]).all():
                return False
            lo, size = lo + size, 4 * size
        return True

    def children(self, node: int, closed: set, best_cost: dict) -> list[tuple]:
        """Free children (pose, primitive, cost, cell) of ``node`` that improve their cell."""
        pose = self.poses[node]
        candidates = []
        for k, end in enumerate(from_local(pose, self.ends)):
            child_pose = (float(end[0]), float(end[1]), float(end[2]))
            child_key = self.cell(child_pose)
            if child_key in closed:
                continue
            g = self.costs[node] + self.step_cost(node, self.prims[k])
            if g < best_cost.get(child_key, math.inf) - 1e-12:
                candidates.append((child_pose, k, g, child_key))
        if not candidates:
            return []
        # collision-check the samples of the remaining primitives in one call
        chosen = [self.prims[c[1]].samples for c in candidates]
        free = self.check(from_local(pose, np.concatenate(chosen)))
        ok = np.logical_and.reduceat(free, np.cumsum([0] + [len(c) for c in chosen])[:-1])
        return [c for c, good in zip(candidates, ok) if good]

    def add(self, pose, parent: int, prim: int, cost: float) -> int:
        self.poses.append(pose)
        self.parents.append(parent)
        self.via.append(prim)
        self.costs.append(cost)
        self.signs.append(self.prims[prim].sign)
        return len(self.poses) - 1

    def run(self, t0: float) -> tuple[str, list[Segment], int, str, float]:
        s = self.s
        h0 = float(self.heuristic(np.asarray([s.start]))[0])
        if not math.isfinite(h0):
            return (NOT_FOUND, [], 0, "the 2-D heuristic gives the start no route to the goal",
                    math.inf)
        best_cost = {self.cell(s.start): 0.0}
        closed: set = set()
        heap = [(h0, 0, 0, h0)]  # (f, tie-break, node, h)
        tie = 1
        expansions = 0
        next_analytic = 0
        reason = (f"searched every reachable cell at {s.res:.3g} m / "
                  f"{math.degrees(self.bin_width):.3g} deg without reaching the goal; "
                  "a finer resolution may still find a path")
        while heap:
            _f, _tie, node, h = heapq.heappop(heap)
            key = self.cell(self.poses[node])
            if key in closed or self.costs[node] > best_cost.get(key, math.inf) + 1e-12:
                continue
            closed.add(key)
            expansions += 1
            if self.at_goal(self.poses[node]):
                return FOUND, self.path_to(node), expansions, \
                    "reached the goal cell within tolerance", self.costs[node]
            if expansions >= next_analytic:
                found = self.analytic(node)
                if found is not None:
                    return FOUND, self.path_to(node) + found[0], expansions, \
                        "completed by an analytic path", self.costs[node] + found[1]
                # attempt every 1 to 10 expansions, more often near the goal
                next_analytic = expansions + max(1, min(10, int(h / (2.0 * self.prim_length))))
            if expansions >= s.max_expansions:
                reason = f"stopped after {expansions} expansions (max_expansions)"
                break
            if s.time_limit_s is not None and expansions % 32 == 0 \
                    and time.perf_counter() - t0 > s.time_limit_s:
                reason = f"stopped after {time.perf_counter() - t0:.1f} s (time_limit_s)"
                break
            kids = self.children(node, closed, best_cost)
            if not kids:
                continue
            estimates = self.heuristic(np.asarray([c[0] for c in kids]))
            for (pose, k, g, cell_key), hc in zip(kids, estimates):
                if not math.isfinite(hc) or g >= best_cost.get(cell_key, math.inf) - 1e-12:
                    continue
                best_cost[cell_key] = g
                heapq.heappush(heap, (g + float(hc), tie, self.add(pose, node, k, g), float(hc)))
                tie += 1
        return NOT_FOUND, [], expansions, reason, math.inf


def plan_car_path(
    start: Sequence[float],
    goal: Sequence[float],
    *,
    min_turn_radius: float,
    reverse: bool,
    is_free: IsFree,
    bounds: Sequence[float],
    goal_tolerance: tuple[float, float] = (0.05, math.radians(2.0)),
    xy_resolution: float | None = None,
    heading_bins: int = 72,
    max_expansions: int = 200_000,
    time_limit_s: float | None = None,
    heuristic_grid: OccupancyGrid | Callable[[np.ndarray], np.ndarray] | None = None,
    step_m: float = 0.05,
    step_deg: float = 2.0,
    reverse_cost_factor: float = 2.0,
    direction_change_cost_m: float | None = None,
    analytic_tries: int = 3,
) -> CarPlanResult:
    """Search a path for a car-like vehicle from ``start`` to ``goal`` (hybrid A*).

    Parameters
    ----------
    start, goal : (x m, y m, heading rad)
        Poses of the reference point (rear-axle centre).
    min_turn_radius : float
        Minimum turning radius of the reference point (m); every arc uses it.
    reverse : bool
        Whether the vehicle may drive in reverse. With reverse the analytic
        completion and the heuristic use Reeds-Shepp paths, without it Dubins paths.
    is_free : callable
        ``is_free(poses) -> bool array``: poses is an (N, 3) array of (x m, y m,
        heading rad); True where the vehicle at that pose is collision-free.
        It is called only on poses inside ``bounds``.
    bounds : (xmin, ymin, xmax, ymax)
        Region (m) the reference point must stay in.
    goal_tolerance : (metres, radians)
        A node this close to the goal in position and heading ends the search.
    xy_resolution : float, optional
        Cell width (m); default ``min_turn_radius / 4``.
    heading_bins : int
        Heading cells per full turn (default 72, i.e. 5 deg). Headings are rounded
        to the nearest bin.
    max_expansions, time_limit_s : limits of the search.
    heuristic_grid : OccupancyGrid or callable, optional
        Obstacle-aware 2-D distance: an :class:`OccupancyGrid` (searched from the
        goal, see :mod:`floorfit.motion.grid_heuristic`) or a function (N, 2)
        positions (m) -> (N,) distances (m). Positions where it is ``inf`` are pruned.
    step_m, step_deg : sampling resolution of collision checks (m, deg).
    reverse_cost_factor : float
        Cost multiplier for distance driven in reverse (>= 1).
    direction_change_cost_m : float, optional
        Cost (m) added for each change between forward and reverse; default
        ``2 * min_turn_radius``.
    analytic_tries : int
        How many of the cheapest analytic candidates to check per attempt.

    Returns
    -------
    CarPlanResult
        ``status`` is "found" with the segments, or "not-found-within-limits" with
        the reason (a start or goal pose that is not free, an exhausted search at this
        resolution, or a limit reached). Malformed arguments, and a start or goal
        outside ``bounds``, raise :class:`~floorfit.errors.InputError`.
    """
    t0 = time.perf_counter()
    s = _settings(start, goal, min_turn_radius, reverse, bounds, goal_tolerance, xy_resolution,
                  heading_bins, max_expansions, time_limit_s, step_m, step_deg,
                  reverse_cost_factor, direction_change_cost_m, analytic_tries)
    h2d = _two_d_heuristic(heuristic_grid, s.goal[:2])
    check = _Checker(is_free, s.bounds)
    if not check(np.asarray([s.start]))[0]:
        outcome = (NOT_FOUND, [], 0, "the start pose is not free", math.inf)
    elif not check(np.asarray([s.goal]))[0]:
        outcome = (NOT_FOUND, [], 0, "the goal pose is not free", math.inf)
    else:
        outcome = _Search(s, check, h2d).run(t0)
    status, segs, expansions, reason, cost = outcome
    return CarPlanResult(status, merge_segments(segs), expansions, reason, cost,
                         time.perf_counter() - t0, check.poses_checked)
