"""A computed remedy for each finding: what to change, where and by how much, with its tolerance.

Every number here comes from the drawing's geometry, the vehicle and the check's settings;
nothing is a stock phrase. The targets err towards "enough":

* a width target is the width the vehicle needs (outline, margin and, for tight places,
  the required clearance on each side) plus twice the check's geometric tolerance (the
  sound bound grows the vehicle by that much on each side), rounded up to the next
  centimetre, so that the widened place passes the same check;
* a turn-round target is the diameter of the clear circle in which the vehicle can
  reverse its heading (:func:`floorfit.analysis.maneuvers.turnaround_circle`), grown by the
  drawing's curve tolerance and one map cell on each side (the turn-round map is sampled
  on those cells), rounded up to the next centimetre;
* a height target is the vehicle's height: obstacles starting at or above it do not count.

Positions are in the drawing frame, metres. The nearest place where the vehicle can turn
round is found on the check's own map (distance along the floor the vehicle fits on, 8-way
steps between map cells, so "about" to within a few per cent).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import shapely

from floorfit.analysis.maneuvers import turnaround_circle
from floorfit.analysis.passages import ObstacleIndex, min_width
from floorfit.report.geometry import parts

__all__ = ["Remedy", "RemedyContext", "compute_remedy", "round_up_cm", "grown_tolerance"]

#: Search radius (m) for the nearest turn-round place along the floor.
TURN_SEARCH_M = 60.0


def round_up_cm(value: float) -> float:
    """``value`` (m) rounded up to the next whole centimetre."""
    return math.ceil(round(value * 100.0, 6)) / 100.0


@dataclass(frozen=True)
class Remedy:
    """What to change for one finding.

    ``target_m``: the width, diameter or height to reach; ``change_m``: how much more than
    what is there now; ``at``: the place (drawing frame, m); ``circles``: clear circles that
    would serve as turn-round places, (x, y, diameter) in the drawing frame; ``nearest_turn``:
    (x, y, distance along the floor, m) of the nearest place where the vehicle can turn round
    now; ``tolerance_m``: how far the stated numbers may be off (measurement and sampling).
    """

    action: str
    text: str
    target_m: float | None = None
    change_m: float | None = None
    at: tuple[float, float] | None = None
    tolerance_m: float | None = None
    circles: list[tuple[float, float, float]] = field(default_factory=list)
    nearest_turn: tuple[float, float, float] | None = None


def grown_tolerance(settings: dict, vehicle: Any, grow_m: float) -> float:
    """The check's tolerance for the vehicle grown by ``grow_m`` all round: the rotation part
    scales with the footprint's radius about the reference point, the curve part does not."""
    tol = float(settings.get("tolerance_m") or 0.0)
    curve = float(settings.get("curve_tolerance_m") or 0.0)
    fp = vehicle.footprint
    xy = shapely.get_coordinates(fp)
    rho = float(np.max(np.hypot(xy[:, 0], xy[:, 1]))) if len(xy) else 0.0
    grown = vehicle.outline.buffer(grow_m, join_style="mitre", mitre_limit=10.0) if grow_m > 0 else fp
    gxy = shapely.get_coordinates(grown)
    rho_g = float(np.max(np.hypot(gxy[:, 0], gxy[:, 1]))) if len(gxy) else rho
    ratio = rho_g / rho if rho > 0 else 1.0
    return max(tol - curve, 0.0) * max(ratio, 1.0) + curve


