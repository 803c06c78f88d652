"""Checking a sampled train motion against a plan: collisions, jack-knife, swept path, off-tracking.

Soundness of sampled checks. Between two consecutive samples of
:func:`floorfit.articulated.kinematics.follow`:

* a tractor point at most ``reach_t`` from the reference point moves at most
  ``Δs + reach_t·|Δθ|`` (Δs the reference point's travel; on an arc every tractor point turns
  about the same centre);
* a cart point at most ``reach_c`` from the axle centre moves at most ``Δs_H·(1 + reach_c / L)``:
  the axle centre moves no faster than the hitch (|dC| ≤ |dH| because the no-slip condition makes
  dH = dC + L·dψ·e⊥(ψ) with dC ⟂ e⊥(ψ)) and the cart turns by at most Δs_H / L.

``follow`` spaces the samples so both stay below 2·``tolerance``; every point of the continuous
motion then lies within ``tolerance`` of the same body point at one of the two neighbouring
samples. Checking the footprints grown by ``tolerance`` (plus the plan's curve tolerance) at the
samples is therefore conservative: a motion called clear is clear.

The hitch angle needs no such allowance: within one segment it is monotone (on an arc or a
rotation in place the tractor turns rigidly about one centre, so the hitch angle differs from
γ, the angle between the hitch's direction of travel and the cart axis, by a constant, and γ
obeys the one-dimensional autonomous equation dγ/ds = κ − sin(γ)/L, whose solutions are
monotone; on a straight the tractor heading is fixed and the cart heading monotone), and every
segment's end is a sample, so its largest magnitude over a segment is at a sample. The same holds
for "pushing" (|γ| > 90°).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import shapely
import shapely.ops
from shapely.geometry import LineString, Polygon

from floorfit.articulated.kinematics import TrainMotion
from floorfit.cspace.collision import PoseChecker, place_footprint
from floorfit.plan.model import Plan
from floorfit.vehicles.train import Train

__all__ = [
    "PENETRATION_STEP_M",
    "MotionVerdict",
    "TrainChecker",
    "judge_motion",
    "off_tracking_m",
    "swept_geometry",
]

#: Obstacle linework inside a body is sampled this finely to measure how deep it reaches, metres.
PENETRATION_STEP_M = 0.01


def _grown(poly: Polygon, d: float) -> Polygon:
    return poly if d <= 0 else poly.buffer(d, join_style="mitre", mitre_limit=10.0)


class TrainChecker:
    """Collision tests of the tractor and the cart against a plan's obstacles (local frame, metres).

    ``tolerance_m``: the sampling tolerance of the motions it will check; both footprints (with
    their margins) are grown by it plus the plan's curve tolerance.
    """

    def __init__(self, plan: Plan, train: Train, tolerance_m: float):
        self.plan = plan
        self.train = train
        self.tolerance_m = float(tolerance_m)
        self.grow_m = self.tolerance_m + float(plan.curve_tolerance_m)
        geoms = _obstacle_pieces(plan)
        self.tractor = PoseChecker(plan, _grown(train.tractor.footprint, self.grow_m), obstacles=geoms)
        self.cart = _reuse(self.tractor, _grown(train.cart_footprint, self.grow_m))
        self.geoms = self.tractor.geoms
        self.tree = self.tractor.tree

    def with_train(self, train: Train) -> TrainChecker:
        """A checker for another train on the same plan, reusing the obstacle index."""
        new = object.__new__(TrainChecker)
        new.plan, new.train, new.tolerance_m, new.grow_m = self.plan, train, self.tolerance_m, self.grow_m
        new.geoms, new.tree = self.geoms, self.tree
        new.tractor = _reuse(self.tractor, _grown(train.tractor.footprint, self.grow_m))
        new.cart = _reuse(self.tractor, _grown(train.cart_footprint, self.grow_m))
        return new

    def hits(self, tractor_deg: np.ndarray, cart_deg: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
        """(tractor collides, cart collides) per pose; poses (N, 3) local, heading in degrees.
        With ``cart_deg`` None only the tractor is checked (the cart result is all False)."""
        bodies = place_footprint(self.tractor.footprint, tractor_deg)
        n = len(bodies)
        if cart_deg is not None:
            bodies = np.concatenate([bodies, place_footprint(self.cart.footprint, cart_deg)])
        hit = np.zeros(len(bodies), dtype=bool)
        if len(self.geoms):
            hit[self.tree.query(bodies, predicate="intersects")[0]] = True
        return hit[:n], (hit[n:] if cart_deg is not None else np.zeros(n, dtype=bool))


def _obstacle_pieces(plan: Plan) -> np.ndarray:
    """The plan's obstacles for pose checks: wall linework split into single segments (so that the
    spatial index prunes well), solids whole. Same point set, so the same collisions."""
    parts = []
    if len(plan.walls):
        coords, idx = shapely.get_coordinates(plan.walls, return_index=True)
        same = idx[1:] == idx[:-1]
        a, b = coords[:-1][same], coords[1:][same]
        parts.append(shapely.linestrings(np.stack([a, b], axis=1)))
    if len(plan.solids):
        parts.append(np.asarray(plan.solids, dtype=object))
    return np.concatenate(parts) if parts else np.empty(0, dtype=object)


def _reuse(checker: PoseChecker, footprint: Polygon) -> PoseChecker:
    new = object.__new__(PoseChecker)
    new.geoms, new.tree, new.footprint = checker.geoms, checker.tree, footprint
    return new


@dataclass
class MotionVerdict:
    """What a sampled train motion meets. Local frame, metres, degrees.

    ``passable``: no collision of either body, hitch angle within its limit, never pushing the
    cart. ``problem``: None, ``"tractor"`` / ``"cart"`` (collision), ``"jack-knife"`` or
    ``"pushing"``. ``index``: first sample with the problem. ``x, y``: where (for a collision: the
    point of the obstacle reaching deepest into the body over the colliding stretch; otherwise the
    hitch). ``depth_m``: how far the obstacle reaches into the body there (0 when only the grown
    body touches: the clearance is then below the tolerance, ``clearance_m``). ``hitch_angle_deg``:
    the largest |hitch angle| along the motion (up to the problem, if any). ``aligned``: at the
    first collision the cart was nearly in line with its hitch's travel (a width problem rather
    than off-tracking).
    """

    passable: bool
    problem: str | None = None
    index: int | None = None
    x: float | None = None
    y: float | None = None
    depth_m: float = 0.0
    clearance_m: float | None = None
    hitch_angle_deg: float = 0.0
    aligned: bool = False
    tolerance_m: float = 0.0
    details: dict[str, Any] = field(default_factory=dict)


def judge_motion(checker: TrainChecker, motion: TrainMotion, *, with_cart: bool = True,
                 locate: bool = True, hitch_limit: bool = True) -> MotionVerdict:
    """Check a train motion (local frame) for collisions, jack-knife and pushing.

    With ``with_cart`` False only the tractor is checked (the tractor alone, cart ignored).
    ``locate`` computes the place and depth of the first collision (slower). With
    ``hitch_limit`` False the hitch angle limit and pushing are not checked (to find where the
    cart would hit along a line regardless); ``details["jack_knife_index"]`` still gives the
    first sample beyond the limit, if any.
    """
    train = checker.train
    tol = checker.grow_m
    t_deg = motion.tractor_deg()
    c_deg = motion.cart_deg() if with_cart else None
    t_hit, c_hit = checker.hits(t_deg, c_deg)
    n = len(motion)
    bad = np.full(n, "", dtype=object)
    jk_index = None
    if with_cart:
        limit = math.radians(train.max_hitch_deg)
        jk = (np.abs(motion.hitch_angle) > limit + 1e-12) | motion.pushing
        if jk.any():
            jk_index = int(np.argmax(jk))
        if hitch_limit:
            bad[motion.pushing] = "pushing"
            bad[np.abs(motion.hitch_angle) > limit + 1e-12] = "jack-knife"
        bad[c_hit] = "cart"
    bad[t_hit] = "tractor"
    problems = np.flatnonzero(bad != "")
    upto = n if not len(problems) else int(problems[0]) + 1
    if not hitch_limit and jk_index is not None and not len(problems):
        upto = jk_index + 1
    max_phi = float(np.degrees(np.max(np.abs(motion.hitch_angle[:upto])))) if with_cart else 0.0
    if not len(problems) and jk_index is None:
        return MotionVerdict(True, hitch_angle_deg=max_phi, tolerance_m=tol, details={"jack_knife_index": None})
    if len(problems):
        i = int(problems[0])
        kind = str(bad[i])
    else:                                   # hitch limit not ranked first, and nothing collides
        i = jk_index
        kind = "pushing" if motion.pushing[i] else "jack-knife"
    v = MotionVerdict(False, problem=kind, index=i, hitch_angle_deg=max_phi, tolerance_m=tol,
                      details={"jack_knife_index": jk_index})
    if kind in ("jack-knife", "pushing"):
        v.x, v.y = (float(c) for c in motion.hitch[i])
        v.details["hitch_angle_deg"] = float(np.degrees(motion.hitch_angle[i]))
        return v
    if not locate:
        v.x, v.y = (float(c) for c in (motion.tractor[i, :2] if kind == "tractor" else motion.cart[i, :2]))
        return v
    hit = t_hit if kind == "tractor" else c_hit
    j = i
    while j + 1 < n and hit[j + 1]:
        j += 1
    idx = np.unique(np.linspace(i, j, min(j - i + 1, 60)).round().astype(int))
    fp = train.tractor.footprint if kind == "tractor" else train.cart_footprint
    poses = t_deg[idx] if kind == "tractor" else c_deg[idx]
    depth, where, clearance = _deepest(checker, fp, poses)
    v.depth_m, v.clearance_m = depth, clearance
    v.x, v.y = where
    if kind == "cart":
        # off-tracking versus width: how far the cart axis is from the hitch's direction of travel
        gap = abs(float(motion.hitch_angle[i]))
        v.aligned = gap < math.radians(3.0) and motion.segments[int(motion.segment[i])].kind == "straight"
    return v


def _deepest(checker: TrainChecker, footprint: Polygon, poses_deg: np.ndarray):
    """Over the poses (a colliding stretch, in order): the largest depth (m) of obstacle linework
    inside the (ungrown) footprint, the first point of contact (the deepest obstacle point at the
    first pose where the ungrown body is reached), and, when nothing reaches inside, the smallest
    clearance and the nearest obstacle point."""
    bodies = place_footprint(footprint, poses_deg)
    pairs = checker.tree.query(bodies, predicate="intersects")
    depth = np.zeros(len(bodies))
    where: dict[int, tuple[float, float]] = {}
    for b, g in zip(*pairs):
        body = bodies[b]
        inter = shapely.intersection(body, checker.geoms[g])
        if inter.is_empty:
            continue
        pts = shapely.get_coordinates(shapely.segmentize(inter, PENETRATION_STEP_M))
        if not len(pts):
            continue
        d = shapely.distance(shapely.points(pts), body.exterior)
        k = int(np.argmax(d))
        if d[k] > depth[b] or b not in where:
            depth[b] = max(depth[b], float(d[k]))
            where[b] = (float(pts[k, 0]), float(pts[k, 1]))
    reached = np.flatnonzero(depth > 0)
    if len(reached):
        return float(depth.max()), where[int(reached[0])], None
    near_b, near_g = checker.tree.query_nearest(bodies, return_distance=False, all_matches=False)
    dist = shapely.distance(bodies[near_b], checker.geoms[near_g])
    k = int(np.argmin(dist))
    p = shapely.ops.nearest_points(checker.geoms[near_g[k]], bodies[near_b[k]])[0]
    return 0.0, (float(p.x), float(p.y)), float(dist[k])


def swept_geometry(train: Train, motion: TrainMotion, *, tolerance_m: float = 0.05, upto: int | None = None,
                   cart: bool = True):
    """Floor covered by the tractor and the cart (footprints with margins) along ``motion``, as one
    shapely geometry in the motion's frame. A superset within ``tolerance_m`` (m): samples are
    thinned to keep body points at most 2·tolerance apart and the footprints are grown by it."""
    stride = max(1, int(tolerance_m // max(motion.tolerance_m, 1e-9)))
    grow = stride * motion.tolerance_m
    end = len(motion) if upto is None else max(1, upto)
    idx = np.unique(np.r_[np.arange(0, end, stride), end - 1])
    geoms = list(place_footprint(_grown(train.tractor.footprint, grow), motion.tractor_deg()[idx]))
    if cart:
        geoms += list(place_footprint(_grown(train.cart_footprint, grow), motion.cart_deg()[idx]))
    return shapely.union_all(geoms)


def off_tracking_m(motion: TrainMotion) -> float:
    """Largest distance (m) between the cart axle centre and the track of the hitch point: how far
    the cart's wheels run inside the path the hitch took (R − √(R² − L²) in a steady on-axle turn)."""
    if not len(motion):
        return 0.0
    lead = motion.cart[0, :2] - motion.hitch[0] + motion.cart[0, :2]   # the hitch's line before the start
    track = np.vstack([lead, motion.hitch])
    keep = np.r_[True, np.any(np.abs(np.diff(track, axis=0)) > 1e-12, axis=1)]
    line = LineString(track[keep]) if keep.sum() >= 2 else None
    if line is None:
        return 0.0
    return float(np.max(shapely.distance(shapely.points(motion.cart[:, :2]), line)))
