"""Route queries: can the vehicle get from pose A to pose B, and how; if not, where it gets stuck.

Poses at this interface are in the **drawing frame**: (x, y) metres, heading in degrees
counter-clockwise from +x. Between consecutive waypoints of a returned path the vehicle
moves by linear interpolation of x, y and of the heading along the shorter arc; every
pose of that motion is clear of obstacles for the footprint grown by the slice
enlargement (sound bound, see :mod:`floorfit.cspace.slices`).

Motion modes: ``omni`` and ``fixed`` vehicles get the holonomic path of the
configuration-space roadmap. ``differential`` and ``car`` vehicles get a path they can
drive (:mod:`floorfit.motion.drivable`): ``segments`` (rotations in place and straight drives, or
arcs at the minimum turning radius and straights, each with its direction) and ``path``
as dense samples of that motion (every ``path_step_m`` / ``path_step_deg``) whose linear
interpolation is itself collision-free. When the holonomic analysis connects the poses
but the drive search gives up within its limits, the status is
``not-found-within-limits`` (never "unreachable"); "unreachable" comes only from the
holonomic analysis, which bounds every motion mode.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import networkx as nx
import numpy as np
import shapely
import shapely.ops
from shapely.geometry import Point

from floorfit.cspace.collision import PoseChecker
from floorfit.cspace.headings import arc_deg, wrap_deg
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import SliceSet, build_slices, choose_headings, default_step
from floorfit.errors import InputError
from floorfit.motion.cell_route import route_in_slices
from floorfit.motion.coarse_route import settle_coarse
from floorfit.motion.drivable import (
    NOT_FOUND,
    DriveLimits,
    drive_tolerance_m,
    plan_differential,
    segment_dicts,
)
from floorfit.motion.drivable_car import car_copy, plan_car
from floorfit.motion.pinches import COARSE_FINAL
from floorfit.motion.slice_checks import ExactSliceCheck, chord_error_m
from floorfit.plan.model import Plan
from floorfit.vehicles.rigid import Vehicle

__all__ = [
    "DRIVE_MODES",
    "NOT_FOUND_WITHIN_LIMITS",
    "STATUSES",
    "RouteResult",
    "coarse_cells",
    "differential_plan",
    "find_route",
    "route_in_slices",
]

#: Status when the holonomic analysis connects the poses but the drive search gave up.
NOT_FOUND_WITHIN_LIMITS = NOT_FOUND
STATUSES = ("reachable", "unreachable", "start-blocked", "goal-blocked", "inconclusive", NOT_FOUND_WITHIN_LIMITS)
#: Motion modes whose paths are converted to drivable segments.
DRIVE_MODES = ("differential", "car")
@dataclass
class RouteResult:
    """Answer of a route query. ``path``: (N, 3) drawing-frame waypoints [x, y, heading_deg].

    For differential and car vehicles ``segments`` lists the drivable pieces (dicts with
    ``type`` "straight"/"arc"/"rotate", ``direction`` "forward"/"reverse"/None,
    ``length_m``, ``angle_deg`` (signed, CCW), ``radius_m`` (arcs), ``start``/``end``
    drawing-frame poses) and ``path`` samples them densely; ``direction_changes`` counts
    forward/reverse changes (a three-point turn has two). ``length_m``: distance travelled
    by the reference point (m); ``rotation_deg``: sum of absolute heading changes.
    ``search``: what the drive search did (mode, expansions, reason, time).
    """

    status: str
    path: np.ndarray
    tolerance_m: float
    settings: dict[str, Any]
    notes: list[str] = field(default_factory=list)
    stuck: dict[str, Any] | None = None
    length_m: float = 0.0
    rotation_deg: float = 0.0
    cells: list = field(default_factory=list)
    segments: list[dict] = field(default_factory=list)
    direction_changes: int = 0
    search: dict[str, Any] | None = None

    @property
    def reachable(self) -> bool:
        return self.status == "reachable"

    def to_dict(self) -> dict[str, Any]:
        return {
            "reachable": self.reachable,
            "status": self.status,
            "path": [[round(float(x), 6), round(float(y), 6), round(float(h), 4)] for x, y, h in self.path],
            "length_m": round(self.length_m, 4),
            "rotation_deg": round(self.rotation_deg, 3),
            "tolerance_m": round(self.tolerance_m, 6),
            "segments": self.segments,
            "direction_changes": int(self.direction_changes),
            "search": self.search,
            "settings": self.settings,
            "stuck": self.stuck,
            "notes": self.notes,
        }


def _check_pose(name: str, pose) -> tuple[float, float, float]:
    if len(pose) != 3:
        raise InputError(f"{name} pose must be x,y,heading (three numbers)", None, name)
    x, y, h = (float(v) for v in pose)
    if not all(math.isfinite(v) for v in (x, y, h)):
        raise InputError(f"{name} pose has a non-finite value {pose!r}", None, name)
    return x, y, float(wrap_deg(h))


def _closest_approach(slices: SliceSet, G: nx.Graph, start_node, goal_local) -> dict:
    """Where the part of the roadmap reachable from the start comes closest to the goal position."""
    best = None
    gp = Point(goal_local[:2])
    for k, i in nx.node_connected_component(G, start_node):
        comp = slices.components[k][i]
        d = comp.distance(gp)
        if best is None or d < best[0]:
            best = (d, k, i)
    d, k, i = best
    q = shapely.ops.nearest_points(slices.components[k][i], gp)[0]
    x, y = slices.plan.to_drawing(q.x, q.y)
    return {"x": round(x, 4), "y": round(y, 4), "heading_deg": round(float(slices.cells.headings[k]), 3),
            "distance_to_goal_m": round(float(d), 4)}


def find_route(plan: Plan, vehicle: Vehicle, start, goal, *, heading_step_deg: float | None = None,  # noqa: C901 (one linear sequence of status cases)
               workers: int | None = 1, slices: SliceSet | None = None, roadmap: nx.Graph | None = None,
               check_optimistic: bool = True, limits: DriveLimits | None = None) -> RouteResult:
    """Find a collision-free motion from ``start`` to ``goal`` (drawing-frame poses, metres/degrees).

    Status: ``reachable`` (path given, sound), ``unreachable`` (not even the optimistic
    bound connects them: the vehicle shrunk by ``tolerance_m`` could not do it either),
    ``inconclusive`` (the sound bound fails but the optimistic one does not: the answer
    depends on less than ``tolerance_m``), ``start-blocked`` / ``goal-blocked`` (that pose
    itself collides), ``not-found-within-limits`` (differential and car vehicles only: the
    holonomic analysis connects the poses, the drive search gave up within ``limits``).

    For ``differential`` and ``car`` vehicles the path is drivable in that mode (see the
    module docstring); ``limits`` (:class:`floorfit.motion.drivable.DriveLimits`) sets the sample
    spacing and the search limits. ``tolerance_m`` then states how much the drive checks
    may have grown the vehicle (:func:`floorfit.motion.drivable.drive_tolerance_m`).

    Without ``slices`` and ``heading_step_deg``, the route is first sought on coarse slices
    (:func:`coarse_cells`); an answer they settle (:data:`COARSE_FINAL`) is returned with their
    settings, anything else is decided at the default step.
    """
    sx, sy, sh = _check_pose("start", start)
    gx, gy, gh = _check_pose("goal", goal)
    s_loc = (*plan.to_local(sx, sy), sh)
    g_loc = (*plan.to_local(gx, gy), gh)
    if vehicle.mode == "fixed":
        fixed = vehicle.fixed_heading_deg if vehicle.fixed_heading_deg is not None else sh
        for name, h in (("start", sh), ("goal", gh)):
            if abs(float(arc_deg(fixed, h))) > 1e-6:
                raise InputError(f"vehicle '{vehicle.name}' never rotates (mode fixed, heading {fixed:g}°); "
                                 f"the {name} heading {h:g}° cannot be reached", None, name)
    if slices is None and heading_step_deg is None:
        coarse = coarse_cells(plan, vehicle, (sh, gh))
        if coarse is not None:
            first = build_slices(plan, vehicle, cells=coarse, workers=workers)
            found = find_route(plan, vehicle, start, goal, slices=first, check_optimistic=False, limits=limits)
            if found.status in COARSE_FINAL:
                found.notes.append(coarse_note(first))
                return found
            if found.status == "unreachable":
                settled = settle_coarse(plan, vehicle, start, goal, first, found, search=find_route, workers=workers,
                                        limits=limits)
                if settled is not None:
                    return settled[0]
    if slices is None:
        cells = choose_headings(plan, vehicle, heading_step_deg=heading_step_deg, extra_headings=(sh, gh))
        slices = build_slices(plan, vehicle, cells=cells, workers=workers)
    G = roadmap if roadmap is not None else build_roadmap(slices)
    settings = slices.settings()
    result = RouteResult(status="unreachable", path=np.zeros((0, 3)), tolerance_m=slices.tolerance_m,
                         settings=settings)
    checker = PoseChecker(plan, vehicle.footprint)
    hit = checker.collides([s_loc, g_loc])
    if hit[0]:
        result.status = "start-blocked"
        result.notes.append("the vehicle at the start pose overlaps an obstacle")
        return result
    if hit[1]:
        result.status = "goal-blocked"
        result.notes.append("the vehicle at the goal pose overlaps an obstacle")
        return result
    status, path, info = route_in_slices(slices, G, s_loc, g_loc)
    if status == "reachable":
        result.status = "reachable"
        drawing = path.copy()
        drawing[:, 0] += plan.origin[0]
        drawing[:, 1] += plan.origin[1]
        result.path = drawing
        result.length_m = float(np.sum(np.hypot(*np.diff(path[:, :2], axis=0).T)))
        result.rotation_deg = float(np.sum(np.abs(arc_deg(path[:-1, 2], path[1:, 2]))))
        result.cells = [list(n) for n in info["nodes"]]
        if vehicle.mode in DRIVE_MODES:
            _drive(result, plan, vehicle, slices, G, path, s_loc, g_loc, limits or DriveLimits())
        return result
    if status in ("start-outside", "goal-outside"):
        which = "start" if status == "start-outside" else "goal"
        result.notes.append(f"the {which} pose is clear of obstacles but by less than the tolerance "
                            f"({slices.tolerance_m:.3f} m), so it cannot be proven reachable")
    if "start_node" in info:
        result.stuck = _closest_approach(slices, G, info["start_node"], g_loc)
    result.status = "unreachable"
    if check_optimistic and vehicle.mode != "fixed":
        opt = build_slices(plan, vehicle, cells=slices.cells, bound="optimistic", workers=workers)
        ostatus, _, _ = route_in_slices(opt, build_roadmap(opt), s_loc, g_loc)
        if ostatus == "reachable":
            result.status = "inconclusive"
            result.notes.append(f"might fit: with the vehicle shrunk by the tolerance ({slices.tolerance_m:.3f} m) "
                                f"a route exists; refine the heading step to decide")
    elif status != "unreachable" and vehicle.mode == "fixed":
        result.status = "inconclusive"
    if vehicle.mode in DRIVE_MODES and result.status == "unreachable":
        result.notes.append(f"no motion at all connects the poses, so no {vehicle.mode} path exists either")
    return result


#: The coarse first try of a route with the default heading step uses this many times that step ...
COARSE_FACTOR = 4.0
#: ... but no more than this, degrees (and none when the default step is already this coarse).
COARSE_MAX_STEP_DEG = 8.0


def coarse_cells(plan: Plan, vehicle: Vehicle, extra_headings=()):
    """Heading cells for a coarse first try of a route (:data:`COARSE_FACTOR` × the default step,
    at most :data:`COARSE_MAX_STEP_DEG`), or None when that would not be at least twice coarser.

    Sound slices of a coarse step hold the vehicle swept over a wider heading cell, so a route
    found on them is a route (it errs only towards not finding one); where they find none, the
    default step decides.
    """
    if vehicle.mode == "fixed":
        return None
    step = default_step(plan, vehicle)
    coarse = min(COARSE_FACTOR * step, COARSE_MAX_STEP_DEG)
    if coarse < 2.0 * step:
        return None
    return choose_headings(plan, vehicle, heading_step_deg=coarse, extra_headings=extra_headings)


def coarse_note(slices: SliceSet) -> str:
    """What a route answered on the coarse slices states."""
    return (f"settled on coarse slices first ({slices.cells.step_deg:g}° heading step): a route on sound "
            f"slices holds at every finer step")


def _controllable(vehicle: Vehicle) -> bool:
    """Small-time locally controllable (Laumond et al., IEEE T-RA 10(5), 1994): a base that
    rotates in place and may reverse, or a car that may reverse."""
    return vehicle.mode in DRIVE_MODES and vehicle.reverse


#: A differential base follows a holonomic route kept this many check margins inside the free space.
ROUTE_CLEARANCE_MARGINS = 3.0


#: Holonomic routes tried for a differential conversion: where one needs too many manoeuvres
#: inside a roadmap cell, the next route avoids that cell.
ROUTE_ATTEMPTS = 4
#: Share of ``max_steering_checks`` each route but the last full try gets.
EARLY_CHECKS_SHARE = 0.1


def _convert(slices, G, s_loc, g_loc, reverse, limits, check, clearance, deadline):
    """Subdivision along the roomy route; where it stops at a limit inside a roadmap cell, along the
    route that avoids that cell (up to :data:`ROUTE_ATTEMPTS` routes, the first ones on a small
    budget); finally the first route with the whole budget."""
    from dataclasses import replace

    early = replace(limits, max_steering_checks=max(500, int(limits.max_steering_checks * EARLY_CHECKS_SHARE)))
    s_node, g_node = slices.locate(*s_loc), slices.locate(*g_loc)
    removed: list = []
    cut: list = []
    first_way = None
    dp = None
    for _ in range(ROUTE_ATTEMPTS):
        H = nx.restricted_view(G, removed, cut) if removed or cut else G
        st, way, info = route_in_slices(slices, H, s_loc, g_loc, clearance_m=clearance)
        if st != "reachable":
            break
        first_way = way if first_way is None else first_way
        dp = plan_differential(slices, way, reverse=reverse, limits=early, check=check, deadline=deadline)
        if dp.found or dp.limit == "time_limit_s" or dp.failed_step is None:
            return dp
        a, b = dp.failed_step
        node = slices.locate(0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1]), a[2])
        nodes = info["nodes"]
        if node is None or node in removed or node not in nodes:
            break
        if node not in (s_node, g_node):
            removed.append(node)        # avoid the cell
            continue
        # the start's or goal's own cell: enter (leave) it by another rotation
        i = nodes.index(node)
        if node == g_node and i > 0:
            cut.append((nodes[i - 1], node))
        elif node == s_node and i + 1 < len(nodes):
            cut.append((node, nodes[i + 1]))
        else:
            break
    if first_way is None:
        return dp
    return plan_differential(slices, first_way, reverse=reverse, limits=limits, check=check, deadline=deadline)


def differential_plan(slices: SliceSet, G: nx.Graph, holonomic_local: np.ndarray | None, s_loc, g_loc,
                      *, reverse: bool, limits: DriveLimits, check=None, deadline: float | None = None,
                      accept_changes: int | None = None, copy_radius_below: float | None = None,
                      local_first: bool = False):
    """Rotate-and-drive plan for a differential base (local frame; poses in degrees).

    Subdivision of the holonomic route recomputed with a clearance of a few centimetres
    (room for the manoeuvres of :mod:`floorfit.motion.subdivision`), trying routes that avoid
    a roadmap cell where the manoeuvres became too many (:func:`_convert`).
    ``holonomic_local`` is accepted for compatibility (the route is recomputed). Returns a
    :class:`floorfit.motion.drivable.DrivePlan`. ``check``: a shared
    :class:`floorfit.motion.slice_checks.ExactSliceCheck` (optional). ``accept_changes``: a path found
    with at most this many direction changes is returned as it is, without the search for one with
    fewer (a manoeuvre budget only asks whether the vehicle stays within it). ``copy_radius_below``:
    only car paths of a tighter turning radius (m) are copied (a car whose own search failed).
    ``local_first``: copy a car's path around the direction changes first (:func:`_local_repair`), over the
    whole route only when that removed none (much cheaper on long routes; the path may differ).
    """
    import time

    from floorfit.motion.slice_checks import ExactSliceCheck

    t0 = time.perf_counter()
    if deadline is None and limits.time_limit_s is not None:
        deadline = t0 + limits.time_limit_s
    if not isinstance(check, ExactSliceCheck):
        check = ExactSliceCheck(slices, limits.path_step_m, limits.path_step_deg)
    clearance = ROUTE_CLEARANCE_MARGINS * 0.5 * limits.check_step_m
    dp = _convert(slices, G, s_loc, g_loc, reverse, limits, check, clearance, deadline)
    good_enough = accept_changes is not None and dp is not None and dp.direction_changes <= accept_changes
    if dp is not None and dp.found and reverse and dp.direction_changes > 0 and not good_enough:
        dp = _fewer_direction_changes(slices, dp, s_loc, g_loc, limits, check, deadline, copy_radius_below,
                                      local_first)
    if dp is not None:
        dp.elapsed_s = time.perf_counter() - t0
    return dp


#: Turning radii of the car paths a differential base may copy, in vehicle widths (each at least 0.5 m),
#: tried in this order: a tight one finds short manoeuvres, a wider one covers long routes within the
#: search's expansions.
VIRTUAL_CAR_RADIUS_WIDTHS = (0.75, 1.5)


def _copy_radii(slices, radius_below=None) -> list[float]:
    """Turning radii (m) of the car paths to copy (:data:`VIRTUAL_CAR_RADIUS_WIDTHS`), below ``radius_below``."""
    width = slices.vehicle.width_m
    radii = dict.fromkeys(max(0.5, w * width) for w in VIRTUAL_CAR_RADIUS_WIDTHS)
    return [r for r in radii if radius_below is None or r < radius_below]


def _fewer_direction_changes(slices, dp, s_loc, g_loc, limits, check, deadline, radius_below=None,
                             local_first=False):
    """A differential path with direction changes may do better by copying a car's path
    (:func:`floorfit.motion.drivable_car.car_copy`, for the turning radii of
    :data:`VIRTUAL_CAR_RADIUS_WIDTHS` in turn until a copy has none). With ``local_first`` and start and
    goal farther apart than :data:`LOCAL_MIN_SPANS` windows, first only around its changes of direction
    (:func:`_local_repair`); the whole route is copied only when changes remain. A copy is kept when it
    has fewer direction changes, or as many and a shorter length."""
    from floorfit.motion.drivable import finish_plan

    radii = _copy_radii(slices, radius_below)
    apart = math.hypot(g_loc[0] - s_loc[0], g_loc[1] - s_loc[1])
    if local_first and radii and apart > LOCAL_MIN_SPANS * _window_span(slices, radii):
        local = _local_repair(slices, dp, radii, limits, check, deadline)
        if local is not None and local.direction_changes < dp.direction_changes:
            dp = finish_plan(local, check, limits, s_loc, g_loc)
    for radius in radii:
        if dp.direction_changes == 0:
            break
        alt = car_copy(slices, radius, s_loc, g_loc, limits=limits, check=check, deadline=deadline)
        if alt is not None and (alt.direction_changes, alt.length_m) < (dp.direction_changes, dp.length_m):
            dp = finish_plan(alt, check, limits, s_loc, g_loc)
    return dp


#: Local repair: the car copy runs over the route from this many vehicle sizes (the larger of the
#: vehicle's length and the copy's largest turning radius) before a cluster of direction changes to as
#: many after it (changes closer than two such spans form one cluster) ...
LOCAL_WINDOW_SIZES = 3.0
#: ... and over windows twice, four times ... as wide where that gives no fewer changes (this many widenings).
LOCAL_WIDENINGS = 2
#: The car search of a local copy stays within this many window spans of the route's piece.
LOCAL_BOX_SPANS = 1.0
#: Only routes whose start and goal lie farther apart than this many window spans are repaired locally
#: (a shorter route is copied whole, which costs little there).
LOCAL_MIN_SPANS = 10.0


def _window_span(slices, radii) -> float:
    """Distance (m) along the route a local copy reaches before and after the changes of direction."""
    return LOCAL_WINDOW_SIZES * max(slices.vehicle.length_m, max(radii))


def _cusp_distances(segs) -> list[float]:
    """Distance (m) along the path, travelled by the reference point, of each change of direction."""
    out, done, last = [], 0.0, None
    for seg in segs:
        if seg.kind != "rotate" and seg.length_m > 0:
            if last is not None and seg.direction != last:
                out.append(done)
            last = seg.direction
        done += seg.length_m
    return out


def _clusters(cusps: list[float], span: float) -> list[tuple[float, float]]:
    """(first, last) distances of the runs of ``cusps`` less than two ``span`` apart (m)."""
    out: list[list[float]] = []
    for c in cusps:
        if out and c - out[-1][1] < 2.0 * span:
            out[-1][1] = c
        else:
            out.append([c, c])
    return [(a, b) for a, b in out]


def _split_at(segs, at_m: float):
    """``segs`` with the segment that passes distance ``at_m`` (m along the path) cut there when it is
    a straight, and the index of the boundary at (or, inside another kind, just after) that distance."""
    from floorfit.motion.segments import straight

    done = 0.0
    for i, seg in enumerate(segs):
        if seg.kind == "rotate" or seg.length_m <= 0:
            continue
        if at_m <= done + 1e-9:
            return list(segs), i
        if at_m < done + seg.length_m - 1e-9:
            if seg.kind != "straight":
                return list(segs), i + 1
            head = straight(seg.start, seg.sign * (at_m - done))
            tail = straight(head.end, seg.sign * (seg.length_m - (at_m - done)))
            return list(segs[:i]) + [head, tail] + list(segs[i + 1:]), i + 1
        done += seg.length_m
    return list(segs), len(segs)


def _chain(segs, pose) -> list:
    """The motions of ``segs`` driven one after another from ``pose``."""
    from floorfit.motion.subdivision import redo

    out = []
    for seg in segs:
        out.append(redo(seg, pose))
        pose = out[-1].end
    return out


def _deg(pose) -> tuple[float, float, float]:
    return (float(pose[0]), float(pose[1]), float(wrap_deg(math.degrees(pose[2]))))


def _window_box(piece, span: float, domain_bounds) -> tuple[float, float, float, float]:
    """Box (local m) around the poses of ``piece`` grown by ``LOCAL_BOX_SPANS`` × ``span``, within the domain."""
    pts = np.array([piece[0].start[:2]] + [sg.end[:2] for sg in piece])
    grow = LOCAL_BOX_SPANS * span
    x0, y0, x1, y1 = domain_bounds
    return (max(x0, float(pts[:, 0].min()) - grow), max(y0, float(pts[:, 1].min()) - grow),
            min(x1, float(pts[:, 0].max()) + grow), min(y1, float(pts[:, 1].max()) + grow))


def _repair_window(slices, segs, a_m: float, b_m: float, span: float, radii, limits, check, deadline):
    """``segs`` with its piece between distances ``a_m`` and ``b_m`` (m) replaced by the best car copy
    (fewest direction changes of the joined path, then shortest) when that has fewer direction changes
    and the joined path passes the exact check; else None (also for a window of the whole route)."""
    from floorfit.motion.segments import direction_changes, merge_segments, total_length

    if a_m <= 0.0 and b_m >= total_length(segs) - 1e-9:
        return None             # the whole route: copied as such when changes remain
    cut, ia = _split_at(segs, a_m)
    cut, ib = _split_at(cut, b_m)
    if ib <= ia:
        return None
    head, piece, rest = cut[:ia], cut[ia:ib], cut[ib:]
    box = _window_box(piece, span, slices.domain.bounds)
    best, key = None, (direction_changes(segs), total_length(segs))
    for radius in radii:
        alt = car_copy(slices, radius, _deg(piece[0].start), _deg(piece[-1].end), limits=limits, check=check,
                       deadline=deadline, box=box)
        if alt is None or not alt.segments:
            continue
        new = _chain(alt.segments, piece[0].start)
        joined = merge_segments(head + new + _chain(rest, new[-1].end))
        k = (direction_changes(joined), total_length(joined))
        if k < key and check.free(joined):
            best, key = joined, k
        if key[0] == 0:
            break
    return best


def _local_repair(slices, dp, radii, limits, check, deadline):
    """``dp`` with car copies (:func:`floorfit.motion.drivable_car.car_copy`, searches kept near the route)
    over windows of the route around each cluster of its direction changes (:data:`LOCAL_WINDOW_SIZES`,
    widened up to :data:`LOCAL_WIDENINGS` times where a copy does not help), shortened; the joined path is
    checked exactly. None when no window got fewer direction changes. ``samples`` are not filled."""
    from floorfit.motion.drivable import FOUND, DrivePlan
    from floorfit.motion.segments import direction_changes, total_length
    from floorfit.motion.subdivision import shortcut_differential

    base = _window_span(slices, radii)
    segs = list(dp.segments)
    improved = False
    for wide in range(LOCAL_WIDENINGS + 1):
        span = base * 2 ** wide
        for first, last in reversed(_clusters(_cusp_distances(segs), span)):   # the later ones first: the
            total = total_length(segs)                                        # earlier distances stay
            new = _repair_window(slices, segs, max(0.0, first - span), min(total, last + span), span, radii,
                                 limits, check, deadline)
            if new is not None:
                segs, improved = new, True
        if direction_changes(segs) == 0:
            break
    if not improved:
        return None
    segs = shortcut_differential(segs, free=check.free, reverse=True, deadline=deadline)
    if not check.free(segs):
        return None
    return DrivePlan(FOUND, segments=segs, reason="rotate-and-drive along the holonomic route, with turns in "
                     "place and straights along a car path where it changed direction (fewer direction changes)")


#: What may help when a drive search stopped at a limit (by the DriveLimits field that stopped it).
LIMIT_ADVICE = {
    "time_limit_s": "a longer --time-limit may find it",
    "max_expansions": "a larger --max-expansions may find it",
    "max_split_depth": "the route passes through a place with almost no room to manoeuvre; "
                       "a finer --heading-step may give the search more room",
    "max_steering_checks": "the route needs very many small manoeuvres; a finer --heading-step may help",
}


def _drive(result: RouteResult, plan: Plan, vehicle: Vehicle, slices: SliceSet, G: nx.Graph,
           holonomic_local: np.ndarray, s_loc, g_loc, limits: DriveLimits) -> None:
    """Replace the holonomic answer in ``result`` by a drivable one (or not-found-within-limits)."""
    if vehicle.mode == "car":
        exact = ExactSliceCheck(slices, limits.path_step_m, limits.path_step_deg)

        def straights_and_turns(deadline):
            return differential_plan(slices, G, holonomic_local, s_loc, g_loc, reverse=True, limits=limits,
                                     check=exact, deadline=deadline, copy_radius_below=vehicle.min_turn_radius_m)

        dp = plan_car(slices, vehicle, s_loc, g_loc, limits=limits, differential=straights_and_turns, exact=exact)
        radius = vehicle.min_turn_radius_m
    else:
        dp = differential_plan(slices, G, holonomic_local, s_loc, g_loc, reverse=vehicle.reverse, limits=limits,
                               local_first=True)
        radius = None
    result.search = {"mode": vehicle.mode, "reverse": vehicle.reverse, "min_turn_radius_m": radius,
                     "status": dp.status, "reason": dp.reason, "expansions": dp.expansions,
                     "poses_checked": dp.poses_checked, "elapsed_s": round(dp.elapsed_s, 3)}
    result.settings = dict(result.settings)
    result.settings.update({
        "motion_mode": vehicle.mode, "check_step_m": limits.check_step_m, "check_step_deg": limits.check_step_deg,
        "path_step_m": limits.path_step_m, "path_step_deg": limits.path_step_deg,
        "max_expansions": limits.max_expansions, "time_limit_s": limits.time_limit_s,
        "slice_tolerance_m": round(float(slices.tolerance_m), 6),
        # linear interpolation between path samples vs the true motion (reference point), metres
        "interpolation_error_m": round(chord_error_m(radius, limits.path_step_m), 9),
    })
    result.tolerance_m = drive_tolerance_m(slices, limits, radius)
    result.settings["tolerance_m"] = round(float(result.tolerance_m), 6)
    if not dp.found:
        result.status = NOT_FOUND_WITHIN_LIMITS
        result.path = np.zeros((0, 3))
        result.length_m = result.rotation_deg = 0.0
        result.search["limit"] = dp.limit or None
        result.notes.append(f"{vehicle.mode} search: {dp.reason}")
        advice = LIMIT_ADVICE.get(dp.limit)
        if _controllable(vehicle):
            result.notes.append("the holonomic analysis connects the poses and this vehicle is small-time locally "
                                "controllable, so a drivable path exists" + (f"; {advice}" if advice else ""))
        else:
            result.notes.append("the holonomic analysis connects the poses, but a vehicle that cannot reverse may "
                                "still be unable to follow; no answer either way within the limits"
                                + (f"; {advice}" if advice else ""))
        return
    drawing = dp.samples.copy()
    drawing[:, 0] += plan.origin[0]
    drawing[:, 1] += plan.origin[1]
    result.path = drawing
    result.segments = segment_dicts(dp.segments, plan.origin)
    result.direction_changes = dp.direction_changes
    result.length_m = dp.length_m
    result.rotation_deg = dp.rotation_deg
    if dp.goal_error_m > 1e-6 or dp.goal_error_deg > 1e-6:
        result.notes.append(f"the path ends {dp.goal_error_m:.3f} m and {dp.goal_error_deg:.2f}° from the goal "
                            f"(goal tolerance {limits.goal_tolerance_m:g} m, {limits.goal_tolerance_deg:g}°)")
