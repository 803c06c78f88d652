"""Forward motion search for a train: hybrid A* over (x, y, heading, hitch angle).

The search follows the pattern of D. Dolgov, S. Thrun, M. Montemerlo, J. Diebel, "Path planning
for autonomous vehicles in unknown semi-structured environments", IJRR 29(5), 2010 (as
:mod:`floorfit.motion.hybrid_astar` does for rigid cars), with the cart's heading added to the
state: the configuration space of a tractor with one cart is the plane times the tractor's
heading circle times the hitch-angle circle.

* Cells: x, y at ``resolution_m``, the tractor heading in ``heading_bins`` bins, the hitch angle in
  bins of ``hitch_bin_deg``; one node is kept per cell, with its exact continuous state.
* Primitives (forward only; reversing with a cart is not supported): a straight and left and right
  arcs at two radii, each ``step_m`` long, and, for a differential tractor, rotations in place by
  two heading bins. The cart is carried along each primitive by the exact closed form of
  :mod:`floorfit.articulated.kinematics`; a primitive is kept only if both bodies are clear
  (footprints grown by the sampling tolerance: sound), the hitch angle stays within its limit and
  the cart is never pushed.
* Heuristic: the larger of the straight-line distance and a grid distance through floor where the
  tractor's reference point can be (its inscribed disc about the reference point fits), weighted
  by ``weight`` (> 1 trades path length for speed; path quality is not the point here).
* Analytic completion: from time to time (every expansion near the goal) the shortest forward
  (Dubins) path to the goal is driven with the whole train and accepted if it is clear.

A path found is clear and drivable forward within the stated tolerance. When the search gives up
(every reachable cell searched, or a limit reached), that is *not* a proof that no forward path
exists: finer cells or other primitives might find one. Callers report it as "no forward path
found", which errs towards "does not pass".
"""

from __future__ import annotations

import heapq
import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import dijkstra

from floorfit.analysis.clearance_field import clearance_field
from floorfit.articulated.kinematics import DEFAULT_TOLERANCE_M, TrainMotion, follow, jack_knife_radius
from floorfit.articulated.sweep import TrainChecker, judge_motion
from floorfit.errors import InputError
from floorfit.motion.dubins import dubins_path
from floorfit.motion.segments import Segment, arc, rotate, straight
from floorfit.vehicles.train import Train

__all__ = [
    "FOUND",
    "GOAL_BLOCKED",
    "NOT_FOUND",
    "START_BLOCKED",
    "GridHeuristic",
    "SearchSettings",
    "TrainPlanResult",
    "cart_pose",
    "plan_forward",
]

FOUND = "found"
NOT_FOUND = "not-found-within-limits"
START_BLOCKED = "start-blocked"
GOAL_BLOCKED = "goal-blocked"


@dataclass(frozen=True)
class SearchSettings:
    """Resolution and limits of :func:`plan_forward` (metres, degrees, seconds)."""

    resolution_m: float | None = None       # default: tractor width / 4, within 0.05 .. 0.2 m
    heading_bins: int = 72
    hitch_bin_deg: float | None = None     # default: resolution / tongue (about one cell at the axle), 2..10 deg
    max_expansions: int = 20_000
    time_limit_s: float | None = 30.0
    rotate_in_place: bool = True            # differential tractors: allow turning on the spot
    min_radius_m: float | None = None       # no primitive or completion tighter than this (m)
    weight: float = 2.5
    tolerance_m: float = DEFAULT_TOLERANCE_M


