"""Route queries: can the vehicle get from pose A to pose B, and how; if not, where it gets stuck.

Poses at this interface are in the **drawing frame**: (x, y) metres, heading in degrees
counter-clockwise from +x. Between consecutive waypoints of a returned path the vehicle
moves by linear interpolation of x, y and of the heading along the shorter arc; every
pose of that motion is clear of obstacles for the footprint grown by the slice
enlargement (sound bound, see :mod:`floorfit.cspace`).
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

from .cellpath import path_in_polygon, point_inside
from .collision import PoseChecker
from .cspace import SliceSet, build_slices, choose_headings
from .errors import InputError
from .headings import arc_deg, wrap_deg
from .plan import Plan
from .roadmap import build_roadmap, edge_turn
from .vehicle import Vehicle

__all__ = ["RouteResult", "find_route", "route_in_slices", "STATUSES"]

STATUSES = ("reachable", "unreachable", "start-blocked", "goal-blocked", "inconclusive")
#: Rotations merged into one waypoint pair stay below this, degrees (so the shorter arc is the one meant).
_MAX_MERGED_TURN_DEG = 120.0


@dataclass
class RouteResult:
    """Answer of a route query. ``path``: (N, 3) drawing-frame waypoints [x, y, heading_deg]."""

    status: str
    path: np.ndarray
    tolerance_m: float
    settings: dict[str, Any]
    notes: list[str] = field(default_factory=list)
    stuck: dict[str, Any] | None = None
    length_m: float = 0.0
    rotation_deg: float = 0.0
    cells: list = field(default_factory=list)

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


def _merge_rotations(path: list[np.ndarray]) -> np.ndarray:
    """Drop repeated waypoints and merge runs of same-direction rotations in place."""
    out: list[np.ndarray] = [path[0]]
    run = 0.0
    for p in path[1:]:
        q = out[-1]
        same_xy = abs(p[0] - q[0]) < 1e-12 and abs(p[1] - q[1]) < 1e-12
        dh = float(arc_deg(q[2], p[2]))
        if same_xy and abs(dh) < 1e-12:
            continue
        if same_xy and len(out) >= 2:
            r = out[-2]
            prev_is_rot = abs(r[0] - q[0]) < 1e-12 and abs(r[1] - q[1]) < 1e-12
            if prev_is_rot and np.sign(dh) == np.sign(run) and abs(run + dh) < _MAX_MERGED_TURN_DEG:
                out[-1] = p
                run += dh
                continue
        run = dh if same_xy else 0.0
        out.append(p)
    return np.asarray(out)


def route_in_slices(slices: SliceSet, G: nx.Graph, start_local, goal_local) -> tuple[str, np.ndarray | None, dict]:
    """Search ``G`` (roadmap of ``slices``) between two local-frame poses.

    Returns (status, local path (N, 3) or None, info). Status: "reachable", "unreachable",
    "start-outside" or "goal-outside" (the pose is not in its slice's free space).
    """
    s = slices.locate(*start_local)
    if s is None:
        return "start-outside", None, {}
    g = slices.locate(*goal_local)
    if g is None:
        return "goal-outside", None, {"start_node": s}
    try:
        nodes = nx.dijkstra_path(G, s, g, weight="weight")
    except nx.NetworkXNoPath:
        return "unreachable", None, {"start_node": s, "goal_node": g}
    heads = slices.cells.headings
    pos = np.array(start_local[:2], dtype=float)
    path: list[np.ndarray] = [np.array([pos[0], pos[1], start_local[2]])]
    edges = list(zip(nodes[:-1], nodes[1:]))
    i = 0
    while i < len(edges):
        # rotate through as many consecutive slices as possible at one point: the
        # intersection of their rotation zones
        region = G.edges[edges[i]]["zone"]
        j = i + 1
        while j < len(edges):
            nxt = shapely.intersection(region, G.edges[edges[j]]["zone"])
            if nxt.area <= 1e-6:
                break
            region, j = nxt, j + 1
        u = edges[i][0]
        p = point_inside(region, pos)
        leg = path_in_polygon(slices.components[u[0]][u[1]], pos, p)
        if leg is None:
            return "unreachable", None, {"error": f"no path inside cell {u}"}
        h_u = start_local[2] if u == s else heads[u[0]]
        path.extend(np.array([x, y, h_u]) for x, y in leg[1:])
        for _, v in edges[i:j]:
            path.append(np.array([p[0], p[1], heads[v[0]]]))
        pos = p
        i = j
    comp = slices.components[g[0]][g[1]]
    leg = path_in_polygon(comp, pos, goal_local[:2])
    if leg is None:
        return "unreachable", None, {"error": "no path inside the goal cell"}
    h_g = heads[g[0]] if len(nodes) > 1 else start_local[2]
    path.extend(np.array([x, y, h_g]) for x, y in leg[1:])
    path.append(np.array(goal_local, dtype=float))
    return "reachable", _merge_rotations(path), {"nodes": nodes}


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


def find_route(plan: Plan, vehicle: Vehicle, start, goal, *, heading_step_deg: float | None = None,
               workers: int | None = 1, slices: SliceSet | None = None, roadmap: nx.Graph | None = None,
               check_optimistic: bool = True) -> RouteResult:
    """Find a collision-free motion from ``start`` to ``goal`` (drawing-frame poses, metres/degrees).

    Status: ``reachable`` (path given, sound), ``unreachable`` (not even the optimistic
    bound connects them: the vehicle shrunk by ``tolerance_m`` could not do it either),
    ``inconclusive`` (the sound bound fails but the optimistic one does not: the answer
    depends on less than ``tolerance_m``), ``start-blocked`` / ``goal-blocked`` (that pose
    itself collides).
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
    return result
