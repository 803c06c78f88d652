"""Where a train can turn around driving forward: a full circle on a clear disc.

A train cannot reverse (not supported) and a differential tractor cannot simply spin in place
with a cart on the hitch (the hitch angle would pass its limit), so turning around means driving
a loop. The test used here is conservative:

1. The tractor drives into a circle of radius R (its reference point), starting with the cart in
   line, and goes round it once and a quarter (the cart settles towards its steady state, in
   which it runs on the circle √(R_h² − L²) about the centre for an on-axle hitch on radius R_h).
   The whole manoeuvre is sampled (:func:`floorfit.articulated.kinematics.follow`) and the
   smallest and largest distances of the tractor and cart footprints (grown by the sampling
   tolerance) from the turn centre give an annulus ``inner .. outer`` that contains everything
   the train covers, from the moment it enters the circle, whatever its direction of entry.
2. R runs over a few radii from the smallest the train can hold (the hitch angle of the steady
   turn within its limit; the tractor's own minimum radius for a car-like tractor) upwards, both
   turning directions; the one with the smallest outer radius is kept.
3. The turn-around region is the set of turn centres where the **whole disc** of the outer
   radius is clear of obstacles (obstacles inside the inner radius are not credited), computed
   like :func:`floorfit.analysis.turnability.turn_region` (the disc replaced by a circumscribed polygon).

The straight approach into the circle and the exit out of it, along tangents, are not part of
this test. Errs towards "cannot turn here".
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon, box

from floorfit.analysis.turnability import turn_region
from floorfit.articulated.kinematics import DEFAULT_TOLERANCE_M, follow, jack_knife_radius, steady_turn
from floorfit.cspace.collision import place_footprint
from floorfit.cspace.slices import obstacles_for
from floorfit.motion.segments import arc
from floorfit.plan.model import Plan
from floorfit.vehicles.train import Train

__all__ = ["RADIUS_FACTORS", "TurnCircle", "turn_circle", "turnaround_region"]

#: Turn radii tried, as multiples of the smallest radius the train can hold.
RADIUS_FACTORS = (1.0, 1.1, 1.25, 1.5, 2.0, 3.0)


@dataclass(frozen=True)
class TurnCircle:
    """A full forward loop of the train. Metres, degrees.

    ``radius_m``: radius of the tractor reference point's circle; ``side`` +1 left, −1 right.
    ``inner_m`` / ``outer_m``: the annulus about the turn centre containing the whole manoeuvre
    (entry with the cart in line, one and a quarter turns), footprints grown by ``tolerance_m``.
    ``steady_inner_m`` / ``steady_outer_m``: the same for the settled configuration only.
    ``hitch_angle_deg``: the settled hitch angle.
    """

    radius_m: float
    side: int
    inner_m: float
    outer_m: float
    steady_inner_m: float
    steady_outer_m: float
    hitch_angle_deg: float
    tolerance_m: float

    def to_dict(self) -> dict:
        return {k: (round(v, 4) if isinstance(v, float) else v) for k, v in self.__dict__.items()}


def _loop(train: Train, radius: float, side: int, tolerance_m: float) -> TurnCircle | None:
    st = steady_turn(train, radius, side)
    if st is None or abs(st.hitch_angle_deg) > train.max_hitch_deg:
        return None
    length = 2.5 * math.pi * radius
    seg = arc((0.0, 0.0, 0.0), length, side, radius)
    m = follow([seg], train, tolerance_m=tolerance_m)
    if np.any(np.abs(np.degrees(m.hitch_angle)) > train.max_hitch_deg) or m.pushing.any():
        return None
    grow = tolerance_m
    t_fp = train.tractor.footprint.buffer(grow, join_style="mitre", mitre_limit=10.0)
    c_fp = train.cart_footprint.buffer(grow, join_style="mitre", mitre_limit=10.0)
    bodies = np.concatenate([place_footprint(t_fp, m.tractor_deg()), place_footprint(c_fp, m.cart_deg())])
    centre = shapely.points(0.0, side * radius)
    inner = float(np.min(shapely.distance(bodies, centre)))
    xy = shapely.get_coordinates(bodies)
    outer = float(np.max(np.hypot(xy[:, 0], xy[:, 1] - side * radius)))
    return TurnCircle(radius_m=float(radius), side=side, inner_m=inner, outer_m=outer,
                      steady_inner_m=st.inner_m, steady_outer_m=st.outer_m,
                      hitch_angle_deg=float(st.hitch_angle_deg), tolerance_m=tolerance_m)


def turn_circle(train: Train, *, radii=None, tolerance_m: float = DEFAULT_TOLERANCE_M) -> TurnCircle:
    """The forward loop with the smallest outer radius among ``radii`` (m; default: the smallest
    radius the train can hold times :data:`RADIUS_FACTORS`), both turning directions."""
    r0 = jack_knife_radius(train) * (1.0 + 1e-6)
    if train.tractor.mode == "car":
        r0 = max(r0, float(train.tractor.min_turn_radius_m))
    radii = [r0 * f for f in RADIUS_FACTORS] if radii is None else list(radii)
    best = None
    for r in radii:
        for side in (1, -1):
            c = _loop(train, r, side, tolerance_m)
            if c is not None and (best is None or c.outer_m < best.outer_m):
                best = c
    if best is None:
        from floorfit.errors import InputError
        raise InputError("no forward loop keeps the hitch angle within its limit at these radii", where="radii")
    return best


def turnaround_region(plan: Plan, train: Train, *, floor=None, circle: TurnCircle | None = None):
    """Turn centres (local frame, shapely geometry) where the train can drive a full forward loop:
    the disc of ``circle.outer_m`` (plus the plan's curve tolerance) about the centre is clear.

    ``floor``: optional local-frame geometry of the floor to keep (e.g. the check's ``fits`` map);
    without it, parts of the region touching the plan's bounding box (outside the building) are
    dropped.
    """
    circle = circle or turn_circle(train)
    x0, y0, x1, y1 = plan.local_bounds()
    domain = box(x0, y0, x1, y1)
    if domain.area <= 0:
        return Polygon()
    region = turn_region(obstacles_for(plan), domain, circle.outer_m + plan.curve_tolerance_m)
    if floor is not None:
        return shapely.intersection(region, floor)
    parts = [p for p in shapely.get_parts(region) if not p.intersects(domain.exterior)]
    return shapely.union_all(parts) if parts else Polygon()