@dataclass
class TrainPlanResult:
    """Outcome of :func:`plan_forward`. ``segments``: tractor path (motion segments, radians) and
    ``motion``: the sampled train along it (None unless found). ``start_index``: which start
    pose the path begins from."""

    status: str
    segments: list[Segment] = field(default_factory=list)
    motion: TrainMotion | None = None
    start_index: int | None = None
    expansions: int = 0
    reason: str = ""
    elapsed_s: float = 0.0
    settings: dict[str, Any] = field(default_factory=dict)
    #: why a not-found search stopped: "max_expansions" or "time_limit_s" (it gave up), or
    #: "exhausted" (every cell reachable forward at this resolution was searched: no forward
    #: path exists at this resolution); "" otherwise
    stopped_by: str = ""

    @property
    def found(self) -> bool:
        return self.status == FOUND

    @property
    def gave_up(self) -> bool:
        """Not found because a search limit was reached (a larger limit may find a path)."""
        return self.status == NOT_FOUND and self.stopped_by in ("max_expansions", "time_limit_s")


def cart_pose(train: Train, pose, cart_heading: float | None = None) -> np.ndarray:
    """Cart axle centre and heading (x, y, heading rad) for a tractor pose (x, y, heading rad);
    default cart heading: in line with the tractor."""
    x, y, th = (float(v) for v in pose)
    psi = th if cart_heading is None else float(cart_heading)
    hx, hy = train.hitch
    c, s = math.cos(th), math.sin(th)
    Hx, Hy = x + c * hx - s * hy, y + s * hx + c * hy
    return np.array([Hx - train.tongue_m * math.cos(psi), Hy - train.tongue_m * math.sin(psi), psi])


def _deg(poses: np.ndarray) -> np.ndarray:
    out = np.array(poses, dtype=float).reshape(-1, 3)
    out[:, 2] = np.degrees(out[:, 2])
    return out


