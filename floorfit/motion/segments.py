"""Path segments: straight drives, circular arcs and rotations in place.

A path is a list of :class:`Segment`. Poses are ``(x m, y m, heading rad)``;
``angle_deg`` is the signed change of heading in degrees (counter-clockwise
positive), ``length_m`` the distance travelled by the reference point.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np

from floorfit.motion.poses import Pose

__all__ = [
    "Segment",
    "straight",
    "arc",
    "rotate",
    "poses_along",
    "total_length",
    "direction_changes",
    "merge_segments",
    "path_end",
]

KINDS = ("straight", "arc", "rotate")
DIRECTIONS = ("forward", "reverse")


@dataclass(frozen=True)
class Segment:
    """One piece of a vehicle path.

    Attributes
    ----------
    kind : {"straight", "arc", "rotate"}
    direction : {"forward", "reverse"} or None
        None for ``rotate``.
    length_m : float
        Distance travelled by the reference point (m, >= 0); 0 for ``rotate``.
    angle_deg : float
        Signed change of heading (deg, counter-clockwise positive); 0 for ``straight``.
    radius_m : float or None
        Radius of the reference point's circle (m), ``arc`` only.
    start, end : Pose
        Poses (x m, y m, heading rad) before and after the segment. ``end``
        carries the accumulated, unwrapped heading.
    """

    kind: str
    direction: str | None
    length_m: float
    angle_deg: float
    radius_m: float | None
    start: Pose
    end: Pose

    @property
    def sign(self) -> int:
        """+1 forward, -1 reverse, 0 for a rotation."""
        return {"forward": 1, "reverse": -1}.get(self.direction, 0)

    @property
    def steer(self) -> int:
        """+1 when the turn centre is on the vehicle's left, -1 on its right, 0 otherwise."""
        if self.kind != "arc" or self.angle_deg == 0.0:
            return 0
        return int(math.copysign(1, self.angle_deg)) * self.sign


def poses_along(seg: Segment, fractions) -> np.ndarray:
    """Poses at ``fractions`` (array in [0, 1]) of the way along ``seg``; (n, 3), heading rad."""
    t = np.asarray(fractions, dtype=float)
    x0, y0, h0 = seg.start
    out = np.empty((t.size, 3))
    if seg.kind == "straight":
        d = seg.sign * seg.length_m * t
        out[:, 0] = x0 + d * math.cos(h0)
        out[:, 1] = y0 + d * math.sin(h0)
        out[:, 2] = h0
    elif seg.kind == "arc":
        k = seg.steer * seg.radius_m  # signed radius: centre on the left when > 0
        cx, cy = x0 - k * math.sin(h0), y0 + k * math.cos(h0)
        h = h0 + math.radians(seg.angle_deg) * t
        out[:, 0] = cx + k * np.sin(h)
        out[:, 1] = cy - k * np.cos(h)
        out[:, 2] = h
    else:
        out[:, 0] = x0
        out[:, 1] = y0
        out[:, 2] = h0 + math.radians(seg.angle_deg) * t
    return out


def turned_heading(h_rad: float, angle_rad: float) -> float:
    """The heading (rad) a turn by ``angle_rad`` from ``h_rad`` ends at, as :func:`rotate` computes it
    (through the segment's angle in degrees)."""
    return float(h_rad) + math.radians(math.degrees(angle_rad))


def _finish(kind, direction, length, angle_rad, radius, start) -> Segment:
    x0, y0, h0 = (float(v) for v in start)
    length = float(length)
    if kind == "straight":      # the arithmetic of poses_along at t = 1, in plain floats (the same bits,
        d = (1 if direction == "forward" else -1) * length          # without numpy's per-call cost)
        end = (x0 + d * math.cos(h0), y0 + d * math.sin(h0), h0)
    elif kind == "rotate":
        end = (x0, y0, turned_heading(h0, angle_rad))
    else:
        seg = Segment(kind, direction, length, math.degrees(angle_rad), radius, (x0, y0, h0), (x0, y0, h0))
        end = tuple(float(v) for v in poses_along(seg, [1.0])[0])
    return Segment(kind, direction, length, math.degrees(angle_rad), radius, (x0, y0, h0), end)


def straight(start: Sequence[float], distance_m: float) -> Segment:
    """Drive ``|distance_m|`` metres along the heading; negative means in reverse."""
    return _finish("straight", "forward" if distance_m >= 0 else "reverse",
                   abs(distance_m), 0.0, None, start)


def arc(start: Sequence[float], distance_m: float, steer: int, radius_m: float) -> Segment:
    """Drive ``|distance_m|`` metres on a circle of ``radius_m`` (m).

    ``steer`` is +1 for the turn centre on the vehicle's left, -1 on its right;
    negative ``distance_m`` drives the same circle in reverse.
    """
    angle = steer * distance_m / radius_m
    return _finish("arc", "forward" if distance_m >= 0 else "reverse",
                   abs(distance_m), angle, float(radius_m), start)


def rotate(start: Sequence[float], angle_rad: float) -> Segment:
    """Turn in place by ``angle_rad`` (radians, counter-clockwise positive)."""
    return _finish("rotate", None, 0.0, angle_rad, None, start)


def total_length(segments: Iterable[Segment]) -> float:
    """Distance travelled by the reference point over the whole path (m)."""
    return float(sum(s.length_m for s in segments))


def direction_changes(segments: Iterable[Segment]) -> int:
    """Changes between forward and reverse driving along the path.

    Rotations in place are ignored: forward, rotate, reverse counts one change.
    A three-point turn (forward, reverse, forward) counts two.
    """
    moving = [s.direction for s in segments if s.kind != "rotate" and s.length_m > 0]
    return sum(1 for a, b in zip(moving, moving[1:]) if a != b)


def path_end(segments: Sequence[Segment], start: Pose | None = None) -> Pose | None:
    """Final pose of a path (``start`` when the path is empty)."""
    return segments[-1].end if segments else start


def _same_motion(a: Segment, b: Segment) -> bool:
    if a.kind != b.kind:
        return False
    if a.kind == "rotate":
        return True
    if a.direction != b.direction:
        return False
    return a.kind == "straight" or (a.steer == b.steer and a.radius_m == b.radius_m)


def merge_segments(segments: Iterable[Segment], min_length_m: float = 1e-9,
                   min_angle_deg: float = 1e-9) -> list[Segment]:
    """Join consecutive segments of the same motion and drop empty ones.

    Two straights (or two arcs of the same radius and side) in the same direction
    become one. Consecutive rotations become one rotation by the summed signed
    angle, which lies inside the range of headings the original rotations swept,
    so a merged rotation never sweeps more than the originals did.
    Segments shorter than ``min_length_m`` (m) that turn less than
    ``min_angle_deg`` (deg) are dropped.
    """
    out: list[Segment] = []
    for seg in segments:
        if seg.length_m <= min_length_m and abs(seg.angle_deg) <= min_angle_deg:
            continue
        if out and _same_motion(out[-1], seg):
            prev = out.pop()
            if seg.kind == "rotate":
                merged = rotate(prev.start, math.radians(prev.angle_deg + seg.angle_deg))
            elif seg.kind == "straight":
                merged = straight(prev.start, prev.sign * (prev.length_m + seg.length_m))
            else:
                merged = arc(prev.start, prev.sign * (prev.length_m + seg.length_m),
                             prev.steer, prev.radius_m)
            if merged.length_m > min_length_m or abs(merged.angle_deg) > min_angle_deg:
                out.append(merged)
            continue
        out.append(seg)
    return out