class RemedyContext:
    """What the remedies of one check share (local-frame obstacle index, turn-round map)."""

    def __init__(self, result: Any):
        self.result = result
        plan = result.plan
        wb = np.asarray(plan.wall_heights)[:, 0] if len(plan.walls) else np.zeros(0)
        sb = np.asarray(plan.solid_heights)[:, 0] if len(plan.solids) else np.zeros(0)
        walls = [g for g, b in zip(plan.walls, wb) if b <= 0]
        solids = [g for g, b in zip(plan.solids, sb) if b <= 0]
        self.index = ObstacleIndex(walls, solids) if walls or solids else None
        self.settings = dict(result.settings or {})
        self.tol = float(self.settings.get("tolerance_m") or 0.0)
        self.curve = float(self.settings.get("curve_tolerance_m") or getattr(plan, "curve_tolerance_m", 0.0) or 0.0)
        self.map_cell = float(self.settings.get("map_cell_m") or 0.1)
        self.location_tol = float(self.settings.get("location_tolerance_m") or 0.15)
        self._turn_mask = None

    # -- geometry helpers ----------------------------------------------------------
    def width_at(self, lx: float, ly: float, reach: float = 12.0):
        if self.index is None:
            return math.inf, None, None
        return self.index.width_at(lx, ly, reach=reach)

    def clearance_at(self, lx: float, ly: float) -> float:
        if self.index is None:
            return math.inf
        return self.index.nearest(lx, ly)[0]

    def clearances(self, points: list[tuple[float, float]]) -> list[float]:
        """:meth:`clearance_at` (m) of each (x, y) of ``points`` (local frame), in one tree search."""
        if self.index is None or not len(self.index.geoms):
            return [math.inf] * len(points)
        if not points:
            return []
        xy = np.asarray(points, dtype=float)
        pts = shapely.points(xy[:, 0], xy[:, 1])
        # as ObstacleIndex.nearest, point by point: the nearest obstacle, its nearest point, the distance
        near = shapely.get_point(shapely.shortest_line(self.index.geoms[self.index.tree.nearest(pts)], pts), 0)
        return shapely.distance(pts, near).tolist()

    def turn_circle(self, vehicle: Any | None = None) -> tuple[np.ndarray, float, str] | None:
        vehicle = vehicle or self.result.vehicle
        try:
            centre, rho, how = turnaround_circle(vehicle)
        except Exception:       # a vehicle without motion details (report previews)
            return None
        return (centre, rho, how) if math.isfinite(rho) else None

    def turn_diameter(self, vehicle: Any | None = None) -> float | None:
        tc = self.turn_circle(vehicle)
        if tc is None:
            return None
        return round_up_cm(2.0 * (tc[1] + self.curve + self.map_cell))

    # -- the turn-round map ----------------------------------------------------------
    def _map(self):
        hc = self.result.turnability.get("heading_count") if self.result.turnability else None
        turns = self.result.turnability.get("turns_around") if self.result.turnability else None
        if not isinstance(hc, dict) or "counts" not in hc or not isinstance(turns, shapely.Geometry):
            return None
        if self._turn_mask is None:
            from floorfit.cspace.raster import fill_polygons

            counts = np.asarray(hc["counts"])
            ny, nx = counts.shape
            x0, y0, cell = float(hc["x0"]), float(hc["y0"]), float(hc["cell_m"])
            polys = [p for p in parts(turns) if isinstance(p, shapely.Polygon)]
            tmask = fill_polygons(polys, x0, y0, cell, nx, ny) if polys else np.zeros((ny, nx), bool)
            self._turn_mask = (counts > 0, tmask & (counts > 0), x0, y0, cell)
        return self._turn_mask

    def nearest_turn(self, lx: float, ly: float) -> tuple[float, float, float] | None:
        """(x, y local, distance along the floor) of the nearest map cell where the vehicle turns round."""
        m = self._map()
        if m is None:
            return None
        fits, turn, x0, y0, cell = m
        ny, nx = fits.shape
        r = int(TURN_SEARCH_M / cell)
        ix, iy = int((lx - x0) / cell), int((ly - y0) / cell)
        if not (0 <= ix < nx and 0 <= iy < ny):
            return None
        window = (max(iy - r, 0), min(iy + r + 1, ny), max(ix - r, 0), min(ix + r + 1, nx))
        a, b, c, d = window
        if not turn[a:b, c:d].any():
            return None
        found = _nearest_goal(fits, turn, iy, ix, window)
        if found is None:
            return None
        gy, gx, steps = found
        return (x0 + (gx + 0.5) * cell, y0 + (gy + 0.5) * cell, steps * cell)


#: Half-widths (map cells) of the growing windows :func:`_nearest_goal` searches before the whole one.
_GROWING_WINDOWS = (32, 128, 512)