class GridHeuristic:
    """Forward-only cost-to-go for the tractor's reference point on a coarse (x, y, heading) lattice.

    Nodes: square cells of ``cell`` metres times ``headings`` heading bins. Edges, forward only: a
    straight of two cells, and arcs of ``radius`` (the tightest steady turn the train holds, or the
    tractor's own tightest arc when searching without the cart) that change the heading by one
    bin; an edge is kept when its start, middle and end cells can hold the reference point (clear
    of obstacles by the largest disc about the reference point inside the tractor footprint).
    Costs are lengths driven. Shortest paths *to* the goal (all headings, or the goal's heading
    bin and its neighbours) by :func:`scipy.sparse.csgraph.dijkstra` on the reversed graph.

    This is the search's guide, not a bound: it knows that a forward-only vehicle cannot turn on
    the spot or reverse, so the search does not dig into places where turning back is impossible.
    Positions are rounded to cells, so it is approximate; it never decides an answer. Lattice
    nodes that cannot reach the goal get a large finite value (the search may still try them).
    """

    UNREACHABLE_M = 1.0e4

    def __init__(self, checker: TrainChecker, cell: float, *, radius: float, headings: int = 16):
        from shapely.geometry import Point

        plan = checker.plan
        fp = checker.train.tractor.footprint
        x0, y0, x1, y1 = plan.local_bounds()
        pad = 1.0
        area = max((x1 - x0 + 2 * pad) * (y1 - y0 + 2 * pad), 1e-9)
        cell = max(cell, math.sqrt(area * headings / 1.5e6))         # at most ~1.5 million lattice nodes
        self.field = clearance_field(plan.walls, plan.solids, (x0 - pad, y0 - pad, x1 + pad, y1 + pad), cell)
        inner = fp.exterior.distance(Point(0, 0)) if fp.covers(Point(0, 0)) else 0.0
        self.free = self.field.dist >= inner - 0.75 * cell
        self.cell = cell
        self.K = int(headings)
        self.radius = float(radius)
        self.origin = (self.field.x0 + 0.5 * cell, self.field.y0 + 0.5 * cell)
        self.graph_t = self._reversed_graph()
        self.cache: dict[tuple, Callable] = {}

    def _reversed_graph(self):
        free = self.free
        rows, cols = free.shape
        K, c = self.K, self.cell
        n = rows * cols
        src, dst, cost = [], [], []
        dth = 2.0 * math.pi / K
        prims = [(2.0 * c, 0.0, 0, 2.0 * c)]                      # straight: (forward, left, dk, length)
        for side in (1, -1):
            prims.append((self.radius * math.sin(dth), side * self.radius * (1.0 - math.cos(dth)), side,
                          max(self.radius * dth, 0.25 * c)))
        rr, cc = np.meshgrid(np.arange(rows), np.arange(cols), indexing="ij")
        for k in range(K):
            th = k * dth
            for fwd, left, dk, length in prims:
                ex = fwd * math.cos(th) - left * math.sin(th)
                ey = fwd * math.sin(th) + left * math.cos(th)
                dc, dr = int(round(ex / c)), int(round(ey / c))
                mc, mr = int(round(0.5 * ex / c)), int(round(0.5 * ey / c))
                r2, c2 = rr + dr, cc + dc
                ok = free & (r2 >= 0) & (r2 < rows) & (c2 >= 0) & (c2 < cols)
                rm, cm = rr + mr, cc + mc
                ok &= (rm >= 0) & (rm < rows) & (cm >= 0) & (cm < cols)
                ok[ok] &= free[r2[ok], c2[ok]] & free[rm[ok], cm[ok]]
                k2 = (k + dk) % K
                u = (rr[ok] * cols + cc[ok]) * K + k
                v = (r2[ok] * cols + c2[ok]) * K + k2
                src.append(u)
                dst.append(v)
                cost.append(np.full(len(u), length))
        # reversed edges: v -> u, so that distances from the goal are costs to go
        return coo_matrix((np.concatenate(cost), (np.concatenate(dst), np.concatenate(src))),
                          shape=(n * K, n * K)).tocsr()

    def for_goal(self, xy, heading: float | None = None) -> Callable[[float, float, float], float]:
        key = (round(float(xy[0]), 6), round(float(xy[1]), 6), None if heading is None else round(heading, 6))
        if key not in self.cache:
            rows, cols = self.free.shape
            K, c = self.K, self.cell
            ox, oy = self.origin
            gc, gr = int(round((xy[0] - ox) / c)), int(round((xy[1] - oy) / c))
            if 0 <= gr < rows and 0 <= gc < cols:
                base = (gr * cols + gc) * K
                if heading is None:
                    goals = [base + k for k in range(K)]
                else:
                    kg = int(round(heading / (2.0 * math.pi / K))) % K
                    goals = [base + (kg + d) % K for d in (-1, 0, 1)]
                dist = dijkstra(self.graph_t, directed=True, indices=goals, min_only=True)
            else:
                dist = np.full(rows * cols * K, np.inf)
            dist = np.where(np.isfinite(dist), dist, self.UNREACHABLE_M).reshape(rows, cols, K)

            def lookup(x: float, y: float, th: float, dist=dist) -> float:
                col, row = int(round((x - ox) / c)), int(round((y - oy) / c))
                if not (0 <= row < rows and 0 <= col < cols):
                    return 0.0
                k = int(round(th / (2.0 * math.pi / K))) % K
                return float(dist[row, col, k])

            self.cache[key] = lookup
        return self.cache[key]


def _radii(train: Train, res: float, floor_m: float | None = None,
           with_cart: bool = True) -> tuple[list[float], list[float]]:
    """Primitive turn radii and analytic-completion radii (m), none below ``floor_m``. With the
    cart, completions use only radii the train can hold (tighter ones nearly always jack-knife)."""
    tractor = train.tractor
    r_jack = jack_knife_radius(train)
    if tractor.mode == "car":
        r_min = float(tractor.min_turn_radius_m)
        prim = [r_min, max(2.0 * r_min, r_jack)]
        analytic = [max(r_min, 1.05 * r_jack), r_min]
    else:
        r_tight = max(0.5 * tractor.width_m, 2.0 * res)
        prim = [r_tight, max(2.0 * r_tight, r_jack)]
        analytic = [1.05 * r_jack, r_tight]
    if with_cart:
        analytic = analytic[:1]
    if floor_m:
        prim = [max(r, floor_m) for r in prim]
        analytic = [max(r, floor_m) for r in analytic]
    return sorted(set(prim)), sorted(set(analytic), reverse=True)


