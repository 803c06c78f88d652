"""Tractor paths for a train: forward curves through given poses.

A route given as poses (x, y, heading) is driven by the tractor's reference point forward from
each pose to the next along the shortest forward path of bounded curvature (Dubins, Amer. J.
Math. 79, 1957; :func:`floorfit.motion.dubins_path`) with one turn radius. The default radius is
the smallest the train can hold in a steady turn (hitch angle within its limit), and at least the
tractor's own minimum radius for a car-like tractor.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from floorfit.articulated.kinematics import jack_knife_radius
from floorfit.errors import InputError
from floorfit.motion.dubins import dubins_path
from floorfit.motion.segments import Segment
from floorfit.vehicles.train import Train

__all__ = ["default_turn_radius", "path_through"]


def default_turn_radius(train: Train) -> float:
    """Smallest steady turn radius (m) of the tractor's reference point the train can hold:
    the jack-knife radius, and at least ``min_turn_radius`` for a car-like tractor."""
    r = jack_knife_radius(train)
    if train.tractor.mode == "car" and train.tractor.min_turn_radius_m:
        r = max(r, float(train.tractor.min_turn_radius_m))
    return r


def path_through(poses: Sequence, radius_m: float, *, train: Train | None = None) -> list[Segment]:
    """Forward tractor path (motion segments, radians) through ``poses`` (x m, y m, heading rad), in
    order, as Dubins curves of ``radius_m`` (m). With ``train`` given, a radius below a car-like
    tractor's own minimum is refused."""
    poses = [tuple(float(v) for v in p) for p in poses]
    if len(poses) < 2:
        raise InputError("a route needs at least two poses", where="--route")
    if not (math.isfinite(radius_m) and radius_m > 0):
        raise InputError(f"turn radius must be a positive number of metres, got {radius_m!r}", where="--turn-radius")
    if train is not None and train.tractor.mode == "car" and train.tractor.min_turn_radius_m:
        if radius_m < float(train.tractor.min_turn_radius_m) - 1e-9:
            raise InputError(f"turn radius {radius_m:g} m is below the tractor's minimum "
                             f"{train.tractor.min_turn_radius_m:g} m", where="--turn-radius")
    segments: list[Segment] = []
    for a, b in zip(poses[:-1], poses[1:]):
        if math.hypot(b[0] - a[0], b[1] - a[1]) < 1e-12 and abs(math.remainder(b[2] - a[2], 2 * math.pi)) < 1e-12:
            continue
        segs = dubins_path(a, b, radius_m)
        segments.extend(segs)
    if not segments:
        raise InputError("the route's poses are all the same", where="--route")
    return segments