def _nearest_goal(walk: np.ndarray, goal: np.ndarray, iy: int, ix: int,
                  window: tuple[int, int, int, int]) -> tuple[int, int, float] | None:
    """(row, column, steps) of the goal cell nearest to cell (iy, ix) along True cells of ``walk``
    (steps 1 straight, √2 diagonal, the start cell always walkable), searched inside the rows
    ``window[0]:window[1]`` and columns ``window[2]:window[3]``; None when no goal is reached.

    The search first runs in growing square windows round the start: a walk of ``k`` steps or
    less stays within ``k`` cells of the start in each direction, so a goal found at most the
    window's half-width away is the one (and its step count the one) the whole window gives,
    ties going to the same cell (the first in row order)."""
    a0, b0, c0, d0 = window
    for half in (*[h for h in _GROWING_WINDOWS if h < max(b0 - a0, d0 - c0)], None):
        if half is None:
            a, b, c, d = a0, b0, c0, d0
        else:
            a, b, c, d = max(iy - half, a0), min(iy + half + 1, b0), max(ix - half, c0), min(ix + half + 1, d0)
        g = goal[a:b, c:d]
        if not g.any():
            continue
        w = walk[a:b, c:d].copy()
        w[iy - a, ix - c] = True
        dist = np.where(g, _geodesic(w, iy - a, ix - c), np.inf)
        k = int(np.argmin(dist))
        best = float(dist.flat[k])
        if half is not None and not best <= half:
            continue                      # a nearer goal may lie outside this window
        if not math.isfinite(best):
            return None
        gy, gx = np.unravel_index(k, dist.shape)
        return int(gy) + a, int(gx) + c, best
    return None