class _Primitives:
    """Forward motion primitives of a train, precomputed in the tractor frame.

    The tractor's samples and the hitch's path along each primitive do not depend on where the
    primitive starts; only the cart's relative heading does, and the closed form of
    :func:`floorfit.articulated.kinematics.hitch_relaxation` is evaluated for all samples of all
    primitives at once (elementwise; primitives are short, so nothing overflows).
    """

    def __init__(self, train: Train, step: float, radii: list[float], spin_angle: float | None, tolerance: float):
        self.train = train
        items: list[tuple[str, float, int, float, float]] = [("straight", step, 0, 0.0, step)]
        for r in radii:
            for side in (1, -1):
                items.append(("arc", step, side, r, step * 1.05))
        if spin_angle:
            for side in (1, -1):
                ang = side * spin_angle
                items.append(("rotate", ang, 0, 0.0, 0.25 + train.tractor_reach_m * abs(ang)))
        self.items = items
        rel, s_h, k_h, a0, pid, steps, ends = [], [], [], [], [], [], []
        origin = (0.0, 0.0, 0.0)
        for i, (_kind, _amount, _side, _r, _cost) in enumerate(items):
            seg = self._segment(origin, i)
            m = follow([seg], train, cart_heading=0.0, tolerance_m=tolerance)
            n = len(m) - 1
            frac = np.arange(1, n + 1) / n
            from floorfit.articulated.kinematics import _hitch_path
            sh, kh, alpha0, _ = _hitch_path(seg, train.hitch)
            rel.append(m.tractor[1:])
            s_h.append(sh * frac)
            k_h.append(np.full(n, kh))
            a0.append(np.full(n, alpha0))
            pid.append(np.full(n, i))
            steps.append(m.angle_step_rad)
            ends.append(seg.end)
        self.rel = np.concatenate(rel)
        self.s_h = np.concatenate(s_h)
        self.k_h = np.concatenate(k_h)
        self.alpha0 = np.concatenate(a0)
        self.pid = np.concatenate(pid)
        self.starts = np.r_[0, np.flatnonzero(np.diff(self.pid)) + 1]
        self.angle_step = np.array(steps)
        self.ends = np.array(ends)
        self.costs = np.array([it[4] for it in items])
        L = train.tongue_m
        mu = 0.25 * (1.0 / L ** 2 - self.k_h ** 2)
        r = np.sqrt(np.abs(mu)) * self.s_h
        pos = mu > 0
        with np.errstate(invalid="ignore", divide="ignore"):
            self.c = np.where(pos, np.cosh(r), np.cos(r))
            safe = np.where(r > 1e-8, r, 1.0)
            self.S = np.where(r > 1e-8, np.where(pos, np.sinh(r), np.sin(r)) / safe, 1.0)
        self.a = -0.5 / L
        self.b = 0.5 * self.k_h

    def _segment(self, pose, i: int) -> Segment:
        kind, amount, side, r, _ = self.items[i]
        if kind == "straight":
            return straight(pose, amount)
        if kind == "arc":
            return arc(pose, amount, side, r)
        return rotate(pose, amount)

    def expand(self, x: float, y: float, th: float, psi: float):
        """World samples of every primitive from (x, y, th) with cart heading psi:
        (tractor (M, 3) rad, cart (M, 3) rad, hitch angle (M,), pulling (M,) bool)."""
        train = self.train
        c0, s0 = math.cos(th), math.sin(th)
        rel = self.rel
        T = np.empty_like(rel)
        T[:, 0] = x + c0 * rel[:, 0] - s0 * rel[:, 1]
        T[:, 1] = y + s0 * rel[:, 0] + c0 * rel[:, 1]
        T[:, 2] = th + rel[:, 2]
        gamma0 = np.remainder(th + self.alpha0 - psi + math.pi, 2.0 * math.pi) - math.pi
        y1, y2 = np.sin(0.5 * gamma0), np.cos(0.5 * gamma0)
        sS = self.s_h * self.S
        z1 = self.c * y1 + sS * (self.a * y1 + self.b * y2)
        z2 = self.c * y2 + sS * (-self.b * y1 - self.a * y2)
        gam = 2.0 * np.arctan2(z1, z2)
        moving = self.s_h > 0
        ps = np.where(moving, th + self.alpha0 + self.k_h * self.s_h - gam, psi)
        hx, hy = train.hitch
        ct, st = np.cos(T[:, 2]), np.sin(T[:, 2])
        Hx = T[:, 0] + ct * hx - st * hy
        Hy = T[:, 1] + st * hx + ct * hy
        L = train.tongue_m
        C = np.column_stack([Hx - L * np.cos(ps), Hy - L * np.sin(ps), ps])
        phi = np.remainder(T[:, 2] - ps + math.pi, 2.0 * math.pi) - math.pi
        pulling = ~moving | (np.cos(gam) >= -1e-9)
        return T, C, phi, pulling

    def end_pose(self, x: float, y: float, th: float, i: int) -> tuple[float, float, float]:
        ex, ey, eth = self.ends[i]
        c0, s0 = math.cos(th), math.sin(th)
        return x + c0 * ex - s0 * ey, y + s0 * ex + c0 * ey, th + eth


