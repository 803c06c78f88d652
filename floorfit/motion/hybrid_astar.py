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
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np

from floorfit.errors import InputError
from floorfit.motion._words import Word, word_segments
from floorfit.motion.dubins import dubins_length, dubins_words
from floorfit.motion.grid_heuristic import OccupancyGrid, grid_heuristic
from floorfit.motion.poses import Pose, as_pose, wrap_angle
from floorfit.motion.reeds_shepp import reeds_shepp_length, reeds_shepp_words
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
    """

    status: str
    segments: list[Segment] = field(default_factory=list)
    expansions: int = 0
    reason: str = ""
    cost: float = math.inf
    elapsed_s: float = 0.0


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


def _transform(local: np.ndarray, pose: Sequence[float]) -> np.ndarray:
    x, y, h = pose
    c, s = math.cos(h), math.sin(h)
    out = np.empty_like(local)
    out[:, 0] = x + c * local[:, 0] - s * local[:, 1]
    out[:, 1] = y + s * local[:, 0] + c * local[:, 1]
    out[:, 2] = h + local[:, 2]
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
        raise InputError(f"bounds must be (xmin, ymin, xmax, ymax) in metres, got {bounds!r}",
                         where="bounds") from None
    if not (all(math.isfinite(v) for v in (xmin, ymin, xmax, ymax)) and xmin < xmax and ymin < ymax):
        raise InputError(f"bounds must be finite with xmin < xmax and ymin < ymax, got {bounds!r}",
                         where="bounds")
    return xmin, ymin, xmax, ymax


def _positive(value, name: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"expected a positive number, got {value!r}", where=name) from None
    if not (v > 0 and math.isfinite(v)):
        raise InputError(f"expected a positive number, got {value!r}", where=name)
    return v


def _word_cost(word: Word, radius: float, arriving_sign: int, reverse_factor: float,
               change_cost: float) -> float:
    """Search cost (m) of driving ``word`` after arriving in direction ``arriving_sign``."""
    cost, last = 0.0, arriving_sign
    for length in word.lengths:
        if abs(length) < 1e-10:
            continue
        sign = 1 if length > 0 else -1
        cost += abs(length) * radius * (reverse_factor if sign < 0 else 1.0)
        if last and sign != last:
            cost += change_cost
        last = sign
    return cost


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
        How many of the shortest analytic candidates to check per attempt.

    Returns
    -------
    CarPlanResult
        ``status`` is "found" with the segments, or "not-found-within-limits" with
        the reason (a start or goal pose that is not free, an exhausted search at this
        resolution, or a limit reached).
    """
    t0 = time.perf_counter()
    start_pose = as_pose(start, "start")
    goal_pose = as_pose(goal, "goal")
    radius = _positive(min_turn_radius, "min_turn_radius")
    box = _check_bounds(bounds)
    res = radius / 4.0 if xy_resolution is None else _positive(xy_resolution, "xy_resolution")
    step_m = _positive(step_m, "step_m")
    step_deg = _positive(step_deg, "step_deg")
    if int(heading_bins) != heading_bins or heading_bins < 4:
        raise InputError(f"heading_bins must be an integer >= 4, got {heading_bins!r}",
                         where="heading_bins")
    heading_bins = int(heading_bins)
    if int(max_expansions) != max_expansions or max_expansions < 1:
        raise InputError(f"max_expansions must be a positive integer, got {max_expansions!r}",
                         where="max_expansions")
    if time_limit_s is not None:
        time_limit_s = _positive(time_limit_s, "time_limit_s")
    try:
        tol_xy, tol_heading = (float(v) for v in goal_tolerance)
    except (TypeError, ValueError):
        raise InputError(f"goal_tolerance must be (metres, radians), got {goal_tolerance!r}",
                         where="goal_tolerance") from None
    if not (tol_xy >= 0 and tol_heading >= 0):
        raise InputError(f"goal_tolerance must not be negative, got {goal_tolerance!r}",
                         where="goal_tolerance")
    if reverse_cost_factor < 1.0:
        raise InputError(f"reverse_cost_factor must be >= 1, got {reverse_cost_factor!r}",
                         where="reverse_cost_factor")
    change_cost = 2.0 * radius if direction_change_cost_m is None else float(direction_change_cost_m)
    if not (change_cost >= 0):
        raise InputError(f"direction_change_cost_m must be >= 0, got {direction_change_cost_m!r}",
                         where="direction_change_cost_m")
    for name, pose in (("start", start_pose), ("goal", goal_pose)):
        if not (box[0] <= pose[0] <= box[2] and box[1] <= pose[1] <= box[3]):
            raise InputError(f"pose ({pose[0]:.3f}, {pose[1]:.3f}) m lies outside the search "
                             f"bounds {box}", where=name)

    check = _Checker(is_free, box)

    def result(status, segments=(), expansions=0, reason="", cost=math.inf):
        return CarPlanResult(status, list(segments), expansions, reason, cost,
                             time.perf_counter() - t0)

    if not check(np.asarray([start_pose]))[0]:
        return result(NOT_FOUND, reason="the start pose is not free")
    if not check(np.asarray([goal_pose]))[0]:
        return result(NOT_FOUND, reason="the goal pose is not free")

    # Heuristic pieces
    nh_length = reeds_shepp_length if reverse else dubins_length
    words_of = reeds_shepp_words if reverse else dubins_words
    if heuristic_grid is None:
        h2d = None
    elif isinstance(heuristic_grid, OccupancyGrid):
        h2d = grid_heuristic(heuristic_grid, goal_pose[:2])
    elif callable(heuristic_grid):
        h2d = heuristic_grid
    else:
        raise InputError("heuristic_grid must be an OccupancyGrid or a function of (N, 2) "
                         "positions", where="heuristic_grid")

    def heuristic(poses: np.ndarray) -> np.ndarray:
        h = np.asarray(nh_length(poses, goal_pose, radius), dtype=float).reshape(-1)
        if h2d is not None:
            h = np.maximum(h, np.asarray(h2d(poses[:, :2]), dtype=float).reshape(-1))
        return h

    # Motion primitives long enough to leave the cell: even on an arc the chord
    # (length * sin(L/2R) / (L/2R)) exceeds the cell diagonal.
    diagonal = math.sqrt(2.0) * res
    prim_length = 1.05 * diagonal / float(np.sinc(diagonal / (2.0 * math.pi * radius)))
    prims = _primitives(prim_length, radius, reverse, step_m, step_deg)
    local = np.concatenate([p.samples for p in prims])
    cuts = np.cumsum([0] + [len(p.samples) for p in prims])[:-1]
    ends = np.stack([p.end for p in prims])
    bin_width = 2.0 * math.pi / heading_bins

    def cell(pose) -> tuple[int, int, int]:
        return (round((pose[0] - box[0]) / res), round((pose[1] - box[1]) / res),
                round(float(wrap_angle(pose[2])) / bin_width) % heading_bins)

    def at_goal(pose) -> bool:
        return (math.hypot(pose[0] - goal_pose[0], pose[1] - goal_pose[1]) <= tol_xy
                and abs(float(wrap_angle(pose[2] - goal_pose[2]))) <= tol_heading)

    # Node store: pose, parent index, primitive index, cost, arriving direction
    poses: list[tuple[float, float, float]] = [start_pose]
    parents: list[int] = [-1]
    via: list[int] = [-1]
    costs: list[float] = [0.0]
    signs: list[int] = [0]

    def path_to(node: int) -> list[Segment]:
        chain = []
        while parents[node] >= 0:
            chain.append(node)
            node = parents[node]
        segs = []
        for n in reversed(chain):
            p = prims[via[n]]
            origin = poses[parents[n]]
            segs.append(straight(origin, p.sign * prim_length) if p.steer == 0
                        else arc(origin, p.sign * prim_length, p.steer, radius))
        return segs

    def analytic(node: int) -> tuple[list[Segment], float] | None:
        words = words_of(poses[node], goal_pose, radius)
        ranked = sorted(words, key=lambda w: _word_cost(w, radius, signs[node],
                                                        reverse_cost_factor, change_cost))
        for word in ranked[:analytic_tries]:
            segs = word_segments(poses[node], word, radius)
            pts = sample(segs, step_m, step_deg)
            if len(pts) == 0 or check(pts).all():
                return segs, _word_cost(word, radius, signs[node], reverse_cost_factor, change_cost)
        return None

    h0 = float(heuristic(np.asarray([start_pose]))[0])
    if not math.isfinite(h0):
        return result(NOT_FOUND, reason="the 2-D heuristic grid gives the start no route to the goal")
    best_cost = {cell(start_pose): 0.0}
    closed: set = set()
    heap = [(h0, 0, 0, h0)]  # (f, tie, node, h)
    tie = 1
    expansions = 0
    next_analytic = 0
    reason = ("searched every reachable cell at {:.3g} m / {:.3g} deg without reaching the goal; "
              "a finer resolution may still find a path").format(res, math.degrees(bin_width))
    while heap:
        _f, _t, node, h = heapq.heappop(heap)
        key = cell(poses[node])
        if key in closed or costs[node] > best_cost.get(key, math.inf) + 1e-12:
            continue
        closed.add(key)
        expansions += 1
        if at_goal(poses[node]):
            segs = merge_segments(path_to(node))
            return result(FOUND, segs, expansions, "reached the goal cell within tolerance",
                          costs[node])
        if expansions >= next_analytic:
            found = analytic(node)
            if found is not None:
                tail, tail_cost = found
                segs = merge_segments(path_to(node) + tail)
                return result(FOUND, segs, expansions, "completed by an analytic path",
                              costs[node] + tail_cost)
            next_analytic = expansions + max(1, min(10, int(h / (2.0 * prim_length))))
        if expansions >= max_expansions:
            reason = f"stopped after {expansions} expansions (max_expansions)"
            break
        if time_limit_s is not None and expansions % 32 == 0 \
                and time.perf_counter() - t0 > time_limit_s:
            reason = f"stopped after {time.perf_counter() - t0:.1f} s (time_limit_s)"
            break
        pose = poses[node]
        free = check(_transform(local, pose))
        ok = np.logical_and.reduceat(free, cuts)
        if not ok.any():
            continue
        child_poses = _transform(ends[ok], pose)
        child_prims = np.flatnonzero(ok)
        candidates = []
        for child_pose, k in zip(child_poses, child_prims):
            child_pose = (float(child_pose[0]), float(child_pose[1]), float(child_pose[2]))
            child_key = cell(child_pose)
            if child_key in closed:
                continue
            p = prims[k]
            g = costs[node] + prim_length * (reverse_cost_factor if p.sign < 0 else 1.0)
            if signs[node] and p.sign != signs[node]:
                g += change_cost
            if g < best_cost.get(child_key, math.inf) - 1e-12:
                candidates.append((child_pose, int(k), g, child_key))
        if not candidates:
            continue
        hs = heuristic(np.asarray([c[0] for c in candidates]))
        for (child_pose, k, g, child_key), hc in zip(candidates, hs):
            if not math.isfinite(hc):
                continue
            best_cost[child_key] = g
            poses.append(child_pose)
            parents.append(node)
            via.append(k)
            costs.append(g)
            signs.append(prims[k].sign)
            heapq.heappush(heap, (g + float(hc), tie, len(poses) - 1, float(hc)))
            tie += 1
    return result(NOT_FOUND, expansions=expansions, reason=reason)