def _geodesic(walk: np.ndarray, sy: int, sx: int) -> np.ndarray:
    """Steps (1 straight, √2 diagonal) from (sy, sx) over True cells; inf elsewhere."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import dijkstra

    ny, nx = walk.shape
    ids = np.full(walk.shape, -1, dtype=np.int64)
    cells = np.flatnonzero(walk)
    ids.flat[cells] = np.arange(len(cells))
    rows, cols, wts = [], [], []
    for dy, dx, w in ((0, 1, 1.0), (1, 0, 1.0), (1, 1, math.sqrt(2)), (1, -1, math.sqrt(2))):
        a = ids[0:ny - dy, max(0, -dx):nx - max(0, dx)]           # cell (i, j)
        b = ids[dy:ny, max(0, dx):nx + min(0, dx)]                # its neighbour (i + dy, j + dx)
        ok = (a >= 0) & (b >= 0)
        rows.append(a[ok])
        cols.append(b[ok])
        wts.append(np.full(int(ok.sum()), w))
    r, c, w = np.concatenate(rows), np.concatenate(cols), np.concatenate(wts)
    g = coo_matrix((w, (r, c)), shape=(len(cells), len(cells))).tocsr()
    d = dijkstra(g, directed=False, indices=int(ids[sy, sx]))
    out = np.full(walk.shape, np.inf)
    out.flat[cells] = d
    return out


# -- remedies per kind -------------------------------------------------------------------------
def _place(f: Any) -> str:
    return f"at {f.label}" if f.label else f"at ({f.x:.2f}, {f.y:.2f}) m"


def _cm(v: float) -> str:
    return f"{v * 100:.0f} cm"


def _width_remedy(f: Any, ctx: RemedyContext, needed: float, tol: float, what: str) -> Remedy:
    clear = f.clear_width_m
    target = round_up_cm(needed + 2.0 * tol)
    if clear is None:
        lx, ly = ctx.result.plan.to_local(f.x, f.y)
        clear = ctx.width_at(lx, ly)[0]
    change = max(target - float(clear), 0.0) if math.isfinite(float(clear)) else None
    more = f" ({_cm(change)} more than the {float(clear):.2f} m there now)" if change is not None else ""
    text = (f"Widen the clear width {_place(f)} to at least {target:.2f} m{more}: move one of the "
            f"bounding edges listed below{'' if change is None else f' back by {change:.2f} m'}. "
            f"{what} {needed:.2f} m, plus 2 × {tol * 1000:.0f} mm check tolerance, rounded up to the "
            f"centimetre; the present width is measured to about ±{ctx.tol * 1000:.0f} mm.")
    return Remedy("widen", text, target_m=target, change_m=change, at=(f.x, f.y), tolerance_m=ctx.tol)


def _blocked_station(f: Any, ctx: RemedyContext) -> Remedy:
    result = ctx.result
    needed = float(f.needed_width_m if f.needed_width_m is not None else min_width(result.vehicle.footprint))
    lx, ly = result.plan.to_local(f.x, f.y)
    clear = ctx.width_at(lx, ly)[0]
    target = round_up_cm(needed + 2.0 * ctx.tol)
    parts_ = []
    change = None
    if math.isfinite(clear):
        change = max(target - clear, 0.0)
        parts_.append(f"The clear width at the station is {clear:.2f} m; the vehicle needs {needed:.2f} m "
                      f"(outline plus margin): widen it to at least {target:.2f} m ({_cm(change)} more, "
                      f"2 × {ctx.tol * 1000:.0f} mm tolerance included)")
    fits = result.turnability.get("fits") if result.turnability else None
    if isinstance(fits, shapely.Geometry) and not fits.is_empty:
        from shapely.ops import nearest_points

        q = nearest_points(fits, shapely.Point(lx, ly))[0]
        d = math.hypot(q.x - lx, q.y - ly)
        qx, qy = result.plan.to_drawing(q.x, q.y)
        parts_.append(f"or move the station {d:.2f} m to ({qx:.2f}, {qy:.2f}) m, the nearest point where "
                      f"the vehicle fits (to within {ctx.map_cell * 100:.0f} cm, the map cell)")
    if not parts_:
        parts_.append(f"The vehicle (needs {needed:.2f} m clear) does not fit at the station: give it more room")
    return Remedy("station", "; ".join(parts_) + ".", target_m=target, change_m=change, at=(f.x, f.y),
                  tolerance_m=ctx.tol)


def _height(f: Any, ctx: RemedyContext) -> Remedy:
    clear, need = f.clear_height_m, f.needed_height_m
    if clear is None or need is None:
        return Remedy("raise", f"An overhead obstacle {_place(f)} is lower than the vehicle; its height "
                      "is not given, so the clear height needed cannot be stated.", at=(f.x, f.y))
    change = max(float(need) - float(clear), 0.0)
    text = (f"Raise the underside of the overhead obstacle {_place(f)} to at least {float(need):.2f} m above "
            f"the floor ({_cm(change)} more than its {float(clear):.2f} m), or use a vehicle lower than "
            f"{float(clear):.2f} m. Heights are taken as given in the drawing and site file (no tolerance "
            "is added).")
    return Remedy("raise", text, target_m=float(need), change_m=change, at=(f.x, f.y), tolerance_m=0.0)


def _turn_room(f: Any, ctx: RemedyContext, stretch_local: Any | None) -> Remedy:
    """No-turn stretches and corners: the clear circle a turn-round needs against what is there."""
    result = ctx.result
    plan = result.plan
    need = ctx.turn_diameter()
    lx, ly = plan.to_local(f.x, f.y)
    if need is None:
        return Remedy("turn-room", f"This vehicle never turns round (motion mode "
                      f"'{result.vehicle.mode}'); the stretch {_place(f)} can only be driven as it is.",
                      at=(f.x, f.y))
    best = _widest_spot(ctx, stretch_local, lx, ly)
    widest = 2.0 * best[0] if math.isfinite(best[0]) else None
    wx, wy = plan.to_drawing(best[1], best[2])
    change = max(need - widest, 0.0) if widest is not None else None
    circles = _circle_places(stretch_local, ctx, need, (best[1], best[2]))
    text = (f"A turn-round needs a clear circle of {need:.2f} m diameter here (the vehicle's turn-round "
            f"circle plus {ctx.curve * 1000:.0f} mm curve tolerance and one {ctx.map_cell * 100:.0f} cm map "
            f"cell each side, rounded up); ")
    if widest is not None:
        text += (f"the widest this place offers is {widest:.2f} m, at ({wx:.2f}, {wy:.2f}) m, "
                 f"{_cm(change)} short. ")
    if f.kind == "no-turn":
        if len(circles) == 1:
            cx, cy, _ = circles[0]
            text += f"Clear a {need:.2f} m circle centred at ({cx:.2f}, {cy:.2f}) m, "
        else:
            text += (f"Clear {len(circles)} circles of {need:.2f} m along it (centres listed below), ")
        text += f"or widen the whole stretch to at least {need:.2f} m."
    else:
        text += (f"Clear a {need:.2f} m circle centred at ({wx:.2f}, {wy:.2f}) m so that the vehicle can "
                 "turn on the spot where the ways meet.")
    near = ctx.nearest_turn(lx, ly)
    nearest = None
    if near is not None:
        nx_, ny_ = plan.to_drawing(near[0], near[1])
        nearest = (nx_, ny_, near[2])
        text += (f" Nearest place where it can turn round now: ({nx_:.2f}, {ny_:.2f}) m, about {near[2]:.1f} m "
                 "along the floor.")
    return Remedy("turn-room", text, target_m=need, change_m=change, at=(wx, wy),
                  tolerance_m=ctx.map_cell, circles=circles, nearest_turn=nearest)


def _widest_spot(ctx: RemedyContext, stretch: Any | None, lx: float, ly: float) -> tuple[float, float, float]:
    """(clearance, x, y) of the largest clear circle centred in the stretch (local frame): the best
    grid samples moved to the middle of the clear width through them."""
    samples = [(ctx.clearance_at(lx, ly), lx, ly)]
    if stretch is not None and not stretch.is_empty:
        pts = _sample_points(stretch, ctx.map_cell)
        samples += [(c, px, py) for c, (px, py) in zip(ctx.clearances(pts), pts)]
    samples.sort(key=lambda t: -t[0])
    best = samples[0]
    for _c, px, py in samples[:8]:
        w, q1, q2 = ctx.width_at(px, py)
        if q1 is None or q2 is None or not math.isfinite(w):
            continue
        mx, my = 0.5 * (q1[0] + q2[0]), 0.5 * (q1[1] + q2[1])
        if stretch is not None and not stretch.buffer(ctx.map_cell).contains(shapely.Point(mx, my)):
            continue
        c = ctx.clearance_at(mx, my)
        if c > best[0] + 1e-9:
            best = (c, mx, my)
    return best


def _sample_points(geom: Any, cell: float, limit: int = 4000) -> list[tuple[float, float]]:
    """Points on a grid of ``cell`` inside ``geom`` (local frame), at most about ``limit``."""
    x0, y0, x1, y1 = geom.bounds
    step = max(cell, math.sqrt(max((x1 - x0) * (y1 - y0), 1e-9) / limit))
    xs = np.arange(x0 + step / 2, x1, step)
    ys = np.arange(y0 + step / 2, y1, step)
    if not len(xs) or not len(ys):
        c = geom.representative_point()
        return [(c.x, c.y)]
    gx, gy = np.meshgrid(xs, ys)
    inside = shapely.contains_xy(geom, gx, gy)
    pts = list(zip(gx[inside].tolist(), gy[inside].tolist()))
    if not pts:
        c = geom.representative_point()
        pts = [(c.x, c.y)]
    return pts


def _circle_places(stretch: Any | None, ctx: RemedyContext, need: float,
                   widest: tuple[float, float]) -> list[tuple[float, float, float]]:
    """Centres (drawing frame) of clear circles of diameter ``need`` that together leave no part of
    the stretch farther than a short move from a turn-round place (the check's no-turn rule:
    the reference point within its reach of a turn-round place)."""
    plan = ctx.result.plan
    vehicle = ctx.result.vehicle
    tc = ctx.turn_circle()
    if stretch is None or stretch.is_empty or tc is None:
        x, y = plan.to_drawing(*widest)
        return [(x, y, need)]
    centre, rho, _ = tc
    reach = float(np.hypot(*centre)) + 0.5 * vehicle.length_m + ctx.map_cell
    # a cleared circle of radius need/2 holds turn-round places within need/2 - rho - curve of its centre
    cover = reach + max(need / 2.0 - rho - ctx.curve - ctx.map_cell, 0.0)
    pts = np.asarray(_sample_points(stretch, ctx.map_cell))
    left = np.ones(len(pts), bool)
    centres: list[np.ndarray] = []
    # greedy cover: the first circle at the widest spot; then, for the uncovered point nearest
    # the covered part, the sample within reach of it that covers most of what is left
    cur = np.asarray(widest, dtype=float)
    for _ in range(60):
        centres.append(cur)
        left &= np.hypot(pts[:, 0] - cur[0], pts[:, 1] - cur[1]) > cover
        if not left.any():
            break
        rest = pts[left]
        d = np.min(np.stack([np.hypot(rest[:, 0] - c[0], rest[:, 1] - c[1]) for c in centres]), axis=0)
        u = rest[int(np.argmin(d))]
        cand = pts[np.hypot(pts[:, 0] - u[0], pts[:, 1] - u[1]) <= cover]
        gain = [int(np.sum(np.hypot(rest[:, 0] - c[0], rest[:, 1] - c[1]) <= cover)) for c in cand]
        cur = cand[int(np.argmax(gain))] if len(cand) else u
        w, q1, q2 = ctx.width_at(float(cur[0]), float(cur[1]))      # onto the middle of the clear width
        if q1 is not None and q2 is not None and math.isfinite(w):
            mid = 0.5 * (np.asarray(q1, float) + np.asarray(q2, float))
            if (np.hypot(*(mid - cur)) <= 0.5 * w and np.hypot(*(mid - u)) <= cover
                    and stretch.buffer(ctx.map_cell).contains(shapely.Point(*mid))):
                cur = mid
    return [(*plan.to_drawing(float(c[0]), float(c[1])), need) for c in centres]


def _maneuver(f: Any, ctx: RemedyContext) -> Remedy:
    vehicle = ctx.result.vehicle
    fields_ = getattr(vehicle, "__dataclass_fields__", {})
    forward = replace(vehicle, reverse=False) if "reverse" in fields_ else vehicle
    need = ctx.turn_diameter(forward)
    turns = f" with {f.direction_changes} changes of direction" if f.direction_changes else ""
    if need is None:
        return Remedy("forward-turn", f"The stations are served only by manoeuvring{turns}; the forward turn "
                      "this vehicle would need cannot be sized from its description.", at=(f.x, f.y))
    text = (f"The stations are served only by manoeuvring{turns}. A turn without reversing needs a clear "
            f"circle of {need:.2f} m diameter (a full turn at the minimum turning radius, curve tolerance "
            f"and one map cell each side included) {_place(f)}, or a loop the vehicle can drive round.")
    return Remedy("forward-turn", text, target_m=need, at=(f.x, f.y), tolerance_m=ctx.map_cell)


def compute_remedy(result: Any, finding: Any, ctx: RemedyContext | None = None) -> Remedy:
    """The remedy of ``finding`` (one of ``result.findings``)."""
    ctx = ctx or RemedyContext(result)
    f = finding
    vehicle = result.vehicle
    req = f.required_clearance_m if f.required_clearance_m is not None else result.settings.get("required_clearance_m")
    if f.kind == "blocked":
        if f.cause == "height":
            return _height(f, ctx)
        if f.cause == "station":
            return _blocked_station(f, ctx)
        if f.cause == "turn":
            return _turn_room(f, ctx, None)
        needed = float(f.needed_width_m if f.needed_width_m is not None else min_width(vehicle.footprint))
        return _width_remedy(f, ctx, needed, ctx.tol, "The vehicle needs (outline plus margin)")
    if f.kind == "tight":
        req = float(req or 0.0)
        needed = float(f.needed_width_m if f.needed_width_m is not None
                       else min_width(vehicle.outline) + 2.0 * req)
        tol = grown_tolerance(result.settings or {}, vehicle, req)
        return _width_remedy(f, ctx, needed, tol,
                             f"The outline with {req:.2f} m clearance each side needs")
    if f.kind == "no-turn":
        geom = f.geometry if isinstance(f.geometry, shapely.Geometry) else None
        return _turn_room(f, ctx, geom)
    if f.kind == "maneuver":
        return _maneuver(f, ctx)
    return Remedy("none", "No remedy is computed for this kind of finding.", at=(f.x, f.y))