# one hybrid A* search over (x, y, heading, hitch angle); its closures share the node table, open list and goal test
def plan_forward(checker: TrainChecker, starts: Sequence, goal, *, goal_heading_tol_deg: float = 5.0,  # noqa: C901
                 with_cart: bool = True, settings: SearchSettings | None = None,
                 heuristics: dict | None = None, trace: list | None = None) -> TrainPlanResult:
    """Search a forward motion of the train from one of ``starts`` to ``goal`` (local frame).

    ``starts``: tractor poses (x m, y m, heading rad), each with the cart in line behind.
    ``goal``: (x, y, heading rad or None); the tractor's reference point must end within
    ``resolution_m`` of it (exactly, when reached by the analytic completion) and, when a heading is
    given, within ``goal_heading_tol_deg``. ``with_cart`` False searches for the tractor alone
    (same primitives, cart ignored): the comparison that tells off-tracking from the rest.
    ``heuristics``: a dict shared between calls on the same plan and train, caching the
    cost-to-go lattices (they are keyed by cell size and turn radius). ``trace``: a list that
    receives every expanded state (x, y, heading, cart heading), for plots.
    """
    cfg = settings or SearchSettings()
    t_start = time.monotonic()
    train = checker.train
    res = cfg.resolution_m or min(0.2, max(0.05, train.tractor.width_m / 4.0))
    step = max(1.5 * math.sqrt(2.0) * res, 0.1)
    bins = int(cfg.heading_bins)
    hbin = 2.0 * math.pi / bins
    jbin_deg = cfg.hitch_bin_deg or min(10.0, max(2.0, math.degrees(res / train.tongue_m)))
    jbin = math.radians(jbin_deg)
    prim_radii, analytic_radii = _radii(train, res, cfg.min_radius_m, with_cart)
    spin = train.tractor.mode != "car" and cfg.rotate_in_place
    info = {"resolution_m": round(res, 4), "step_m": round(step, 4), "heading_bins": bins,
            "hitch_bin_deg": round(jbin_deg, 3), "turn_radii_m": [round(r, 4) for r in prim_radii],
            "analytic_radii_m": [round(r, 4) for r in analytic_radii], "rotate_in_place": spin,
            "tolerance_m": round(checker.grow_m, 4), "max_expansions": cfg.max_expansions,
            "time_limit_s": cfg.time_limit_s, "with_cart": with_cart,
            "goal_tolerance_m": round(0.5 * step, 4)}
    out = TrainPlanResult(status=NOT_FOUND, settings=info)
    gx, gy = float(goal[0]), float(goal[1])
    gh = None if goal[2] is None else float(goal[2])
    htol = math.radians(goal_heading_tol_deg)
    goal_tol = 0.5 * step

    # --- start and goal poses ---------------------------------------------------------------
    starts = [tuple(float(v) for v in s) for s in starts]
    if not starts:
        out.status, out.reason = START_BLOCKED, "no start pose given"
        return out
    tr = np.array(starts)
    carts = np.array([cart_pose(train, s) for s in starts])
    t_hit, c_hit = checker.hits(_deg(tr), _deg(carts) if with_cart else None)
    ok_start = ~(t_hit | c_hit)
    if not ok_start.any():
        out.status = START_BLOCKED
        out.reason = "the train (cart in line behind) does not fit at the start" if with_cart else \
            "the tractor does not fit at the start"
        return out
    if gh is not None:
        g_hit, _ = checker.hits(_deg([(gx, gy, gh)]), None)
        if g_hit[0]:
            out.status, out.reason = GOAL_BLOCKED, "the tractor does not fit at the goal pose"
            return out
    lattice_key = (round(max(res, 0.2), 6), round(min(analytic_radii), 6))
    heuristics = {} if heuristics is None else heuristics
    if lattice_key not in heuristics:
        heuristics[lattice_key] = GridHeuristic(checker, lattice_key[0], radius=lattice_key[1])
    h_grid = heuristics[lattice_key].for_goal((gx, gy), gh)

    def h_of(x, y, th):
        return max(math.hypot(x - gx, y - gy), h_grid(x, y, th))

    # --- search -------------------------------------------------------------------------------
    nodes: list[tuple] = []        # (x, y, th, psi, g, parent, segment)
    best: dict[tuple, float] = {}
    closed: set[tuple] = set()
    heap: list = []
    counter = 0

    def key(x, y, th, psi):
        phi = math.remainder(th - psi, 2.0 * math.pi)
        return (int(round(x / res)), int(round(y / res)), int(round(th / hbin)) % bins,
                int(round(phi / jbin)) if with_cart else 0)

    for i, s in enumerate(starts):
        if not ok_start[i]:
            continue
        k = key(s[0], s[1], s[2], s[2])
        if k in best:
            continue
        nodes.append((s[0], s[1], s[2], s[2], 0.0, -1, None, i))
        best[k] = 0.0
        heapq.heappush(heap, (cfg.weight * h_of(s[0], s[1], s[2]), counter, len(nodes) - 1))
        counter += 1

    def finish(node_id: int, tail: list[Segment]) -> TrainPlanResult:
        chain: list[Segment] = []
        first = nodes[node_id][7]
        nid = node_id
        while nid >= 0:
            if nodes[nid][6] is not None:
                chain.append(nodes[nid][6])
            nid = nodes[nid][5]
        segs = chain[::-1] + list(tail)
        out.status, out.start_index, out.segments, out.reason = FOUND, first, segs, "found"
        s0 = starts[first]
        out.motion = follow(segs, train, cart_heading=s0[2], tolerance_m=checker.tolerance_m) if segs else None
        return out

    def goal_reached(x, y, th) -> bool:
        if math.hypot(x - gx, y - gy) > goal_tol:
            return False
        return gh is None or abs(math.remainder(th - gh, 2.0 * math.pi)) <= htol

    def try_analytic(n) -> list[Segment] | None:
        x, y, th, psi = n[:4]
        heads = [gh] if gh is not None else [math.atan2(gy - y, gx - x) + d for d in (0.0, 0.6, -0.6)]
        if gh is None and math.hypot(gx - x, gy - y) < 1e-9:
            return []
        for r in analytic_radii:
            for h in heads:
                try:
                    segs = dubins_path((x, y, th), (gx, gy, h), r)
                except InputError:                     # degenerate pose: no completion from here
                    continue
                if not segs:
                    return []
                # cheap rejection first: exact poses every ~20 cm (any hit there is a real hit)
                m = follow(segs, train, cart_heading=psi, tolerance_m=max(0.1, 5.0 * checker.tolerance_m))
                if with_cart and (np.any(np.abs(m.hitch_angle) > math.radians(train.max_hitch_deg))
                                  or m.pushing.any()):
                    continue
                t_hit, c_hit = checker.hits(m.tractor_deg(), m.cart_deg() if with_cart else None)
                if t_hit.any() or c_hit.any():
                    continue
                m = follow(segs, train, cart_heading=psi, tolerance_m=checker.tolerance_m)
                if judge_motion(checker, m, with_cart=with_cart, locate=False).passable:
                    return segs
        return None

    prims = _Primitives(train, step, prim_radii, 2.0 * hbin if spin else None,
                        checker.tolerance_m)
    expansions = 0
    while heap:
        if expansions >= cfg.max_expansions:
            out.reason = f"stopped after {expansions} expansions (limit)"
            out.stopped_by = "max_expansions"
            break
        if cfg.time_limit_s is not None and time.monotonic() - t_start > cfg.time_limit_s:
            out.reason = f"stopped after {cfg.time_limit_s:g} s (time limit), {expansions} expansions"
            out.stopped_by = "time_limit_s"
            break
        _, _, nid = heapq.heappop(heap)
        n = nodes[nid]
        x, y, th, psi, g = n[:5]
        k = key(x, y, th, psi)
        if k in closed:
            continue
        closed.add(k)
        expansions += 1
        if trace is not None:
            trace.append((x, y, th, psi))
        if goal_reached(x, y, th):
            res_ = finish(nid, [])
            res_.expansions, res_.elapsed_s = expansions, time.monotonic() - t_start
            return res_
        near = math.hypot(x - gx, y - gy) < 2.0 * max(analytic_radii) + 1.0
        if expansions % (4 if near else 20) == 1:
            tail = try_analytic(n)
            if tail is not None:
                res_ = finish(nid, tail)
                res_.expansions, res_.elapsed_s = expansions, time.monotonic() - t_start
                return res_
        T, C, phi, pulling = prims.expand(x, y, th, psi)
        t_hit, c_hit = checker.hits(_deg(T), _deg(C) if with_cart else None)
        bad = t_hit | c_hit
        if with_cart:
            bad |= (np.abs(phi) > math.radians(train.max_hitch_deg)) | ~pulling   # exact at samples (sweep.py)
        bad_prim = np.logical_or.reduceat(bad, prims.starts)
        last = np.r_[prims.starts[1:], len(bad)] - 1
        for i in np.flatnonzero(~bad_prim):
            ex, ey, eth = prims.end_pose(x, y, th, int(i))
            epsi = float(C[last[i], 2])
            kk = key(ex, ey, eth, epsi)
            if kk in closed:
                continue
            gg = g + float(prims.costs[i])
            if gg >= best.get(kk, math.inf):
                continue
            best[kk] = gg
            nodes.append((ex, ey, eth, epsi, gg, nid, prims._segment((x, y, th), int(i)), n[7]))
            heapq.heappush(heap, (gg + cfg.weight * h_of(ex, ey, eth), counter, len(nodes) - 1))
            counter += 1
    else:
        out.reason = f"every cell reachable forward at this resolution was searched ({expansions} expansions)"
        out.stopped_by = "exhausted"
    out.expansions = expansions
    out.elapsed_s = time.monotonic() - t_start
    return out
